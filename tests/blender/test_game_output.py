"""Game-ready output in real Blender: root-motion modes, held-pose keys, stylised gravity, export checks.

References: projectile motion (physics law): in free fall the centre of mass
follows z = z0 + v0 t - g t^2 / 2, so a least-squares parabola (numpy.polyfit,
the reference fit) through a flight stretch returns -g / 2 as its leading
coefficient; composition of parent and child transforms (Blender's bone
hierarchy) makes a root's displacement plus its child's the child's world
displacement; Khronos glTF 2.0 specification (2021) section 3.4: one unit is
one metre, +Y up (why the unit-scale and root-axis checks exist); IEEE 754
binary32 key times: whole frames below 2^24 are exact.
"""

import numpy as np
import bpy

from rig_builder import build_rig, configure
from scene_probe import addon, draw_panel, run_write, world_path, written_fcurves

G = 9.80665
MODES = (("IN_PLACE", False), ("ROOT_BONE", False), ("ROOT_BONE", True), ("OBJECT", False), ("OBJECT", True))


def _plan():
    return addon().plan.link.plan_for(bpy.context.scene)[0]


def _fps():
    return addon().blender.scene_units.scene_fps(bpy.context.scene)


def _fresh():
    bpy.ops.wm.read_factory_settings(use_empty=True)
    import conftest
    import addon_utils
    if not conftest.enabled():
        addon_utils.enable(conftest.MODULE, default_set=True)


def _write_mode(mode, vertical, style="SPLINE"):
    _fresh()
    rig = build_rig()
    configure(rig, height=0.45, distance=0.5, key_style=style, foot_left="foot.L", foot_right="foot.R",
              foot_tuck=0.08, root_motion=mode, root_bone="root", root_vertical=vertical)
    rig["lw_bone_masses"] = "hips=40 body; spine=25 body; foot.L=5; foot.R=5"
    assert run_write(rig) == {"FINISHED"}
    plan, fps = _plan(), _fps()
    whole = np.arange(1, int(np.floor(1 + plan.duration_s * fps)) + 1, dtype=float)
    sub = 1 + np.linspace(0.0, plan.duration_s, 173) * fps
    model = addon().body.com.body_model(rig)[0]
    com = addon().body.com.whole_body_com(bpy.context.scene, rig, model, whole)
    return {"com": com, "hips": world_path(rig, "hips", sub), "root": world_path(rig, "root", whole),
            "object": np.array([world_path(rig, "", [f])[0] for f in whole[[0, -1]]]),
            "feet": world_path(rig, "foot.L", whole)}


def test_root_motion_modes_keep_the_evaluated_world_com_within_a_micrometre():
    runs = {m: _write_mode(*m) for m in MODES}
    ref = runs[("IN_PLACE", False)]
    assert np.ptp(ref["com"][:, 1]) > 0.45  # it does travel (0.5 m forward, the rig's -Y)
    for mode, got in runs.items():
        assert np.max(np.abs(got["com"] - ref["com"])) < 1e-6, mode
        assert np.max(np.abs(got["hips"] - ref["hips"])) < 1e-6, mode
        assert np.max(np.abs(got["feet"] - ref["feet"])) < 1e-6, mode
    # Where the travel went: root bone, object, or nowhere (in place).
    assert np.max(np.abs(ref["root"] - ref["root"][0])) < 1e-9
    root = runs[("ROOT_BONE", False)]["root"]
    assert abs((root[-1] - root[0])[1] + 0.5) < 1e-3 and np.ptp(root[:, 2]) < 1e-9  # flat on the ground
    lifted = runs[("ROOT_BONE", True)]["root"]
    assert np.ptp(lifted[:, 2]) > 0.4  # carries the rise too
    obj = runs[("OBJECT", False)]["object"]
    assert abs((obj[-1] - obj[0])[1] + 0.5) < 1e-3 and abs((obj[-1] - obj[0])[2]) < 1e-9


