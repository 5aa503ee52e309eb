"""The blocking pass as curves: every key computed before anything is written.

Input: the core's plan (world space, metres, seconds) and the character's
:class:`rig_space.Channels`. Output: plain :class:`CurveSpec` records (frames,
values, slopes) for the body, the feet and the apparent weight, plus the phase
markers. Nothing here touches Blender data, so a refused run changes nothing.
"""

import numpy as np

from ..core.plan.feet import foot_ball_path
from ..blender.curves import MARKER_PREFIX, WEIGHT_PROPERTY, CurveSpec  # noqa: F401  (re-exported as bp.*)
from ..core.base.keys import evaluate_hermite, frame_keys, held_pose_keys, hermite_keys, phase_pose_keys
from ..core.base.phase_words import marker_name

_UP = np.array([0.0, 0.0, 1.0])
_NEGLIGIBLE = 1e-12  # channel change per metre below which a channel is left alone
#: Key styles of held poses on a grid of whole frames, and their step [frames].
HELD_STEPS = {"TWOS": 2, "THREES": 3}
BOTH = ("forward", "height")


def _union(*time_sets):
    t = np.unique(np.concatenate([np.asarray(s, dtype=float) for s in time_sets]))
    keep = np.concatenate([[True], np.diff(t) > 1e-9])
    return t[keep]


def _distinct_frames(frames):
    """Mask dropping keys that would share a float32 frame with the one before."""
    f32 = np.asarray(frames, dtype=np.float32)
    return np.concatenate([[True], np.diff(f32) > 0])


def _drop_flat_runs(values):
    """Mask dropping keys inside runs of equal values (linear keys there add nothing)."""
    v = np.asarray(values)
    keep = np.ones(v.size, dtype=bool)
    if v.size > 2:
        keep[1:-1] = ~((v[1:-1] == v[:-2]) & (v[1:-1] == v[2:]))
    return keep


def _spec(path, index, timeline, t, values, slopes_per_s, interpolation, thin=False):
    frames = timeline.frames(t)
    slopes = np.asarray(slopes_per_s, dtype=float) / timeline.fps
    keep = _distinct_frames(frames)
    if thin and interpolation == "LINEAR":
        keep &= _drop_flat_runs(values)
    return CurveSpec(path, index, frames[keep], np.asarray(values)[keep], slopes[keep], interpolation)


def carried_parts(root_motion, root_vertical):
    """``(root parts, body parts)``: which of the plan's travel and rise each part carries.

    ``'IN_PLACE'`` leaves everything on the body bone; the root modes move the
    travel (and the rise when ``root_vertical``) to the root bone or object.
    """
    if root_motion == "IN_PLACE":
        return (), BOTH
    if root_vertical:
        return BOTH, ()
    return ("forward",), ("height",)


def _part_keys(plan, style, fps):
    """``({'forward': keys, 'height': keys}, interpolation)`` of a key style."""
    if style in HELD_STEPS:
        return {n: held_pose_keys(plan, n, fps, HELD_STEPS[style]) for n in BOTH}, "CONSTANT"
    if style == "POSES":
        return {n: phase_pose_keys(plan, n) for n in BOTH}, "CONSTANT"
    if style == "EVERY_FRAME":
        return {n: frame_keys(plan, n, fps) for n in BOTH}, "LINEAR"
    return {n: hermite_keys(plan, n) for n in BOTH}, "BEZIER"


def keyed_path(plan, part, style, fps, t):
    """The plan's ``part`` ('forward' or 'height') [m] as its keys trace it, at times ``t`` [s].

    What a root keyed with :func:`body_curves` carries between its keys
    (cubic Hermite, linear or held, constant beyond the ends), so a controller
    riding under it can take off exactly that.
    """
    keys, interp = _part_keys(plan, style, fps)
    k = keys[part]
    t = np.asarray(t, dtype=float)
    if len(k.times) == 1:
        return np.full(t.shape, float(k.values[0]))
    if interp == "CONSTANT":
        i = np.clip(np.searchsorted(k.times, t + 1e-12, side="right") - 1, 0, len(k.times) - 1)
        return k.values[i]
    if interp == "LINEAR":
        return np.interp(t, k.times, k.values)
    return evaluate_hermite(k, t)


