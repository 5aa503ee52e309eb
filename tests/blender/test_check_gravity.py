"""The check measures a jump against the gravity it was meant for.

Reference: projectile motion (physics law): a flight planned under g implies g. A jump
planned on the moon (1.62 m/s^2, NASA Moon fact sheet) is right for the moon, so it
must not read as floaty against Blender's physics gravity (9.81 by default), which the
jump panel does not use.
"""

import json
import os
import subprocess
import sys
import tempfile

import bpy

from rig_builder import build_rig, configure
from scene_probe import addon, run_write
from test_check import REPO, _check, _range_for_plan

MOON = 1.62


def test_a_moon_jump_checks_clean_against_the_gravity_it_was_planned_for():
    rig = build_rig()
    configure(rig, height=0.4, gravity=MOON)
    _range_for_plan()
    assert run_write(rig) == {"FINISHED"}
    assert abs(bpy.context.scene.gravity[2] + 9.81) < 1e-6  # Blender's own, left as it is
    assert _check(rig) == {"FINISHED"}
    c = bpy.context.scene.leapwright_check
    assert not [f.kind for f in c.findings if "gravity" in f.kind], [f.message for f in c.findings]
    assert abs(c.implied_gravity - MOON) / MOON < 1e-3
    assert "1.62" in c.summary  # the reference is named
    # The command line on the saved file reads the same gravity from it.
    with tempfile.TemporaryDirectory() as d:
        path = os.path.join(d, "moon.blend")
        bpy.ops.wm.save_as_mainfile(filepath=path, copy=True)
        cli = subprocess.run([sys.executable, "-m", "cli.main", "check", path, "--object", rig.name, "--bone",
                              "hips", "--follow", "bone", "--json"], cwd=REPO, capture_output=True, text=True,
                             env=dict(os.environ, PYTHONPATH=str(REPO)))
    assert cli.returncode == 0, cli.stderr[-2000:] + cli.stdout[-2000:]
    report = json.loads(cli.stdout)
    assert report["scene_gravity_m_s2"] == MOON
    assert not [f["kind"] for f in report["findings"] if "gravity" in f["kind"]]


def test_the_reference_follows_the_jump_panel_not_the_physics_setting():
    # A hand-made earth jump in a scene whose physics gravity was set to the moon's: the
    # panel (earth) is the jump's gravity, so the check stays clean.
    rig = build_rig()
    configure(rig, height=0.4)
    _range_for_plan()
    assert run_write(rig) == {"FINISHED"}
    bpy.context.scene.gravity = (0.0, 0.0, -MOON)
    assert _check(rig) == {"FINISHED"}
    c = bpy.context.scene.leapwright_check
    assert not [f.kind for f in c.findings if "gravity" in f.kind], [f.message for f in c.findings]
    assert addon().blender.scene_units.exact_gravity(bpy.context.scene.leapwright_plan.gravity) == 9.80665
