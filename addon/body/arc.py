"""Keep the whole-body centre of mass (COM) on its arc in the air, as a delta layer.

Flow: find the flight stretches (the ``lw:take-off`` markers the blocking pass left,
or the COM's own ballistic stretches, else the torso's), sample the evaluated rig
over the scene's frame range, let :mod:`core.body.arc` give the world offset per frame,
and write it on the carrier's location channels as deltas on the NLA track
``lw:body`` (blend COMBINE, :mod:`ownership`). The carrier is a bone every
mass-bearing bone follows (the top of the tree, so IK foot controllers under it
move along in the air) or the rig object; only flight frames get offsets, so
feet in contact stay where they are. Re-running replaces the layer (it is muted
while the rig is read); removing it restores the file exactly.
"""

from dataclasses import dataclass

import numpy as np

from ..blender import scene_units
from . import com as body_com
from ..blender import ownership
from ..rig import space as rig_space
from ..blender.curves import CurveSpec
from ..core.body import arc as fc
from ..core.check.analysis import analyse_trajectory
from ..core.body.mass import group_coms, whole_body_com
from ..core.base.errors import LeapwrightError
from ..core.base.phase_words import marker_name, phase_of_marker

CAPABILITY = "body"
TRACK = ownership.group_name(CAPABILITY)
FLIGHT_MARKER = marker_name("flight")
#: Sub-frame step of the samples that read the take-off velocity [frame]: a tenth of a
#: frame makes the backward difference's jerk error a hundred times smaller than whole
#: frames would (design choice).
TAKEOFF_STEP = 0.1
#: Residual after writing above which one refinement pass is made [m] (design choice:
#: constraints that do not follow the carrier rigidly, e.g. world-space targets).
REFINE_ABOVE = 1e-5


class AirError(Exception):
    """The correction cannot be made as asked; nothing was written."""


@dataclass(frozen=True, eq=False)
class AirWork:
    """Everything the operator writes, computed before anything changes.

    Attributes
    ----------
    rig : bpy.types.Object
    model : core.body.mass.MassModel
    how : str  how the bones were mapped
    frames : ndarray (F,)  scene frames sampled
    stretches : list of (int, int)  scene frames (take-off, last in the air)
    source : str  where the flights were found ("markers", "the body's free fall", ...)
    fix : core.body.arc.FlightCorrection
    departures : list of core.body.arc.ArcDeparture
    channels : rig_space.Channels  the carrier's location channels
    metres_per_unit : float  [m/BU]
    settle_frames : int
    takeoff_motion : list of core.body.arc.TakeoffMotion  flights whose launch speed,
        read at the first frame in the air, takes in a limb starting to move
    """

    rig: object
    model: object
    how: str
    frames: np.ndarray
    stretches: list
    source: str
    fix: object
    departures: list
    channels: object
    metres_per_unit: float
    settle_frames: int
    takeoff_motion: tuple = ()


def marker_stretches(scene, first, last):
    """(arc start, last frame in the air) of each take-off marker (``lw:take-off``, before ``lw:flight``) within ``first..last``.

    A marker stands at the take-off rounded to a frame, so the take-off is less than
    half a frame either side of it: the arc starts one frame later, the first frame
    surely in the air, so the velocity read just before it is free of the push. The
    flight ends the frame before the next ``lw:`` marker (the landing).
    """
    marks = sorted((m.frame, m.name) for m in scene.timeline_markers if m.name.startswith(ownership.PREFIX))
    out = []
    for i, (frame, name) in enumerate(marks):
        if (phase_of_marker(name) or ("",))[0] == "flight":  # this version's take-off, or an older lw:flight
            end = marks[i + 1][0] - 1 if i + 1 < len(marks) else last
            if first <= frame + 1 < min(end, last):
                out.append((int(frame) + 1, int(min(end, last))))
    return out


def ballistic_stretches(frames, com, fps, gravity):
    """(arc start, last frame in the air) of each ballistic stretch of the COM track.

    The arc starts at the second airborne sample: the take-off lies somewhere in the
    frame before the first one, where the velocity samples could reach into the push.
    """
    try:
        found = analyse_trajectory(frames, com, fps, gravity=gravity).flights
    except LeapwrightError:
        return []
    return [(int(round(f.first_frame)) + 1, int(round(f.last_frame))) for f in found
            if round(f.first_frame) + 1 < round(f.last_frame)]


