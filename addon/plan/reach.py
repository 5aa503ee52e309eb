"""Legs within reach: heel-lift keys on the rig's foot-roll controls, computed before writing.

The plan moves the body and plants the feet; a leg whose hip rises farther from its
planted foot than thigh plus shin reach would stretch (a rig's IK scales its bones).
From the rest legs (the deform skeleton, :func:`rig.skeleton.read_body`) carried along the
planned paths, :func:`core.rig.reach.toe_pivot_angles` gives how far each foot must roll
onto its ball at every frame; the turn is keyed on the control the rig's profile names
for it (``heel.L/R``: a control whose turn about its X axis lifts the heel). A leg that
cannot reach even on its toes, or a rig without such a control, is told in words.
"""

import numpy as np
from mathutils import Quaternion

from . import blocking_pass as bp
from ..blender import ownership
from ..rig import skeleton as rig_skeleton
from ..core.plan.feet import foot_ball_path
from ..core.rig.reach import largest_rise, toe_pivot_angles

_UP = np.array((0.0, 0.0, 1.0))
_WORDS = {"L": "left", "R": "right"}


def _times(plan, fps):
    frames_t = np.arange(int(np.floor(plan.duration_s * fps + 1e-9)) + 1) / fps
    edges = [x for hop in plan.hops for x in (hop.takeoff_time_s, hop.touchdown_time_s)]
    return np.unique(np.round(np.concatenate([frames_t, edges, [plan.duration_s]]), 12))


def _world(rig, m):
    w = np.array(rig.matrix_world)

    def to_world(p):
        return (w[:3, :3] @ np.asarray(p, float) + w[:3, 3]) * m
    return to_world


def _leg(rest, marks, side):
    (h, _), = marks.points[f"hip.{side}"]
    (k, _), = marks.points[f"knee.{side}"]
    (a, _), = marks.points[f"ankle.{side}"]
    (b, e), = marks.points[f"ball.{side}"]
    ball = rest.tails[b] if e else rest.heads[b]
    return rest.heads[h], rest.heads[k], rest.heads[a], ball


def _rotation_specs(rig, bone, sign, frames, angles, capability, as_delta):
    """Key specs turning ``bone`` about its own X axis by ``sign * angles``, on top of its resting turn."""
    pb = rig.pose.bones[bone]
    path = f'{bp_path(bone)}.rotation_quaternion'
    before = ownership.static_values(rig, capability)
    out = []
    if pb.rotation_mode == "QUATERNION":
        base = Quaternion([before.get((path, i), pb.rotation_quaternion[i]) for i in range(4)])
        if as_delta:
            base = Quaternion()
        values = np.array([tuple(base @ Quaternion((1.0, 0.0, 0.0), sign * a)) for a in angles])
        for i in range(4):
            out.append(bp.CurveSpec(path, i, frames, values[:, i], np.zeros_like(frames), "LINEAR"))
    elif pb.rotation_mode != "AXIS_ANGLE":
        path = f'{bp_path(bone)}.rotation_euler'
        base = 0.0 if as_delta else before.get((path, 0), pb.rotation_euler[0])
        out.append(bp.CurveSpec(path, 0, frames, base + sign * np.asarray(angles), np.zeros_like(frames),
                                "LINEAR"))
    return out


def bp_path(bone):
    """RNA path of a pose bone on the rig object."""
    return 'pose.bones["' + bone.replace("\\", "\\\\").replace('"', '\\"') + '"]'


def heel_specs(rig, plan, timeline, forward, m, tuck_m, feet, profile, capability, as_delta=False):
    """Heel-lift key specs for the legs whose foot is planted by a chosen control, and notes.

    Parameters
    ----------
    rig : armature object
    plan : core.plan.planner.JumpPlan
    timeline : blender.curves.Timeline
    forward : ndarray (3,)  world forward unit vector
    m : float  metres per Blender unit
    tuck_m : float  the feet's mid-flight tuck [m]
    feet : sequence of str  the chosen foot controls ("" skipped)
    profile : dict  the rig's profile (:mod:`rig.profile`); nothing is keyed unless its legs stretch
    capability : str  ownership capability the keys belong to
    as_delta : bool  keys as changes (for a layer over the user's keys)

    Returns
    -------
    specs : list of CurveSpec
    notes : list of str  legs that cannot reach, in words, with a fix
    """
    if rig is None or rig.type != "ARMATURE" or not any(feet) or profile.get("legs") != "stretch":
        return [], []  # a rig whose legs do not stretch keeps them in reach itself
    try:
        rest, marks = rig_skeleton.read_body(rig)
    except rig_skeleton.BodyError:
        return [], []
    to_world = _world(rig, m)
    scale = float(np.cbrt(abs(np.linalg.det(np.array(rig.matrix_world.to_3x3()))))) * m
    t = _times(plan, timeline.fps)
    frames = timeline.frames(t)
    body = np.outer(plan.forward(t), forward) + np.outer(plan.height(t), _UP)
    fwd, rise = foot_ball_path(plan, t, tuck=tuck_m)
    foot = np.outer(fwd, forward) + np.outer(rise, _UP)
    lateral = np.array(rig.matrix_world.to_3x3()) @ np.asarray(rest.left)
    specs, notes = [], []
    for side in "LR":
        hip, knee, ankle, ball = _leg(rest, marks, side)
        reach = (np.linalg.norm(knee - hip) + np.linalg.norm(ankle - knee)) * scale
        angles, _axis, short = toe_pivot_angles(to_world(hip) + body, to_world(ankle) + foot,
                                                to_world(ball) + foot, lateral, reach)
        if not angles.any():
            continue
        word = _WORDS[side]
        if short.max() > 0.01 * reach:
            k = int(np.argmax(short))
            notes.append(f"the {word} leg cannot reach even on its toes: the hip is {100 * short[k]:.1f} cm too "
                         f"far from the foot at frame {frames[k]:.0f}; plan a lower take-off or a shorter push, "
                         "or the goal needs a longer leg")
        heel = profile.get(f"heel.{side}", "")
        bone, _, axis = heel.partition("@")
        if not bone:
            k = int(np.argmax(angles))
            notes.append(f"the {word} leg needs its heel lifted up to {np.degrees(angles[k]):.0f}° (frame "
                         f"{frames[k]:.0f}) to stay within its length, and the rig has no foot-roll control "
                         "leapwright found; roll the foot by hand there")
            continue
        specs += _rotation_specs(rig, bone, -1.0 if axis.startswith("-") else 1.0, frames, angles, capability,
                                 as_delta)
    return specs, notes


def takeoff_limit(rig, m, profile):
    """How far the body can rise above standing with both feet on their balls [m], or None.

    None when the rig keeps its legs in reach itself (its profile does not say they stretch)
    or its body cannot be read.
    """
    if rig is None or rig.type != "ARMATURE" or profile.get("legs") != "stretch":
        return None
    try:
        rest, marks = rig_skeleton.read_body(rig)
    except rig_skeleton.BodyError:
        return None
    to_world = _world(rig, m)
    scale = float(np.cbrt(abs(np.linalg.det(np.array(rig.matrix_world.to_3x3()))))) * m
    lateral = np.array(rig.matrix_world.to_3x3()) @ np.asarray(rest.left)
    rises = []
    for side in "LR":
        hip, knee, ankle, ball = _leg(rest, marks, side)
        reach = (np.linalg.norm(knee - hip) + np.linalg.norm(ankle - knee)) * scale
        rises.append(largest_rise(to_world(hip), to_world(ankle), to_world(ball), lateral, reach))
    return min(rises)
