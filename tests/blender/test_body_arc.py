"""In the air the whole-body centre of mass (COM) follows one parabola: the correction makes it so.

On the demo mannequin (blend_examples/mannequin.py) with the jump written by
``write_plan`` and a late arm raise keyed in the air. The COM the checks use is
computed here, independently of the add-on's bone mapping: the mannequin's joints
named by hand, de Leva (1996, J Biomech 29(9):1223-1230, Table 4, male) segment
masses and COM positions, and bone positions read back one by one from Blender's
evaluated pose. The law checked is Newton's second law for a system of particles:
with gravity the only external force, the COM moves on ``c0 + v0 t - g t^2 / 2``
(textbook mechanics), and a rigid torso carrying arms that rise by ``dz`` relative
to it must drop by ``(m_arms / M) dz``.
"""

import math
import os
import random
import string
import sys

import bpy
import numpy as np
import pytest
from mathutils import Quaternion

from scene_probe import MODULE, addon, draw_panel, key_count, snapshot

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "blend_examples"))
import mannequin  # noqa: E402  (the demo's own rig, not edited here)

ARM_RAISE = ((33, 0.0), (40, 150.0), (48, 150.0), (55, 0.0))  # (frame, degrees about the bone's X)
LAST_FRAME = 60
G = 9.80665  # m/s^2, standard gravity (CGPM 1901), the panel's default

# The mannequin's joints by bone name: (bone, 'head'|'tail'); a list means the average.
JOINTS = {"vertex": ("head", "tail"), "skull_base": ("head", "head"), "neck_base": ("neck", "head"),
          "hip_mid": [("thigh.L", "head"), ("thigh.R", "head")]}
for _s in "LR":
    JOINTS.update({f"shoulder.{_s}": (f"upper_arm.{_s}", "head"), f"elbow.{_s}": (f"forearm.{_s}", "head"),
                   f"wrist.{_s}": (f"hand.{_s}", "head"), f"knuckles.{_s}": (f"hand.{_s}", "tail"),
                   f"hip.{_s}": (f"thigh.{_s}", "head"), f"knee.{_s}": (f"shin.{_s}", "head"),
                   f"ankle.{_s}": (f"foot.{_s}", "head"), f"toe_tip.{_s}": (f"foot.{_s}", "tail")})


def _enable():
    import addon_utils

    if MODULE not in bpy.context.preferences.addons:
        addon_utils.enable(MODULE, default_set=True)


def _key_arm_raise(rig, keys):
    """Both upper arms keyed through ``keys`` ((frame, degrees about the bone's X), ...)."""
    for side in "LR":
        pb = rig.pose.bones[f"upper_arm.{side}"]
        for frame, deg in keys:
            pb.rotation_quaternion = Quaternion((1.0, 0.0, 0.0), math.radians(deg))
            pb.keyframe_insert("rotation_quaternion", frame=frame)
        pb.rotation_quaternion = (1.0, 0.0, 0.0, 0.0)


def _jump(arm_raise=True):
    """The demo mannequin with the written jump and (optionally) a late arm raise in the air."""
    objs = mannequin.build_demo_scene()  # starts a new file, which disables the add-on
    _enable()
    rig, scene = objs["rig"], bpy.context.scene
    s = scene.leapwright_plan
    s.rig, s.com_bone = rig, mannequin.BODY_BONE
    s.foot_left, s.foot_right = mannequin.FOOT_CONTROLLERS
    s.height = 0.5
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    scene.frame_start, scene.frame_end = 1, LAST_FRAME
    if arm_raise:
        _key_arm_raise(rig, ARM_RAISE)
    return rig, scene


def _flight(scene):
    """Arc start and last frame in the air, from the written markers (take-off + 1, landing - 1)."""
    marks = sorted((m.frame, m.name) for m in scene.timeline_markers)
    names = [n for _, n in marks]
    i = names.index("lw:take-off")
    return marks[i][0] + 1, marks[i + 1][0] - 1


def _read(rig, frames, names=None):
    """World heads and tails [m] of the named bones, evaluated one frame at a time."""
    scene = bpy.context.scene
    out = {}
    for f in frames:
        scene.frame_set(int(f))
        ev = rig.evaluated_get(bpy.context.evaluated_depsgraph_get())
        w = ev.matrix_world
        for pb in ev.pose.bones:
            if names is None or pb.name in names:
                out.setdefault(pb.name, {"head": [], "tail": []})
                out[pb.name]["head"].append(np.array(w @ pb.head, dtype=float))
                out[pb.name]["tail"].append(np.array(w @ pb.tail, dtype=float))
    return {n: {k: np.array(v) for k, v in d.items()} for n, d in out.items()}


