"""``leapwright check``: the report, the JSON contract, the chart, exit codes and bad input.

Check values: the planner's own jump (physical, so no finding), the law of fall and
its 1:3:5:7 spacing at 24 fps (common practice; g = 2 * 0.01 * 24^2 = 11.52 m/s^2),
and time ~ sqrt(length / g) (dimensional analysis) for the hang-time-doubled jump.
"""

import json
import pathlib
import subprocess
import sys

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from cli.check import to_json_dict
from leapwright.core.check.analysis import analyse_trajectory
from leapwright.core.base.errors import LeapwrightError

from leapwright.core.plan.goals import JumpGoals
from leapwright.core.plan.planner import plan_jump

ROOT = pathlib.Path(__file__).resolve().parents[2]


def leapwright(*args):
    return subprocess.run([sys.executable, "-m", "cli.main", *args], cwd=ROOT,
                          capture_output=True, text=True)


def write_csv(path, frames, pos, header="frame,x,y,z", extra=None):
    lines = [header]
    for i, (f, p) in enumerate(zip(frames, pos)):
        row = [f"{f:g}"] + [f"{v:.9f}" for v in p]
        if extra is not None:
            row += [f"{v:.9f}" for v in extra[i]]
        lines.append(",".join(row))
    path.write_text("\n".join(lines) + "\n")
    return str(path)


def planned_csv(tmp_path, goals, fps, name="jump.csv", start_frame=1):
    plan = plan_jump(goals)
    s = plan.sample(fps)
    frames = np.arange(len(s.times)) + start_frame
    pos = np.stack([s.forward, np.zeros_like(s.times), 1.0 + s.height], axis=1)
    return plan, frames, pos, write_csv(tmp_path / name, frames, pos)


def test_planned_jump_exits_0_with_the_json_contract(tmp_path):
    fps = 24000 / 1001
    plan, frames, _, path = planned_csv(tmp_path, JumpGoals(height=0.4, gravity=9.81), fps, start_frame=101)
    out = leapwright("check", path, "--fps", "24000/1001", "--json")
    assert out.returncode == 0, out.stdout + out.stderr
    data = json.loads(out.stdout)
    for key in ("implied_gravity_m_s2", "flight_start_frame", "flight_end_frame", "flights", "fps", "findings"):
        assert key in data
    assert data["fps"] == pytest.approx(fps)
    assert data["implied_gravity_m_s2"] == pytest.approx(9.81, rel=1e-3)
    hop = plan.hops[0]
    assert abs(data["flight_start_frame"] - (101 + hop.takeoff_time_s * fps)) <= 1
    assert abs(data["flight_end_frame"] - (101 + hop.touchdown_time_s * fps)) <= 1
    assert isinstance(data["flight_start_frame"], int)
    assert data["findings"] == []
    assert {c["name"] for c in data["gravity_comparisons"]} == {"scene", "standard"}


def test_falling_spacing_report_names_the_gravity_and_exits_1(tmp_path):
    z = 1.0 - np.concatenate([np.zeros(4), np.cumsum(0.01 * np.arange(1, 17, 2))])
    pos = np.stack([np.zeros_like(z), np.zeros_like(z), z], axis=1)
    path = write_csv(tmp_path / "fall.csv", np.arange(len(z)) + 1, pos)
    out = leapwright("check", path, "--fps", "24")
    assert out.returncode == 1  # heavy gravity is a problem
    assert "implied g 11.520 m/s^2" in out.stdout
    assert "heavy_gravity" in out.stdout and "fix:" in out.stdout


def test_hang_time_doubled_reports_quarter_gravity_and_scale_in_json(tmp_path):
    fps = 24.0
    plan = plan_jump(JumpGoals(height=0.4))
    hop = plan.hops[0]
    t = np.arange(0, plan.duration_s + hop.flight_time_s, 1 / fps)
    t_off = hop.takeoff_time_s
    src = np.where(t < t_off, t, np.where(t < t_off + 2 * hop.flight_time_s,
                                          t_off + (t - t_off) / 2, t - hop.flight_time_s))
    pos = np.stack([plan.forward(src), np.zeros_like(t), 1.0 + plan.height(src)], axis=1)
    path = write_csv(tmp_path / "floaty.csv", np.arange(len(t)) + 1, pos)
    out = leapwright("check", path, "--fps", "24", "--gravity", "9.80665", "--json")
    assert out.returncode == 1
    data = json.loads(out.stdout)
    assert data["implied_gravity_m_s2"] == pytest.approx(9.80665 / 4, rel=1e-3)
    assert data["character_scale"] == pytest.approx(4.0, rel=1e-3)
    floaty = [f for f in data["findings"] if f["kind"] == "floaty_gravity"]
    assert len(floaty) == 1 and floaty[0]["frames"][0] <= floaty[0]["frames"][1]