def _layer_track(rig):
    return ownership.layer_track(rig, CAPABILITY)


class _WithoutLayer:
    """Mute our own layer while the rig is read, so re-runs see the animation alone."""

    def __init__(self, rig):
        self.track, self.was = (_layer_track(rig) if rig is not None else None), None

    def __enter__(self):
        if self.track is not None:
            self.was, self.track.mute = self.track.mute, True

    def __exit__(self, *exc):
        if self.track is not None:
            self.track.mute = self.was


def _riding_feet(rig, bone, scene):
    """The scene's foot controllers that move with the carrier (all of them for the object)."""
    s = getattr(scene, "leapwright_plan", None)
    feet = [f for f in ((s.foot_left, s.foot_right) if s is not None else ()) if f and f in rig.data.bones]
    if not bone:
        return feet
    out = []
    for name in feet:
        b = rig.data.bones[name]
        while b is not None and b.name != bone:
            b = b.parent
        if b is not None:
            out.append(name)
    return out


def _takeoff_velocities(scene, rig, model, stretches, fps):
    """COM velocity [m/s] at each arc start from samples a tenth of a frame apart, before it."""
    k = fc.TAKEOFF_FIT_FRAMES
    out = []
    for first, _ in stretches:
        sub = first - TAKEOFF_STEP * np.arange(k - 1, -1, -1)
        com = body_com.whole_body_com(scene, rig, model, sub)
        out.append(fc.takeoff_velocity(com, k - 1, fps / TAKEOFF_STEP, k))
    return np.array(out).reshape(-1, 3)


def prepare(scene, rig, settings, gravity, own_layer=False):
    """Validate, sample and compute the correction; writes nothing.

    Parameters
    ----------
    scene : bpy.types.Scene
    rig : bpy.types.Object
    settings : LeapwrightBodySettings  (``scene.leapwright_body``)
    gravity : float  [m/s^2]
    own_layer : bool  read the rig with the ``lw:body`` layer playing (to check a fix);
        False reads the animation alone (to make one)

    Returns
    -------
    AirWork

    Raises
    ------
    AirError
    """
    try:
        model, _marks, how = body_com.body_model(rig, settings.table)
    except body_com.BodyError as exc:
        raise AirError(str(exc)) from None
    if rig.animation_data is not None and rig.animation_data.use_tweak_mode:
        raise AirError(f"'{rig.name}' is in NLA tweak mode; leave it (Tab in the NLA editor) and run again")
    bone = settings.carrier_bone or body_com.carrier_bone(rig, model)
    try:
        channels, _ = rig_space.resolve(rig, bone, ())
    except rig_space.SelectionError as exc:
        raise AirError(str(exc)) from None
    riders = _riding_feet(rig, bone, scene)
    if settings.settle_frames and riders:
        raise AirError(f"easing out over {settings.settle_frames} frame(s) after touchdown would move the foot "
                       f"controller(s) {', '.join(riders)} (they hang from '{bone or rig.name}') while they stand "
                       "on the ground; set Ease out to 0, or choose a Move bone the feet do not follow")
    fps = scene_units.scene_fps(scene)
    m = scene_units.metres_per_unit(scene)
    frames = np.arange(scene.frame_start, scene.frame_end + 1, dtype=float)
    if frames.size < fc.TAKEOFF_FIT_FRAMES + 2:
        raise AirError(f"the scene's frame range {scene.frame_start}..{scene.frame_end} is too short; "
                       "include the take-off and the landing")
    with _WithoutLayer(None if own_layer else rig):
        heads, tails = body_com.sample_points(scene, rig, model, frames)
        com = whole_body_com(model, heads, tails)
        stretches, source = [], settings.flights
        if settings.flights in ("AUTO", "MARKERS"):
            stretches, source = marker_stretches(scene, int(frames[0]), int(frames[-1])), "markers"
        if not stretches and settings.flights in ("AUTO", "BALLISTIC"):
            stretches, source = ballistic_stretches(frames, com, fps, gravity), "the body's free fall"
        if not stretches and settings.flights in ("AUTO", "BALLISTIC") and "trunk" in model.groups:
            # Limbs moving in the air bend the COM's arc, the very thing to fix; the
            # torso as keyed usually still falls freely.
            trunk = group_coms(model, heads, tails)["trunk"][1]
            stretches, source = ballistic_stretches(frames, trunk, fps, gravity), "the torso's free fall"
        if not stretches:
            raise AirError(f"no flight found in frames {scene.frame_start}..{scene.frame_end} of '{rig.name}': "
                           f"write the jump first (its '{FLIGHT_MARKER}' markers mark the flights) or key a "
                           "jump whose body leaves the ground")
        velocities = _takeoff_velocities(scene, rig, model, stretches, fps)
    index = [(a - int(frames[0]), b - int(frames[0])) for a, b in stretches]
    try:
        fix, departures = fc.check_flight(model, heads, tails, index, fps, gravity, tolerance=settings.tolerance * m,
                                          first_frame=int(frames[0]), takeoff_velocities=velocities,
                                          settle_frames=settings.settle_frames)
        # the speed is read at each arc start (velocities above): say when a limb starts
        # moving right there, since that bends the arc
        motion = fc.takeoff_motion(model, heads, tails, index, fps, tolerance=settings.tolerance * m,
                                   first_frame=int(frames[0]))
    except LeapwrightError as exc:
        raise AirError(str(exc)) from None
    return AirWork(rig, model, how, frames, stretches, source, fix, departures, channels, m,
                   int(settings.settle_frames), tuple(motion))