def _joint(points, name):
    spec = JOINTS[name]
    spec = spec if isinstance(spec, list) else [spec]
    return np.mean([points[b][end] for b, end in spec], axis=0)


def _coms(rig, frames):
    """Whole-body COM and body-part COMs [m] (F, 3) from de Leva 1996 Table 4 (male)."""
    table = addon().core.body.segment_tables.DE_LEVA_MALE
    points = _read(rig, frames)
    parts, total = {}, 0.0
    for e in table.entries:
        for side in ((".L", ".R") if e.bilateral else ("",)):
            a, b = _joint(points, e.start + side), _joint(points, e.end + side)
            m, c = parts.setdefault(e.group, [0.0, 0.0])
            parts[e.group] = [m + e.mass_fraction, c + e.mass_fraction * (a + e.com_fraction * (b - a))]
            total += e.mass_fraction
    com = sum(c for _, c in parts.values()) / total
    groups = {g: (m / total, c / m) for g, (m, c) in parts.items()}
    shoulders = 0.5 * (_joint(points, "shoulder.L") + _joint(points, "shoulder.R"))
    return com, groups, shoulders, points


def _ballistic_residual(com, fps):
    """Largest distance [m] of a COM track from its least-squares free-fall parabola (g known)."""
    t = np.arange(len(com)) / fps
    fall = com.copy()
    fall[:, 2] += 0.5 * G * t ** 2
    design = np.column_stack([np.ones_like(t), t])
    fit = design @ np.linalg.lstsq(design, fall, rcond=None)[0]
    return float(np.max(np.linalg.norm(fall - fit, axis=1)))


def _keep(rig):
    bpy.context.view_layer.objects.active = rig
    return bpy.ops.leapwright.keep_body_on_arc()


def test_fixed_body_follows_the_parabola_and_the_torso_drops_by_the_arm_share():
    rig, scene = _jump()
    first, last = _flight(scene)
    fps = scene.render.fps / scene.render.fps_base
    frames = np.arange(first, last + 1)
    before, parts, shoulders, points = _coms(rig, frames)
    assert _ballistic_residual(before, fps) > 0.01  # the raise really breaks the arc
    assert _keep(rig) == {"FINISHED"}
    after, _, _, points_after = _coms(rig, frames)
    assert _ballistic_residual(after, fps) < 1e-3  # every flight frame within 1 mm
    # The arc is the one fixed at take-off: the first frame is not moved.
    assert np.linalg.norm(after[0] - before[0]) < 1e-6
    # Torso drop = -(m_arms / M) * rise of the arms' COM relative to the shoulders.
    share, arms = parts["arms"]
    rise = (arms[:, 2] - shoulders[:, 2]) - (arms[0, 2] - shoulders[0, 2])
    expected = -share * rise
    drop = points_after["hips"]["head"][:, 2] - points["hips"]["head"][:, 2]
    big = np.abs(expected) > 0.01
    assert big.sum() >= 4
    assert np.max(np.abs(drop[big] / expected[big] - 1.0)) < 0.02


def test_check_reports_the_flight_frames_and_the_torso_drop_then_nothing_after_the_fix():
    rig, scene = _jump()
    first, last = _flight(scene)
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.check_body_arc() == {"FINISHED"}
    lines = addon().body.operators.LAST_CHECK[rig.name]
    assert len(lines) == 2 and "torso must move -" in lines[1] and "arms rise" in lines[1]
    start, end = (int(x) for x in lines[1].split()[1].split("-"))
    assert first < start <= end <= last
    assert _keep(rig) == {"FINISHED"}
    assert bpy.ops.leapwright.check_body_arc() == {"FINISHED"}
    assert addon().body.operators.LAST_CHECK[rig.name][1:] == ["the centre of mass stays on its arc in every flight"]


def raise_at_takeoff():
    """The written jump with the arms, still until the take-off frame, raised from there."""
    rig, scene = _jump(arm_raise=False)
    takeoff = _flight(scene)[0] - 1
    _key_arm_raise(rig, ((takeoff, 0.0), (takeoff + 5, 150.0)))
    return rig, scene


