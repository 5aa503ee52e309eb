"""Re-timing the animator's arm swing: read the arm's evaluated motion, find the contact, warp the key times.

Flow: sample the chosen arms' world matrices once per frame in scene time
(:mod:`rig_sampling`), measure the elevation of each shoulder-to-hand line in the
torso's sagittal frame (the rest facing of :func:`swing_keys.rest_facing` carried by
the upper arm's parent bone), find the contact window (the ``lw:`` markers, the body
bone's free fall or the foot heights), let :mod:`core.arms.timing` detect the swing
and warp every key time of the arm bones' own curves, wherever they play: the active
action, or an NLA strip whose offset, scale and repeat :mod:`strip_time` maps
back to the action's frames. Values stay as they were; only times and handle times
move. Nothing here writes: :func:`write` does, after :mod:`action_backup` has kept
the original action.
"""

from dataclasses import dataclass

import numpy as np

from ..blender import scene_units
from ..blender.curves import Timeline
from ..blender import action_backup
from ..plan import blocking_pass as bp, link as plan_link
from ..rig import sampling as rig_sampling
from . import strip_time
from ..core.arms.swing import arm_com_distance
from ..core.base.errors import LeapwrightError
from ..core.base.keys import BezierKeys
from ..core.base.phase_words import marker_name, phase_of_marker
from ..core.arms.timing import (ContactWindow, detect_swing, elevation_angles, retime_swing, swing_warnings,
    window_from_com, window_from_feet, window_from_plan)
from ..blender.key_writer import read_keys, restore_keys
from .keys import SwingError, chosen_arms, rest_facing

CAPABILITY = "arms_timing"
#: Markers the checker adds for what it measured; not the plan's phases.
_MEASURED = "lw:measured"


def arm_elevations(scene, rig, arms, forward, up, frames):
    """Elevation [rad] (F, arms) of each shoulder-to-hand line at scene ``frames``.

    The sagittal frame turns with the upper arm's parent bone (the chest), so a
    torso lean is not read as a swing.
    """
    bones = rig.data.bones
    names = []
    for a in arms:
        parent = bones[a.upper].parent
        names += [a.upper, a.end_bone] + ([parent.name] if parent is not None else [])
    names = list(dict.fromkeys(names))
    mats, names = rig_sampling.sample_pose_world(scene, rig, frames, names)
    col = {n: i for i, n in enumerate(names)}
    out = []
    for a in arms:
        shoulder = mats[:, col[a.upper], :3, 3]
        tail = np.array([0.0, bones[a.end_bone].length, 0.0, 1.0])
        hand = (mats[:, col[a.end_bone]] @ tail)[:, :3]
        parent = bones[a.upper].parent
        if parent is not None:
            rest = np.linalg.inv(np.array(parent.matrix_local.to_3x3()))
            turn = mats[:, col[parent.name], :3, :3] @ rest
        else:
            turn = np.broadcast_to(np.array(rig.matrix_world.to_3x3()), (len(frames), 3, 3))
        out.append(elevation_angles(shoulder, hand, turn @ forward, turn @ up))
    return np.stack(out, axis=1)


def _lw_markers(scene):
    return sorted((m.frame, m.name) for m in scene.timeline_markers
                  if m.name.startswith(bp.MARKER_PREFIX) and not m.name.startswith(_MEASURED))


def _marker_window(scene, hop, fps):
    marks = _lw_markers(scene)

    def find(phase):
        for i, (frame, name) in enumerate(marks):  # this version's markers and the force-plate names of before
            if phase_of_marker(name) in ((phase, hop), (phase, None) if hop == 1 else None):
                return i, frame
        return None, None

    _, push = find("propulsion")
    i, takeoff = find("flight")
    if push is None or takeoff is None:
        raise SwingError(f"no {marker_name('propulsion')} and {marker_name('flight')} markers for hop {hop}: "
                         "write the jump first, or choose another Contact from")
    touchdown = marks[i + 1][0] if i + 1 < len(marks) else None
    plan, _ = plan_link.plan_for(scene)
    if plan is not None and 1 <= hop <= len(plan.hops):
        start = float(scene.leapwright_plan.start_frame)
        if sorted((f, n) for n, f in bp.phase_markers(plan, Timeline(start, fps))) == marks:
            w = window_from_plan(plan, hop)  # the markers are this plan's, rounded: use its exact times
            shift = start / fps
            return (ContactWindow(w.push_start_s + shift, w.takeoff_s + shift, w.touchdown_s + shift, "plan"),
                    "the plan's phases (its lw: markers)")
    return (ContactWindow(push / fps, takeoff / fps, None if touchdown is None else touchdown / fps, "markers"),
            "the lw: markers")


