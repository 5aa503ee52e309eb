"""`leapwright check` and `leapwright follow-through` over several .blend files: the demo jump, four copies, in one call.

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


PONYTAIL = ",".join(f"ponytail_{i}" for i in range(1, 4))  # blend_examples/mannequin.py PONYTAIL
# Reads the baked layer's keys from a .blend, as plain Blender data (the add-on not enabled).
KEYS_PROBE = """
import json, sys, bpy
bpy.ops.wm.open_mainfile(filepath=sys.argv[1])
rig = bpy.data.objects[sys.argv[2]]
track = rig.animation_data.nla_tracks["lw:follow_through"]
out = {}
for strip in track.strips:
    a = strip.action
    curves = list(a.fcurves) if "fcurves" in a.bl_rna.properties else [
        fc for layer in a.layers for s in layer.strips for bag in s.channelbags for fc in bag.fcurves]
    for fc in curves:
        out[f"{fc.data_path}[{fc.array_index}]"] = [list(k.co) for k in fc.keyframe_points]
sys.stdout.write("KEYS " + json.dumps(out) + "\\n")
"""


def _baked_keys(path, rig):
    r = subprocess.run([sys.executable, "-c", KEYS_PROBE, str(path), rig], cwd=REPO, capture_output=True, text=True)
    line = next(ln for ln in r.stdout.splitlines() if ln.startswith("KEYS "))
    return json.loads(line[5:])


def _bake_copies(copies, tmp_path, extra):
    paths, rig_args = copies
    d = tmp_path / "shots"
    d.mkdir(parents=True)
    mine = [d / p.name for p in paths]
    for src, dst in zip(paths, mine):
        shutil.copy(src, dst)
    out_dir = tmp_path / "reports"
    r = leapwright("follow-through", *map(str, mine), "--bones", PONYTAIL, "--preset", "hair", "--rig", rig_args[1],
                   "--out-dir", str(out_dir), "--json", *extra)
    assert r.returncode == 0, r.stdout + r.stderr
    summary = json.loads(r.stdout)
    assert summary["files"] == 4 and summary["clean"] == 4 and summary["exit_code"] == 0
    reports = [json.loads((out_dir / (p.name + ".json")).read_text()) for p in mine]
    assert [r["file"] for r in reports] == [str(p) for p in mine]
    return mine, [r["report"] for r in reports]


def test_bake_batch_pool_and_dask_match_one_by_one(copies, tmp_path):
    paths, rig_args = copies
    rig = rig_args[1]
    alone_path = tmp_path / "alone.blend"
    shutil.copy(paths[0], alone_path)
    r = leapwright("follow-through", str(alone_path), "--bones", PONYTAIL, "--preset", "hair", "--rig", rig, "--json")
    assert r.returncode == 0, r.stderr
    alone = json.loads(r.stdout)
    assert alone["keys"] > 0 and alone["largest_swing_deg"] > 1.0  # the jump does swing the ponytail
    alone_keys = _baked_keys(alone_path, rig)
    assert len(alone_keys) >= len(PONYTAIL.split(","))  # at least one channel per ponytail bone
    pool_files, pool = _bake_copies(copies, tmp_path / "pool", ["--jobs", "2"])
    assert pool == [alone] * 4
    assert all(_baked_keys(p, rig) == alone_keys for p in pool_files)  # the files themselves, key for key
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                                  dashboard_address=None) as cluster:
        dask_files, dask = _bake_copies(copies, tmp_path / "dask", ["--scheduler", cluster.scheduler_address])
    assert dask == [alone] * 4
    assert _baked_keys(dask_files[-1], rig) == alone_keys


def test_bake_batch_with_a_broken_file_is_bad_input_for_that_file_only(copies, tmp_path):
    paths, rig_args = copies
    good, bad = tmp_path / "good.blend", tmp_path / "bad.blend"
    shutil.copy(paths[0], good)
    (tmp_path / "bad.blend").write_bytes(b"not a blend file")
    r = leapwright("follow-through", str(good), str(bad), "--bones", PONYTAIL, "--rig", rig_args[1], "--jobs", "2", "--json")
    summary = json.loads(r.stdout)
    assert r.returncode == 2 and summary["clean"] == 1 and summary["bad_input"] == 1
    assert summary["results"][1]["file"] == str(bad) and "bad.blend" in summary["results"][1]["error"]


def test_demo_check_without_bone_follows_the_whole_body_com_and_says_why():
    # The case: `check demo.blend --object mannequin` without --bone sampled the
    # object, which does not move. Automatic now follows the whole-body COM of a rig that
    # reads as a body, and the flight implies standard gravity (CGPM 1901) within 0.5 %.
    demo = OUT / "jump_demo.blend"
    assert demo.exists(), "run `make demo` first"
    meta = json.loads((OUT / "jump_demo.json").read_text())
    r = leapwright("check", str(demo), "--object", meta["rig"], "--json")
    assert r.returncode == 0, r.stdout[-2000:] + r.stderr[-2000:]
    report = json.loads(r.stdout)
    checked = report["checked_path"]
    assert checked["follows"] == "body", checked
    assert checked["reason"] == "Automatic: the rig reads as a body"
    assert len(report["flights"]) == 1 and report["findings"] == []
    assert report["implied_gravity_m_s2"] == pytest.approx(G0, rel=0.005)
    text = leapwright("check", str(demo), "--object", meta["rig"]).stdout
    assert "checked the whole-body COM (map found from the bone tree)" in text and "no ballistic flight" not in text
    # Follow bone without --bone: the body bone saved in the file's jump panel.
    bone = json.loads(leapwright("check", str(demo), "--object", meta["rig"], "--follow", "bone", "--json").stdout)
    assert bone["checked_path"]["text"] == f"checked the body bone '{meta['body_bone']}'"
    assert bone["checked_path"]["reason"].endswith("(saved in the file's jump panel)")
