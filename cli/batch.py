"""Checking many files in one call: a process pool here, or an existing Dask cluster.

Each file is checked in a worker process of its own (Blender as a module keeps one
state per process), giving one JSON report per file and a summary. The same
function runs on a local pool or, with ``--scheduler ADDRESS``, on a Dask
distributed cluster (``pip install 'leapwright[batch]'``).
"""

import importlib.util
import json
import os
import pathlib
import sys
from concurrent.futures import ProcessPoolExecutor

from leapwright.core.base.errors import InvalidGoalError, LeapwrightError

from cli.output_files import OutputError, reason, write_text

SUMMARY = "summary.json"


def file_error(path, exc):
    """A batch result for a file that was bad input: ``{"file", "exit_code": 2, "error"}``,
    the message naming the file once."""
    path, text = str(path), str(exc)
    return {"file": path, "exit_code": 2, "error": text if text.startswith(path) else f"{path}: {text}"}


def add_batch_arguments(p):
    """``--out-dir``, ``--jobs`` and ``--scheduler`` on a subcommand that takes many files."""
    p.add_argument("--out-dir", help="write one JSON report per file and summary.json here")
    p.add_argument("--jobs", type=int, default=None,
                   help="worker processes for several files (default: cores); each .blend in a fresh Blender")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="run the batch on a Dask distributed scheduler (tcp://host:8786) instead of a local pool")


def is_batch(args):
    """Whether the files go to workers (several files, or any batch option given)."""
    return len(args.files) > 1 or bool(args.out_dir or args.scheduler or args.jobs)


def blend_command_ready(args, command):
    """Check a .blend command's files and options before any worker starts.

    Returns True when it can run; False after one line on stderr when Blender is
    missing. Raises InvalidGoalError for bad ``--jobs`` or a missing file.
    """
    if args.jobs is not None and args.jobs < 1:
        raise InvalidGoalError(f"--jobs must be 1 or more, got {args.jobs}")
    missing = [f for f in args.files if not os.path.isfile(f)]
    if missing:
        raise InvalidGoalError(f"no such file: {missing[0]}; give existing .blend files")
    # Only look: a parent that has loaded Blender cannot fork workers that load it again.
    if importlib.util.find_spec("bpy") is None:
        print(f"leapwright: {command} needs Blender as a Python module (pip install bpy)", file=sys.stderr)
        return False
    return True


def run_files(worker, paths, options, jobs=None, scheduler=None):
    """``worker(path, options)`` for every path in parallel; results in the order of ``paths``.

    ``worker`` is a module-level function returning ``{"file", "exit_code", ...}``
    (``check.check_file``, ``follow_through.bake_file``), so that it pickles to other processes.
    """
    paths = [str(p) for p in paths]
    if scheduler:
        try:
            from distributed import Client
        except ImportError:
            raise LeapwrightError("--scheduler needs Dask distributed: pip install 'leapwright[batch]'") from None
        with Client(scheduler, timeout="20s") as client:
            futures = client.map(worker, paths, [options] * len(paths), pure=False)
            return client.gather(futures)
    jobs = max(1, min(jobs or os.cpu_count() or 1, len(paths)))
    # One task per worker process: each .blend gets a fresh Blender state.
    with ProcessPoolExecutor(max_workers=jobs, max_tasks_per_child=1) as pool:
        return list(pool.map(worker, paths, [options] * len(paths)))


def report_batch(results, out_dir, as_json, ok_text):
    """Write the reports, print the summary (JSON or one line per file); returns the exit code.

    ``ok_text(result)`` is the line for a file that succeeded.
    """
    if out_dir:
        write_reports(results, out_dir)
    summary = summary_of(results)
    if as_json:
        print(json.dumps(summary, indent=2))
        return summary["exit_code"]
    for r in results:
        line = {0: ok_text, 1: lambda r: "findings: " + ", ".join(_kinds(r["report"])),
                2: lambda r: "bad input: " + r["error"]}[r["exit_code"]](r)
        print(f"{r['file']}: {line}")
    print(f"{summary['files']} files: {summary['clean']} clean, {summary['with_findings']} with findings, "
          f"{summary['bad_input']} bad input")
    return summary["exit_code"]


def _kinds(report):
    """Finding (or export issue) kinds of one report, and ``body_off_arc`` when the body leaves its arc."""
    kinds = {f["kind"] for f in report.get("findings", []) + report.get("issues", [])}
    if (report.get("body_arc") or {}).get("departures"):
        kinds.add("body_off_arc")
    return sorted(kinds)


def summary_of(results):
    """Counts and the pipeline exit code: 2 if any file was bad input, else 1 if any had findings."""
    codes = [r["exit_code"] for r in results]
    return {
        "files": len(results),
        "clean": codes.count(0),
        "with_findings": codes.count(1),
        "bad_input": codes.count(2),
        "exit_code": 2 if 2 in codes else (1 if 1 in codes else 0),
        "results": [{"file": r["file"], "exit_code": r["exit_code"],
                     "kinds": _kinds(r.get("report", {})),
                     **({"error": r["error"]} if "error" in r else {})} for r in results],
    }


def report_names(files):
    """One report file name per input, unique even when inputs share a name.

    ``shot.blend`` gives ``shot.blend.json``; ``a/shot.blend`` and
    ``b/shot.blend`` give ``a__shot.blend.json`` and ``b__shot.blend.json`` (the
    path below the folder they share); the same file given twice gets ``-2``.
    """
    paths = [os.path.abspath(str(f)) for f in files]
    names = [os.path.basename(p) for p in paths]
    if len(paths) > 1:
        common = os.path.commonpath([os.path.dirname(p) for p in paths])
        names = [n if names.count(n) == 1 else os.path.relpath(p, common).replace(os.sep, "__")
                 for n, p in zip(names, paths)]
    out, taken = [], {SUMMARY}
    for name in names:
        candidate, k = name + ".json", 1
        while candidate in taken:
            k += 1
            candidate = f"{name}-{k}.json"
        taken.add(candidate)
        out.append(candidate)
    return out


def write_reports(results, out_dir):
    """One report per input (:func:`report_names`) and ``summary.json`` in ``out_dir``, each written whole."""
    out = pathlib.Path(out_dir)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"cannot write reports to {str(out)!r}: {reason(exc)}; choose a writable folder") from None
    for r, name in zip(results, report_names([r["file"] for r in results])):
        write_text(out / name, json.dumps(r, indent=2), "a report")
    write_text(out / SUMMARY, json.dumps(summary_of(results), indent=2), "the summary")