def test_root_bone_that_is_not_above_the_body_is_refused_and_nothing_written():
    rig = build_rig()
    configure(rig, height=0.4, root_motion="ROOT_BONE", root_bone="spine")
    try:
        run_write(rig)
        raised = ""
    except RuntimeError as exc:
        raised = str(exc)
    assert "not above the body bone" in raised
    assert rig.animation_data is None


def test_on_twos_each_pose_holds_two_frames_and_contacts_keep_their_frames():
    rig = build_rig()
    bpy.context.scene.render.fps = 24
    configure(rig, height=0.5, distance=0.3, key_style="TWOS", start_frame=1, foot_left="foot.L",
              foot_right="foot.R")
    assert run_write(rig) == {"FINISHED"}
    plan, fps = _plan(), _fps()
    forced = {int(round(1 + t * fps)) for h in plan.hops for t in (h.takeoff_time_s, h.touchdown_time_s)}
    end = int(np.floor(1 + plan.duration_s * fps + 1e-9))
    curves = [fc for fc in written_fcurves(rig) if '"hips"' in fc.data_path or '"foot.' in fc.data_path]
    assert curves
    for fc in curves:
        frames = np.array([k.co[0] for k in fc.keyframe_points])
        assert np.all(frames == np.rint(frames))  # whole frames only
        assert all(k.interpolation == "CONSTANT" for k in fc.keyframe_points)
        holds = np.diff(frames)
        for start, hold in zip(frames[:-1], holds):
            nxt = int(start + hold)
            assert hold == 2 or (hold == 1 and (nxt in forced or nxt == end)), (fc.data_path, start, hold)
        assert forced <= {int(f) for f in frames}, fc.data_path
    # take-off stays on its frame: the pose there is the plan's (nearest whole frame of take-off)
    hop = plan.hops[0]
    f_off = int(round(1 + hop.takeoff_time_s * fps))
    z = world_path(rig, "hips", [f_off, f_off + 0.5])[:, 2]
    assert abs(z[0] - (1.0 + plan.height((f_off - 1) / fps))) < 1e-6
    assert z[1] == z[0]  # held, not interpolated


def test_on_threes_holds_three_frames():
    rig = build_rig()
    configure(rig, height=0.5, key_style="THREES")
    assert run_write(rig) == {"FINISHED"}
    fc = next(fc for fc in written_fcurves(rig) if '"hips"' in fc.data_path)
    holds = np.diff([k.co[0] for k in fc.keyframe_points])
    assert set(holds) <= {1.0, 2.0, 3.0} and np.mean(holds == 3.0) > 0.6


def _fit_gravity(rig, t0, t1, fps):
    t = np.linspace(t0, t1, 41)
    z = world_path(rig, "hips", 1 + t * fps)[:, 2]
    return -2.0 * np.polyfit(t - t0, z, 2)[0]


def test_asymmetric_gravity_rise_and_fall_fit_their_gravities_within_half_a_percent():
    rig = build_rig()
    configure(rig, height=0.5, key_style="SPLINE", fall_gravity_scale=2.0, apex_hang=0.1)
    assert run_write(rig) == {"FINISHED"}
    plan, fps = _plan(), _fps()
    hop = plan.hops[0]
    apex = hop.takeoff_time_s + hop.takeoff_speed_m_s / G
    margin = 0.01  # s, away from the joins
    rise = _fit_gravity(rig, hop.takeoff_time_s + margin, apex - margin, fps)
    fall = _fit_gravity(rig, apex + 0.1 + margin, hop.touchdown_time_s - margin, fps)
    assert abs(rise / G - 1.0) < 0.005, rise
    assert abs(fall / (2.0 * G) - 1.0) < 0.005, fall
    held = world_path(rig, "hips", 1 + np.linspace(apex, apex + 0.1, 9) * fps)[:, 2]
    # The hang holds the top to within the core's Hermite key tolerance (5e-4 m): the spline keys
    # are not (yet) placed at the hang's two ends, so the span across each end rounds it off.
    assert np.ptp(held) < 5e-4
    notes = addon().plan.link.plan_for(bpy.context.scene)[1]["stylisations"]
    assert any("falls as if g were 2 g" in n for n in notes) and any("hangs 0.1 s" in n for n in notes)


