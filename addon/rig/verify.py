"""After a write: play the rig through the depsgraph and say where it differs from the plan.

The deform skeleton is what the audience sees, so it is what is compared: the pelvis
against the planned body path, its flight against the planned gravity, the ankles
against the planted feet, and the legs against their rest length (world space, scene
time: :mod:`.sampling`). A difference beyond tolerance comes with its cause in the
animator's words, found by looking at what stands between the keys and the mesh: time
remapping, a moving parent, a constraint or driver on the keyed bone, a body bone that
does not carry the body, a leg that cannot reach. Silent no-ops are the other half:
keys on a bone that a constraint sets, or on a control that moves nothing that deforms.
"""

import numpy as np

from . import sampling
from ..blender import compat
from ..blender import scene_units
from . import skeleton as rig_skeleton
from ..core.rig import playback

_UP = np.array((0.0, 0.0, 1.0))


def timing_problem(scene):
    """Why scene time does not play frames as keyed, or None."""
    r = scene.render
    if r.frame_map_old != r.frame_map_new:
        return (f"the scene's time is remapped (Time Stretching {r.frame_map_old} → {r.frame_map_new} in the "
                "Output properties), so the jump plays faster or slower than planned; set both to the same value")
    return None


def override_problem(rig, bone):
    """Why keys on ``bone`` would not play as keyed: a constraint or a driver, or None."""
    if not bone:
        return None
    pb = rig.pose.bones.get(bone)
    if pb is None:
        return None
    active = [c for c in pb.constraints if c.enabled and c.influence > 0.0]
    if active:
        names = ", ".join(f"'{c.name}'" for c in active[:3])
        return (f"a constraint ({names}) on '{bone}' overrides its keys; key the control it follows, "
                "or turn the constraint off")
    drivers = rig.animation_data.drivers if rig.animation_data is not None else ()
    prefix = f'pose.bones["{bone}"]'
    driven = sorted({d.data_path[len(prefix) + 1:] for d in drivers if d.data_path.startswith(prefix)})
    if driven:
        return (f"a driver sets '{bone}' ({', '.join(driven)}), so its keys do not play; key the "
                "control that drives it, or remove the driver")
    return None


