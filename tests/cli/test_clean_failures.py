"""The command line fails in one line: full disk, closed pipe, no permission, memory, Ctrl-C.

Every failure exits 2 (130 when interrupted) with exactly one line on stderr
and no traceback, and the files it was writing are either untouched or whole.
Exit code 130 is 128 + SIGINT, what POSIX shells report for a run stopped by
Ctrl-C (common practice).
"""

import argparse
import errno
import json
import os
import pathlib
import subprocess
import sys

import pytest

from cli import batch, main as cli_main, output_files
from leapwright.core.base import limits
from leapwright.core.plan.goals import JumpGoals
from leapwright.core.plan.planner import plan_jump

ROOT = pathlib.Path(__file__).resolve().parents[2]


def leapwright(*args, **kwargs):
    return subprocess.run([sys.executable, "-m", "cli.main", *args], cwd=ROOT, capture_output=True, text=True,
                          **kwargs)


def _one_line(res):
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in res.stderr, res.stderr
    assert lines[0].startswith("leapwright"), lines
    return lines[0]


@pytest.mark.skipif(not os.path.exists("/dev/full"), reason="needs /dev/full (Linux)")
@pytest.mark.parametrize("out", ["--csv", "--json", "table"])
def test_output_to_a_full_device_exits_2_with_one_line(out):
    with open("/dev/full", "w") as full:
        res = subprocess.run([sys.executable, "-m", "cli.main", "plan", "--height", "0.4"]
                             + ([out] if out != "table" else []), cwd=ROOT, stdout=full, stderr=subprocess.PIPE,
                             text=True)
    assert res.returncode == 2
    assert "No space left on device" in _one_line(res)


def test_output_into_a_closed_pipe_exits_2_with_one_line():
    read, write = os.pipe()
    os.close(read)  # nobody will ever read: the first write fails with EPIPE
    try:
        res = subprocess.run([sys.executable, "-m", "cli.main", "plan", "--height", "0.4", "--csv"], cwd=ROOT,
                             stdout=write, stderr=subprocess.PIPE, text=True)
    finally:
        os.close(write)
    assert res.returncode == 2
    assert "broken pipe" in _one_line(res)


@pytest.mark.parametrize("raised,code,words", [(KeyboardInterrupt, 130, "interrupted"),
                                               (MemoryError, 2, "out of memory"),
                                               (OSError(errno.ENOSPC, "No space left on device", "/x/r.json"),
                                                2, "No space left on device")])
def test_a_run_stopped_by_the_system_says_so_in_one_line(monkeypatch, capsys, raised, code, words):
    def stopped(_args):
        raise raised

    class Parsed:
        @staticmethod
        def parse_args(_argv):
            return argparse.Namespace(func=stopped)

    monkeypatch.setattr(cli_main, "build_parser", Parsed)
    assert cli_main.main(["plan"]) == code
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and words in err[0], err


@pytest.mark.parametrize("fps", ["5e-324", "1e-310", "2.2e-308", "1e-7"])
def test_a_rate_below_blenders_lowest_is_refused_in_one_line(tmp_path, fps):
    # fps 5e-324 is the smallest subnormal double; Blender's lowest rate is 1e-6 (fps 1 / fps_base 1e6).
    s = plan_jump(JumpGoals(height=0.4)).sample(24)
    csv = tmp_path / "jump.csv"
    csv.write_text("frame,x,y,z\n" + "".join(f"{i + 1},0,{-x:.9f},{z + 1:.9f}\n"
                                              for i, (x, z) in enumerate(zip(s.forward, s.height))))
    res = leapwright("check", str(csv), "--fps", fps)
    assert res.returncode == 2
    line = _one_line(res)
    assert "Blender's lowest" in line and "overflow" not in res.stderr.lower()


