"""``leapwright check`` on a CSV with body landmark columns: the whole-body COM in the air.

The figure: a standing body (landmark heights as in tests/core/test_segment_tables.py)
carried rigidly along the planner's jump, so its centre of mass (COM) follows the
planner's exact free-fall arc; then both arms raised about the shoulders in the air
while the rest of the body keeps its path. Checked against Newton's second law for a
system of particles (textbook mechanics): with the torso rigid, arms whose COM rises by
``dz`` relative to it move the whole-body COM up by ``(m_arms / M) dz``, so the torso must
drop by that much to keep the COM on its arc. Segment masses and COM positions: de Leva
1996, J Biomech 29(9):1223-1230, Table 4, male (computed here by hand, not by the core).
"""

import json
import math
import pathlib
import subprocess
import sys

import numpy as np
import pytest

from leapwright.core.plan.goals import JumpGoals
from leapwright.core.plan.planner import plan_jump

ROOT = pathlib.Path(__file__).resolve().parents[2]
FPS = 24
# Standing landmarks (x = left, z = up) [m]; the arms hang at the sides.
REST = {"vertex": (0, 1.78), "skull_base": (0, 1.55), "neck_base": (0, 1.45)}
for _side, _x in (("L", 0.2), ("R", -0.2)):
    REST.update({f"shoulder.{_side}": (_x, 1.42), f"elbow.{_side}": (_x, 1.12), f"wrist.{_side}": (_x, 0.87),
                 f"knuckles.{_side}": (_x, 0.77), f"hip.{_side}": (_x / 2, 0.93), f"knee.{_side}": (_x / 2, 0.50),
                 f"ankle.{_side}": (_x / 2, 0.08), f"toe_tip.{_side}": (_x / 2, 0.0)})
ARM = ("shoulder", "elbow", "wrist", "knuckles")
# de Leva 1996 Table 4 (male): arm segments as (mass fraction, COM from the proximal joint).
ARM_SEGMENTS = ((0.0271, 0.5772), (0.0162, 0.4574), (0.0061, 0.7900))
RAISE_DEG = 150.0


def leapwright(*args):
    return subprocess.run([sys.executable, "-m", "cli.main", *args], cwd=ROOT, capture_output=True, text=True)


def _raise_angle(f, a, b):
    """Arms up and back down between frames a and b (sin^2 ramp) [rad]."""
    if not a <= f <= b:
        return 0.0
    return math.radians(RAISE_DEG) * math.sin(math.pi * (f - a) / (b - a)) ** 2


def _figure(raise_arms, take_frame_out=None):
    plan = plan_jump(JumpGoals(height=0.4, distance=0.3))
    s = plan.sample(FPS)
    frames = np.arange(len(s.times)) + 1
    hop = plan.hops[0]
    take, touch = 1 + hop.takeoff_time_s * FPS, 1 + hop.touchdown_time_s * FPS
    a, b = math.ceil(take) + 3, math.floor(touch) - 2  # the raise is inside the flight
    points = {}
    for name, (x, z) in REST.items():
        points[name] = np.stack([np.full(len(frames), x), s.forward, z + s.height], axis=1)
    arm_z = np.zeros(len(frames))
    for i, f in enumerate(frames):
        th = _raise_angle(f, a, b) if raise_arms else 0.0
        for side in "LR":
            sh = points[f"shoulder.{side}"][i].copy()
            for name in ARM[1:]:
                rel = points[f"{name}.{side}"][i] - sh  # straight down: (0, 0, -r)
                r = -rel[2]
                # swing forward and up about the shoulder's left-right axis
                points[f"{name}.{side}"][i] = sh + np.array([0.0, r * math.sin(th), -r * math.cos(th)])
        # arm COM height relative to the shoulder, by hand from de Leva's segment table
        sh, el, wr, kn = (points[f"{n}.L"][i][2] for n in ARM)
        joints = ((sh, el), (el, wr), (wr, kn))
        arm_z[i] = (sum(m * (p + c * (q - p)) for (m, c), (p, q) in zip(ARM_SEGMENTS, joints))
                    / sum(m for m, _ in ARM_SEGMENTS) - sh)
    return plan, frames, points, arm_z, (a, b), take


