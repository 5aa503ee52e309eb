"""``leapwright check FILE.blend`` reports the body leaving its arc in the air as the panel does.

The demo mannequin with the written jump and a late arm raise keyed in the air (the
scene of test_body_arc.py), saved and checked by the command line in a
subprocess, against the panel's Check Body Arc in this process. The torso drop is
checked against Newton's second law for a system of particles (textbook mechanics):
arms of mass share m_arms / M rising by dz relative to the torso move the whole-body
COM by (m_arms / M) dz, so the torso must drop by that much; the body parts' COMs are
computed here by hand from de Leva 1996, J Biomech 29(9):1223-1230, Table 4 (male).
"""

import json
import os
import subprocess
import sys

import bpy
import numpy as np
import pytest

from scene_probe import addon
from test_body_arc import _coms, _jump, raise_at_takeoff

REPO = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))


def _cli(*args):
    env = dict(os.environ, PYTHONPATH=REPO)
    return subprocess.run([sys.executable, "-m", "cli.main", *args], cwd=REPO, capture_output=True, text=True,
                          env=env)


@pytest.fixture
def late_arms(tmp_path):
    rig, scene = _jump(arm_raise=True)
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.check_body_arc() == {"FINISHED"}
    panel = list(addon().body.operators.LAST_CHECK[rig.name])
    path = str(tmp_path / "late_arms.blend")
    bpy.ops.wm.save_as_mainfile(filepath=path, copy=True)
    return rig, scene, panel, path


def test_cli_reports_the_panels_lines_and_exits_1(late_arms):
    rig, _scene, panel, path = late_arms
    out = _cli("check", path, "--object", rig.name, "--json")
    assert out.returncode == 1, out.stdout[-2000:] + out.stderr[-2000:]
    arc = json.loads(out.stdout)["body_arc"]
    assert arc["checked"] and arc["lines"] == panel
    assert len(panel) > 1 and "to keep momentum the torso must move" in panel[1]
    text = _cli("check", path, "--object", rig.name).stdout
    assert f"body arc: {panel[0]}" in text and panel[1] in text


def test_cli_torso_drop_matches_the_arm_share_of_the_rise(late_arms):
    rig, scene, _panel, path = late_arms
    d = json.loads(_cli("check", path, "--object", rig.name, "--json").stdout)["body_arc"]["departures"][0]
    first, worst = d["flight"][0], d["worst_frame"]
    _com, parts, _shoulders, _points = _coms(rig, [first, worst])
    share, arms = parts["arms"]
    rel = (arms[:, 2] - parts["trunk"][1][:, 2]) * scene.unit_settings.scale_length
    expected_cm = -100.0 * share * (rel[1] - rel[0])
    assert expected_cm < -1.0
    assert d["limb_drop_cm"]["arms"] == pytest.approx(expected_cm, rel=0.02)


def test_without_the_raise_the_cli_finds_the_body_on_its_arc(tmp_path):
    rig, _scene = _jump(arm_raise=False)
    path = str(tmp_path / "still.blend")
    bpy.ops.wm.save_as_mainfile(filepath=path, copy=True)
    out = _cli("check", path, "--object", rig.name, "--json")
    arc = json.loads(out.stdout)["body_arc"]
    assert arc["checked"] and arc["departures"] == [], arc
    assert np.isclose(arc["tolerance_cm"], 1.0)


def test_cli_names_arms_that_start_moving_at_the_take_off_as_the_panel_does(tmp_path):
    rig, _scene = raise_at_takeoff()
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.check_body_arc() == {"FINISHED"}
    said = [line for line in addon().body.operators.LAST_CHECK[rig.name] if "take-off speed is read" in line]
    path = str(tmp_path / "arms_at_takeoff.blend")
    bpy.ops.wm.save_as_mainfile(filepath=path, copy=True)
    arc = json.loads(_cli("check", path, "--object", rig.name, "--json").stdout)["body_arc"]
    assert [t["message"] for t in arc["takeoff_motion"]] == said and len(said) == 1
    assert np.linalg.norm(arc["takeoff_motion"][0]["speed_error_m_s"]) > 0.1  # a real change, not noise
    text = _cli("check", path, "--object", rig.name).stdout
    assert f"[warning] takeoff_motion {said[0]}" in text