def test_stylised_fall_is_listed_but_exits_0(tmp_path):
    _, _, _, path = planned_csv(tmp_path, JumpGoals(height=0.5, fall_gravity_scale=2.0), 30.0)
    out = leapwright("check", path, "--fps", "30", "--gravity", "earth", "--json")
    assert out.returncode == 0, out.stdout
    data = json.loads(out.stdout)
    assert [f["kind"] for f in data["findings"]] == ["stylised_fall_gravity"]
    assert data["findings"][0]["severity"] == "stylisation"


def test_sine_hop_is_not_ballistic_with_null_gravity(tmp_path):
    t = np.arange(0, 2.0, 1 / 24)
    pos = np.stack([np.zeros_like(t), np.zeros_like(t), 1.0 + 0.3 * np.sin(2 * np.pi * t)], axis=1)
    path = write_csv(tmp_path / "sine.csv", np.arange(len(t)) + 1, pos)
    out = leapwright("check", path, "--fps", "24", "--json")
    assert out.returncode == 1
    data = json.loads(out.stdout)
    assert data["implied_gravity_m_s2"] is None and data["flight_start_frame"] is None
    assert "not_ballistic" in {f["kind"] for f in data["findings"]}


def test_foot_columns_and_leg_lengths_are_checked(tmp_path):
    plan = plan_jump(JumpGoals(height=0.4))
    s = plan.sample(24.0)
    pos = np.stack([s.forward, np.zeros_like(s.times), 1.0 + s.height], axis=1)
    foot = pos.copy()
    foot[:, 2] = 0.0
    foot[:, 0] = np.where(s.times < plan.hops[0].takeoff_time_s, 0.03 * s.times, foot[:, 0])
    path = write_csv(tmp_path / "feet.csv", np.arange(len(pos)) + 1, pos,
                     header="frame,x,y,z,foot_l_x,foot_l_y,foot_l_z", extra=foot)
    out = leapwright("check", path, "--fps", "24", "--leg-length", "foot_l=0.5", "--json")
    kinds = {f["kind"] for f in json.loads(out.stdout)["findings"]}
    assert out.returncode == 1
    assert {"foot_slides_in_contact", "leg_overstretched"} <= kinds
    bad = leapwright("check", path, "--fps", "24", "--leg-length", "knee=0.5")
    assert bad.returncode == 2 and "no columns knee_x" in bad.stderr


def test_chart_is_a_png(tmp_path):
    pytest.importorskip("matplotlib")
    _, _, _, path = planned_csv(tmp_path, JumpGoals(height=0.4), 24.0)
    png = tmp_path / "check.png"
    out = leapwright("check", path, "--fps", "24", "--chart", str(png))
    assert out.returncode == 0, out.stderr
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


@pytest.mark.parametrize("content, needle", [
    ("frame,x,y\n1,0,0\n2,0,0\n3,0,0\n4,0,0\n5,0,0\n", "no column 'z'"),
    ("frame,x,y,z\n1,0,0,1\n2,0,0,1\n3,0,nan,1\n4,0,0,1\n5,0,0,1\n6,0,0,1\n", "line 4: y is 'nan'"),
    ("frame,x,y,z\n1,0,0,1\n2,0,0,1\n3,0,0,1\n4,0,0,1\n", "only 4 samples"),
    ("frame,x,y,z\n1,0,0,1\n2,0,zero,1\n3,0,0,1\n4,0,0,1\n5,0,0,1\n", "line 3: y = 'zero' is not a number"),
    ("", "is empty"),
])
def test_bad_csv_exits_2_with_one_clear_line(tmp_path, content, needle):
    path = tmp_path / "bad.csv"
    path.write_text(content)
    out = leapwright("check", str(path), "--fps", "24")
    assert out.returncode == 2
    lines = out.stderr.strip().splitlines()
    assert len(lines) == 1 and needle in lines[0], out.stderr
    assert "Traceback" not in out.stderr and out.stdout == ""


@pytest.mark.parametrize("args, needle", [
    (["--fps", "0"], "fps"),
    (["--fps", "24/0"], "divides by zero"),
    (["--fps", "24", "--gravity", "jupiter"], "gravity 'jupiter'"),
])
def test_bad_options_exit_2(tmp_path, args, needle):
    _, _, _, path = planned_csv(tmp_path, JumpGoals(height=0.4), 24.0)
    out = leapwright("check", path, *args)
    assert out.returncode == 2 and needle in out.stderr and "Traceback" not in out.stderr