def _write(path, frames, points, drop=()):
    names = [n for n in points if n not in drop]
    header = ["frame", "x", "y", "z"] + [f"{n}_{c}" for n in names for c in "xyz"]
    hip = (points["hip.L"] + points["hip.R"]) / 2
    rows = [",".join(header)]
    for i, f in enumerate(frames):
        row = [str(int(f))] + [f"{v:.9f}" for v in hip[i]]
        row += [f"{v:.9f}" for n in names for v in points[n][i]]
        rows.append(",".join(row))
    path.write_text("\n".join(rows) + "\n")
    return str(path)


def test_arms_raised_in_the_air_are_reported_with_the_torso_drop_momentum_requires(tmp_path):
    plan, frames, points, arm_z, (a, b), take = _figure(raise_arms=True)
    out = leapwright("check", _write(tmp_path / "late_arms.csv", frames, points), "--fps", str(FPS), "--json")
    assert out.returncode == 1, out.stdout + out.stderr
    arc = json.loads(out.stdout)["body_arc"]
    assert arc["checked"] and arc["departures"]
    d = arc["departures"][0]
    # Only the raise leaves the arc: every frame reported lies inside it.
    assert a <= d["frames"][0] and d["frames"][1] <= b
    arms_share = 2 * sum(m for m, _ in ARM_SEGMENTS)  # de Leva male sums to 1.0000
    i = d["worst_frame"] - 1
    k = int(np.ceil(take)) - 1  # arm pose at take-off (hanging) is the reference
    expected_cm = -100 * arms_share * (arm_z[i] - arm_z[k])
    assert d["torso_drop_cm"] == pytest.approx(expected_cm, rel=0.02)
    assert d["limb_drop_cm"]["arms"] == pytest.approx(expected_cm, rel=0.02)
    assert expected_cm < -5  # the raise is large: a drop of several centimetres
    assert "to keep momentum the torso must move" in d["message"]
    # The plain report says the same in the panel's words.
    text = leapwright("check", _write(tmp_path / "late_arms.csv", frames, points), "--fps", str(FPS)).stdout
    assert "body arc: 1 flight(s) from" in text and "[problem] body_off_arc" in text


def test_body_on_its_arc_passes_and_landmarks_are_not_read_as_feet(tmp_path):
    _plan, frames, points, _z, _ab, _t = _figure(raise_arms=False)
    out = leapwright("check", _write(tmp_path / "still_arms.csv", frames, points), "--fps", str(FPS), "--json")
    assert out.returncode == 0, out.stdout + out.stderr
    report = json.loads(out.stdout)
    assert report["body_arc"]["checked"] and report["body_arc"]["departures"] == []
    # wrists and knees move in contact (the dip): as foot tracks they would "slide"
    assert report["findings"] == []


def test_a_landmark_set_missing_joints_is_bad_input_naming_them(tmp_path):
    _plan, frames, points, _z, _ab, _t = _figure(raise_arms=False)
    path = _write(tmp_path / "no_knees.csv", frames, points, drop=("knee.L", "knee.R"))
    out = leapwright("check", path, "--fps", str(FPS))
    assert out.returncode == 2
    assert "knee.L" in out.stderr and "knee.R" in out.stderr and len(out.stderr.strip().splitlines()) == 1


def test_batch_summary_names_the_body_leaving_its_arc(tmp_path):
    _plan, frames, points, _z, _ab, _t = _figure(raise_arms=True)
    path = _write(tmp_path / "late_arms.csv", frames, points)
    out = leapwright("check", path, path, "--fps", str(FPS), "--json", "--jobs", "1")
    summary = json.loads(out.stdout)
    assert out.returncode == 1 and summary["with_findings"] == 2
    assert all("body_off_arc" in r["kinds"] for r in summary["results"])
