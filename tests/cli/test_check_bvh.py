"""``leapwright check FILE.bvh``: captured jumps read from BVH, any units and up axis.

Sources named beside each check:
- the motion: real countermovement jumps on force plates from the PyPI package jumpmetrics
  0.2.0 (MIT, tests/data), integrated to COM paths by impulse-momentum
  (tests/core/check/capture_paths.py), with marker-like noise of 0.5-2.6 mm RMS
  (reference-values.md), written as BVH at 24-240 fps (tests/core/rig/bvh_files.py);
- acceptance from the issue: every flight found with implied g within 5 % of 9.81, nothing
  invented; the inch is 25.4 mm (exact), so a file read in the wrong unit implies g off by
  that ratio (the scale law: lengths scale with g for fixed timing).
"""

import json
import pathlib
import subprocess
import sys
import zlib

import numpy as np
import pytest

from cli.check import check_path
from leapwright.core.base.errors import InvalidTrajectoryError
from tests.core.check import capture_paths as cp
from tests.core.rig import bvh_files

ROOT = pathlib.Path(__file__).resolve().parents[2]


def _capture_bvh(tmp_path, name, fps, **kw):
    """A jumpmetrics jump as a BVH capture: the hips carry the recorded COM path plus noise."""
    t, z, truth = cp.plate_com_path(name)
    rng = np.random.default_rng(zlib.crc32(f"bvh{name}{fps}".encode()))
    ts, zs = cp.sampled(t, z, fps, phase=rng.uniform())
    root = cp.captured(ts, zs - 1.0 + bvh_files.HIPS_HEIGHT_M, rng)
    path = bvh_files.write_bvh(tmp_path / f"{name}_{fps:g}.bvh", root, fps, **kw)
    return path, ts[0], truth


@pytest.mark.parametrize("name", cp.PLATE_FILES)
@pytest.mark.parametrize("fps", (24.0, 60.0, 120.0, 240.0))
def test_recorded_jumps_in_bvh_give_one_flight_under_earth_gravity(tmp_path, name, fps):
    path, t0, truth = _capture_bvh(tmp_path, name, fps)
    result, arc, checked = check_path(path)
    assert checked["follows"] == "body" and "units cm" in checked["text"] and "Y up" in checked["text"]
    assert result.fps == fps
    assert len(result.flights) == 1, [(f.first_frame, f.last_frame, f.gravity_m_s2) for f in result.flights]
    flight = result.flights[0]
    assert flight.gravity_m_s2 == pytest.approx(cp.G, rel=0.05)  # the acceptance
    # BVH frames count from 1: frame k is at t0 + (k - 1) / fps.
    assert abs(t0 + (flight.takeoff_frame - 1) / fps - truth["t_off"]) < 0.05
    assert abs(t0 + (flight.touchdown_frame - 1) / fps - truth["t_td"]) < 0.05


def test_z_up_in_inches_reads_the_same_jump(tmp_path):
    (tmp_path / "cm").mkdir()
    (tmp_path / "in").mkdir()
    a, _, _ = _capture_bvh(tmp_path / "cm", "F02_CTRL2", 120.0)
    b, _, _ = _capture_bvh(tmp_path / "in", "F02_CTRL2", 120.0, scale=1 / 0.0254, z_up=True)
    ra, _, ca = check_path(a)
    rb, _, cb = check_path(b)
    assert "units cm" in ca["text"] and "Y up" in ca["text"]
    assert "units in" in cb["text"] and "Z up" in cb["text"]
    assert rb.flights[0].gravity_m_s2 == pytest.approx(ra.flights[0].gravity_m_s2, rel=1e-4)


def test_given_units_override_the_guess(tmp_path):
    path, _, _ = _capture_bvh(tmp_path, "M06_CTRL3", 120.0, scale=1 / 0.0254)
    result, _, checked = check_path(path, bvh_units="cm")
    assert "units cm (as given)" in checked["text"]
    # Inches read as centimetres: every length 2.54 times too short, so is g.
    assert result.flights[0].gravity_m_s2 == pytest.approx(cp.G / 2.54, rel=0.05)
    assert {"floaty_gravity"} <= {f.kind for f in result.findings}


def test_a_skeleton_that_is_no_body_falls_back_to_its_root_and_says_so(tmp_path):
    t, z, _ = cp.plate_com_path("cmj_example")
    ts, zs = cp.sampled(t, z, 120.0)
    root = np.stack([0 * ts, 0 * ts, zs], axis=1)
    chain = (("Base", None, (0, 0, 0), None), ("Stalk", "Base", (0, 0.9, 0), None),
             ("Top", "Stalk", (0, 0.9, 0), (0, 0.1, 0)))
    path = bvh_files.write_bvh(tmp_path / "stalk.bvh", root, 120.0, skeleton=chain)
    result, _, checked = check_path(path)
    assert checked["follows"] == "bone" and "root joint Base" in checked["note"]
    assert checked["note"] in checked["text"]
    assert result.flights[0].gravity_m_s2 == pytest.approx(cp.G, rel=0.05)
    with pytest.raises(InvalidTrajectoryError, match="does not read as a body"):
        check_path(path, follow="body")


def test_standing_still_in_bvh_is_no_flight(tmp_path):
    ts, pos = cp.standing(120.0)
    path = bvh_files.write_bvh(tmp_path / "stand.bvh", pos - [0, 0, 1.0 - bvh_files.HIPS_HEIGHT_M], 120.0)
    result, _, _ = check_path(path)
    assert result.flights == ()


def test_command_line_reads_bvh_and_reports_what_it_assumed(tmp_path):
    path, _, _ = _capture_bvh(tmp_path, "M15_CTRL1", 60.0)
    out = subprocess.run([sys.executable, "-m", "cli.main", "check", str(path), "--json"], cwd=ROOT,
                         capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    report = json.loads(out.stdout)
    assert report["checked_path"]["follows"] == "body"
    assert abs(report["implied_gravity_m_s2"] / cp.G - 1) < 0.05
    bad = tmp_path / "broken.bvh"
    bad.write_text("HIERARCHY\nROOT a\n{\n")
    out = subprocess.run([sys.executable, "-m", "cli.main", "check", str(bad)], cwd=ROOT,
                         capture_output=True, text=True)
    assert out.returncode == 2 and "broken.bvh" in out.stderr and len(out.stderr.strip().splitlines()) == 1
