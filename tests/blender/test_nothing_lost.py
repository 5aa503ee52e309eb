"""Nothing is lost: every operator is idempotent, and the animator's keys stay byte-identical.

"Byte-identical" means every key attribute of every F-curve, read with
``foreach_get`` as raw float32/int32 bytes (scene_probe), plus the curves'
groups, modifiers and flags. The animator's animation here is deliberately
varied: keys off whole frames, every handle type, elastic easing, breakdown
and jitter key types, a noise modifier, a keyed custom property, keys on the
body bone (a clash) and on bones leapwright never touches.
"""

import os
import shutil
import subprocess
import sys
import tempfile

import bpy
import pytest

from rig_builder import build_rig, configure
from scene_probe import (_all_fcurve_sets, _fcurve_record, addon, file_state, first_difference, run_remove,
    run_write)

REPO = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
STYLES = ("POSES", "SPLINE", "EVERY_FRAME")


def _varied_keys(rig, bone, path, frames, values, clash_free=False):
    pb = rig.pose.bones[bone]
    for f, v in zip(frames, values):
        setattr(pb, path, v)
        pb.keyframe_insert(path, frame=f)
    return pb


def _animators_rig(clash=True):
    """A rig with the animator's own, varied animation (on the body bone too when ``clash``)."""
    rig = build_rig()
    pb = rig.pose.bones["spine"]
    pb.rotation_mode = "QUATERNION"
    _varied_keys(rig, "spine", "rotation_quaternion", (1, 7.5, 19.25, 33),
                 ((1, 0, 0, 0), (0.98, 0.2, 0, 0), (0.95, 0, 0.3, 0), (1, 0, 0, 0)))
    _varied_keys(rig, "foot.L", "rotation_euler", (2, 11, 29), ((0, 0, 0), (0.2, 0, 0.1), (0, 0.3, 0)))
    if clash:
        _varied_keys(rig, "hips", "location", (1, 20.5, 40), ((0, 0, 0), (0.05, 0.02, -0.03), (0.1, 0, 0)))
    rig["mood"] = 0.25
    rig.keyframe_insert('["mood"]', frame=5)
    rig["mood"] = 0.75
    rig.keyframe_insert('["mood"]', frame=25)
    rig.pose.bones["spine"]["stretch"] = 0.5
    compat = addon().blender.compat
    action = rig.animation_data.action
    # Vary every key attribute leapwright must carry through untouched.
    types = ("FREE", "AUTO", "VECTOR", "ALIGNED", "AUTO_CLAMPED")
    for n, fc in enumerate(compat.fcurves(action, rig)):
        for k, kp in enumerate(fc.keyframe_points):
            kp.handle_left_type = types[(n + k) % len(types)]
            kp.handle_right_type = types[(n + 2 * k) % len(types)]
            if k == 1:
                kp.interpolation, kp.easing = "ELASTIC", "EASE_OUT"
                kp.type = "BREAKDOWN"
            if k == 2:
                kp.type = "JITTER"
                kp.select_control_point = False
        if fc.data_path.endswith("rotation_euler") and fc.array_index == 0:
            fc.modifiers.new("NOISE")
        fc.update()
    bpy.context.scene.timeline_markers.new("beat", frame=12)
    # Let Blender settle what it derives (handles, evaluated values) before anything is compared.
    for fc in compat.fcurves(action, rig):
        fc.update()
    bpy.context.scene.frame_set(bpy.context.scene.frame_current)
    return rig


def _user_curves():
    """Records of every F-curve not in a leapwright group, in every action."""
    out = []
    for action in sorted(bpy.data.actions, key=lambda a: a.name):
        for label, fcs, _groups in _all_fcurve_sets(action):
            for fc in fcs:
                if not (fc.group is not None and fc.group.name.startswith("lw:")):
                    out.append((action.name, label, _fcurve_record(fc)))
    return sorted(out, key=lambda r: (r[0], r[1], r[2][0], r[2][1]))


def _configure(rig, style):
    return configure(rig, height=0.45, distance=0.3, foot_left="foot.L", foot_right="foot.R", key_style=style)


@pytest.mark.parametrize("style", STYLES)
@pytest.mark.parametrize("mode,clash", [("ASK", False), ("REPLACE", True), ("LAYER", True)])
def test_write_twice_gives_the_same_file_as_once(mode, clash, style):
    rig = _animators_rig(clash=clash)
    _configure(rig, style)
    mine = _user_curves()
    assert run_write(rig, on_conflict=mode) == {"FINISHED"}
    once = file_state()
    assert run_write(rig, on_conflict=mode) == {"FINISHED"}
    assert file_state() == once, first_difference(file_state(), once)
    if mode != "REPLACE":  # REPLACE writes over the clashing keys by request (restored on remove)
        assert _user_curves() == mine


@pytest.mark.parametrize("mode", ["REPLACE", "LAYER"])
def test_rerun_from_another_frame_does_not_stack(mode):
    rig = _animators_rig()
    _configure(rig, "SPLINE")
    assert run_write(rig, on_conflict=mode) == {"FINISHED"}
    once = file_state()
    bpy.context.scene.frame_set(31)  # the body is mid-jump here
    assert run_write(rig, on_conflict=mode) == {"FINISHED"}
    bpy.context.scene.frame_set(once["scenes"][0][3][2])
    assert file_state() == once, first_difference(file_state(), once)


@pytest.mark.parametrize("mode", ["ASK", "REPLACE", "LAYER"])
def test_remove_twice_gives_the_same_file_as_once_and_as_before(mode):
    rig = _animators_rig(clash=mode != "ASK")
    _configure(rig, "SPLINE")
    before = file_state()
    assert run_write(rig, on_conflict=mode) == {"FINISHED"}
    assert run_remove(rig) == {"FINISHED"}
    assert file_state() == before, first_difference(file_state(), before)
    assert run_remove(rig) == {"CANCELLED"}
    assert file_state() == before, first_difference(file_state(), before)


