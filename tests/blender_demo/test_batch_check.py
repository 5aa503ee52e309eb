"""`leapwright check` over several .blend files: the demo jump, four copies, in one call.

Run after ``make demo`` (reads ``blend_examples/out``, or ``$LW_DEMO_OUT``).
"""

import json
import os
import pathlib
import shutil
import subprocess
import sys

import pytest

REPO = pathlib.Path(__file__).resolve().parents[2]
OUT = pathlib.Path(os.environ.get("LW_DEMO_OUT", REPO / "blend_examples" / "out"))
G0 = 9.80665  # standard gravity, 3rd CGPM 1901


def leapwright(*args):
    return subprocess.run([sys.executable, "-m", "cli.main", *args], cwd=REPO, capture_output=True, text=True)


@pytest.fixture(scope="module")
def copies(tmp_path_factory):
    demo = OUT / "jump_demo.blend"
    assert demo.exists(), "run `make demo` first"
    meta = json.loads((OUT / "jump_demo.json").read_text())
    d = tmp_path_factory.mktemp("shots")
    paths = []
    for i in range(4):
        paths.append(d / f"shot_{i}.blend")
        shutil.copy(demo, paths[-1])
    return paths, ["--object", meta["rig"], "--bone", meta["body_bone"]]


def _batch(paths, rig_args, tmp_path, extra):
    out_dir = tmp_path / "reports"
    r = leapwright("check", *map(str, paths), *rig_args, "--out-dir", str(out_dir), "--json", *extra)
    assert r.returncode == 0, r.stdout + r.stderr
    summary = json.loads(r.stdout)
    assert summary["files"] == 4 and summary["clean"] == 4
    return [json.loads((out_dir / (p.name + ".json")).read_text())["report"] for p in paths]


def test_demo_check_finds_no_errors_and_recovers_gravity(copies):
    paths, rig_args = copies
    r = leapwright("check", str(paths[0]), *rig_args, "--json")
    assert r.returncode == 0, r.stderr
    report = json.loads(r.stdout)
    assert report["findings"] == []
    assert report["implied_gravity_m_s2"] == pytest.approx(G0, rel=0.005)


def test_batch_pool_and_dask_match_one_by_one(copies, tmp_path):
    paths, rig_args = copies
    alone = json.loads(leapwright("check", str(paths[0]), *rig_args, "--json").stdout)
    pool = _batch(paths, rig_args, tmp_path / "pool", ["--jobs", "2"])
    assert all(report == alone for report in pool)
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                                  dashboard_address=None) as cluster:
        dask = _batch(paths, rig_args, tmp_path / "dask", ["--scheduler", cluster.scheduler_address])
    assert dask == pool
