"""The checker inside Blender: the same analysis as the command line, on the evaluated rig.

References: projectile motion (physics law): a planned flight implies the scene's
gravity; a flight played at half speed takes twice as long for the same height, so by
h = g T^2 / 8 it implies g / 4 (the stylised-timing law of the core).
"""

import json
import os
import pathlib
import subprocess
import tempfile

import numpy as np
import bpy

from rig_builder import build_rig, configure
from scene_probe import addon, run_write, snapshot, world_path

G = 9.80665
REPO = pathlib.Path(__file__).resolve().parents[2]


def _range_for_plan():
    scene = bpy.context.scene
    plan = addon().plan.link.plan_for(scene)[0]
    fps = addon().blender.scene_units.scene_fps(scene)
    scene.frame_start, scene.frame_end = 1, int(np.ceil(1 + plan.duration_s * fps)) + 4
    return plan, fps


def _check(rig):
    bpy.context.view_layer.objects.active = rig
    return bpy.ops.leapwright.check_jump()


def test_check_of_a_written_jump_finds_no_errors_and_recovers_gravity():
    rig = build_rig()
    configure(rig, height=0.4, distance=0.6, key_style="SPLINE")
    _range_for_plan()
    assert run_write(rig) == {"FINISHED"}
    assert _check(rig) == {"FINISHED"}
    c = bpy.context.scene.leapwright_check
    assert len(c.findings) == 0, [f.message for f in c.findings]
    assert abs(c.implied_gravity - G) / G < 1e-3
    assert "lw_weight_measured_bw" in rig
    # Measured weight is 1 BW standing at the start (statics).
    fc = next(fc for fc in addon().blender.compat.fcurves(rig.animation_data.action, rig)
              if fc.data_path == '["lw_weight_measured_bw"]')
    assert abs(fc.evaluate(2.0) - 1.0) < 0.05


def _hand_keyed_floaty_jump(rig):
    """Keys on every frame from a plan sampled at 48 fps and played at 24: hang time doubled."""
    core = addon().core
    plan = core.plan.planner.plan_jump(core.plan.goals.JumpGoals(height=0.4))
    s = plan.sample(48.0)
    pb = rig.pose.bones["hips"]
    for i, z in enumerate(s.height):
        pb.location = (0.0, float(z), 0.0)  # hips local Y is world Z on the test rig
        pb.keyframe_insert("location", frame=i + 1)
    pb.location = (0.0, 0.0, 0.0)
    scene = bpy.context.scene
    scene.frame_start, scene.frame_end = 1, len(s.height)


def test_floaty_hand_keyed_jump_is_flagged_as_its_csv_export_is_by_the_cli():
    rig = build_rig()
    configure(rig)
    _hand_keyed_floaty_jump(rig)
    assert _check(rig) == {"FINISHED"}
    c = bpy.context.scene.leapwright_check
    in_blender = sorted((f.kind, f.first_frame, f.last_frame) for f in c.findings)
    assert any(k == "floaty_gravity" for k, _, _ in in_blender)
    assert abs(c.implied_gravity - G / 4) / (G / 4) < 5e-3
    scene = bpy.context.scene
    frames = np.arange(scene.frame_start, scene.frame_end + 1)
    path = np.asarray(world_path(rig, "hips", frames), dtype=float) * scene.unit_settings.scale_length
    with tempfile.TemporaryDirectory() as d:
        csv_path = os.path.join(d, "floaty.csv")
        with open(csv_path, "w") as fh:
            fh.write("frame,x,y,z\n")
            for f, (x, y, z) in zip(frames, path):
                fh.write(f"{f},{float(x)!r},{float(y)!r},{float(z)!r}\n")
        cli = subprocess.run([str(REPO / ".venv" / "bin" / "python"), "-m", "cli.main", "check", csv_path,
                              "--fps", "24", "--json"], cwd=REPO, capture_output=True, text=True)
    assert cli.returncode == 1, cli.stderr
    report = json.loads(cli.stdout)
    by_cli = sorted((f["kind"], int(round(f["frames"][0])), int(round(f["frames"][1]))) for f in report["findings"])
    assert in_blender == by_cli
    assert abs(report["implied_gravity_m_s2"] - c.implied_gravity) < 1e-4


def test_overlay_planned_arc_matches_the_written_jump_sample_for_sample():
    rig = build_rig(rotation_z_deg=90.0)
    configure(rig, height=0.35, distance=0.5, key_style="EVERY_FRAME")
    plan, fps = _range_for_plan()
    overlay = addon().check.overlay
    before = overlay.overlay_geometry(bpy.context.scene)["planned"]
    assert run_write(rig) == {"FINISHED"}
    after = overlay.overlay_geometry(bpy.context.scene)["planned"]
    frames = 1 + np.arange(len(after))
    written = world_path(rig, "hips", frames)
    assert np.max(np.abs(before - after)) < 1e-9
    assert np.max(np.abs(after - written)) < 1e-5
    _check(rig)
    geo = overlay.overlay_geometry(bpy.context.scene)
    assert geo["ticks"].shape == (len(geo["path"]), 2, 3)
    assert len(geo["implied"]) == 1


def test_overlay_switched_on_and_off_twenty_times_leaves_no_draw_handler():
    rig = build_rig()
    configure(rig, height=0.3)
    c = bpy.context.scene.leapwright_check
    overlay = addon().check.overlay
    for _ in range(20):
        c.show_overlay = True
        assert overlay.is_drawing()
        c.show_overlay = False
        assert not overlay.is_drawing()
    c.show_overlay = True  # left on: disabling the add-on must remove it
    import addon_utils
    import conftest
    addon_utils.disable(conftest.MODULE, default_set=False)
    assert overlay._STATE["handle"] is None
    addon_utils.enable(conftest.MODULE, default_set=True)


def test_missing_body_bone_reports_and_changes_nothing():
    rig = build_rig()
    configure(rig, height=0.3)
    bpy.context.scene.leapwright_plan.com_bone = "no_such_bone"
    before = snapshot()
    try:
        _check(rig)
        raised = False
    except RuntimeError as exc:
        raised = "no_such_bone" in str(exc)
    assert raised
    assert snapshot() == before


def test_remove_plan_takes_the_check_back_too():
    rig = build_rig()
    configure(rig, height=0.4, key_style="SPLINE")
    _range_for_plan()
    before = snapshot()
    run_write(rig)
    _check(rig)
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.remove_plan() == {"FINISHED"}
    assert "lw_weight_measured_bw" not in rig
    assert snapshot() == before
