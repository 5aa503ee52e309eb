"""``leapwright plan``: the JSON and CSV contracts, the chart, and bad input."""

import csv
import io
import json
import math
import subprocess
import sys
import pathlib

import numpy as np
import pytest

from leapwright.core.base import constants as C

ROOT = pathlib.Path(__file__).resolve().parents[2]
PHASES = ["weighing", "unweighting", "braking", "propulsion", "flight", "landing"]


def leapwright(*args):
    return subprocess.run([sys.executable, "-m", "cli.main", *args], cwd=ROOT, capture_output=True, text=True)


def test_table_is_printed_for_the_readme_example():
    out = leapwright("plan", "--height", "0.4", "--fps", "24")
    assert out.returncode == 0, out.stderr
    assert "take-off speed" in out.stdout and "propulsion" in out.stdout
    # sqrt(2 g h) for h = 0.4 m under 9.80665 m/s^2 is 2.80 m/s.
    assert f"{math.sqrt(2 * C.STANDARD_GRAVITY * 0.4):.2f}" in out.stdout


def test_json_contract():
    out = leapwright("plan", "--height", "0.4", "--fps", "24000/1001", "--start-frame", "101", "--json")
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    for key in ("takeoff_speed_m_s", "flight_time_s", "apex_rise_m", "peak_push_force_bw",
                "min_unweighting_force_bw", "peak_landing_force_bw", "warnings", "phases"):
        assert key in data
    assert [p["name"] for p in data["phases"]] == PHASES
    fps = 24000 / 1001
    assert data["phases"][0]["start_frame"] == 101
    for p in data["phases"]:
        assert p["hop"] == 1
        assert p["start_frame"] == pytest.approx(101 + p["start_s"] * fps, abs=1e-9)
        assert p["end_frame"] == pytest.approx(101 + p["end_s"] * fps, abs=1e-9)
    flight = data["phases"][4]
    # T = 2 v / g (projectile motion) for the level landing.
    assert flight["end_s"] - flight["start_s"] == pytest.approx(2 * data["takeoff_speed_m_s"] / C.STANDARD_GRAVITY)
    assert data["apex_rise_m"] == pytest.approx(0.4)


def test_csv_contract_and_impulse():
    out = leapwright("plan", "--height", "0.45", "--fps", "240", "--csv")
    assert out.returncode == 0, out.stderr
    rows = list(csv.DictReader(io.StringIO(out.stdout)))
    assert list(rows[0].keys()) == ["frame", "time_s", "height_m", "forward_m", "vertical_speed_m_s", "force_bw"]
    t = np.array([float(r["time_s"]) for r in rows])
    f = np.array([float(r["force_bw"]) for r in rows])
    h = np.array([float(r["height_m"]) for r in rows])
    v = np.array([float(r["vertical_speed_m_s"]) for r in rows])
    assert t[0] == 0.0 and h[0] == 0.0 and f[0] == pytest.approx(1.0)  # at rest in weighing
    # Flight: force exactly 0; impulse from rest to the last contact sample ~ m v0.
    flight = f == 0.0
    assert flight.sum() > 0.3 * 240
    first_air = int(np.flatnonzero(flight)[0])
    impulse = np.sum(0.5 * (f[1:first_air] + f[:first_air - 1] - 2) * np.diff(t[:first_air])) * C.STANDARD_GRAVITY
    # Impulse-momentum: the speed gained equals the integral of g (F/BW - 1).
    assert impulse == pytest.approx(v[first_air - 1], rel=0.01)


def test_chart_is_written(tmp_path):
    pytest.importorskip("matplotlib")
    path = tmp_path / "force.png"
    out = leapwright("plan", "--height", "0.4", "--chart", str(path))
    assert out.returncode == 0, out.stderr
    assert path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert path.stat().st_size > 10_000


@pytest.mark.parametrize("args, words", [
    (["--height", "-0.4"], "height"),
    (["--height", "nan"], "finite"),
    (["--height", "0.4", "--fps", "0"], "fps"),
    (["--height", "0.4", "--fps", "0/0"], "fps"),
    (["--height", "0.4", "--fps", "abc"], "fps"),
    (["--height", "0.4", "--flight-time", "0.5"], "exactly one"),
    (["--height", "0.4", "--gravity", "jupiter"], "jupiter"),
    (["--height", "0.4", "--landing-height", "0.6"], "apex"),
    (["--height", "1e300"], "limit"),
    (["--height", "0.4", "--hops", "0"], "hops"),
    (["--height", "x"], "height"),
])
def test_bad_input_exits_2_with_one_line(args, words):
    out = leapwright("plan", *args)
    assert out.returncode == 2
    assert out.stdout == ""
    lines = out.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in out.stderr
    assert words in lines[0]


def test_flight_frames_goal():
    out = leapwright("plan", "--flight-frames", "12", "--fps", "24", "--json")
    data = json.loads(out.stdout)
    assert data["flight_time_s"] == pytest.approx(0.5)
    # h = g T^2 / 8 for a level flight (projectile motion).
    assert data["apex_rise_m"] == pytest.approx(C.STANDARD_GRAVITY * 0.25 / 8)


def test_arm_swing_report_names_its_sources_and_peaks_at_takeoff():
    out = leapwright("plan", "--height", "0.3", "--arm-swing", "90", "--json")
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    lines = data["arm_swing"]
    assert any("Lees et al. 2004" in line for line in lines)
    assert not any("after take-off" in line for line in lines)  # a placed swing is on time
    bad = leapwright("plan", "--height", "0.3", "--arm-swing", "nan")
    assert bad.returncode == 2 and len(bad.stderr.strip().splitlines()) == 1