def _kinds():
    return {i.kind for i in addon().export.operators.LAST_CHECK[bpy.context.scene.as_pointer()][1]}


def test_export_checks_find_each_problem_and_pass_a_clean_rig():
    rig = build_rig()
    configure(rig, height=0.4, key_style="EVERY_FRAME", root_motion="ROOT_BONE", root_bone="root")
    assert run_write(rig) == {"FINISHED"}
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.check_export() == {"FINISHED"}
    # the weight curve is keyed exactly at take-off and touchdown, between frames
    assert _kinds() == {"fractional_keys"}
    assert bpy.ops.leapwright.check_export(snap_keys=True) == {"FINISHED"}
    assert _kinds() == set()
    rig.scale = (1.0, 1.0, -1.0)
    bpy.context.scene.unit_settings.scale_length = 0.01
    pb = rig.pose.bones["spine"]
    pb.scale = (1.0, 1.3, 1.0)
    pb.keyframe_insert("scale", frame=5)
    rig.rotation_euler = (np.pi / 2, 0.0, 0.0)  # the whole rig tipped over: the root's Z is no longer up
    assert bpy.ops.leapwright.check_export() == {"FINISHED"}
    assert _kinds() == {"unit_scale", "object_scale", "bone_scale_keys", "root_axes"}


def test_snap_moves_contact_keys_at_most_half_a_frame_and_keeps_them():
    rig = build_rig()
    configure(rig, height=0.4, key_style="EVERY_FRAME", foot_left="foot.L", foot_right="foot.R")
    assert run_write(rig) == {"FINISHED"}
    plan, fps = _plan(), _fps()
    hop = plan.hops[0]
    before = {(fc.data_path, fc.array_index): np.array([k.co[0] for k in fc.keyframe_points])
              for fc in written_fcurves(rig)}
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.check_export(snap_keys=True) == {"FINISHED"}
    for fc in written_fcurves(rig):
        after = np.array([k.co[0] for k in fc.keyframe_points])
        old = before[(fc.data_path, fc.array_index)]
        assert np.all(after == np.rint(after)) and np.all(np.diff(after) > 0)
        assert set(np.rint(old)) == set(after)  # every whole frame a key had is still keyed
        for event in (hop.takeoff_time_s, hop.touchdown_time_s):
            f = 1 + event * fps
            assert np.min(np.abs(after - f)) <= 0.5
    f_off = 1 + hop.takeoff_time_s * fps
    frame = int(np.rint(f_off))
    # the foot's take-off pose (still planted) is the key on the take-off's nearest frame
    foot = world_path(rig, "foot.L", [1, frame])
    assert np.max(np.abs(foot[1] - foot[0])) < 1e-6


def _cli(*args):
    """``leapwright`` from this checkout in a subprocess (Blender as a module there too)."""
    import json
    import os
    import subprocess
    import sys
    repo = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))
    r = subprocess.run([sys.executable, "-m", "cli.main", *args], cwd=repo, capture_output=True, text=True,
                       env=dict(os.environ, PYTHONPATH=repo))
    return r.returncode, (json.loads(r.stdout) if r.stdout.strip().startswith("{") else r.stdout), r.stderr


def _panel_issues():
    return [(i.kind, i.message) for i in addon().export.operators.LAST_CHECK[bpy.context.scene.as_pointer()][1]]


