"""Unusual but legitimate scenes in real Blender work, and clashes with the animator's keys are asked about.

NTSC rates, unit scales, a one-frame range, no camera, locked rotation,
rotation modes and NLA stacks must work and are checked against the plan:
projectile motion (physics law) puts the apex at take-off + v0 / g, so the
timing and size of the written jump can be read back from Blender's own
evaluation. Where the animator already keys a channel (in the active action
or only in an NLA strip), 'Ask' warns and writes nothing; removal with
nothing written changes nothing.
Every refusal is checked two ways: the operator says what is wrong (a
RuntimeError from ``bpy.ops`` carrying the ERROR report, or a WARNING report
printed by background Blender), and :func:`scene_probe.file_state` (every
action's every channelbag, key attributes as raw bytes, NLA strips, markers,
poses and custom properties) is equal before and after.
"""

import bpy
import numpy as np
import pytest

from rig_builder import add_user_keys, build_rig, configure
from scene_probe import (addon, file_state, first_difference, flight_error, refused, reports, run_remove,
    run_write, scene_plan, works)


def test_ntsc_fps_base_works_with_the_true_frame_rate():
    scene = bpy.context.scene
    scene.render.fps, scene.render.fps_base = 24, 1.001
    rig = build_rig()
    # A long hold puts the flight ~2.6 s in: timed at 24 instead of 23.976 fps it
    # would sit 0.06 frames late, a ~6 mm error in the fast rise, 30x the bound.
    configure(rig, height=0.4, weighing_duration=2.0)
    works(rig)
    plan = scene_plan()
    landing = [m.frame for m in scene.timeline_markers if m.name == "lw:touchdown"]
    assert landing == [int(round(1 + plan.hops[0].touchdown_time_s * 24 / 1.001))]


@pytest.mark.parametrize("unit_scale", [0.01, 100.0])
def test_unit_scaleworks(unit_scale):
    rig = build_rig(unit_scale=unit_scale)
    k = 1.0 / unit_scale  # scene units per metre
    configure(rig, height=0.4 * k, standing_com_height=1.0 * k, distance=0.3 * k)
    works(rig)


def test_one_frame_scene_rangeworks():
    scene = bpy.context.scene
    scene.frame_start = scene.frame_end = 1
    rig = build_rig()
    configure(rig, height=0.4)
    works(rig)
    assert (scene.frame_start, scene.frame_end) == (1, 1)  # the user's range is theirs


def test_scene_without_a_cameraworks():
    scene = bpy.context.scene
    assert scene.camera is None and not [o for o in bpy.data.objects if o.type == "CAMERA"]
    rig = build_rig()
    configure(rig, height=0.4)
    works(rig)


def test_bone_with_locked_rotation_gets_location_keys_only():
    rig = build_rig()
    pb = rig.pose.bones["hips"]
    pb.lock_rotation = (True, True, True)
    pb.lock_rotation_w = True
    configure(rig, height=0.4)
    assert run_write(rig) == {"FINISHED"}
    paths = {fc.data_path for fc in addon().blender.compat.fcurves(rig.animation_data.action, rig)}
    assert paths == {'pose.bones["hips"].location', '["lw_weight_bw"]'}
    assert flight_error(rig) < 2e-4


@pytest.mark.parametrize("rotation_mode", ["XYZ", "QUATERNION", "AXIS_ANGLE"])
@pytest.mark.parametrize("mode", ["ASK", "LAYER"])
def test_location_writes_work_in_every_rotation_mode(rotation_mode, mode):
    rig = build_rig()
    pb = rig.pose.bones["hips"]
    pb.rotation_mode = rotation_mode
    if mode == "LAYER":  # the animator keys location and rotation; the jump layers over them
        add_user_keys(rig)
        pb.keyframe_insert({"XYZ": "rotation_euler", "QUATERNION": "rotation_quaternion",
                            "AXIS_ANGLE": "rotation_axis_angle"}[rotation_mode], frame=1)
    configure(rig, height=0.4)
    before = file_state()
    assert run_write(rig, on_conflict=mode) == {"FINISHED"}
    assert run_remove(rig) == {"FINISHED"}
    assert file_state() == before, first_difference(file_state(), before)


def test_axis_angle_rotation_layer_is_refused_before_writing():
    rig = build_rig()
    pb = rig.pose.bones["spine"]
    pb.rotation_mode = "AXIS_ANGLE"
    pb.keyframe_insert("rotation_axis_angle", frame=1)
    spec = addon().blender.curves.CurveSpec('pose.bones["spine"].rotation_axis_angle', 0, np.array([1.0, 10.0]),
                                           np.array([0.0, 0.3]), np.zeros(2), "LINEAR")
    before = file_state()
    with pytest.raises(addon().blender.ownership.LayerError, match="axis-angle"):
        addon().blender.ownership.write_layer(rig, "follow_through", [spec])
    assert file_state() == before, first_difference(file_state(), before)