def _key_frames(work):
    """Indices keyed: every frame of each flight and its settle, then a zero just after."""
    n, f0, keys = len(work.frames), int(work.frames[0]), set()
    starts = [a - f0 for a, _ in work.stretches[1:]] + [n]
    for (a, b), following in zip(work.stretches, starts):
        end = min(b - f0 + work.settle_frames + 1, following, n - 1)
        keys.update(range(a - f0, end + 1))
    return np.array(sorted(keys))


def curve_specs(work, offsets=None):
    """The carrier's location deltas as :class:`blocking_pass.CurveSpec` (linear keys) [BU]."""
    off = work.fix.offsets if offsets is None else offsets
    idx = _key_frames(work)
    delta = (off[idx] / work.metres_per_unit) @ work.channels.world_to_channel.T
    return [CurveSpec(work.channels.data_path, i, work.frames[idx], delta[:, i], None, "LINEAR")
            for i in range(3)]


def write(work, scene, refine=True):
    """Replace the ``lw:body`` layer by the correction; returns the largest COM departure
    from the arc left after writing [m] (sampled again)."""
    ownership.clear(work.rig, CAPABILITY)
    offsets = work.fix.offsets
    ownership.write_layer(work.rig, CAPABILITY, curve_specs(work, offsets))
    residual = remaining(work, scene)
    if refine and np.abs(residual).max(initial=0.0) > REFINE_ABOVE:
        offsets = offsets.copy()
        for (a, b), r in zip(work.stretches, _split(work, residual)):
            offsets[a - int(work.frames[0]):b - int(work.frames[0]) + 1] += r
        ownership.clear(work.rig, CAPABILITY)
        ownership.write_layer(work.rig, CAPABILITY, curve_specs(work, offsets))
        residual = remaining(work, scene)
    return float(np.linalg.norm(residual, axis=1).max(initial=0.0))


def _split(work, residual):
    out, k = [], 0
    for a, b in work.stretches:
        out.append(residual[k:k + b - a + 1])
        k += b - a + 1
    return out


def remaining(work, scene):
    """Arc minus the evaluated COM on every flight frame [m], stretches one after another."""
    flight = np.concatenate([np.arange(a, b + 1) for a, b in work.stretches]).astype(float)
    com = body_com.whole_body_com(scene, work.rig, work.model, flight)
    return np.concatenate(work.fix.arcs) - com


def remove(rig):
    """Take the ``lw:body`` layer off ``rig``; True when there was one."""
    had = CAPABILITY in ownership.capabilities_written(rig)
    if had:
        ownership.clear(rig, CAPABILITY)
    return had
