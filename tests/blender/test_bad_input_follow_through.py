"""Bad input in real Blender for the follow-through bake and the in-air correction.

A mesh, missing bones and bone collections, axis-angle bones, a one-frame
range, edit mode, and removal with nothing written.
Every refusal is checked two ways: the operator says what is wrong (a
RuntimeError from ``bpy.ops`` carrying the ERROR report, or a WARNING report
printed by background Blender), and :func:`scene_probe.file_state` (every
action's every channelbag, key attributes as raw bytes, NLA strips, markers,
poses and custom properties) is equal before and after.
"""

import bpy

from rig_builder import build_rig, configure
from scene_probe import file_state, first_difference, refused, reports


def _lag_rig(**lag):
    from test_follow_through import _ponytail_rig  # the lag tests' own chain rig, not rebuilt here
    rig = _ponytail_rig()
    configure(rig, height=0.4)
    s = bpy.context.scene.leapwright_follow_through
    for key, value in lag.items():
        setattr(s, key, value)
    bpy.context.view_layer.objects.active = rig
    return rig


def test_bake_follow_through_on_a_mesh():
    _lag_rig()
    mesh = bpy.data.objects.new("Box", bpy.data.meshes.new("Box"))
    bpy.context.scene.collection.objects.link(mesh)
    bpy.context.view_layer.objects.active = mesh
    refused("'Box' is a mesh, not an armature", lambda: bpy.ops.leapwright.bake_follow_through(bones="pony.1"))


def test_bake_follow_through_missing_bone():
    _lag_rig()
    refused("has no bone 'braid.1'", lambda: bpy.ops.leapwright.bake_follow_through(bones="pony.1, braid.1"))


def test_bake_follow_through_refuses_axis_angle_bones():
    rig = _lag_rig()
    rig.pose.bones["pony.2"].rotation_mode = "AXIS_ANGLE"
    refused("axis-angle", lambda: bpy.ops.leapwright.bake_follow_through(bones="pony.1,pony.2,pony.3"))


def test_bake_follow_through_one_frame_range():
    scene = bpy.context.scene
    _lag_rig()
    scene.frame_start = scene.frame_end = 10
    refused("too short", lambda: bpy.ops.leapwright.bake_follow_through(bones="pony.1,pony.2,pony.3"))


def test_bake_follow_through_with_no_bones_chosen():
    _lag_rig(source="SELECTED")
    refused("bones", bpy.ops.leapwright.bake_follow_through)


def test_bake_follow_through_missing_bone_collection():
    _lag_rig(source="COLLECTION", collection="Hair")
    refused("no bone collection 'Hair'", bpy.ops.leapwright.bake_follow_through)


def test_bake_follow_through_in_edit_mode_is_refused_by_poll():
    _lag_rig()
    bpy.ops.object.mode_set(mode="EDIT")
    try:
        refused(r"poll\(\).*edit mode", lambda: bpy.ops.leapwright.bake_follow_through(bones="pony.1"))
    finally:
        bpy.ops.object.mode_set(mode="OBJECT")


def test_remove_follow_through_with_nothing_baked_warns_and_changes_nothing(capfd):
    _lag_rig()
    before = file_state()
    capfd.readouterr()
    assert bpy.ops.leapwright.remove_follow_through() == {"CANCELLED"}
    out = capfd.readouterr()
    assert any(lvl == "WARNING" and "nothing to remove" in msg for lvl, msg in reports(out.out + out.err))
    assert file_state() == before, first_difference(file_state(), before)


def test_keep_body_on_arc_on_a_mesh():
    mesh = bpy.data.objects.new("Box", bpy.data.meshes.new("Box"))
    bpy.context.scene.collection.objects.link(mesh)
    configure(mesh, com_bone="")
    bpy.context.view_layer.objects.active = mesh
    refused("armature", bpy.ops.leapwright.keep_body_on_arc)


def test_keep_body_on_arc_without_a_flight():
    rig = build_rig()
    configure(rig)
    bpy.context.view_layer.objects.active = rig
    refused("flight|arm|map|body", bpy.ops.leapwright.keep_body_on_arc)


def test_remove_body_arc_with_nothing_written(capfd):
    rig = build_rig()
    configure(rig)
    bpy.context.view_layer.objects.active = rig
    before = file_state()
    capfd.readouterr()
    assert bpy.ops.leapwright.remove_body_arc() == {"CANCELLED"}
    out = capfd.readouterr()
    assert any("no in-air correction" in msg for _lvl, msg in reports(out.out + out.err))
    assert file_state() == before, first_difference(file_state(), before)