def _placement_problem(scene, rig, frames):
    """Why the rig's own placement changes during the jump (a moving parent, keys, scale), or None."""
    frame = scene.frame_current
    mats = []
    for f in (frames[0], frames[len(frames) // 2], frames[-1]):
        scene.frame_set(int(f))
        mats.append(np.array(rig.matrix_world))
    scene.frame_set(frame)
    if max(np.abs(m - mats[0]).max() for m in mats) < 1e-5:
        return None
    if rig.parent is not None:
        return (f"the rig's parent '{rig.parent.name}' moves or turns during the jump, which adds to the "
                "planned motion; keep the parent still, or clear the rig's parent (keeping its transform)")
    return (f"the rig object '{rig.name}' is itself animated (or constrained) during the jump, which adds to "
            "the planned motion of its bones; remove those keys or move the whole rig before the jump")


def _scaled_ancestor(rig, bone, frames, scene):
    """An ancestor of ``bone`` whose scale changes during the jump, or None."""
    if not bone:
        return None
    pb = rig.pose.bones.get(bone)
    chain = [p.name for p in pb.parent_recursive] if pb is not None else []
    if not chain:
        return None
    mats, names = sampling.sample_pose_world(scene, rig, np.asarray(frames, float)[[0, len(frames) // 2, -1]],
                                             chain)
    scale = np.linalg.norm(mats[:, :, :3, :3], axis=2)
    moving = np.flatnonzero(np.abs(scale - scale[:1]).max(axis=(0, 2)) > 1e-4)
    return names[int(moving[0])] if moving.size else None


def _points(mats, lengths, pairs):
    """World points (F, 3) of a landmark: heads, or tails for end 1, averaged."""
    out = []
    for col, end in pairs:
        m = mats[:, col]
        out.append(m[:, :3, 3] + (m[:, :3, 1] * lengths[col] if end else 0.0))
    return np.mean(out, axis=0)


def _frames(plan, timeline):
    n = int(np.floor(plan.duration_s * timeline.fps + 1e-9))
    t = np.arange(n + 1) / timeline.fps
    return t, timeline.frames(t)


def played_plan(scene, rig, plan, timeline, forward, body_bone, profile=None):
    """Findings of a written plan, as played: ``(problems, summary)``.

    Parameters
    ----------
    scene, rig : Blender scene and armature (or any object)
    plan : core.plan.planner.JumpPlan
    timeline : blender.curves.Timeline
    forward : ndarray (3,)  world forward unit vector
    body_bone : str  the body bone keyed ("" = the object)
    profile : dict or None  the rig's profile (:mod:`.profile`), to name the body control

    Returns
    -------
    problems : list of str  each a difference beyond tolerance, its cause and a fix
    summary : str  what played, in numbers
    """
    m = scene_units.metres_per_unit(scene)
    t, frames = _frames(plan, timeline)
    problems = [p for p in (timing_problem(scene), _placement_problem(scene, rig, frames)) if p]
    if rig.type != "ARMATURE":
        return problems, "the rig is an object: no skeleton to compare"
    try:
        rest, marks = rig_skeleton.read_body(rig)
    except rig_skeleton.BodyError as exc:
        return problems, f"the played body was not compared: {exc}"
    keys = tuple(k for s in "LR" for k in (f"hip.{s}", f"knee.{s}", f"ankle.{s}", f"ball.{s}", f"shoulder.{s}",
                                           f"elbow.{s}", f"wrist.{s}")) + ("hip_mid", "neck_base")
    bones = sorted({marks.bone_names[b] for k in keys for b, _ in marks.points[k]})
    col = {n: i for i, n in enumerate(bones)}
    mats, _ = sampling.sample_pose_world(scene, rig, frames, bones)
    lengths = np.array([rig.data.bones[n].length for n in bones])
    pts = {k: _points(mats, lengths, [(col[marks.bone_names[b]], e) for b, e in marks.points[k]]) * m
           for k in keys}
    planned = np.outer(plan.forward(t), forward) + np.outer(plan.height(t), _UP)
    gap = playback.path_gap(pts["hip_mid"], planned)
    flight = [(h.takeoff_time_s, h.touchdown_time_s) for h in plan.hops]
    gravities = []
    for t0, t1 in flight:
        inside = (t > t0 + 0.5 / timeline.fps) & (t < t1 - 0.5 / timeline.fps)
        if inside.sum() >= 3:
            gravities.append(playback.implied_gravity(pts["hip_mid"][inside, 2], timeline.fps))
    g_bad = [g for g in gravities if abs(g - plan.gravity) > playback.GRAVITY_TOLERANCE * plan.gravity]
    if gap.largest > playback.PATH_TOLERANCE or g_bad:
        frame = int(round(frames[gap.index]))
        what = (f"the body plays {100 * gap.largest:.1f} cm away from the planned path at frame {frame} "
                f"(rises {100 * gap.played_rise:.1f} cm, planned {100 * gap.planned_rise:.1f} cm)")
        if g_bad:
            what += f"; its flight falls at {g_bad[0]:.2f} m/s² instead of {plan.gravity:.2f}"
        problems.append(what + ": " + _path_cause(scene, rig, body_bone, frames, profile))
    problems += _upper_body(rig, marks, rest, frames, pts, m, body_bone, profile)
    problems += _feet(plan, t, frames, pts)
    stretch, summary_legs = _legs(rig, marks, rest, frames, pts, m)
    problems += stretch + _arms(rig, marks, rest, frames, pts, m)
    g_text = ", ".join(f"{g:.2f}" for g in gravities) or "no flight frames"
    summary = (f"played: body within {100 * gap.largest:.1f} cm of the plan, flight gravity {g_text} m/s² "
               f"(planned {plan.gravity:.2f}); {summary_legs}")
    return problems, summary


def _upper_body(rig, marks, rest, frames, pts, m, body_bone, profile):
    """A spine stretched or squashed by the keyed body bone, as a problem naming the bone that carries it."""
    (h0, _), (h1, _) = marks.points["hip_mid"]
    (n, _), = marks.points["neck_base"]
    scale = float(np.cbrt(abs(np.linalg.det(np.array(rig.matrix_world.to_3x3()))))) * m
    rest_len = np.linalg.norm(rest.heads[n] - 0.5 * (rest.heads[h0] + rest.heads[h1])) * scale
    played = np.linalg.norm(pts["neck_base"] - pts["hip_mid"], axis=1)
    k = int(np.argmax(np.abs(played / rest_len - 1.0)))
    if abs(played[k] / rest_len - 1.0) <= playback.STRETCH_TOLERANCE * 2:
        return []
    body = (profile or {}).get("body")
    fix = (f"the control that carries the upper body is '{body}': choose it as the body bone" if body and
           body != body_bone else "choose the control that moves the hips, spine and head together")
    return [f"the spine plays {100 * played[k]:.0f} cm long at frame {int(round(frames[k]))} instead of "
            f"{100 * rest_len:.0f} cm: moving '{body_bone or rig.name}' does not carry the upper body; {fix}"]


def _path_cause(scene, rig, body_bone, frames, profile):
    """The first thing found that makes the body play off its path, with a fix."""
    for why in (timing_problem(scene), _placement_problem(scene, rig, frames), override_problem(rig, body_bone)):
        if why:
            return why
    scaled = _scaled_ancestor(rig, body_bone, frames, scene)
    if scaled:
        return (f"'{scaled}', above the body bone, is scaled during the jump, which scales the planned motion; "
                "remove its scale keys")
    body = (profile or {}).get("body")
    if body and body != body_bone:
        return (f"moving '{body_bone or rig.name}' does not carry the body's pelvis the same way; the control "
                f"that carries the upper body is '{body}': choose it as the body bone")
    return "something on the rig moves the pelvis on its own (a constraint or an animated control); check it"


def _feet(plan, t, frames, pts):
    """Planted feet that slide, as problems."""
    out = []
    ground = np.ones(t.shape, bool)
    for h in plan.hops:
        ground &= ~((t > h.takeoff_time_s) & (t < h.touchdown_time_s))
    first = t <= plan.hops[0].takeoff_time_s
    last = t >= plan.hops[-1].touchdown_time_s
    for side, word in (("L", "left"), ("R", "right")):
        for part, when in ((first, "before take-off"), (last, "after touchdown")):
            if part.sum() < 2:
                continue
            slide = playback.foot_slide(pts[f"ball.{side}"][part])  # the heel may lift; the ball stays
            if slide > playback.SLIDE_TOLERANCE:
                out.append(f"the {word} foot slides {100 * slide:.1f} cm on the ground {when}: it does not "
                           "follow its foot control (is the leg in FK, or the foot control not keyed?)")
    return out


def _arms(rig, marks, rest, frames, pts, m):
    """Arms stretched beyond their rest length (a hand control left behind), as problems."""
    out = []
    scale = float(np.cbrt(abs(np.linalg.det(np.array(rig.matrix_world.to_3x3()))))) * m
    for side, word in (("L", "left"), ("R", "right")):
        (s, _), = marks.points[f"shoulder.{side}"]
        (e, _), = marks.points[f"elbow.{side}"]
        (w, _), = marks.points[f"wrist.{side}"]
        rest_len = (np.linalg.norm(rest.heads[e] - rest.heads[s]) + np.linalg.norm(rest.heads[w] - rest.heads[e]))
        stretch = playback.leg_stretch(pts[f"shoulder.{side}"], pts[f"elbow.{side}"], pts[f"wrist.{side}"],
                                       rest_len * scale)
        worst = int(np.argmax(stretch))
        if stretch[worst] > playback.STRETCH_TOLERANCE:
            out.append(f"the {word} arm stretches {100 * stretch[worst]:.1f} % beyond its length at frame "
                       f"{int(round(frames[worst]))}: its hand follows a control that does not move with the body; "
                       "switch the arm to FK, or parent its IK hand control to the body")
    return out


def _legs(rig, marks, rest, frames, pts, m):
    """Legs stretched beyond their rest length, as problems, and a summary.

    Rest lengths are in armature units: times the rig's world scale and the scene's metres
    per unit, as the played points are.
    """
    out, parts = [], []
    scale = float(np.cbrt(abs(np.linalg.det(np.array(rig.matrix_world.to_3x3()))))) * m
    for side, word in (("L", "left"), ("R", "right")):
        (h, _), = marks.points[f"hip.{side}"]
        (k, _), = marks.points[f"knee.{side}"]
        (a, _), = marks.points[f"ankle.{side}"]
        rest_len = np.linalg.norm(rest.heads[k] - rest.heads[h]) + np.linalg.norm(rest.heads[a] - rest.heads[k])
        stretch = playback.leg_stretch(pts[f"hip.{side}"], pts[f"knee.{side}"], pts[f"ankle.{side}"],
                                       rest_len * scale)
        worst = int(np.argmax(stretch))
        parts.append(f"{word} leg up to {100 * stretch[worst]:+.1f} %")
        if stretch[worst] > playback.STRETCH_TOLERANCE:
            out.append(f"the {word} leg stretches {100 * stretch[worst]:.1f} % beyond its length at frame "
                       f"{int(round(frames[worst]))}: the body rises higher than the leg reaches with the foot "
                       "flat; lift the heel there (roll the foot onto its toes), or plan a lower body")
    return out, "legs: " + ", ".join(parts)


#: A keyed bone "moves" when its evaluated matrix changes by more than this [BU or rotation
#: matrix entries] over the sampled frames (design choice: well above float32 rounding).
_MOVES = 1e-4
#: Frames sampled to tell whether keys play (spread over the keyed range).
_PROBE_FRAMES = 12


def _bone_fcurves(rig, bones):
    """Every F-curve on ``bones``' channels, in the rig's action and its NLA strips' actions."""
    ad = rig.animation_data
    if ad is None:
        return []
    actions = {ad.action} | {st.action for tr in ad.nla_tracks for st in tr.strips}
    prefixes = tuple(f'pose.bones["{b}"].' for b in bones)
    return [fc for act in actions if act is not None for fc in compat.fcurves(act, rig)
            if fc.data_path.startswith(prefixes)]


def _muted_pose(scene, rig, frames, names, muted):
    """Pose matrices (F, B, 4, 4) of ``names`` with the F-curves ``muted`` switched off meanwhile."""
    was = [fc.mute for fc in muted]
    try:
        for fc in muted:
            fc.mute = True
        return sampling.sample_pose_world(scene, rig, frames, names)[0]
    finally:
        for fc, m in zip(muted, was):
            fc.mute = m


def unplayed_keys(scene, rig, bones, first_frame, last_frame):
    """Keyed bones whose keys do not play, each with its cause and a fix, in the animator's words.

    The rig is played twice, with the bones' keys and with them switched off: a bone that
    sits the same either way is held by a constraint or a driver; bones that move while
    every bone that deforms the mesh stays where it was belong to a switched-off part of
    the rig (e.g. FK controls of an arm in IK).

    Returns
    -------
    list of str
    """
    if rig is None or rig.type != "ARMATURE" or not bones:
        return []
    bones = [b for b in bones if rig.pose.bones.get(b) is not None]
    curves = _bone_fcurves(rig, bones)
    if not curves:
        return []
    frames = np.unique(np.round(np.linspace(first_frame, last_frame, _PROBE_FRAMES)))
    names = [pb.name for pb in rig.pose.bones]
    index = {n: i for i, n in enumerate(names)}
    deform = [index[n] for n in names if rig.data.bones[n].use_deform]
    keyed = sampling.sample_pose_world(scene, rig, frames, names)[0]
    bare = _muted_pose(scene, rig, frames, names, curves)
    change = np.abs(keyed - bare).max(axis=(0, 2, 3))  # per bone: what the keys do
    out, moving = [], []
    for bone in bones:
        if change[index[bone]] <= _MOVES:
            why = override_problem(rig, bone) or f"something on the rig holds '{bone}' in place"
            out.append(f"the keys on '{bone}' do not move it: {why}")
        else:
            moving.append(bone)
    if moving and deform and change[deform].max() <= _MOVES:
        out += [f"'{b}' moves but nothing that deforms the mesh moves with it (is this part of the rig "
                "switched off, e.g. FK controls of an arm in IK?); key the control that moves the mesh, or "
                "switch the rig over" for b in moving]
    return out


def limb_stretch_findings(scene, rig, frames):
    """Stretches of the deform legs and arms beyond their rest length, as checker findings.

    Returns
    -------
    list of (kind, first frame, last frame, message, suggestion)
    """
    if rig is None or rig.type != "ARMATURE":
        return []
    try:
        rest, marks = rig_skeleton.read_body(rig)
    except rig_skeleton.BodyError:
        return []
    frames = np.asarray(frames, float)
    limbs = [("leg", s, ("hip", "knee", "ankle")) for s in "LR"] + [("arm", s, ("shoulder", "elbow", "wrist"))
                                                                     for s in "LR"]
    keys = sorted({f"{j}.{s}" for _, s, joints in limbs for j in joints})
    bones = sorted({marks.bone_names[b] for k in keys for b, _ in marks.points[k]})
    col = {n: i for i, n in enumerate(bones)}
    mats, _ = sampling.sample_pose_world(scene, rig, frames, bones)
    lengths = np.array([rig.data.bones[n].length for n in bones])
    pts = {k: _points(mats, lengths, [(col[marks.bone_names[b]], e) for b, e in marks.points[k]]) for k in keys}
    scale = float(np.cbrt(abs(np.linalg.det(np.array(rig.matrix_world.to_3x3())))))
    out = []
    for limb, side, (a, b, c) in limbs:
        ia, ib, ic = (marks.points[f"{j}.{side}"][0][0] for j in (a, b, c))
        rest_len = (np.linalg.norm(rest.heads[ib] - rest.heads[ia]) + np.linalg.norm(rest.heads[ic] - rest.heads[ib]))
        stretch = playback.leg_stretch(pts[f"{a}.{side}"], pts[f"{b}.{side}"], pts[f"{c}.{side}"], rest_len * scale)
        over = stretch > playback.STRETCH_TOLERANCE
        word = {"L": "left", "R": "right"}[side]
        for first, last in _runs(over):
            worst = first + int(np.argmax(stretch[first:last + 1]))
            fix = ("lift the heel (roll the foot onto its toes) or lower the body there" if limb == "leg" else
                   "bring the hand control along with the body, or switch the arm to FK")
            out.append((f"{limb} stretch", float(frames[first]), float(frames[last]),
                        f"the {word} {limb} is up to {100 * stretch[worst]:.1f} % longer than at rest "
                        f"(frame {frames[worst]:.0f}): the rig stretches its bones", fix))
    return out


def _runs(mask):
    """(first, last) index pairs of the runs of True in ``mask``."""
    out, start = [], None
    for i, m in enumerate(list(mask) + [False]):
        if m and start is None:
            start = i
        elif not m and start is not None:
            out.append((start, i - 1))
            start = None
    return out
