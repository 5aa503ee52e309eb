"""Check Jump follows the whole-body centre of mass (COM) where the rig is read as a body.

The scene: the demo mannequin (blend_examples/mannequin.py) keyed by hand on every
frame, the hips on a planned jump (core.plan.planner sampled at the scene's rate, vertical
only), the foot controllers lifted with the hips in the air, and both arms swung up and
down in flight; then Keep Body on Its Arc moves the body so the whole-body COM follows
the take-off parabola.

Laws checked: projectile motion (Newton's second law for a system of particles,
textbook mechanics): in the air, with gravity the only external force, the whole-body
COM follows one parabola whose curvature is the scene's gravity, whatever the limbs do;
a torso carrying arms that rise must then leave its own parabola.
"""

import json
import math
import os
import subprocess
import sys

import bpy
import numpy as np
import pytest
from mathutils import Quaternion, Vector

from scene_probe import addon, draw_panel, file_state, first_difference
from test_body_arc import _enable

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "blend_examples"))
import mannequin  # noqa: E402  (the demo's own rig, not edited here)

REPO = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))
FPS = 24
SWING_DEG = 150.0  # peak arm raise about the upper arm's X [deg]: the test scenario, not a checked value
# Findings that mean "the path in the air is not one free-fall parabola under the scene's gravity".
OFF_ARC = {"not_ballistic", "floaty_gravity", "heavy_gravity", "stylised_fall_gravity", "apex_hang",
           "forward_speed_changes_in_flight"}


def _rest_local(rig, bone, world):
    """A bone's location channels for a world translation [BU] (parents unposed, unit rest scale)."""
    return rig.data.bones[bone].matrix_local.to_3x3().inverted() @ (rig.matrix_world.to_3x3().inverted() @ world)


def _hand_made_jump():
    """The mannequin keyed by hand: returns (rig, scene, first and last frame in the air)."""
    objs = mannequin.build_demo_scene(fps=FPS)
    _enable()
    rig, scene = objs["rig"], bpy.context.scene
    s = scene.leapwright_plan
    s.rig, s.com_bone = rig, mannequin.BODY_BONE
    s.foot_left, s.foot_right = mannequin.FOOT_CONTROLLERS
    core = addon().core
    plan = core.plan.planner.plan_jump(core.plan.goals.JumpGoals(height=0.4))
    samples = plan.sample(float(FPS))
    hop = plan.hops[0]
    up = Vector((0.0, 0.0, 1.0)) / scene.unit_settings.scale_length
    takeoff_rise = float(plan.height(hop.takeoff_time_s))
    for i, (t, z) in enumerate(zip(samples.times, samples.height)):
        frame = i + 1
        pb = rig.pose.bones[mannequin.BODY_BONE]
        pb.location = _rest_local(rig, pb.name, up * float(z))
        pb.keyframe_insert("location", frame=frame)
        airborne = hop.takeoff_time_s < t < hop.touchdown_time_s
        for name in mannequin.FOOT_CONTROLLERS:
            foot = rig.pose.bones[name]
            foot.location = _rest_local(rig, name, up * (float(z) - takeoff_rise if airborne else 0.0))
            foot.keyframe_insert("location", frame=frame)
    first = int(math.floor(hop.takeoff_time_s * FPS)) + 2  # first whole frame after take-off
    last = int(math.ceil(hop.touchdown_time_s * FPS))  # last whole frame before touchdown
    # The swing starts a frame into the air: the correction reads the take-off velocity
    # over the frame before its arc starts, and an arm moving then would bend that too.
    for side in "LR":
        pb = rig.pose.bones[f"upper_arm.{side}"]
        for f in range(first + 1, last + 1):
            deg = SWING_DEG * math.sin(math.pi * (f - first - 1) / (last - first - 1))
            pb.rotation_quaternion = Quaternion((1.0, 0.0, 0.0), math.radians(deg))
            pb.keyframe_insert("rotation_quaternion", frame=f)
        pb.rotation_quaternion = (1.0, 0.0, 0.0, 0.0)
    for pb in rig.pose.bones:
        pb.location, pb.rotation_quaternion = (0.0, 0.0, 0.0), (1.0, 0.0, 0.0, 0.0)
    scene.frame_start, scene.frame_end = 1, len(samples.times)
    bpy.context.view_layer.objects.active = rig
    return rig, scene, first, last


def _check(follow):
    bpy.context.scene.leapwright_check.follow = follow
    assert bpy.ops.leapwright.check_jump() == {"FINISHED"}
    c = bpy.context.scene.leapwright_check
    return c, [(f.kind, f.first_frame, f.last_frame) for f in c.findings]