def test_check_export_on_the_command_line_says_what_the_panel_says(tmp_path):
    rig = build_rig()
    configure(rig, height=0.4, key_style="EVERY_FRAME", root_motion="ROOT_BONE", root_bone="root")
    assert run_write(rig) == {"FINISHED"}
    bpy.context.view_layer.objects.active = rig
    path = str(tmp_path / "jump.blend")
    bpy.ops.wm.save_as_mainfile(filepath=path, copy=True)
    assert bpy.ops.leapwright.check_export() == {"FINISHED"}
    code, report, err = _cli("export", path, "--object", rig.name, "--json")
    assert code == 1, err
    assert [(i["kind"], i["message"]) for i in report["issues"]] == _panel_issues()
    assert {k for k, _ in _panel_issues()} == {"fractional_keys"} and report["root_bone"] == "root"
    # Snap and Check from the command line: saved, and the panel then finds nothing either.
    code, report, err = _cli("export", path, "--object", rig.name, "--snap-keys", "--json")
    assert code == 0 and report["issues"] == [] and report["snapped_keys"] > 0, (report, err)
    name = rig.name
    bpy.ops.wm.open_mainfile(filepath=path)
    bpy.context.view_layer.objects.active = bpy.data.objects[name]
    assert bpy.ops.leapwright.check_export() == {"FINISHED"}
    assert _panel_issues() == []


def test_check_export_on_the_command_line_finds_each_problem_the_panel_finds(tmp_path):
    rig = build_rig()
    configure(rig, height=0.4, key_style="EVERY_FRAME", root_motion="ROOT_BONE", root_bone="root")
    assert run_write(rig) == {"FINISHED"}
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.check_export(snap_keys=True) == {"FINISHED"}
    rig.scale = (1.0, 1.0, -1.0)
    bpy.context.scene.unit_settings.scale_length = 0.01
    pb = rig.pose.bones["spine"]
    pb.scale = (1.0, 1.3, 1.0)
    pb.keyframe_insert("scale", frame=5)
    rig.rotation_euler = (np.pi / 2, 0.0, 0.0)
    bpy.context.view_layer.update()
    paths = [str(tmp_path / f"shot_{i}.blend") for i in range(2)]
    for p in paths:
        bpy.ops.wm.save_as_mainfile(filepath=p, copy=True)
    assert bpy.ops.leapwright.check_export() == {"FINISHED"}
    panel = _panel_issues()
    assert {k for k, _ in panel} == {"unit_scale", "object_scale", "bone_scale_keys", "root_axes"}
    code, summary, err = _cli("export", *paths, "--object", rig.name, "--jobs", "2", "--json",
                              "--out-dir", str(tmp_path / "reports"))
    assert code == 1 and summary["files"] == 2 and summary["with_findings"] == 2, err
    for p in paths:
        import json
        one = json.loads((tmp_path / "reports" / (p.split("/")[-1] + ".json")).read_text())
        assert [(i["kind"], i["message"]) for i in one["report"]["issues"]] == panel
    code, _out, err = _cli("export", paths[0], "--object", "NoSuchRig")
    assert code == 2 and "NoSuchRig" in err and "Traceback" not in err


def test_panels_show_root_motion_stylisations_and_the_export_findings():
    rig = build_rig()
    configure(rig, height=0.4, fall_gravity_scale=2.0, root_motion="ROOT_BONE", key_style="TWOS")
    log = draw_panel("LEAPWRIGHT_PT_plan")
    props = {n for kind, n in log if kind == "prop"}
    assert {"fall_gravity_scale", "apex_hang", "root_motion", "root_bone", "root_vertical", "key_style"} <= props
    labels = " ".join(t for kind, t in log if kind == "label")
    assert "Stylised: falls as if g were 2 g" in labels
    bpy.context.scene.unit_settings.scale_length = 0.01
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.check_export() == {"FINISHED"}
    log = draw_panel("LEAPWRIGHT_PT_export")
    assert {"leapwright.check_export", "leapwright.split_clips"} <= {n for kind, n in log if kind == "operator"}
    labels = " ".join(t for kind, t in log if kind == "label")
    assert "unit scale is 0.01" in labels