def test_an_arm_raise_started_at_the_take_off_is_named_with_the_speed_it_adds():
    # The launch speed is read at the first frame surely in the air; arms that start
    # rising at the take-off frame put their share of their change of speed into it
    # (momentum: limbs cannot change the COM's speed in the air). Expected by hand from
    # de Leva 1996 (Table 4, male) part COMs: sum of share * fps * (second difference of
    # the part's COM relative to the trunk's) over the take-off frame and its neighbours.
    rig, scene = raise_at_takeoff()
    first, _ = _flight(scene)
    fps = scene.render.fps / scene.render.fps_base
    _, parts, _, _ = _coms(rig, np.arange(first - 2, first + 1))
    trunk = parts["trunk"][1]
    # the legs' own change at take-off (the push ending) is the take-off itself: left out
    expected = sum(share * fps * ((c - trunk)[2] - 2 * (c - trunk)[1] + (c - trunk)[0])
                   for g, (share, c) in parts.items() if g not in ("trunk", "legs"))
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.check_body_arc() == {"FINISHED"}
    lines = addon().body.operators.LAST_CHECK[rig.name]
    (said,) = [line for line in lines if "where the take-off speed is read" in line]
    assert said.startswith("The arms start moving") and f"first frame in the air ({first})" in said
    work = addon().body.arc.prepare(scene, rig, scene.leapwright_body, G, own_layer=True)
    (motion,) = work.takeoff_motion
    np.testing.assert_allclose(motion.speed_error, expected, rtol=0.02, atol=1e-3)
    assert np.linalg.norm(expected) > 0.1  # a real change, not noise
    assert _keep(rig) == {"FINISHED"}
    assert said in addon().body.operators.LAST_CHECK[rig.name]  # the correction says it too


def test_renaming_every_bone_keeps_the_map_and_the_correction():
    rig, scene = _jump()
    a = addon()

    def work():
        w = a.body.arc.prepare(scene, rig, scene.leapwright_body, G)
        marks = a.body.com.body_model(rig)[1]
        return w.fix.offsets, marks.points, w.channels.data_path

    offsets, points, _ = work()
    rng = random.Random(5)
    old = [b.name for b in rig.data.bones]
    for b in list(rig.data.bones):
        b.name = "".join(rng.choice(string.ascii_lowercase) for _ in range(10))
    assert not set(old) & {b.name for b in rig.data.bones}
    offsets2, points2, path2 = work()
    assert points2 == points  # the same bones (by position in the rig) for every landmark
    assert np.max(np.abs(offsets2 - offsets)) < 1e-9
    assert rig.data.bones[0].name in path2  # the carrier is the renamed root


def test_rerun_replaces_and_removal_restores_the_file_byte_for_byte():
    rig, scene = _jump()
    bpy.context.scene.timeline_markers.new("beat", frame=12)
    before = snapshot()
    assert _keep(rig) == {"FINISHED"}
    n = key_count(rig)
    track = rig.animation_data.nla_tracks["lw:body"]
    assert track.strips[0].blend_type == "COMBINE"
    assert _keep(rig) == {"FINISHED"}
    assert key_count(rig) == n > 0
    assert [t.name for t in rig.animation_data.nla_tracks].count("lw:body") == 1
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.remove_body_arc() == {"FINISHED"}
    assert snapshot() == before


def test_no_armature_is_refused_and_changes_nothing():
    bpy.ops.object.empty_add()
    empty = bpy.context.active_object
    bpy.context.scene.leapwright_plan.rig = empty
    before = snapshot()
    with pytest.raises(RuntimeError, match="armature"):
        bpy.ops.leapwright.keep_body_on_arc()
    assert snapshot() == before


def test_a_rig_without_arms_and_no_map_is_refused_and_changes_nothing():
    from rig_builder import build_rig, configure

    rig = build_rig()
    configure(rig, height=0.4)
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    before = snapshot()
    with pytest.raises(RuntimeError, match="map the bones by hand"):
        bpy.ops.leapwright.keep_body_on_arc()
    assert snapshot() == before


