"""The sidebar panel: every control names a real setting, and the readout follows the values.

Headless Blender has no window to draw in, so the panel's ``draw`` runs
against :class:`scene_probe.PanelLayout`, standing in for ``UILayout``, which checks each property name
against the settings' RNA (what a real layout would reject).
References: projectile motion, flight time T = 2 sqrt(2 h / g) for a jump that
lands at take-off height (physics law).
"""

import bpy
import pytest

from rig_builder import add_user_keys, build_rig, configure
from scene_probe import addon, draw_panel, snapshot


def test_panel_draws_goals_timing_character_keys_and_readout():
    rig = build_rig()
    configure(rig, height=0.5)
    log = draw_panel("LEAPWRIGHT_PT_plan")
    props = {n for kind, n in log if kind == "prop"}
    assert {"goal", "height", "distance", "rig", "com_bone", "foot_left", "foot_right", "key_style",
            "start_frame", "dip_duration", "push_duration"} <= props
    assert ("operator", "leapwright.write_plan") in log and ("operator", "leapwright.remove_plan") in log
    labels = [t for kind, t in log if kind == "label"]
    assert any(t.startswith("In the air:") for t in labels)
    assert any("body weight" in t for t in labels)


def test_readout_follows_the_values_as_they_change():
    scene = bpy.context.scene
    s = scene.leapwright_plan
    s.height = 0.3
    low = s.height  # as stored (float32)
    first = addon().plan.link.plan_for(scene)[1]["flight_frames"][0]
    s.height = 0.6
    high = s.height
    second = addon().plan.link.plan_for(scene)[1]["flight_frames"][0]
    fps = addon().blender.scene_units.scene_fps(scene)
    g = 9.80665  # the stored float32 value stands for standard gravity (3rd CGPM 1901)
    for h, frames in ((low, first), (high, second)):
        assert frames == pytest.approx(2 * (2 * h / g) ** 0.5 * fps, rel=1e-9)
    scene.unit_settings.scale_length = 0.01  # centimetre units: 60 BU of rise is 0.6 m
    s.height, s.standing_com_height = 60.0, 100.0
    assert addon().plan.link.plan_for(scene)[1]["flight_frames"][0] == pytest.approx(
        2 * (2 * s.height * scene.unit_settings.scale_length / g) ** 0.5 * fps, rel=1e-9)


def test_readout_shows_the_cores_refusal_in_its_own_words():
    s = bpy.context.scene.leapwright_plan
    s.height, s.landing_height = 0.2, 0.5
    plan, readout = addon().plan.link.plan_for(bpy.context.scene)
    assert plan is None and "0.5" in readout["error"]
    labels = [t for kind, t in draw_panel("LEAPWRIGHT_PT_plan") if kind == "label"]
    assert any("apex" in t or "ledge" in t for t in labels)


def test_invoke_without_a_window_cannot_ask_so_it_changes_nothing():
    rig = build_rig()
    add_user_keys(rig)
    configure(rig, height=0.4)
    bpy.context.view_layer.objects.active = rig
    before = snapshot()
    assert bpy.ops.leapwright.write_plan("INVOKE_DEFAULT") == {"CANCELLED"}
    assert snapshot() == before


def test_use_active_bone_sets_the_character():
    rig = build_rig()
    rig.data.bones.active = rig.data.bones["hips"]
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.use_active_bone() == {"FINISHED"}
    s = bpy.context.scene.leapwright_plan
    assert s.rig == rig and s.com_bone == "hips"


def test_hops_get_numbered_markers():
    rig = build_rig()
    configure(rig, height=0.3, hops=3)
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    names = {m.name for m in bpy.context.scene.timeline_markers}
    assert {"lw:stand", "lw:take-off 1", "lw:take-off 2", "lw:take-off 3", "lw:touchdown 3"} <= names


def test_axis_angle_offsets_are_refused_before_anything_is_written():
    rig = build_rig()
    own = addon().blender.ownership
    spec = addon().blender.curves.CurveSpec('pose.bones["spine"].rotation_axis_angle', 0, [1.0, 2.0],
                                           [0.0, 0.1], [0.0, 0.0], "LINEAR")
    before = snapshot()
    with pytest.raises(own.LayerError, match="axis-angle"):
        own.write_layer(rig, "follow_through", [spec])
    assert snapshot() == before


def test_beyond_human_warning_reaches_the_readout_under_standard_gravity():
    # A 2.5 m standing jump needs 7 m/s at take-off (v = sqrt(2 g h), physics law),
    # far above the elite 3.9 m/s of Coh et al. 2017 that bounds the athletic grade.
    s = bpy.context.scene.leapwright_plan
    s.height = 2.5
    readout = addon().plan.link.plan_for(bpy.context.scene)[1]
    assert any("beyond human" in w for w in readout["warnings"])