def test_use_active_bone_twice_gives_the_same_settings_as_once():
    rig = build_rig()
    rig.data.bones.active = rig.data.bones["hips"]
    bpy.context.view_layer.objects.active = rig
    before = file_state()
    assert bpy.ops.leapwright.use_active_bone() == {"FINISHED"}
    s = bpy.context.scene.leapwright_plan
    once = (s.rig, s.com_bone)
    assert bpy.ops.leapwright.use_active_bone() == {"FINISHED"}
    assert (s.rig, s.com_bone) == once == (rig, "hips")
    assert file_state() == before, first_difference(file_state(), before)  # panel only, never animation


@pytest.mark.parametrize("mode", ["ASK", "LAYER"])
def test_user_keys_byte_identical_after_writes_and_after_remove(mode, style="SPLINE"):
    # ASK with a clash writes nothing; LAYER writes above; both keep every user key.
    rig = _animators_rig(clash=True)
    _configure(rig, style)
    mine = _user_curves()
    assert len(mine) == 3 + 3 + 4 + 1
    run_write(rig, on_conflict=mode)
    assert _user_curves() == mine
    run_write(rig, on_conflict=mode)
    assert _user_curves() == mine
    run_remove(rig)
    assert _user_curves() == mine


def test_replace_touches_only_the_clashing_channels_and_remove_restores_them():
    rig = _animators_rig(clash=True)
    _configure(rig, "SPLINE")
    mine = _user_curves()
    assert run_write(rig, on_conflict="REPLACE") == {"FINISHED"}
    clashing = ('pose.bones["hips"].location', )
    during = _user_curves()
    untouched = [r for r in mine if r[2][0] not in clashing]
    assert [r for r in during if r[2][0] not in clashing] == untouched
    assert [r for r in during if r[2][0] in clashing] != [r for r in mine if r[2][0] in clashing]
    assert run_remove(rig) == {"FINISHED"}
    assert _user_curves() == mine


def test_user_keys_outside_the_written_channels_survive_a_write_without_clash():
    rig = _animators_rig(clash=False)
    _configure(rig, "EVERY_FRAME")
    mine = _user_curves()
    assert run_write(rig, on_conflict="ASK") == {"FINISHED"}
    assert _user_curves() == mine
    assert run_remove(rig) == {"FINISHED"}
    assert _user_curves() == mine


# --- the CLI: an output path it cannot write ------------------------------------------------------


def _cli():
    exe = os.path.join(REPO, ".venv", "bin", "leapwright")
    if os.path.exists(exe):
        return [exe], None
    return [sys.executable, "-m", "cli.main"], REPO


def _unwritable_dir(tmp):
    """A directory no file can be created in, for this user.

    Root ignores permission bits, so as root the kernel's /sys (which refuses
    new files for everyone) stands in for a read-only directory.
    """
    if os.geteuid() == 0:
        return "/sys"
    path = os.path.join(tmp, "readonly")
    os.makedirs(path)
    os.chmod(path, 0o555)
    return path


@pytest.mark.parametrize("where", ["readonly_dir", "under_a_file", "missing_dir"])
def test_cli_chart_to_an_unwritable_path_exits_2_with_one_line(where):
    tmp = tempfile.mkdtemp(prefix="lw-cli-")
    try:
        a_file = os.path.join(tmp, "plain.txt")
        open(a_file, "w").close()
        target = {"readonly_dir": os.path.join(_unwritable_dir(tmp), "x.png"),
                  "under_a_file": os.path.join(a_file, "x.png"),
                  "missing_dir": os.path.join(tmp, "no", "such", "x.png")}[where]
        cmd, cwd = _cli()
        res = subprocess.run(cmd + ["plan", "--height", "0.4", "--chart", target], capture_output=True,
                             text=True, cwd=cwd, timeout=120)
        lines = (res.stdout + res.stderr).strip().splitlines()
        assert res.returncode == 2, (res.returncode, res.stdout, res.stderr)
        assert len(lines) == 1 and "Traceback" not in res.stderr, lines
        assert target in lines[0] and "chart" in lines[0]
        assert not os.path.exists(target)
    finally:
        ro = os.path.join(tmp, "readonly")
        if os.path.isdir(ro):
            os.chmod(ro, 0o755)
        shutil.rmtree(tmp, ignore_errors=True)


# --- the follow-through bake ---------------------------------------------------------------------


def _baked_rig():
    from test_follow_through import _jumping_rig  # the lag tests' chain rig with a jump written on it
    rig, _marks = _jumping_rig()
    bpy.context.view_layer.objects.active = rig
    return rig


def test_bake_follow_through_twice_gives_the_same_file_as_once_and_remove_twice_as_before():
    rig = _baked_rig()
    bones = "pony.1,pony.2,pony.3"
    before, mine = file_state(), _user_curves()
    assert bpy.ops.leapwright.bake_follow_through(bones=bones) == {"FINISHED"}
    once = file_state()
    assert _user_curves() == mine
    assert bpy.ops.leapwright.bake_follow_through(bones=bones) == {"FINISHED"}
    assert file_state() == once, first_difference(file_state(), once)
    assert bpy.ops.leapwright.remove_follow_through() == {"FINISHED"}
    assert file_state() == before, first_difference(file_state(), before)
    assert bpy.ops.leapwright.remove_follow_through() == {"CANCELLED"}
    assert file_state() == before, first_difference(file_state(), before)