def _heights(scene, rig, bone_names, frames):
    mats, _ = rig_sampling.sample_pose_world(scene, rig, frames, bone_names)
    return mats[:, :, 2, 3] * scene_units.metres_per_unit(scene)


def _body_window(scene, rig, hop, frames, fps):
    s = scene.leapwright_plan
    if not s.com_bone or rig.pose.bones.get(s.com_bone) is None:
        raise SwingError("no body bone under Character to read the free fall from")
    z = _heights(scene, rig, [s.com_bone], frames)[:, 0]
    return window_from_com(frames / fps, z, scene_units.exact_gravity(s.gravity), hop=hop), "the body bone's free fall"


def _feet_window(scene, rig, hop, frames, fps):
    s = scene.leapwright_plan
    feet = [f for f in (s.foot_left, s.foot_right) if f and rig.pose.bones.get(f) is not None]
    if not feet:
        raise SwingError("no foot controllers under Character to read the foot heights from")
    body = [s.com_bone] if s.com_bone and rig.pose.bones.get(s.com_bone) is not None else []
    z = _heights(scene, rig, feet + body, frames)
    com = z[:, -1] if body else None
    return window_from_feet(frames / fps, z[:, :len(feet)], com_height=com, hop=hop), "the foot heights"


def contact_window(scene, rig, contact_from, hop, frames, fps):
    """``(ContactWindow [s, scene frame / fps], where it came from)``; raises :class:`SwingError`."""
    ways = {"MARKERS": [_marker_window], "BODY": [_body_window], "FEET": [_feet_window],
            "AUTO": [_marker_window, _body_window, _feet_window]}[contact_from]
    reasons = []
    for way in ways:
        try:
            if way is _marker_window:
                return way(scene, hop, fps)
            return way(scene, rig, hop, frames, fps)
        except (SwingError, LeapwrightError) as exc:
            reasons.append(str(exc))
    raise SwingError("no contact window found: " + "; ".join(reasons))


def bezier_of(fc, fps, timing=strip_time.SCENE_TIME):
    """An F-curve's keys as :class:`core.base.keys.BezierKeys` in scene seconds (scene frame / fps).

    ``timing`` maps the curve's action frames to scene frames (an NLA strip's offset and scale).
    """
    k = read_keys(fc)
    co = k["co"].reshape(-1, 2).astype(float)
    left, right = k["handle_left"].reshape(-1, 2).astype(float), k["handle_right"].reshape(-1, 2).astype(float)
    for a in (co, left, right):
        a[:, 0] = timing.to_scene(a[:, 0]) / fps
    return BezierKeys(co[:, 0], co[:, 1], left, right)


@dataclass(frozen=True, eq=False)
class SwingReading:
    """An arm swing read from the evaluated rig against its contact window.

    swing : core.arms.timing.DetectedSwing  (times [s] = scene frame / fps)
    window : core.arms.timing.ContactWindow
    warnings : tuple of str
    """

    rig: object
    arms: list
    frames: np.ndarray
    fps: float
    elevation: np.ndarray
    swing: object
    window: object
    source: str
    warnings: tuple

    def frame(self, t):
        return float(t) * self.fps


