"""Leapwright never overwrites the animator's keys silently, and takes back exactly what it wrote.

"Exactly" is checked byte for byte: every key attribute of every F-curve
(read with foreach_get as raw float32/int32 bytes), groups, NLA tracks and
strips, the active action and slot, markers and custom properties.
"""

import numpy as np
import pytest
import bpy

from rig_builder import add_user_keys, build_rig, configure
from scene_probe import _fcurve_record as _record
from scene_probe import addon, run_remove, run_write, snapshot, world_path

KEY_TOLERANCE = 5e-4  # m, the core's default Hermite key tolerance

USER_MARKER = ("beat", 12)


def _rig_with_user_animation(frames=(1, 20, 40)):
    rig = build_rig()
    add_user_keys(rig, frames=frames)
    bpy.context.scene.timeline_markers.new(USER_MARKER[0], frame=USER_MARKER[1])
    rig["notes"] = "animator's own property"
    configure(rig, height=0.4, distance=0.3, foot_left="foot.L", foot_right="foot.R")
    return rig


def test_ask_reports_the_clash_and_changes_nothing():
    rig = _rig_with_user_animation()
    before = snapshot()
    assert run_write(rig, on_conflict="ASK") == {"CANCELLED"}
    assert snapshot() == before


def _user_records(rig, action):
    a = addon()
    return sorted(_record(fc) for fc in a.blender.compat.fcurves(action, rig)
                  if not (fc.group and fc.group.name.startswith("lw:")))


@pytest.mark.parametrize("user_frames", [(1, 20, 40), (3.5, 20.25, 41)])
def test_layer_keeps_user_keys_byte_identical_and_adds_the_plan_on_top(user_frames):
    # Keys off whole frames: the pushed strip must not shift them in time.
    rig = _rig_with_user_animation(user_frames)
    plan = addon().plan.link.plan_for(bpy.context.scene)[0]
    fps = addon().blender.scene_units.scene_fps(bpy.context.scene)
    frames = 1 + np.linspace(0.0, plan.duration_s, 61) * fps
    user_only = world_path(rig, "hips", frames)
    action = rig.animation_data.action
    mine = _user_records(rig, action)
    assert len(mine) == 3
    assert run_write(rig, on_conflict="LAYER") == {"FINISHED"}
    assert _user_records(rig, action) == mine  # the animator's keys, byte for byte
    tracks = [t.name for t in rig.animation_data.nla_tracks]
    assert tracks == [addon().blender.ownership.USER_TRACK, "lw:plan"]
    assert rig.animation_data.nla_tracks["lw:plan"].strips[0].blend_type == "COMBINE"
    # Evaluated: user + plan, in the world, at every sampled frame (plan within its key tolerance).
    layered = world_path(rig, "hips", frames)
    t = (frames - 1) / fps
    plan_shift = np.outer(plan.forward(t), [0.0, -1.0, 0.0]) + np.outer(plan.height(t), [0.0, 0.0, 1.0])
    assert np.max(np.abs(layered - (user_only + plan_shift))) <= KEY_TOLERANCE + 1e-5
    before_remove = _user_records(rig, action)
    assert run_remove(rig) == {"FINISHED"}
    assert _user_records(rig, action) == before_remove
    assert np.max(np.abs(world_path(rig, "hips", frames) - user_only)) < 1e-6


def test_replace_writes_over_user_keys_and_remove_brings_them_back():
    rig = _rig_with_user_animation()
    before = snapshot()
    assert run_write(rig, on_conflict="REPLACE") == {"FINISHED"}
    assert snapshot() != before
    assert run_remove(rig) == {"FINISHED"}
    assert snapshot() == before


@pytest.mark.parametrize("mode", ["LAYER", "REPLACE"])
def test_remove_after_reruns_restores_everything_byte_for_byte(mode):
    rig = _rig_with_user_animation()
    before = snapshot()
    assert run_write(rig, on_conflict=mode) == {"FINISHED"}
    configure(rig, height=0.6, foot_left="foot.L", foot_right="foot.R", key_style="EVERY_FRAME")
    assert run_write(rig, on_conflict=mode) == {"FINISHED"}
    assert run_remove(rig) == {"FINISHED"}
    assert snapshot() == before
    assert USER_MARKER[0] in bpy.context.scene.timeline_markers


def test_remove_on_a_rig_without_animation_leaves_no_trace():
    rig = build_rig()
    configure(rig, height=0.4, foot_left="foot.L", foot_right="foot.R")
    before = snapshot()
    assert rig.animation_data is None
    assert run_write(rig) == {"FINISHED"}
    assert rig.animation_data is not None and any(m.name.startswith("lw:") for m in bpy.context.scene.timeline_markers)
    assert run_remove(rig) == {"FINISHED"}
    assert snapshot() == before
    assert rig.animation_data is None and len(bpy.data.actions) == 0


def test_layer_mechanism_is_generic_for_later_capabilities():
    # Two capabilities layered at once: the user's action comes back only when the last goes.
    rig = _rig_with_user_animation()
    own = addon().blender.ownership
    spec_type = addon().blender.curves.CurveSpec
    delta = spec_type('pose.bones["spine"].location', 0, np.array([1.0, 30.0]), np.array([0.0, 0.2]),
                      np.zeros(2), "LINEAR")
    before = snapshot()
    own.write_layer(rig, "follow_through", [delta])
    own.write_layer(rig, "body", [delta])
    assert [t.name for t in rig.animation_data.nla_tracks] == [own.USER_TRACK, "lw:follow_through", "lw:body"]
    assert rig.animation_data.action is None
    own.clear(rig, "follow_through")
    assert rig.animation_data.action is None
    own.clear(rig, "body")
    assert snapshot() == before


def _refused(rig, match):
    before = snapshot()
    with pytest.raises(RuntimeError, match=match):
        run_write(rig)
    assert snapshot() == before


def test_no_rig_reports_and_changes_nothing():
    rig = build_rig()
    configure(rig)
    bpy.context.scene.leapwright_plan.rig = None
    bpy.context.view_layer.objects.active = None
    before = snapshot()
    with pytest.raises(RuntimeError, match="no rig"):
        bpy.ops.leapwright.write_plan()
    assert snapshot() == before


def test_missing_bone_reports_and_changes_nothing():
    rig = build_rig()
    configure(rig, com_bone="pelvis")
    _refused(rig, "no bone named 'pelvis'")


def test_wrong_type_reports_and_changes_nothing():
    build_rig()
    mesh = bpy.data.objects.new("Box", bpy.data.meshes.new("Box"))
    bpy.context.scene.collection.objects.link(mesh)
    configure(mesh)  # a bone name on a mesh
    _refused(mesh, "not an armature")


def test_foot_under_the_body_bone_reports_and_changes_nothing():
    rig = build_rig()
    configure(rig, foot_left="spine")
    _refused(rig, "parented under the body bone")


def test_impossible_goal_reports_the_core_message_and_changes_nothing():
    rig = build_rig()
    configure(rig, height=0.2, landing_height=0.5)  # a ledge above the apex
    _refused(rig, "apex")