def test_missing_file_exits_2(tmp_path):
    out = leapwright("check", str(tmp_path / "nope.csv"), "--fps", "24")
    assert out.returncode == 2 and "cannot read" in out.stderr


def test_run_can_be_called_directly(tmp_path, capsys):
    import argparse

    from cli import check as check_command

    parser = argparse.ArgumentParser()
    check_command.add_parser(parser.add_subparsers())
    path = tmp_path / "short.csv"
    path.write_text("frame,x,y,z\n1,0,0,1\n")
    args = parser.parse_args(["check", str(path), "--fps", "24"])
    assert args.func is check_command.run
    assert args.func(args) == 2
    assert "only 1 sample;" in capsys.readouterr().err


@settings(max_examples=60, deadline=None)
@given(pos=hnp.arrays(np.float64, st.tuples(st.integers(5, 60), st.just(3)),
                      elements=st.floats(-20.0, 20.0, allow_nan=False)))
def test_json_of_any_analysis_is_strict_json(pos):
    try:
        result = analyse_trajectory(np.arange(len(pos)) + 1, pos, 24.0)
    except LeapwrightError:
        return
    text = json.dumps(to_json_dict(result), allow_nan=False)  # no NaN or Infinity (RFC 8259)
    assert json.loads(text)["frame_count"] == len(pos)


def test_a_still_path_is_never_called_consistent():
    # A path that does not move has no flight to check against gravity (issue: a .blend
    # object sampled instead of its body bone was reported "physically consistent").
    from cli.check import report_text
    from leapwright.core.check.analysis import analyse_trajectory

    frames = np.arange(1.0, 49.0)
    pos = np.tile([0.0, 0.0, 1.0], (len(frames), 1))
    text = report_text(analyse_trajectory(frames, pos, 24.0), "still.csv")
    assert "does not move" in text and "pick the body bone" in text
    assert "physically consistent" not in text


def test_gravity_option_reads_the_same_for_every_kind_of_file():
    # One reading of --gravity for a .blend, a BVH and a CSV (cli.check.gravity_option):
    # the sign is ignored, presets are named bodies' surface gravity (Moon 1.62 m/s^2,
    # Mars 3.71 m/s^2: NASA planetary fact sheets), and an absent option gives the default.
    from cli.check import gravity_option

    assert gravity_option(" -moon ") == pytest.approx(1.62)
    assert gravity_option("-3.71") == gravity_option("mars") == pytest.approx(3.71)
    assert gravity_option(None) is None and gravity_option(None, 9.81) == 9.81
    with pytest.raises(LeapwrightError, match="'sideways'"):
        gravity_option("sideways")
    with pytest.raises(LeapwrightError):
        gravity_option("0")


def test_csv_check_reads_a_minus_sign_on_gravity_as_the_same_gravity(tmp_path):
    # The planner's Moon jump (1.62 m/s^2, NASA fact sheet) written as a CSV: "-moon" and "1.62"
    # give the same report.
    plan, frames, _, path = planned_csv(tmp_path, JumpGoals(height=0.4, gravity=1.62), 24)
    a = json.loads(leapwright("check", path, "--fps", "24", "--gravity=-moon", "--json").stdout)
    b = json.loads(leapwright("check", path, "--fps", "24", "--gravity", "1.62", "--json").stdout)
    assert a == b and a["scene_gravity_m_s2"] == pytest.approx(1.62)


def test_chart_names_apparent_weight_and_the_file_not_a_folder(tmp_path, monkeypatch, capsys):
    # The chart: the path's m(g + a) is its apparent weight (Newton's second law), not a
    # measured ground force (it is 0 in the air only if the path is ballistic), and the title named a
    # temporary folder. What the chart is drawn with is read here.
    import cli.charts
    from cli.main import main

    drawn = {}
    monkeypatch.setattr(cli.charts, "force_plate_chart",
                        lambda path, frames, height, force, spans, title, force_label: drawn.update(
                            title=title, label=force_label, force=np.asarray(force)))
    _, _, _, path = planned_csv(tmp_path, JumpGoals(height=0.4), 24.0, name="shot_042.csv")
    assert main(["check", str(path), "--fps", "24", "--chart", str(tmp_path / "c.png")]) == 0
    capsys.readouterr()
    assert drawn["title"] == "shot_042.csv at 24 fps" and str(tmp_path) not in drawn["title"]
    assert drawn["label"].startswith("apparent weight") and "ground force" not in drawn["label"]
    assert drawn["force"].min() == pytest.approx(0.0, abs=0.02)  # weightless in the air
