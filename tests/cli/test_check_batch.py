"""Checking many files in one call: a process pool, and a local Dask cluster on loopback."""

import json
import subprocess
import sys
import pathlib

import pytest

from leapwright.core.plan.goals import JumpGoals
from leapwright.core.plan.planner import plan_jump

ROOT = pathlib.Path(__file__).resolve().parents[2]


def leapwright(*args):
    return subprocess.run([sys.executable, "-m", "cli.main", *args], cwd=ROOT, capture_output=True, text=True)


def _write_csv(path, plan, fps, sample_fps=None):
    s = plan.sample(sample_fps or fps)
    rows = ["frame,x,y,z"] + [f"{i + 1},0,{-x:.9f},{z + 1.0:.9f}" for i, (x, z) in enumerate(zip(s.forward, s.height))]
    path.write_text("\n".join(rows) + "\n")


@pytest.fixture(scope="module")
def shots(tmp_path_factory):
    d = tmp_path_factory.mktemp("shots")
    good = plan_jump(JumpGoals(height=0.4, distance=0.5))
    _write_csv(d / "a_good.csv", good, 24)
    _write_csv(d / "b_good.csv", plan_jump(JumpGoals(height=0.3)), 24)
    # Sampled at 48 fps but played at 24: the hang time doubles, implying g/4 (h = g T^2 / 8).
    _write_csv(d / "c_floaty.csv", good, 24, sample_fps=48)
    (d / "d_broken.csv").write_text("frame,x,y\n1,0,0\n")
    return sorted(d.glob("*.csv"))


def _one_by_one(paths):
    out = {}
    for p in paths:
        r = leapwright("check", str(p), "--fps", "24", "--json")
        out[p.name] = (r.returncode, json.loads(r.stdout) if r.returncode != 2 else None)
    return out


def _check_batch_matches(shots, tmp_path, extra):
    single = _one_by_one(shots)
    out_dir = tmp_path / "reports"
    r = leapwright("check", *map(str, shots), "--fps", "24", "--out-dir", str(out_dir), "--json", *extra)
    summary = json.loads(r.stdout)
    assert r.returncode == 2  # one file is bad input: the pipeline sees the worst code
    assert summary["files"] == 4 and summary["bad_input"] == 1
    reports = sorted(p.name for p in out_dir.glob("*.csv.json"))
    assert reports == [p.name + ".json" for p in shots]
    for p in shots:
        report = json.loads((out_dir / (p.name + ".json")).read_text())
        code, alone = single[p.name]
        assert report["exit_code"] == code
        if alone is not None:
            assert report["report"] == alone
    floaty = json.loads((out_dir / "c_floaty.csv.json").read_text())["report"]
    assert floaty["implied_gravity_m_s2"] == pytest.approx(9.80665 / 4, rel=1e-3)
    assert any(f["kind"] == "floaty_gravity" for f in floaty["findings"])


def test_batch_on_a_process_pool_matches_one_by_one(shots, tmp_path):
    _check_batch_matches(shots, tmp_path, ["--jobs", "2"])


def test_batch_on_a_local_dask_cluster_matches_one_by_one(shots, tmp_path):
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                                  dashboard_address=None) as cluster:
        _check_batch_matches(shots, tmp_path, ["--scheduler", cluster.scheduler_address])


def test_unwritable_report_folder_is_bad_input(shots):
    r = leapwright("check", str(shots[0]), str(shots[1]), "--fps", "24", "--out-dir", "/proc/leapwright")
    assert r.returncode == 2 and len(r.stderr.strip().splitlines()) == 1


@pytest.mark.parametrize("command", [["export", "--object", "Rig"], ["follow-through", "--bones", "tail_1"]])
def test_blend_commands_refuse_a_missing_file_in_one_line(tmp_path, command):
    missing = str(tmp_path / "no_such_shot.blend")
    r = leapwright(command[0], missing, *command[1:])
    assert r.returncode == 2 and r.stderr.strip().splitlines() == [f"leapwright: no such file: {missing}; "
                                                                   "give existing .blend files"]