def test_a_creature_with_bone_masses_is_kept_on_its_arc():
    # Two point masses at bone midpoints (com_fractions 0.5): the COM is their weighted mean.
    from rig_builder import build_rig, configure

    rig = build_rig()
    configure(rig, height=0.4)
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    scene = bpy.context.scene
    scene.frame_start, scene.frame_end = 1, LAST_FRAME
    first, last = _flight(scene)
    masses = {"hips": 40.0, "spine": 25.0}
    rig["lw_bone_masses"] = "hips=40 trunk; spine=25 tail"
    pb = rig.pose.bones["spine"]
    for frame, deg in ((first + 2, 0.0), (last - 2, 80.0)):
        pb.rotation_quaternion = Quaternion((1.0, 0.0, 0.0), math.radians(deg))
        pb.keyframe_insert("rotation_quaternion", frame=frame)
    frames = np.arange(first, last + 1)

    def com_and_hips():
        p = _read(rig, frames, set(masses))
        c = sum(m * 0.5 * (p[n]["head"] + p[n]["tail"]) for n, m in masses.items()) / sum(masses.values())
        return c, p

    before, p0 = com_and_hips()
    fps = scene.render.fps / scene.render.fps_base
    assert _ballistic_residual(before, fps) > 0.005
    assert _keep(rig) == {"FINISHED"}
    after, p1 = com_and_hips()
    assert _ballistic_residual(after, fps) < 1e-3
    # Hips drop = -(m_spine / M) * rise of the spine's midpoint relative to the hips' head.
    rel = 0.5 * (p0["spine"]["head"] + p0["spine"]["tail"])[:, 2] - p0["hips"]["head"][:, 2]
    expected = -25.0 / 65.0 * (rel - rel[0])
    drop = p1["hips"]["head"][:, 2] - p0["hips"]["head"][:, 2]
    big = np.abs(expected) > 0.005
    assert big.sum() >= 3
    assert np.max(np.abs(drop[big] / expected[big] - 1.0)) < 0.02


def test_a_map_written_out_by_hand_gives_the_same_correction():
    rig, scene = _jump()
    a = addon()
    auto = a.body.arc.prepare(scene, rig, scene.leapwright_body, G).fix.offsets
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.edit_body_map() == {"FINISHED"}
    assert a.body.com.body_model(rig)[2] == "set by hand"
    by_hand = a.body.arc.prepare(scene, rig, scene.leapwright_body, G).fix.offsets
    assert np.max(np.abs(by_hand - auto)) < 1e-12
    # A map naming a bone the rig lacks is refused with the bone's name.
    rig["lw_body_map"] = rig["lw_body_map"].replace("forearm.L@head", "elbow_bone@head")
    before = snapshot()
    with pytest.raises(RuntimeError, match="elbow_bone"):
        bpy.ops.leapwright.keep_body_on_arc()
    assert snapshot() == before


def test_flights_found_from_free_fall_without_markers():
    rig, scene = _jump()
    first, last = _flight(scene)
    scene.leapwright_body.flights = "BALLISTIC"
    assert _keep(rig) == {"FINISHED"}
    work = addon().body.arc.prepare(scene, rig, scene.leapwright_body, G)
    (a, b), = work.stretches
    # The arc starts at the second airborne frame (the take-off lies in the frame before the first).
    assert first <= a <= first + 1 and b == last
    after = _coms(rig, np.arange(a, b + 1))[0]
    assert _ballistic_residual(after, scene.render.fps / scene.render.fps_base) < 1e-3


def test_panel_shows_the_map_the_buttons_and_the_warning_with_frames_and_torso_drop():
    assert bpy.types.LEAPWRIGHT_PT_body.bl_parent_id == "LEAPWRIGHT_PT_plan"
    rig, scene = _jump()
    log = draw_panel("LEAPWRIGHT_PT_body")
    labels = " | ".join(t for k, t in log if k == "label")
    assert "14 segments, found from the bone tree" in labels
    assert "shoulder.L: upper_arm.L@head" in labels
    assert {("prop", "table"), ("operator", "leapwright.keep_body_on_arc"),
            ("operator", "leapwright.edit_body_map")} <= set(log)
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.check_body_arc() == {"FINISHED"}
    labels = " ".join(t for k, t in draw_panel("LEAPWRIGHT_PT_body") if k == "label")
    assert "torso must move -" in labels and "Frames " in labels
    assert bpy.ops.leapwright.edit_body_map() == {"FINISHED"}
    assert ("prop", '["lw_body_map"]') in draw_panel("LEAPWRIGHT_PT_body")


def test_easing_out_is_refused_when_it_would_slide_the_planted_feet():
    rig, scene = _jump()
    scene.leapwright_body.settle_frames = 3  # the carrier is the root: the foot controllers hang from it
    before = snapshot()
    with pytest.raises(RuntimeError, match="foot_ctrl.L"):
        _keep(rig)
    assert snapshot() == before
