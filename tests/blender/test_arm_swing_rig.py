"""Arm swing on rigs built another way, in real Blender, on the demo mannequin.

Find Arm Bones must read the arms from the bone tree and the rest shoulders whatever
way the bones face inside the armature and whatever they are called. The truth it is
checked against is the mannequin's own build (blend_examples/mannequin.py: it faces
the armature's -Y with its left on +X, and names its bones ``.L``/``.R``), turned by
the same rotation the test bakes into the bones.
"""

import math

import bpy
import numpy as np
import pytest
from mathutils import Matrix, Vector

from scene_probe import addon, file_state, first_difference
from test_arm_swing import ARMS, FOREARMS, _events, _facing, _jump, _place


@pytest.mark.parametrize("turn_deg", [90.0, 180.0, -90.0, 30.0])
@pytest.mark.parametrize("renamed", [False, True], ids=["named", "renamed"])
def test_find_arm_bones_on_bones_turned_inside_the_armature(turn_deg, renamed):
    rig, scene = _jump(turn_deg=turn_deg, applied=True)  # the turn baked into the rest pose
    assert tuple(rig.rotation_euler) == pytest.approx((0.0, 0.0, 0.0), abs=1e-9)
    truth = {n: "b" + n[::-1] if renamed else n for n in ARMS + FOREARMS}
    if renamed:
        for b in rig.data.bones:
            b.name = "b" + b.name[::-1]  # no name the add-on could recognise
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.find_arm_bones() == {"FINISHED"}
    s = scene.leapwright_arms
    found = (s.upper_arm_left, s.forearm_left, s.upper_arm_right, s.forearm_right)
    assert found == tuple(truth[n] for n in (ARMS[0], FOREARMS[0], ARMS[1], FOREARMS[1]))
    # And geometrically: the chosen left shoulder lies on the character's left (the mannequin's +X, turned).
    left = np.array(Matrix.Rotation(math.radians(turn_deg), 3, "Z") @ Vector((1.0, 0.0, 0.0)))
    bones = rig.data.bones
    across = np.array(bones[s.upper_arm_left].head_local) - np.array(bones[s.upper_arm_right].head_local)
    assert across @ left > 0.9 * np.linalg.norm(across)


@pytest.mark.parametrize("turn_deg", [180.0, 90.0])
def test_the_body_map_reads_a_rig_turned_inside_its_armature(turn_deg):
    # The whole-body COM's segment map comes from the same reading of the rig's facing:
    # a mannequin whose bones face +Y (or sideways) in the armature maps to the same joints
    # as the one built facing -Y, so its COM is weighed the same way (de Leva 1996).
    plain = addon().body.com.body_model(_jump()[0])[1].as_text()
    rig, _ = _jump(turn_deg=turn_deg, applied=True)
    _model, marks, how = addon().body.com.body_model(rig)
    assert how == "found from the bone tree"
    assert marks.as_text() == plain


def test_find_arm_bones_refuses_a_rig_without_a_body_and_changes_nothing():
    rig, scene = _jump()
    arm = bpy.data.armatures.new("stick")
    stick = bpy.data.objects.new("stick", arm)
    scene.collection.objects.link(stick)
    bpy.context.view_layer.objects.active = stick
    bpy.ops.object.mode_set(mode="EDIT")
    b = arm.edit_bones.new("only")
    b.head, b.tail = (0.0, 0.0, 0.0), (0.0, 0.0, 1.0)
    bpy.ops.object.mode_set(mode="OBJECT")
    scene.leapwright_plan.rig = stick
    before = file_state()
    with pytest.raises(RuntimeError, match="pick the upper-arm bones by hand"):
        bpy.ops.leapwright.find_arm_bones()
    assert file_state() == before, first_difference(file_state(), before)


def _arm_reading(rig, frame, forward, up, side):
    """Elbow angle [deg] (3D, 0 = straight) and the side-view elevations [deg] of the upper arm,
    the forearm and the shoulder-to-wrist line, evaluated by Blender."""
    scene = bpy.context.scene
    whole = int(math.floor(frame))
    scene.frame_set(whole, subframe=float(frame - whole))
    ev = rig.evaluated_get(bpy.context.evaluated_depsgraph_get())
    w = ev.matrix_world
    p = [np.array(w @ ev.pose.bones[f"{n}.{side}"].head) for n in ("upper_arm", "forearm", "hand")]
    u, f = p[1] - p[0], p[2] - p[1]
    elbow = math.degrees(math.acos(np.clip(u @ f / np.linalg.norm(u) / np.linalg.norm(f), -1.0, 1.0)))
    return elbow, [math.degrees(math.atan2(d @ forward, -(d @ up))) for d in (u, f, p[2] - p[0])]


@pytest.mark.parametrize("mode", ["QUATERNION", "XYZ"])
@pytest.mark.parametrize("bend_deg", [0.0, 20.0, 35.0])
def test_forearm_bends_in_the_backswing_and_is_straight_at_takeoff(bend_deg, mode):
    # Common practice in jump animation: elbows a little bent in the backswing, straight as the
    # arms come up to take-off. The elbow angle is the forearm's turn off the upper arm's line; the
    # bend lies in the swing plane, forward and up (elbow flexion), so in the side view the forearm
    # sits that much further forward than the upper arm.
    rig, scene = _jump()
    bones = rig.data.bones
    for side in "LR":  # the mannequin's elbows are bent at rest, so "straight" is not its rest pose
        u = np.array(bones[f"forearm.{side}"].head_local) - np.array(bones[f"upper_arm.{side}"].head_local)
        f = np.array(bones[f"hand.{side}"].head_local) - np.array(bones[f"forearm.{side}"].head_local)
        assert math.degrees(math.acos(u @ f / np.linalg.norm(u) / np.linalg.norm(f))) > 10.0
    for name in FOREARMS:
        rig.pose.bones[name].rotation_mode = mode
    assert _place(rig, forearm_bend=math.radians(bend_deg)) == {"FINISHED"}
    push, takeoff, _ = _events(scene)  # the upswing starts at the push start (the default share 0)
    forward, up = _facing(rig, 0.0)
    for side in "LR":
        elbow, (upper, fore, line) = _arm_reading(rig, push, forward, up, side)
        assert elbow == pytest.approx(bend_deg, abs=1.0)
        assert fore - upper == pytest.approx(bend_deg, abs=1.0)
        assert line == pytest.approx(-45.0, abs=1.0)  # the hand line keeps the planned backswing
        elbow, (upper, fore, line) = _arm_reading(rig, takeoff, forward, up, side)
        assert elbow == pytest.approx(0.0, abs=1.0)
        assert line == pytest.approx(90.0, abs=1.0)
        # On the way up the bend opens: half way it lies between the two.
        elbow, _ = _arm_reading(rig, 0.5 * (push + takeoff), forward, up, side)
        assert elbow <= bend_deg + 0.5
