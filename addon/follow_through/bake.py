"""Drag and follow-through baked onto chosen bones, as a layer of rotation deltas.

:func:`prepare` checks the request, samples the rig once per frame (scene
time, so NLA offsets play as they do in the scene), runs the core's chain
dynamics and turns the result into F-curve specs; it writes nothing. :func:`apply`
replaces any previous bake with those specs on the NLA track ``lw:follow_through`` (blend
COMBINE, above the animator's keys); :func:`remove` takes a bake back exactly.

Rotation modes under COMBINE: quaternions multiply (``basis @ delta``), which is
the core's convention, so the delta is keyed as it is. Euler values add, so the
delta keyed on a frame is ``euler(R(e) @ delta) - e`` with ``e`` the animated
Euler of that frame, picked next to ``e`` (no ±360° jumps): the sum is exact on
every keyed frame. Axis-angle values would add as four plain numbers, which is
not a rotation, and are refused.
"""

import functools
import math
from dataclasses import dataclass

import numpy as np
from mathutils import Euler, Quaternion

from ..blender import layer_rewrite, ownership
from ..rig import sampling as rig_sampling, space as rig_space
from ..blender.curves import CurveSpec
from ..core.follow_through.chains import BakeOptions, ChainParameters
from ..core.follow_through.presets import chain_preset
from ..core.base.constants import STANDARD_GRAVITY
from . import body_colliders, contact_bake

CAPABILITY = "follow_through"
TRACK = ownership.group_name(CAPABILITY)


class LagError(Exception):
    """A bake request that cannot be done as asked (found before anything is written)."""


@dataclass(frozen=True)
class LagRequest:
    """What to bake.

    Parameters
    ----------
    bones : tuple of str
        Pose bones to simulate; each one's nearest chosen ancestor drives it.
    parameters : ChainParameters
        A preset's values (:func:`chain_preset`) or the animator's own.
    frame_start, frame_end : int
        Scene frames to bake, both included [frame].
    key_tolerance : float
        Keys whose removal changes no rotation by more than this are dropped [rad].
    on_twos : bool
        Hold each pose for two frames (constant keys).
    cyclic : bool
        The range is one loop: start in the periodic state, first and last frames agree.
    reset_frames : tuple of int
        Scene frames where the chains start again from rest (camera cuts).
    gravity : float
        Magnitude of gravity, pointing down world -Z [m/s^2].
    keep_out : bool
        Keep the chains out of the body's capsules and above the ground (:mod:`.body_colliders`).
    radii : tuple of (str, float)
        Radii typed in the panel, by part (head, neck, torso, ...) [m]; 0 keeps the fitted one.
    multi_link : bool
        Simulate each chain as a multi-link pendulum (a child pulls on its parent); False lets each
        bone follow its parent only (the core's ``BakeOptions.multi_link``).
    """

    bones: tuple
    parameters: ChainParameters
    frame_start: int
    frame_end: int
    key_tolerance: float = 0.0
    on_twos: bool = False
    cyclic: bool = False
    reset_frames: tuple = ()
    gravity: float = STANDARD_GRAVITY
    keep_out: bool = False
    radii: tuple = ()
    multi_link: bool = False


@dataclass(frozen=True)
class LagWork:
    """Everything :func:`apply` writes, computed by :func:`prepare`.

    Parameters
    ----------
    specs : tuple of CurveSpec
    peaks : dict of str -> float
        Largest delta angle of each bone over the bake [rad].
    keys : int
        Keys in ``specs``.
    body : str
        The panel's text about the capsules and the ground (JSON), empty without them.
    """

    specs: tuple
    peaks: dict
    keys: int
    body: str = ""


def parameters_for(preset, frequency, damping_ratio, sag, angle_limit, transmission):
    """A preset by name, or the given values when ``preset`` is ``'custom'`` (angles [rad])."""
    if str(preset).lower() != "custom":
        return chain_preset(preset)
    return ChainParameters(frequency=float(frequency), damping_ratio=float(damping_ratio), sag=float(sag),
                           angle_limit=float(angle_limit), transmission=float(transmission))