def _off_arc(findings, first, last):
    """Findings of a path that is not one free-fall parabola, overlapping frames first..last."""
    return [f for f in findings if f[0] in OFF_ARC and f[1] <= last and f[2] >= first]


def _scene_g(scene):
    return float(np.linalg.norm(tuple(scene.gravity)))


@pytest.fixture
def kept_on_arc():
    rig, scene, first, last = _hand_made_jump()
    c, _ = _check("AUTO")  # nothing on the rig says "body", but it reads as one: the whole-body COM
    assert c.summary.startswith("checked the whole-body COM (map found from the bone tree):"), c.summary
    assert c.summary.endswith("; Automatic: the rig reads as a body"), c.summary
    assert bpy.ops.leapwright.keep_body_on_arc() == {"FINISHED"}
    return rig, scene, first, last


def test_after_keep_body_on_arc_the_hips_are_off_arc_and_the_whole_body_com_is_a_clean_flight(kept_on_arc, capfd):
    from scene_probe import reports
    from test_body_arc import _coms

    rig, scene, first, last = kept_on_arc
    c, hips = _check("BONE")
    assert c.summary.startswith("checked the body bone 'hips':"), c.summary
    # Arms rising carry the COM up, so the corrected torso must leave its own parabola.
    assert _off_arc(hips, first, last), hips
    capfd.readouterr()
    c, body = _check("AUTO")  # the rig reads as a body: the whole-body COM
    assert c.summary.startswith("checked the whole-body COM (map found from the bone tree): 1 flight(s)"), c.summary
    assert ("INFO", c.summary) in reports(capfd.readouterr().out)
    assert not _off_arc(body, first, last), body
    # Projectile motion: the flight of the whole-body COM implies the scene's gravity.
    assert abs(c.implied_gravity - _scene_g(scene)) / _scene_g(scene) < 0.01
    # What was checked is the whole-body COM computed here independently (joints named by
    # hand, de Leva 1996 Table 4 male), sampled in metres over the scene range.
    frames, points = addon().check.overlay._STATE["checked"][:2]
    assert np.array_equal(frames, np.arange(scene.frame_start, scene.frame_end + 1))
    com = _coms(rig, frames)[0] * scene.unit_settings.scale_length
    assert np.max(np.linalg.norm(points - com, axis=1)) < 1e-4
    assert _check("BODY")[1] == body


def test_panel_shows_what_the_check_follows():
    rig, scene, first, last = _hand_made_jump()
    assert ("prop", "follow") in draw_panel("LEAPWRIGHT_PT_check")
    keys = [item.identifier for item in scene.leapwright_check.bl_rna.properties["follow"].enum_items]
    assert keys == ["AUTO", "BONE", "BODY"] and scene.leapwright_check.follow == "AUTO"


def _unmappable_rig():
    """The test rig (root, hips, spine, feet, no arms, no mesh): no body can be read from it."""
    from rig_builder import build_rig, configure

    rig = build_rig()
    configure(rig, height=0.4)
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    bpy.context.view_layer.objects.active = rig
    return rig


def test_whole_body_com_asked_of_a_rig_that_cannot_be_read_is_refused_and_changes_nothing():
    rig = _unmappable_rig()
    c, earlier = _check("BONE")  # an earlier check's results stay as they were
    summary, gravity = c.summary, c.implied_gravity
    c.follow = "BODY"
    before = file_state()
    with pytest.raises(RuntimeError, match="cannot check the whole-body COM: .*map the bones by hand"):
        bpy.ops.leapwright.check_jump()
    assert file_state() == before, first_difference(file_state(), before)
    assert c.summary == summary and c.implied_gravity == gravity
    assert [(f.kind, f.first_frame, f.last_frame) for f in c.findings] == earlier


def test_automatic_on_a_rig_that_does_not_read_as_a_body_follows_the_body_bone_and_says_why():
    rig = _unmappable_rig()
    c, found = _check("AUTO")
    assert c.summary.startswith("checked the body bone 'hips' (the rig does not read as a body: "), c.summary
    assert c.summary.endswith("; Automatic: the rig does not read as a body, so the body bone 'hips'"), c.summary
    assert _check("BONE")[1] == found


