"""A skeleton of another style than the mannequin: other names, other axes, no IK, no controls.

Built here as a game-engine style joint chain: the character faces +X (its left is +Y),
bones are named ``jnt_<side>_<part>`` with sides ``lf``/``rt``, each bone rolled a
quarter turn so its local axes are not the mannequin's, every bone deforms, no
constraints. The truth is how it is built (which side each bone was placed on), so the
checks name bones by that construction, never by what the add-on prints.
"""

import math

import bpy
import numpy as np
import pytest

from scene_probe import addon

# (name, head, tail, parent) in metres; the character faces +X, its left on +Y.
_BODY = [
    ("jnt_pelvis", (0, 0, 0.95), (0, 0, 1.05), None),
    ("jnt_spine_a", (0, 0, 1.05), (0, 0, 1.25), "jnt_pelvis"),
    ("jnt_spine_b", (0, 0, 1.25), (0, 0, 1.42), "jnt_spine_a"),
    ("jnt_neck", (0, 0, 1.42), (0.01, 0, 1.52), "jnt_spine_b"),
    ("jnt_head", (0.01, 0, 1.52), (0.01, 0, 1.72), "jnt_neck"),
]


def _side(tag, y):
    return [
        (f"jnt_{tag}_clav", (0, 0.02 * y, 1.40), (0, 0.17 * y, 1.40), "jnt_spine_b"),
        (f"jnt_{tag}_arm", (0, 0.17 * y, 1.40), (0, 0.45 * y, 1.40), f"jnt_{tag}_clav"),
        (f"jnt_{tag}_arm_twist", (0, 0.45 * y, 1.40), (0, 0.46 * y, 1.40), f"jnt_{tag}_arm"),
        (f"jnt_{tag}_elbow", (0, 0.46 * y, 1.40), (0, 0.71 * y, 1.40), f"jnt_{tag}_arm_twist"),
        (f"jnt_{tag}_wrist", (0, 0.71 * y, 1.40), (0, 0.80 * y, 1.40), f"jnt_{tag}_elbow"),
        (f"jnt_{tag}_finger_a", (0, 0.80 * y, 1.40), (0, 0.86 * y, 1.40), f"jnt_{tag}_wrist"),
        (f"jnt_{tag}_finger_b", (0.02, 0.80 * y, 1.40), (0.03, 0.85 * y, 1.40), f"jnt_{tag}_wrist"),
        (f"jnt_{tag}_hip", (0, 0.09 * y, 0.95), (0, 0.09 * y, 0.52), "jnt_pelvis"),
        (f"jnt_{tag}_knee", (0, 0.09 * y, 0.52), (0, 0.09 * y, 0.09), f"jnt_{tag}_hip"),
        (f"jnt_{tag}_ankle", (0, 0.09 * y, 0.09), (0.12, 0.09 * y, 0.02), f"jnt_{tag}_knee"),
        (f"jnt_{tag}_toe", (0.12, 0.09 * y, 0.02), (0.18, 0.09 * y, 0.02), f"jnt_{tag}_ankle"),
    ]


def build_other_style_rig(name="skeleton"):
    arm = bpy.data.armatures.new(name)
    obj = bpy.data.objects.new(name, arm)
    bpy.context.scene.collection.objects.link(obj)
    bpy.context.view_layer.objects.active = obj
    bpy.ops.object.mode_set(mode="EDIT")
    for bone, head, tail, parent in _BODY + _side("lf", 1.0) + _side("rt", -1.0):
        eb = arm.edit_bones.new(bone)
        eb.head, eb.tail = head, tail
        eb.roll = math.radians(90.0)  # local axes unlike the mannequin's
        if parent:
            eb.parent = arm.edit_bones[parent]
            eb.use_connect = (eb.parent.tail - eb.head).length < 1e-6
    bpy.ops.object.mode_set(mode="OBJECT")
    for pb in obj.pose.bones:
        pb.rotation_mode = "XZY"  # Euler channels, another order than the mannequin's
    return obj


def test_the_other_style_rig_reads_with_its_left_on_plus_y():
    rig = build_other_style_rig()
    rest, marks = addon().body.com.read_body(rig)
    text = marks.as_text()
    assert np.allclose(rest.left, (0.0, 1.0, 0.0), atol=1e-6)  # built facing +X
    assert text["shoulder.L"] == "jnt_lf_arm@head" and text["shoulder.R"] == "jnt_rt_arm@head"
    assert text["elbow.L"] == "jnt_lf_elbow@head"  # the twist bone is part of the upper arm
    assert text["ankle.R"] == "jnt_rt_ankle@head" and text["toe_tip.L"] == "jnt_lf_toe@tail"


def test_find_arm_bones_and_the_profile_on_the_other_style_rig():
    rig = build_other_style_rig()
    bpy.context.scene.leapwright_plan.rig = rig
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.find_arm_bones() == {"FINISHED"}
    arms = bpy.context.scene.leapwright_arms
    assert (arms.upper_arm_left, arms.forearm_left) == ("jnt_lf_arm", "jnt_lf_elbow")
    assert (arms.upper_arm_right, arms.forearm_right) == ("jnt_rt_arm", "jnt_rt_elbow")
    profile = addon().rig.profile.known(rig)
    assert profile["body"] == "jnt_pelvis"  # no IK legs: the pelvis carries everything
    assert "foot.L" not in profile and "legs" not in profile


def test_jump_on_the_other_style_rig_plays_as_planned_and_removes_cleanly():
    from scene_probe import snapshot
    rig = build_other_style_rig()
    s = bpy.context.scene.leapwright_plan
    s.rig, s.com_bone, s.foot_left, s.foot_right = rig, "jnt_pelvis", "", ""
    bpy.context.view_layer.objects.active = rig
    before = snapshot()
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    lines = addon().plan.operators.LAST_PLAYED[rig.name]
    assert lines[0].startswith("played: body within 0.0 cm") or lines[0].startswith("played: body within 0.1 cm")
    # free fall of the evaluated pelvis: second difference -g/fps^2 (a physics law)
    plan, _ = addon().plan.link.plan_for(bpy.context.scene)
    fps = bpy.context.scene.render.fps
    hop = plan.hops[0]
    frames = [f for f in range(s.start_frame, s.start_frame + int(plan.duration_s * fps))
              if hop.takeoff_time_s < (f - s.start_frame) / fps < hop.touchdown_time_s]
    z = []
    for f in frames:
        bpy.context.scene.frame_set(f)
        ev = rig.evaluated_get(bpy.context.evaluated_depsgraph_get())
        z.append((ev.matrix_world @ ev.pose.bones["jnt_pelvis"].head).z)
    bpy.context.scene.frame_set(before["range"][2])
    assert np.diff(z, 2) == pytest.approx(-plan.gravity / fps ** 2, abs=2e-5)
    assert bpy.ops.leapwright.remove_plan() == {"FINISHED"}
    assert snapshot() == before