def read_swing(scene, rig, settings):
    """Sample the chosen arms and find their swing and the contact; writes nothing."""
    arms = chosen_arms(rig, settings)
    forward, up = rest_facing(rig, arms)
    fps = scene_units.scene_fps(scene)
    frames = np.arange(scene.frame_start, scene.frame_end + 1, dtype=float)
    if frames.size < 5:
        raise SwingError(f"the scene's frame range {scene.frame_start}..{scene.frame_end} is too short to read a "
                         "swing; include the dip, the take-off and the landing")
    elevation = arm_elevations(scene, rig, arms, forward, up, frames).mean(axis=1)
    window, source = contact_window(scene, rig, settings.contact_from, int(settings.hop), frames, fps)
    t = frames / fps
    end = t[-1] if window.touchdown_s is None else min(t[-1], 1.5 * window.touchdown_s - 0.5 * window.takeoff_s)
    try:
        swing = detect_swing(t, elevation, search=(t[0], end))
        r = arm_com_distance(scene.leapwright_plan.standing_com_height * scene_units.metres_per_unit(scene))
        warnings = swing_warnings(swing, window, fps, com_distance=r)
    except LeapwrightError as exc:
        raise SwingError(f"'{rig.name}': {exc}") from None
    return SwingReading(rig, arms, frames, fps, elevation, swing, window, source, warnings)


@dataclass(frozen=True, eq=False)
class RetimeWork:
    """What the re-timing writes: the curves and their new keys (seconds), and the report."""

    reading: SwingReading
    action: object
    curves: list
    new_keys: tuple
    report: object
    timing: object = strip_time.SCENE_TIME


def prepare_retime(scene, rig, settings):
    """Read the swing and compute the new key times; raises :class:`SwingError`, writes nothing."""
    arms = chosen_arms(rig, settings)
    if rig.animation_data is not None and rig.animation_data.use_tweak_mode:
        raise SwingError(f"'{rig.name}' is in NLA tweak mode; leave it (Tab in the NLA editor) and run again")
    sources = strip_time.key_sources(rig, arms)
    if not sources:
        names = ", ".join(b for a in arms for b in a.bones)
        raise SwingError(f"no keys of yours on {names} in '{rig.name}''s action or NLA strips: key the arm swing "
                         "first (a placed swing is already timed to the plan)")
    if len(sources) > 1:
        raise SwingError(f"the arm keys of '{rig.name}' play from {len(sources)} places: "
                         + "; ".join(x.where() for x in sources) + ". Re-timing one would leave the others off "
                         "the swing: mute the ones to leave alone (or move the keys into one action) and run again")
    source = sources[0]
    strip_time.check_mapping(source)
    action, curves = source.action, source.curves
    if action.library is not None:
        raise SwingError(f"the action '{action.name}' is linked from '{action.library.filepath}', so re-timed keys "
                         "would be lost on save; make it local (Object > Relations > Make Local) and run again")
    reading = read_swing(scene, rig, settings)
    sw, w = reading.swing, reading.window
    timing = strip_time.strip_time(source, [reading.frame(x) for x in
                                                  (sw.upswing_start_s, sw.peak_s, w.push_start_s, w.takeoff_s)])
    try:
        new, report = retime_swing([bezier_of(fc, reading.fps, timing) for fc in curves], reading.swing,
                                   reading.window, reading.fps)
    except LeapwrightError as exc:
        raise SwingError(f"'{rig.name}': {exc}") from None
    return RetimeWork(reading, action, curves, new, report, timing)


def write(work):
    """Keep the original action, then move the keys (values untouched); returns the backup's name."""
    paths = [(fc.data_path, fc.array_index) for fc in work.curves]
    backup = action_backup.keep(work.reading.rig, CAPABILITY, work.action, paths)
    fps, timing = work.reading.fps, work.timing
    for fc, k in zip(work.curves, work.new_keys):
        keys = read_keys(fc)
        co = keys["co"].reshape(-1, 2).copy()
        co[:, 0] = timing.to_action(k.times * fps)
        keys["co"] = co.ravel()
        for name, handles in (("handle_left", k.left_handles), ("handle_right", k.right_handles)):
            h = np.array(handles, dtype=float)
            h[:, 0] = timing.to_action(h[:, 0] * fps)
            keys[name] = h.ravel()
        restore_keys(fc, keys)
    return backup