def body_curves(plan, channels, forward, metres_per_unit, timeline, style, as_delta, parts=BOTH):
    """Location curves of the body bone (or object).

    Parameters
    ----------
    plan : core.plan.planner.JumpPlan
    channels : rig_space.Channels
    forward : array (3,)
        Unit world direction of forward travel.
    metres_per_unit : float
        [m/BU]
    timeline : Timeline
    style : {'POSES', 'SPLINE', 'EVERY_FRAME', 'TWOS', 'THREES'}
    as_delta : bool
        Values are offsets from zero (for a layer on top of the user's keys)
        instead of from the channel's present value.
    parts : tuple of {'forward', 'height'}
        What this channel carries (the rest is left to a root, see
        :func:`carried_parts`).
    """
    a = channels.world_to_channel @ forward / metres_per_unit  # channel change per forward metre
    b = channels.world_to_channel @ _UP / metres_per_unit  # per metre up
    if "forward" not in parts:
        a = np.zeros(3)
    if "height" not in parts:
        b = np.zeros(3)
    keys, interp = _part_keys(plan, style, timeline.fps)
    out = []
    for i in range(3):
        uses = [name for name, coef in (("forward", a[i]), ("height", b[i])) if abs(coef) > _NEGLIGIBLE]
        if not uses:
            continue
        t = _union(*(keys[name].times for name in uses))
        base = 0.0 if as_delta else float(channels.base[i])
        values = base + a[i] * plan.forward(t) + b[i] * plan.height(t)
        slopes = a[i] * plan.forward_speed(t) + b[i] * plan.vertical_speed(t)
        if style == "POSES" or style in HELD_STEPS:
            slopes = np.zeros_like(t)
        out.append(_spec(channels.data_path, i, timeline, t, values, slopes, interp))
    return out


def _contact_edges(plan):
    return [x for hop in plan.hops for x in (hop.takeoff_time_s, hop.touchdown_time_s)]


def foot_curves(plan, channels, forward, metres_per_unit, timeline, style, tuck_m, as_delta, riding=()):
    """Location curves of one foot controller: planted in contact, carried in flight.

    Keys sit on every frame plus exactly at take-off and touchdown, linear in
    between, so the foot is still for the whole of each contact (the poses
    style holds each phase's pose instead, the held styles the poses on their
    grid). ``riding`` names the parts of the plan ('forward', 'height') that a
    root above the controller already carries; they are taken off its path.
    """
    if style in HELD_STEPS:
        t = held_pose_keys(plan, "forward", timeline.fps, HELD_STEPS[style]).times
        interp = "CONSTANT"
    elif style == "POSES":
        t = _union([p.start_s for p in plan.phases], [plan.duration_s])
        interp = "CONSTANT"
    else:
        frames_t = np.arange(int(np.floor(plan.duration_s * timeline.fps + 1e-9)) + 1) / timeline.fps
        t = _union(frames_t, _contact_edges(plan), [0.0, plan.duration_s])
        interp = "LINEAR"
    fwd, up = foot_ball_path(plan, t, tuck=tuck_m)
    if "forward" in riding:
        fwd = fwd - keyed_path(plan, "forward", style, timeline.fps, t)
    if "height" in riding:
        up = up - keyed_path(plan, "height", style, timeline.fps, t)
    world = (np.outer(fwd, forward) + np.outer(up, _UP)) / metres_per_unit
    local = world @ channels.world_to_channel.T
    out = []
    for i in range(3):
        if np.all(np.abs(local[:, i]) <= _NEGLIGIBLE):
            continue
        base = 0.0 if as_delta else float(channels.base[i])
        out.append(_spec(channels.data_path, i, timeline, t, base + local[:, i], np.zeros_like(t), interp,
                         thin=True))
    return out


def weight_curve(plan, timeline):
    """The apparent weight [BW] on every frame and at each take-off and touchdown."""
    frames_t = np.arange(int(np.floor(plan.duration_s * timeline.fps + 1e-9)) + 1) / timeline.fps
    # The plan's end is keyed too: the value held after it must be standing (1 BW).
    t = _union(np.append(frames_t, plan.duration_s), _contact_edges(plan))
    return _spec(f'["{WEIGHT_PROPERTY}"]', 0, timeline, t, plan.force_bw(t), np.zeros_like(t), "LINEAR")


def phase_markers(plan, timeline):
    """``(name, frame)`` of a marker at each phase start, in the animator's words
    (:mod:`core.base.phase_words`; hop number added for hops)."""
    several = len(plan.hops) > 1
    out = []
    for p in plan.phases:
        name = marker_name(p.name, p.hop if several and p.name != "weighing" else None)
        out.append((name, int(round(float(timeline.frames(p.start_s))))))
    return out