def bones_of_collection(rig, name):
    """Names of the bones in the rig's bone collection ``name``, in the rig's order."""
    coll = rig.data.collections.get(name) if name else None
    if coll is None:
        known = ", ".join(c.name for c in rig.data.collections) or "none"
        raise LagError(f"rig {rig.name!r} has no bone collection {name!r} (it has: {known})")
    members = {b.name for b in coll.bones}
    return tuple(b.name for b in rig.data.bones if b.name in members)


def marker_resets(scene, frame_start, frame_end, name_contains):
    """Frames inside the range of camera-switch markers and markers whose name contains the text."""
    out = set()
    for m in scene.timeline_markers:
        cut = m.camera is not None or (name_contains and name_contains in m.name)
        if cut and frame_start < m.frame <= frame_end:
            out.add(int(m.frame))
    return tuple(sorted(out))


def _selected_bones(context, rig):
    chosen = getattr(context, "selected_pose_bones", None)
    if chosen is None:
        raise LagError("the selected bones cannot be read here; select the bones in pose mode, "
                       "or pick a bone collection")
    picked = {pb.name for pb in chosen}
    return tuple(pb.name for pb in rig.pose.bones if pb.name in picked)


def request_from_panel(context, rig, bones=None, preset="SETTINGS", frame_range=None):
    """The bake the panel's settings ask for.

    Parameters
    ----------
    bones : sequence of str or None
        The bones to bake; None takes the panel's choice (selected pose bones or a collection).
    preset : str
        'SETTINGS' for the panel's preset or values, else a preset's name.
    frame_range : (int, int) or None
        First and last frame; None takes the panel's range.

    Returns
    -------
    bake.LagRequest
    """
    s = context.scene.leapwright_follow_through
    if rig is None or rig.type != "ARMATURE":
        check(rig, None)
    if bones is None:
        bones = bones_of_collection(rig, s.collection) if s.source == "COLLECTION" \
            else _selected_bones(context, rig)
    preset = s.preset if preset == "SETTINGS" else preset
    params = parameters_for(preset, s.frequency, s.damping_ratio, s.sag, s.angle_limit, s.transmission)
    scene = context.scene
    if frame_range is None:
        frame_range = (scene.frame_start, scene.frame_end) if s.use_scene_range else (s.frame_start, s.frame_end)
    start, end = frame_range
    jump = getattr(scene, "leapwright_plan", None)
    gravity = jump.gravity if jump is not None else STANDARD_GRAVITY
    radii = tuple((name, float(getattr(s, f"{name}_radius"))) for name in body_colliders.RADIUS_SETTINGS)
    return LagRequest(bones=tuple(bones), parameters=params, frame_start=int(start), frame_end=int(end),
                               key_tolerance=s.key_tolerance, on_twos=s.on_twos, cyclic=s.cyclic,
                               reset_frames=marker_resets(scene, start, end, s.reset_marker),
                               gravity=gravity, keep_out=bool(s.keep_out), radii=radii,
                               multi_link=bool(s.multi_link))


def check(rig, request):
    """Raise :class:`LagError` for anything that would stop the bake; returns nothing."""
    if rig is None:
        raise LagError("no rig: make the armature active (or set it as the jump's rig)")
    if rig.type != "ARMATURE":
        raise LagError(f"{rig.name!r} is a {rig.type.lower()}, not an armature; make the armature active")
    linked = rig_space.linked_library_problem(rig)
    if linked:
        raise LagError(linked)
    if not request.bones:
        raise LagError("no bones chosen: select the pose bones to bake, name them, or pick a bone collection")
    missing = [n for n in request.bones if rig.pose.bones.get(n) is None]
    if missing:
        raise LagError(f"rig {rig.name!r} has no bone {missing[0]!r}")
    turned = [n for n in request.bones if rig.pose.bones[n].rotation_mode == "AXIS_ANGLE"]
    if turned:
        raise LagError(f"bone {turned[0]!r} uses axis-angle rotation, whose values cannot be layered (they add "
                       "as four plain numbers); give it quaternion or Euler rotation")
    span = request.frame_end - request.frame_start
    if span < (2 if request.cyclic else 1):
        raise LagError(f"frame range {request.frame_start}..{request.frame_end} is too short; bake at least "
                       f"{3 if request.cyclic else 2} frames")
    ad = rig.animation_data
    if ad is not None and ad.use_tweak_mode:
        raise LagError("the rig's NLA is in tweak mode; leave tweak mode (Tab in the NLA editor) and bake again")


