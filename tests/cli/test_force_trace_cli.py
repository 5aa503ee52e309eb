"""``leapwright check --force-trace`` and ``leapwright plan --like`` on real force-plate traces.

Traces: the PyPI package jumpmetrics 0.2.0 (MIT; tests/data/jumpmetrics/LICENSE).
"""

import json
import pathlib
import subprocess
import sys

import pytest

from leapwright.core.base.constants import STANDARD_GRAVITY as G

ROOT = pathlib.Path(__file__).resolve().parents[2]
DATA = ROOT / "tests" / "data" / "jumpmetrics"
TRACES = sorted(p.stem for p in DATA.glob("*.csv"))


def leapwright(*args):
    return subprocess.run([sys.executable, "-m", "cli.main", *args], cwd=ROOT, capture_output=True, text=True)


def test_the_traces_are_the_six_jumps_shipped():
    assert TRACES == ["F02_CTRL2", "F04_CTRL2", "M06_CTRL3", "M07_CTRL1", "M15_CTRL1", "cmj_example"]


def test_check_prints_phases_speed_and_height():
    out = leapwright("check", str(DATA / "M07_CTRL1.csv"), "--force-trace", "--json")
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    # jumpmetrics' published figures for this jump: 3.449 m/s, unweighting 0.509 s (within 3 % / 0.03 s).
    assert data["takeoff_speed_m_s"] == pytest.approx(3.449, rel=0.03)
    assert data["jump_height_m"] == pytest.approx(data["takeoff_speed_m_s"] ** 2 / (2 * G), rel=1e-9)
    names = [p["name"] for p in data["phases"]]
    assert names == ["weighing", "unweighting", "braking", "propulsion"]
    assert abs(data["phases"][1]["duration_s"] - 0.509) <= 0.03
    text = leapwright("check", str(DATA / "cmj_example.csv"), "--force-trace")
    assert text.returncode == 0, text.stderr
    for word in ("unweighting", "braking", "propulsion", "flight", "landing", "take-off speed", "jump height"):
        assert word in text.stdout


def test_check_draws_the_planner_chart(tmp_path):
    pytest.importorskip("matplotlib")
    png = tmp_path / "trace.png"
    out = leapwright("check", str(DATA / "cmj_example.csv"), "--force-trace", "--chart", str(png))
    assert out.returncode == 0, out.stderr
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_check_refuses_a_trace_without_a_jump(tmp_path):
    flat = tmp_path / "standing.csv"
    flat.write_text("time_s,fz_n\n" + "".join(f"{i / 1000:.3f},700\n" for i in range(2000)))
    out = leapwright("check", str(flat), "--force-trace")
    assert out.returncode == 2
    assert "no countermovement" in out.stderr


@pytest.mark.parametrize("name", TRACES)
def test_every_real_jump_plans_with_its_own_timing(name):
    # Each recorded jump's own take-off speed, depth, extension, dip and push durations (and
    # landing, where the trace has one) are goals the planner must meet: the ground pushed.
    trace = leapwright("check", str(DATA / f"{name}.csv"), "--force-trace", "--json")
    read = json.loads(trace.stdout)
    out = leapwright("plan", "--like", str(DATA / f"{name}.csv"), "--json")
    assert out.returncode == 0, out.stderr
    plan = json.loads(out.stdout)
    assert plan["takeoff_speed_m_s"] == pytest.approx(read["takeoff_speed_m_s"], rel=1e-9)
    phase = {p["name"]: p["end_s"] - p["start_s"] for p in plan["phases"]}
    durations = {p["name"]: p["duration_s"] for p in read["phases"]}
    assert phase["unweighting"] + phase["braking"] == pytest.approx(durations["unweighting"] + durations["braking"],
                                                                    abs=1e-9)
    assert phase["propulsion"] == pytest.approx(durations["propulsion"], abs=1e-9)


def test_goals_given_override_the_trace():
    out = leapwright("plan", "--like", str(DATA / "M15_CTRL1.csv"), "--height", "0.3", "--json")
    assert out.returncode == 0, out.stderr
    assert json.loads(out.stdout)["apex_rise_m"] == pytest.approx(0.3, rel=1e-9)