def test_user_nla_stack_with_strip_offsets_is_kept():
    rig = build_rig()
    add_user_keys(rig, bone="spine")
    ad = rig.animation_data
    compat = addon().blender.compat
    track = ad.nla_tracks.new()
    track.name = "my take"
    strip = compat.new_nla_strip(rig, track, "take 1", 10, ad.action, compat.active_slot_handle(rig))
    strip.scale = 1.5
    strip.frame_start_ui = 12.25  # an offset off whole frames
    ad.action = None
    add_user_keys(rig)  # and an active action with keys on the body bone
    configure(rig, height=0.4)
    before = file_state()
    assert run_write(rig, on_conflict="LAYER") == {"FINISHED"}
    kept = [t for t in file_state()["objects"][0][4][6] if t[0] == "my take"]
    assert kept == [t for t in before["objects"][0][4][6] if t[0] == "my take"]
    assert run_remove(rig) == {"FINISHED"}
    assert file_state() == before, first_difference(file_state(), before)


def _keys_in_a_strip_only(muted=False):
    """A rig whose body keys live only in an NLA strip of the animator's (no active action)."""
    rig = build_rig()
    add_user_keys(rig)
    ad = rig.animation_data
    compat = addon().blender.compat
    track = ad.nla_tracks.new()
    track.name = "my take"
    compat.new_nla_strip(rig, track, "take 1", 1, ad.action, compat.active_slot_handle(rig))
    track.mute = muted
    ad.action = None
    configure(rig, height=0.4)
    return rig


@pytest.mark.parametrize("muted", [False, True])
def test_keys_in_a_user_nla_strip_only_are_not_overridden_silently(capfd, muted):
    rig = _keys_in_a_strip_only(muted)
    before = file_state()
    capfd.readouterr()
    assert run_write(rig, on_conflict="ASK") == {"CANCELLED"}
    out = capfd.readouterr()
    assert any(lvl == "WARNING" and "hips" in msg for lvl, msg in reports(out.out + out.err))
    assert file_state() == before, first_difference(file_state(), before)


@pytest.mark.parametrize("mode", ["REPLACE", "LAYER"])
def test_keys_in_a_user_nla_strip_only_replaced_or_layered_then_removed(mode):
    rig = _keys_in_a_strip_only()
    before = file_state()
    take = [t for t in before["objects"][0][4][6] if t[0] == "my take"]
    assert run_write(rig, on_conflict=mode) == {"FINISHED"}
    assert [t for t in file_state()["objects"][0][4][6] if t[0] == "my take"] == take
    if mode == "REPLACE":  # the active action plays over the strip (REPLACE blend, influence 1)
        assert flight_error(rig) < 2e-4
    bpy.context.scene.frame_set(1)  # where `before` was taken
    assert run_remove(rig) == {"FINISHED"}
    assert file_state() == before, first_difference(file_state(), before)


def test_ask_with_a_clash_warns_and_writes_nothing(capfd):
    rig = build_rig()
    add_user_keys(rig)
    configure(rig, height=0.4)
    before = file_state()
    capfd.readouterr()
    assert run_write(rig, on_conflict="ASK") == {"CANCELLED"}
    out = capfd.readouterr()
    warned = [msg for lvl, msg in reports(out.out + out.err) if lvl == "WARNING"]
    assert warned and 'pose.bones["hips"].location' in warned[0] and "nothing was written" in warned[0]
    assert file_state() == before, first_difference(file_state(), before)


def test_remove_with_nothing_written_reports_and_changes_nothing(capfd):
    rig = build_rig()
    add_user_keys(rig)
    configure(rig)
    before = file_state()
    capfd.readouterr()
    assert run_remove(rig) == {"CANCELLED"}
    out = capfd.readouterr()
    assert any("nothing from leapwright" in msg for _lvl, msg in reports(out.out + out.err))
    assert file_state() == before, first_difference(file_state(), before)


def test_remove_without_a_rig_is_refused_by_poll():
    bpy.context.scene.leapwright_plan.rig = None
    bpy.context.view_layer.objects.active = None
    refused(r"poll\(\) failed", bpy.ops.leapwright.remove_plan)


def test_use_active_bone_on_a_mesh_is_refused_by_poll():
    mesh = bpy.data.objects.new("Box", bpy.data.meshes.new("Box"))
    bpy.context.scene.collection.objects.link(mesh)
    bpy.context.view_layer.objects.active = mesh
    refused(r"poll\(\) failed", bpy.ops.leapwright.use_active_bone)