def test_automatic_falls_back_to_the_body_bone_and_says_why():
    rig = _unmappable_rig()
    rig["lw_body_map"] = "vertex=no_such_bone@tail"
    c, found = _check("AUTO")
    assert c.summary.startswith("checked the body bone 'hips' (the whole-body COM, asked for by a bone map, "
                                "cannot be read: "), c.summary
    assert "no_such_bone" in c.summary
    # The same path as asked for directly.
    assert _check("BONE")[1] == found


# --- the command line follows the same rule ------------------------------------------------


def _cli(*args):
    env = dict(os.environ, PYTHONPATH=REPO)
    return subprocess.run([sys.executable, "-m", "cli.main", "check", *args], cwd=REPO, capture_output=True,
                          text=True, env=env)


def test_cli_follows_the_whole_body_com_of_a_corrected_rig_as_the_panel_does(kept_on_arc, tmp_path):
    rig, scene, first, last = kept_on_arc
    panel_g = _check("AUTO")[0].implied_gravity
    path = str(tmp_path / "kept.blend")
    bpy.ops.wm.save_as_mainfile(filepath=path, copy=True)
    auto = _cli(path, "--object", rig.name, "--bone", "hips", "--json")
    report = json.loads(auto.stdout)
    assert report["checked_path"]["follows"] == "body", report["checked_path"]
    assert report["checked_path"]["text"] == "checked the whole-body COM (map found from the bone tree)"
    found = [(f["kind"], f["frames"][0], f["frames"][1]) for f in report["findings"]]
    assert not _off_arc(found, first, last), found
    assert abs(report["implied_gravity_m_s2"] - _scene_g(scene)) / _scene_g(scene) < 0.01
    assert report["implied_gravity_m_s2"] == pytest.approx(panel_g, rel=1e-6)
    assert "checked the whole-body COM" in _cli(path, "--object", rig.name, "--bone", "hips").stdout
    bone = json.loads(_cli(path, "--object", rig.name, "--bone", "hips", "--follow", "bone", "--json").stdout)
    assert bone["checked_path"]["follows"] == "bone"
    assert _off_arc([(f["kind"], f["frames"][0], f["frames"][1]) for f in bone["findings"]], first, last)


def test_cli_whole_body_com_of_a_rig_that_cannot_be_read_is_bad_input(tmp_path):
    rig = _unmappable_rig()
    path = tmp_path / "unmappable.blend"
    bpy.ops.wm.save_as_mainfile(filepath=str(path), copy=True)
    data = path.read_bytes()
    out = _cli(str(path), "--object", rig.name, "--bone", "hips", "--follow", "body")
    assert out.returncode == 2, out.stdout[-2000:] + out.stderr[-2000:]
    assert "cannot check the whole-body COM" in out.stderr and "map the bones by hand" in out.stderr
    assert out.stdout == ""
    assert path.read_bytes() == data
    # Automatic follows the bone, and the body arc is reported as not checked, not as bad input.
    out = _cli(str(path), "--object", rig.name, "--bone", "hips", "--json")
    assert out.returncode in (0, 1), out.stderr[-2000:]
    auto = json.loads(out.stdout)
    assert auto["checked_path"]["follows"] == "bone"
    assert auto["checked_path"]["text"].startswith("checked the body bone 'hips' (the rig does not read as a body: ")
    assert auto["checked_path"]["reason"] == ("Automatic: the rig does not read as a body, so the body bone 'hips' "
                                              "(given with --bone)")
    # Without --bone, the body bone saved in the file's jump panel.
    saved = json.loads(_cli(str(path), "--object", rig.name, "--json").stdout)["checked_path"]
    assert saved["follows"] == "bone" and saved["reason"].endswith("(saved in the file's jump panel)"), saved
    assert auto["body_arc"]["checked"] is False and "map the bones by hand" in auto["body_arc"]["reason"]


def test_cli_without_bone_follows_the_body_bone_saved_in_the_jump_panel(tmp_path):
    # The panel's Check Jump follows the jump panel's body bone; the command line reads the
    # same saved setting when no --bone is given.
    rig, scene, first, last = _hand_made_jump()
    panel, found = _check("BONE")
    path = str(tmp_path / "saved_bone.blend")
    bpy.ops.wm.save_as_mainfile(filepath=path, copy=True)
    out = _cli(path, "--object", rig.name, "--follow", "bone", "--json")
    report = json.loads(out.stdout)
    assert report["checked_path"]["text"] == "checked the body bone 'hips'", report["checked_path"]
    assert report["implied_gravity_m_s2"] == pytest.approx(panel.implied_gravity, rel=1e-6)
    assert [(f["kind"], f["frames"][0], f["frames"][1]) for f in report["findings"]] == found
