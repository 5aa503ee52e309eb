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

from scene_probe import file_state, first_difference
from test_arm_swing import ARMS, FOREARMS, _jump


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
    s = scene.leapwright_swing
    found = (s.upper_arm_left, s.forearm_left, s.upper_arm_right, s.forearm_right)
    assert found == tuple(truth[n] for n in (ARMS[0], FOREARMS[0], ARMS[1], FOREARMS[1]))
    # And geometrically: the chosen left shoulder lies on the character's left (the mannequin's +X, turned).
    left = np.array(Matrix.Rotation(math.radians(turn_deg), 3, "Z") @ Vector((1.0, 0.0, 0.0)))
    bones = rig.data.bones
    across = np.array(bones[s.upper_arm_left].head_local) - np.array(bones[s.upper_arm_right].head_local)
    assert across @ left > 0.9 * np.linalg.norm(across)


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
    scene.leapwright.rig = stick
    before = file_state()
    with pytest.raises(RuntimeError, match="pick the upper-arm bones by hand"):
        bpy.ops.leapwright.find_arm_bones()
    assert file_state() == before, first_difference(file_state(), before)
