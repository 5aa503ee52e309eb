"""Bad input in real Blender, the export checks: a clear report, and the file exactly as it was.

A key at a NaN frame, a rig scaled by NaN, a rig scaled to 0, and the same NaN
key through ``leapwright export``. IEEE 754: NaN compares false with
every number, so unchecked it would pass every tolerance and call the rig ready
to export. Refusals are checked as in the rest of the matrix: the operator's
ERROR report (the RuntimeError ``bpy.ops`` raises) and
:func:`scene_probe.file_state` equal before and after; on the command line,
exit code 2, one line on stderr and the .blend's bytes unchanged.
"""

import hashlib
import os
import re
import subprocess
import sys

import bpy

from rig_builder import build_rig, configure
from scene_probe import addon, file_state, first_difference, refused, run_write, written_fcurves


def _written_rig():
    rig = build_rig()
    configure(rig, height=0.4, key_style="EVERY_FRAME", root_motion="ROOT_BONE", root_bone="root")
    assert run_write(rig) == {"FINISHED"}
    bpy.context.view_layer.objects.active = rig
    return rig


def _nan_key(rig):
    """The last written curve's middle key moved to a NaN frame (Blender stores it as given)."""
    fc = written_fcurves(rig)[-1]
    key = fc.keyframe_points[len(fc.keyframe_points) // 2]
    key.co = (float("nan"), key.co[1])
    assert key.co[0] != key.co[0]
    return fc


def test_a_key_at_a_nan_frame_is_refused_by_check_and_by_snap_and_check():
    rig = _written_rig()
    fc = _nan_key(rig)
    refused(re.escape(f"'{rig.name}': key times of {fc.data_path}[{fc.array_index}]: value nan"),
            lambda: bpy.ops.leapwright.check_export())
    # Snap and Check moves no key at all, not even the other curves' keys between frames.
    refused("value nan .*delete that key", lambda: bpy.ops.leapwright.check_export(snap_keys=True))
    assert bpy.context.scene.as_pointer() not in addon().export.operators.LAST_CHECK


def test_a_rig_scaled_by_nan_is_refused():
    rig = _written_rig()
    rig.scale = (float("nan"), 1.0, 1.0)
    # file_state holds the NaN scale as a float, and nan != nan: compared as text instead.
    before = repr(file_state())
    try:
        bpy.ops.leapwright.check_export(snap_keys=True)
    except RuntimeError as exc:
        assert "object scale: value nan (number 1 of 3)" in str(exc), exc
    else:
        raise AssertionError("a NaN object scale was not refused")
    assert repr(file_state()) == before


def test_a_rig_scaled_to_zero_is_reported_and_changes_nothing():
    rig = _written_rig()
    rig.scale = (0.0, 0.0, 0.0)
    before = file_state()
    assert bpy.ops.leapwright.check_export() == {"FINISHED"}
    found = addon().export.operators.LAST_CHECK[bpy.context.scene.as_pointer()][1]
    messages = {i.kind: i.message for i in found}
    assert "is 0 along an axis" in messages["object_scale"]
    assert "root bone 'root' has no Z axis" in messages["root_axes"]
    assert file_state() == before, first_difference(file_state(), before)


def test_check_export_on_the_command_line_refuses_a_nan_key_and_leaves_the_file(tmp_path):
    rig = _written_rig()
    _nan_key(rig)
    path = str(tmp_path / "nan_key.blend")
    bpy.ops.wm.save_as_mainfile(filepath=path, copy=True)
    with open(path, "rb") as fh:
        digest = hashlib.sha256(fh.read()).hexdigest()
    repo = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))
    r = subprocess.run([sys.executable, "-m", "cli.main", "export", path, "--object", rig.name,
                        "--snap-keys"], cwd=repo, capture_output=True, text=True,
                       env=dict(os.environ, PYTHONPATH=repo))
    assert r.returncode == 2, (r.stdout, r.stderr)
    lines = r.stderr.strip().splitlines()
    assert "value nan" in lines[-1] and path in lines[-1] and "Traceback" not in r.stderr, r.stderr
    with open(path, "rb") as fh:
        assert hashlib.sha256(fh.read()).hexdigest() == digest