def mute_layer(rig):
    """The previous bake's track muted, so sampling sees the animation without it.

    A muted track stops writing, and Blender leaves an un-keyed channel at its
    last value, which is the layer's: those channels get the values they had
    before the layer (what :mod:`ownership` remembered for removal).

    Returns
    -------
    (track, was) : the track (or None) and its mute state before, for :func:`unmute_layer`.
    """
    track = ownership.layer_track(rig, CAPABILITY)
    was = track.mute if track is not None else None
    if track is not None:
        track.mute = True
        for (path, index), value in ownership.static_values(rig, CAPABILITY).items():
            rig.path_resolve(path)[index] = value
    return track, was


def unmute_layer(scene, track, was, frame=None):
    """Undo :func:`mute_layer` and evaluate ``frame`` ((frame, subframe); the current one when None)."""
    if track is not None:
        track.mute = was
    if track is not None or frame is not None:
        whole, sub = frame or (scene.frame_current, scene.frame_subframe)
        scene.frame_set(whole, subframe=sub)  # the layer's values again


def sampling_plan(rig, request, scene=None):
    """What a checked request samples: ``(names, frames, Euler bone names, channels)``; with
    ``keep_out`` the body's landmark bones follow the chosen bones in ``names``."""
    names = list(request.bones)
    if request.keep_out and scene is not None:
        names += list(body_colliders.body_bones(scene, rig))
    frames = np.arange(request.frame_start, request.frame_end + 1)
    eulers = [n for n in names if rig.pose.bones[n].rotation_mode not in ("QUATERNION", "AXIS_ANGLE")]
    channels = (("rotation_euler", 3),) if eulers else ()
    return names, frames, eulers, channels


def simulation(scene, rig, request, matrices, prepared=None):
    """The core's simulation of ``request`` on sampled ``matrices``, as a call that reads no Blender data.

    Everything taken from Blender (units, frame rate, the bone tree) is read here,
    so the returned callable can run on a worker thread.

    Parameters
    ----------
    matrices : ndarray (F, B, 4, 4)
        World matrices of the request's bones at its frames [Blender units].
    prepared : dict, optional
        Where the drive made from these matrices is kept between bakes (the kept take's
        :attr:`.sampled_motion.SampledMotion.prepared`): a re-bake of the same motion with other
        chain settings takes it from there. None makes it for this bake alone.

    Returns
    -------
    callable
        ``call() -> ChainBake``.
    """
    unit = scene.unit_settings.scale_length or 1.0
    fps = scene.render.fps / scene.render.fps_base
    times = np.arange(request.frame_start, request.frame_end + 1) / fps
    chosen = len(request.bones)
    heads = matrices[:, :chosen, :3, 3] * unit
    rotations = matrices[:, :chosen, :3, :3]
    _, parents, _, _ = rig_sampling.bone_rest_data(rig, request.bones)
    resets = tuple(sorted({f - request.frame_start for f in request.reset_frames
                           if request.frame_start < f <= request.frame_end}))
    options = BakeOptions(cyclic=request.cyclic, resets=resets, key_tolerance=float(request.key_tolerance),
                          on_twos=bool(request.on_twos), multi_link=bool(request.multi_link))
    gravity = (0.0, 0.0, -float(request.gravity))
    # what the drive depends on besides the matrices; the chain settings are not part of it
    made_for = (unit, fps, request.frame_start, request.frame_end, chosen, tuple(parents), options.cyclic, resets,
                gravity)
    motions = {} if prepared is None else prepared.setdefault(made_for, {})
    if not request.keep_out:
        return functools.partial(contact_bake.bake_prepared, motions, times, heads, rotations, parents,
                                 request.parameters, gravity, options)
    body = body_colliders.body_for_bake(scene, rig, request, matrices, parents)
    call = functools.partial(contact_bake.bake_kept_out, times, heads, rotations, parents, request.parameters,
                             gravity, options, body, motions)
    call.body_text = body["text"]  # the panel's readout of the capsules, written with the keys
    return call


