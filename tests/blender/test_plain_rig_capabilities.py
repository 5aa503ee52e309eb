"""Every capability on two rigs without controls: Rigify's meta-rig and the other-style skeleton.

Rigify's human meta-rig (Blender's own, ``rigify_rig``) is a plain bone tree facing -Y whose
bones are posed directly; the other-style skeleton (``test_other_style_rig``) faces +X, has
other names, axes and rotation orders, and no IK. On each the jump is written, the arm swing
found, placed and checked, the body kept on its arc, the jump checked, and everything taken
off again; what plays is read back from the evaluated bones (world space, scene time).
Truths: free fall (a physics law), the swing peaking at take-off (Lees, Vanrenterghem &
De Clercq 2004, J Biomech 37:1929-1940), the way each rig was built (its facing).
"""

import math

import bpy
import numpy as np
import pytest

import rigify_rig
from scene_probe import addon, peak_frame, snapshot
from test_other_style_rig import build_other_style_rig
from test_rigify_capabilities import G, _com, _events, _fps, _heads, _implied_g

#: name -> (build, pelvis bone, world forward of the character as built)
RIGS = {
    "metarig": (lambda: rigify_rig.load_metarig(), "spine", np.array([0.0, -1.0, 0.0])),
    "other_style": (lambda: build_other_style_rig(), "jnt_pelvis", np.array([1.0, 0.0, 0.0])),
}
UP = np.array([0.0, 0.0, 1.0])


def _write(name):
    build, pelvis, forward = RIGS[name]
    rig = build()
    scene = bpy.context.scene
    s = scene.leapwright_plan
    s.rig, s.com_bone, s.foot_left, s.foot_right = rig, pelvis, "", ""
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    plan = addon().plan.link.plan_for(scene)[0]
    scene.frame_start = s.start_frame
    scene.frame_end = s.start_frame + int(math.ceil(plan.duration_s * _fps(scene))) + 4
    return rig, plan, forward


def _elevation(rig, frames, upper, fore, forward):
    """Elevation [deg] of the evaluated shoulder-to-wrist line (0 hanging, + in front)."""
    h = _heads(rig, frames, (upper,))[:, 0]
    scene, tips = bpy.context.scene, []
    for f in frames:
        whole = int(math.floor(f))
        scene.frame_set(whole, subframe=float(f - whole))
        ev = rig.evaluated_get(bpy.context.evaluated_depsgraph_get())
        tips.append(np.array(ev.matrix_world @ ev.pose.bones[fore].tail))
    d = np.array(tips) - h
    return np.degrees(np.unwrap(np.arctan2(d @ forward, -(d @ UP))))


@pytest.mark.parametrize("name", sorted(RIGS))
def test_arm_swing_is_found_placed_and_checked_and_peaks_at_take_off(name):
    rig, plan, forward = _write(name)
    scene = bpy.context.scene
    assert bpy.ops.leapwright.find_arm_bones() == {"FINISHED"}
    arms = scene.leapwright_arms
    assert bpy.ops.leapwright.place_arm_swing() == {"FINISHED"}
    push, takeoff, _ = _events(scene, plan)
    frames = np.arange(push - 6.0, takeoff + 8.0, 0.5)
    for upper, fore in ((arms.upper_arm_left, arms.forearm_left), (arms.upper_arm_right, arms.forearm_right)):
        elev = _elevation(rig, frames, upper, fore, forward)
        assert abs(peak_frame(frames, elev) - takeoff) <= 1.0, (upper, peak_frame(frames, elev), takeoff)
        assert elev.min() < -20.0 and elev.max() > 60.0, (upper, elev.min(), elev.max())  # back, then in front
    assert bpy.ops.leapwright.check_arm_swing() == {"FINISHED"}
    lines = addon().arms.operators.LAST[rig.name]
    assert lines[-1] == ("the swing peaks at take-off and rises inside the push", "CHECKMARK"), lines


@pytest.mark.parametrize("name", sorted(RIGS))
def test_body_arc_is_kept_and_the_jump_checks_with_g(name):
    rig, plan, _forward = _write(name)
    scene = bpy.context.scene
    assert bpy.ops.leapwright.find_arm_bones() == {"FINISHED"}
    assert bpy.ops.leapwright.place_arm_swing() == {"FINISHED"}
    assert bpy.ops.leapwright.check_body_arc() == {"FINISHED"}
    assert bpy.ops.leapwright.keep_body_on_arc() == {"FINISHED"}
    _push, takeoff, touchdown = _events(scene, plan)
    flight = np.arange(round(takeoff) + 1, round(touchdown))  # surely in the air
    g_fit, off = _implied_g(_com(rig, flight), _fps(scene))
    assert off < 0.002 and g_fit == pytest.approx(G, rel=0.01), (g_fit, off)
    assert bpy.ops.leapwright.check_jump() == {"FINISHED"}
    assert scene.leapwright_check.implied_gravity == pytest.approx(G, rel=0.02), scene.leapwright_check.summary


@pytest.mark.parametrize("name", sorted(RIGS))
def test_everything_comes_off_again_leaving_the_file_exactly_as_it_was(name):
    build, pelvis, _forward = RIGS[name]
    rig = build()
    scene = bpy.context.scene
    scene.leapwright_plan.rig = rig
    before = snapshot()
    RIGS[name] = (lambda: rig, pelvis, _forward)
    try:
        _write(name)
    finally:
        RIGS[name] = (build, pelvis, _forward)
    assert bpy.ops.leapwright.find_arm_bones() == {"FINISHED"}
    assert bpy.ops.leapwright.place_arm_swing() == {"FINISHED"}
    assert bpy.ops.leapwright.keep_body_on_arc() == {"FINISHED"}
    for op in (bpy.ops.leapwright.remove_body_arc, bpy.ops.leapwright.remove_arm_swing,
               bpy.ops.leapwright.remove_plan):
        assert op() == {"FINISHED"}
    scene.frame_start, scene.frame_end = before["range"][:2]
    scene.frame_set(before["range"][2])
    assert snapshot() == before
