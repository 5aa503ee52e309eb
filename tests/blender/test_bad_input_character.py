"""Bad input in real Blender, the character: a clear report, and the file exactly as it was.

No rig, a mesh instead of an armature, missing or renamed bones, a foot under
the body bone, zero scale, a rig facing straight up, edit mode.
Every refusal is checked two ways: the operator says what is wrong (a
RuntimeError from ``bpy.ops`` carrying the ERROR report, or a WARNING report
printed by background Blender), and :func:`scene_probe.file_state` (every
action's every channelbag, key attributes as raw bytes, NLA strips, markers,
poses and custom properties) is equal before and after.
"""

import math

import bpy

from rig_builder import build_rig, configure
from scene_probe import refused


def test_no_rig_and_no_active_object():
    rig = build_rig()
    configure(rig)
    bpy.context.scene.leapwright_plan.rig = None
    bpy.context.view_layer.objects.active = None
    refused("no rig", bpy.ops.leapwright.write_plan)


def test_mesh_instead_of_an_armature():
    build_rig()
    mesh = bpy.data.objects.new("Box", bpy.data.meshes.new("Box"))
    bpy.context.scene.collection.objects.link(mesh)
    configure(mesh)
    refused("'Box' is a mesh, not an armature")


def test_missing_body_bone():
    configure(build_rig(), com_bone="pelvis")
    refused("no bone named 'pelvis'")


def test_missing_foot_bone_is_named():
    configure(build_rig(), foot_left="foot.L", foot_right="heel.R")
    refused("no bone named 'heel.R'")


def test_bone_renamed_after_it_was_chosen():
    rig = build_rig()
    configure(rig)
    rig.data.bones["hips"].name = "pelvis"
    refused("no bone named 'hips'")


def test_foot_controller_that_is_a_child_of_the_body_bone():
    configure(build_rig(), foot_left="spine")
    refused("'spine' is parented under the body bone 'hips'")


def test_same_bone_as_body_and_foot():
    configure(build_rig(), foot_right="hips")
    refused("'hips' is parented under the body bone")


def test_feet_without_a_body_bone():
    configure(build_rig(), com_bone="", foot_left="foot.L")
    refused("foot controllers need a body bone")


def test_rig_with_zero_scale():
    rig = build_rig()
    rig.scale = (0.0, 0.0, 0.0)
    configure(rig)
    refused("zero scale")


def test_rig_facing_straight_up_with_forward_from_the_rig():
    rig = build_rig()
    rig.rotation_euler = (math.pi / 2, 0.0, 0.0)  # its -Y now points down
    configure(rig, forward="RIG")
    refused("faces straight up or down")


def test_rig_in_edit_mode_is_refused_by_poll():
    rig = build_rig()
    configure(rig)
    bpy.ops.object.mode_set(mode="EDIT")
    refused(r"poll\(\).*edit mode", bpy.ops.leapwright.write_plan)
    bpy.ops.object.mode_set(mode="OBJECT")


def test_rig_in_edit_mode_message_names_edit_mode():
    configure(build_rig())
    bpy.ops.object.mode_set(mode="EDIT")
    try:
        refused("edit mode", bpy.ops.leapwright.write_plan)
    finally:
        bpy.ops.object.mode_set(mode="OBJECT")