def test_reports_of_inputs_with_the_same_name_do_not_overwrite_each_other(tmp_path):
    names = batch.report_names(["a/shot.blend", "b/shot.blend", "c/take.blend", "a/shot.blend"])
    assert names == ["a__shot.blend.json", "b__shot.blend.json", "take.blend.json", "a__shot.blend-2.json"]
    results = [{"file": f, "exit_code": 0, "report": {"n": i}} for i, f in enumerate(["a/shot.blend", "b/shot.blend"])]
    batch.write_reports(results, tmp_path)
    written = sorted(p.name for p in tmp_path.iterdir())
    assert written == ["a__shot.blend.json", "b__shot.blend.json", "summary.json"]
    assert json.loads((tmp_path / "b__shot.blend.json").read_text())["report"] == {"n": 1}


def test_a_file_that_cannot_be_finished_leaves_the_old_one_and_no_temporary(tmp_path, monkeypatch):
    target = tmp_path / "summary.json"
    target.write_text("old")

    def full(src, dst):
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(output_files.os, "replace", full)
    with pytest.raises(output_files.OutputError, match="No space left on device.*nothing was changed"):
        output_files.write_text(target, "new" * 1000)
    assert target.read_text() == "old"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["summary.json"]


def test_a_whole_file_keeps_the_permissions_of_the_one_it_replaces(tmp_path):
    target = tmp_path / "r.json"
    target.write_text("old")
    os.chmod(target, 0o640)
    output_files.write_text(target, "new")
    assert target.read_text() == "new" and (os.stat(target).st_mode & 0o777) == 0o640


def test_reports_to_an_unwritable_folder_exit_2_in_one_line(tmp_path):
    blocker = tmp_path / "plain"
    blocker.write_text("")
    csv = tmp_path / "a.csv"
    s = plan_jump(JumpGoals(height=0.4)).sample(24)
    csv.write_text("frame,x,y,z\n" + "".join(f"{i + 1},0,{-x:.9f},{z + 1:.9f}\n"
                                              for i, (x, z) in enumerate(zip(s.forward, s.height))))
    res = leapwright("check", str(csv), "--fps", "24", "--out-dir", str(blocker / "reports"))
    assert res.returncode == 2
    assert "cannot write reports" in _one_line(res)


@pytest.mark.parametrize("frames,words", [(("1", "20000000"), "beyond the frames Blender has"),
                                          (("-2000000", "1"), "beyond the frames Blender has")])
def test_follow_through_frames_beyond_blender_are_refused_before_blender_starts(tmp_path, frames, words):
    blend = tmp_path / "shot.blend"
    blend.write_bytes(b"not opened: the frames are refused first")
    res = leapwright("follow-through", str(blend), "--bones", "a", "--frames", *frames)
    assert res.returncode == 2
    assert words in _one_line(res)
    assert blend.read_bytes() == b"not opened: the frames are refused first"


@pytest.mark.parametrize("bones", [("a,b,a",), ("a", "b", "a"), ("a,b", "b")])
def test_a_bone_named_twice_is_refused_before_blender_starts(tmp_path, bones):
    # Two simulations writing the same bone's keys would fight over them: the panel's guard refuses
    # a bone named twice, and so does the command line, before the file is opened.
    blend = tmp_path / "shot.blend"
    blend.write_bytes(b"not opened: the bones are refused first")
    res = leapwright("follow-through", str(blend), "--bones", *bones)
    assert res.returncode == 2
    line = _one_line(res)
    assert "more than once" in line and ("a" in line or "b" in line)
    assert blend.read_bytes() == b"not opened: the bones are refused first"


def test_a_frame_range_too_big_for_memory_is_refused_before_allocating():
    # 2,000,001 frames x 60 bones x 512 B = 61 GB: more than half of any 64 GB machine's free memory.
    assert limits.memory_problem(2_000_001, 60, available=64 << 30) is not None
    assert "choose a shorter frame range" in limits.memory_problem(2_000_001, 60, available=64 << 30)
    assert limits.memory_problem(250, 60, available=1 << 30) is None  # 7.7 MB: a normal shot