def curves_for(rig, names, eulers, frames, values, bake, body=""):
    """The curves of a simulated bake (``bake`` a ChainBake) of the bones ``names``, as :class:`LagWork`."""
    interpolation = "CONSTANT" if bake.stepped else "LINEAR"
    specs = []
    for b, name in enumerate(names):
        keep = bake.key_mask[:, b]
        pb = rig.pose.bones[name]
        path = pb.path_from_id()
        times = frames[keep].astype(float)  # one array for the bone's curves (4,000 frames x 300 bones add up)
        if name in eulers:
            deltas = _euler_deltas(values["rotation_euler"][keep, b], bake.quaternions[keep, b], pb.rotation_mode)
            specs += [CurveSpec(f"{path}.rotation_euler", i, times, deltas[:, i], None,
                                interpolation) for i in range(3)]
        else:
            q = bake.quaternions[keep, b]
            specs += [CurveSpec(f"{path}.rotation_quaternion", i, times, q[:, i], None,
                                interpolation) for i in range(4)]
    peaks = {n: float(p) for n, p in zip(names, bake.peak_offsets)}
    return LagWork(tuple(specs), peaks, int(sum(len(s.frames) for s in specs)), body)


def prepare(scene, rig, request, progress=None):
    """Sample, simulate and build the curves in one go, sampling afresh; writes nothing.

    (The operator goes through :class:`.bake_job.BakeJob`, which can stop between
    steps and reuses the motion of the last bake.)

    Parameters
    ----------
    scene : bpy.types.Scene
    rig : bpy.types.Object
    request : LagRequest
    progress : callable or None
        Called with the frames sampled so far.

    Returns
    -------
    LagWork

    Raises
    ------
    LagError
        For a request that cannot be baked (the reason and a fix in the message).
    LeapwrightError
        From the core, for bad parameters or unusable motion.
    """
    check(rig, request)
    request.parameters.coefficients()  # bad values are reported before the slow part
    names, frames, eulers, channels = sampling_plan(rig, request, scene)
    track, was = mute_layer(rig)
    try:
        matrices, _, values = rig_sampling.sample_pose(scene, rig, frames, names, channels, progress)
    finally:
        unmute_layer(scene, track, was)
    call = simulation(scene, rig, request, matrices)
    return curves_for(rig, request.bones, eulers, frames, values, call(), getattr(call, "body_text", ""))


def _euler_deltas(animated, deltas, order):
    """Per-frame Euler differences whose sum with ``animated`` is ``R(animated) @ R(delta)``."""
    out = np.empty_like(animated)
    for i, (e, q) in enumerate(zip(animated, deltas)):
        base = Euler(e, order)
        total = (base.to_matrix() @ Quaternion(q).to_matrix()).to_euler(order, base)
        out[i] = np.array(total) - e
    return out


def apply(rig, work):
    """Replace the previous bake (if any) by ``work`` on the track ``lw:follow_through``.

    Returns True when the keys were re-written inside the existing layer (nothing else changed).
    """
    if layer_rewrite.rewrite_in_place(rig, CAPABILITY, work.specs):
        return True
    if CAPABILITY in ownership.capabilities_written(rig):
        ownership.clear(rig, CAPABILITY)
    ownership.write_layer(rig, CAPABILITY, list(work.specs))
    return False


def remove(rig):
    """Take the bake back; True if there was one."""
    if rig is None or CAPABILITY not in ownership.capabilities_written(rig):
        return False
    ownership.clear(rig, CAPABILITY)
    return True


def degrees(peaks):
    """``{bone: peak [deg]}`` for the readout."""
    return {n: math.degrees(v) for n, v in peaks.items()}
