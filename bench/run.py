"""``make bench``: every benchmark, each size in a fresh Blender process; ratios from one run.

Runs ``bench/follow_through.py`` at the demo size (61-bone rig, 30 hair bones,
250 frames) and at 300 chain bones x 4,000 frames, and, when they exist,
``bench/plan_speed.py`` (plan time, ``plan_ms``) and ``bench/check_path.py``
(checking a 1,000,000-sample path, ``check_1e6_s`` and ``check_1e6_peak_mb``); a missing or failing
one gives null. Prints a line per figure, then one JSON object as the last line.

Usage::

    python bench/run.py --zip dist/leapwright-<version>.zip
"""

import argparse
import json
import math
import os
import subprocess
import sys

HERE = os.path.dirname(os.path.abspath(__file__))


def last_json(cmd, timeout):
    """The JSON object on the last line of ``cmd``'s output, or None (with the reason on stderr)."""
    try:
        done = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout, check=False)
    except (OSError, subprocess.TimeoutExpired) as exc:
        print(f"  {os.path.basename(cmd[1])}: {exc}", file=sys.stderr)
        return None
    lines = [line for line in done.stdout.splitlines() if line.strip().startswith("{")]
    if done.returncode != 0 or not lines:
        tail = (done.stderr or done.stdout).strip().splitlines()[-3:]
        print(f"  {os.path.basename(cmd[1])} failed (exit {done.returncode}): {' | '.join(tail)}", file=sys.stderr)
        return None
    return json.loads(lines[-1])


def optional_figure(script, key, timeout=300):
    """``key`` from the last JSON line of another helper's benchmark script, or None when it is absent."""
    return optional_figures(script, (key,), timeout)[0]


def optional_figures(script, keys, timeout=300):
    """``keys`` from one run of a benchmark script (each None when the script or the key is absent)."""
    path = os.path.join(HERE, script)
    out = last_json([sys.executable, path], timeout) if os.path.exists(path) else None
    return [None if out is None else out.get(k) for k in keys]


def scaling_exponent(points, column):
    """Least-squares slope of log(cost) on log(bones x frames), and on log bones and log frames apart.

    Returns
    -------
    (k, k_bones, k_frames) : floats
        ``cost ~ (B F)^k`` and ``cost ~ B^k_bones F^k_frames``.
    """
    import numpy as np
    b = np.array([p[0] for p in points], dtype=float)
    f = np.array([p[1] for p in points], dtype=float)
    t = np.array([p[column] for p in points], dtype=float)
    k = np.polyfit(np.log(b * f), np.log(t), 1)[0]
    design = np.column_stack([np.log(b), np.log(f), np.ones_like(b)])
    kb, kf, _ = np.linalg.lstsq(design, np.log(t), rcond=None)[0]
    return float(k), float(kb), float(kf)


def breakdown(total, parts):
    """Milliseconds of one bake by part: sampling, simulation, writing (building and writing the keys), other.

    ``other`` is what the operator spent outside the three (checks, the motion's fingerprint, the
    kept motion's confirmation, the report, Blender's own operator and undo step).
    """
    if not parts:
        return None
    writing = parts.get("curves", 0.0) + parts.get("writing", 0.0)
    other = total - parts["sampling"] - parts["simulation"] - writing
    return {"sampling": _r(parts["sampling"] * 1e3, 2), "simulation": _r(parts["simulation"] * 1e3, 2),
            "writing": _r(writing * 1e3, 2), "other": _r(other * 1e3, 2)}


def _r(x, digits=3):
    return None if x is None or (isinstance(x, float) and not math.isfinite(x)) else round(x, digits)


def summary(demo, large, plan_ms, check_s, check_peak_mb=None):
    """The figures (ratios where a ratio fits) and the lines printed for them."""
    out = {"blender": demo["blender"], "plan_ms": plan_ms, "check_1e6_s": check_s,
           "check_1e6_peak_mb": check_peak_mb}
    fl = demo["floor_s"]
    out.update(
        floor_ms=_r(fl * 1e3, 2),
        floor_ratio=_r(demo["rebake_s"] / fl),
        first_bake_floor_ratio=_r(demo["first_bake_s"] / fl),
        tune_rebake_ms=_r(max(demo["tune_rebake_live_s"], demo["tune_rebake_operator_s"]) * 1e3, 2),
        tune_rebake_live_ms=_r(demo["tune_rebake_live_s"] * 1e3, 2),
        tune_rebake_operator_ms=_r(demo["tune_rebake_operator_s"] * 1e3, 2),
        sampling_floor_ratio=_r(demo["sampling_alone_s"] / demo["sampling_floor_s"]),
        simulation_ms=_r(demo["parts_s"]["simulation"] * 1e3, 2),
        speedup_vs_builtin_bake=_r(demo["builtin_bake_s"] / demo["rebake_s"]),
        first_bake_speedup_vs_builtin_bake=_r(demo["builtin_bake_s"] / demo["first_bake_s"]),
        blas_threads_in_bake=demo["blas_threads_in_bake"],
        blas_threads_outside=demo["blas_threads_outside"],
        plan_readout_update_ms=_r(demo["plan_readout_update_s"] * 1e3, 2),
        rebake_parts_ms=breakdown(demo["rebake_s"], demo["parts_s"]),
        first_bake_parts_ms=breakdown(demo["first_bake_s"], demo.get("first_parts_s")),
        tune_rebake_live_parts_ms=breakdown(demo["tune_rebake_live_s"], demo["tune_parts_s"]),
        tune_rebake_operator_parts_ms=breakdown(demo["tune_rebake_operator_s"], demo.get("tune_operator_parts_s")),
    )
    if large is not None:
        lf = large["floor_s"]
        k, kb, kf = scaling_exponent(large["scaling_points"], 2)
        ks, ksb, ksf = scaling_exponent(large["scaling_points"], 3)
        out.update(
            large_floor_ms=_r(lf * 1e3, 1),
            large_floor_ratio=_r(large["rebake_s"] / lf),
            large_first_bake_floor_ratio=_r(large["first_bake_s"] / lf),
            large_sampling_floor_ratio=_r(large["parts_s"]["sampling"] / lf),
            large_simulation_s=_r(large["parts_s"]["simulation"]),
            large_speedup_vs_builtin_bake=_r(large["builtin_bake_s"] / large["rebake_s"]),
            scaling_exponent=_r(k), scaling_exponent_bones=_r(kb), scaling_exponent_frames=_r(kf),
            simulation_scaling_exponent=_r(ks), simulation_scaling_exponent_bones=_r(ksb),
            simulation_scaling_exponent_frames=_r(ksf),
            large_rebake_parts_ms=breakdown(large["rebake_s"], large["parts_s"]),
            large_first_bake_parts_ms=breakdown(large["first_bake_s"], large.get("first_parts_s")),
        )
    else:
        out.update(large_floor_ratio=None, scaling_exponent=None)
    return out


def _parts_text(parts):
    if not parts:
        return "not measured"
    return ", ".join(f"{name} {value}" for name, value in parts.items())


def _print(out, demo, large):
    print(f"Blender {out['blender']}; demo: {demo['baked_bones']} of {demo['rig_bones']} bones x {demo['frames']} "
          f"frames, floor {out['floor_ms']} ms")
    print(f"  first bake (fresh process) {out['first_bake_floor_ratio']} x floor, re-bake {out['floor_ratio']} x "
          f"floor; nla.bake takes {out['speedup_vs_builtin_bake']} x the re-bake "
          f"({out['first_bake_speedup_vs_builtin_bake']} x the first bake)")
    print(f"  tuning re-bake {out['tune_rebake_ms']} ms (live {out['tune_rebake_live_ms']} ms, operator "
          f"{out['tune_rebake_operator_ms']} ms); sampling {out['sampling_floor_ratio']} x floor; simulation "
          f"{out['simulation_ms']} ms; BLAS threads in the bake {out['blas_threads_in_bake']} "
          f"(outside {out['blas_threads_outside']})")
    for label, key in (("first bake", "first_bake_parts_ms"), ("re-bake", "rebake_parts_ms"),
                       ("tuning re-bake (live)", "tune_rebake_live_parts_ms"),
                       ("tuning re-bake (operator)", "tune_rebake_operator_parts_ms")):
        print(f"  {label} in ms: {_parts_text(out[key])}")
    print(f"  plan readout after a value change {out['plan_readout_update_ms']} ms; plan {out['plan_ms']} ms")
    if large is not None:
        print(f"large: {large['baked_bones']} chain bones x {large['frames']} frames ({large['rig_bones']}-bone "
              f"rig), floor {out['large_floor_ms']} ms")
        print(f"  first bake {out['large_first_bake_floor_ratio']} x floor, re-bake {out['large_floor_ratio']} x "
              f"floor (sampling {out['large_sampling_floor_ratio']}, simulation {out['large_simulation_s']} s); "
              f"nla.bake takes {out['large_speedup_vs_builtin_bake']} x the re-bake")
        print(f"  first bake in ms: {_parts_text(out['large_first_bake_parts_ms'])}")
        print(f"  re-bake in ms: {_parts_text(out['large_rebake_parts_ms'])}")
        print(f"  cost ~ (bones x frames)^{out['scaling_exponent']} (bones^{out['scaling_exponent_bones']} "
              f"frames^{out['scaling_exponent_frames']}); simulation alone ^{out['simulation_scaling_exponent']}")
    print(f"checking a 1,000,000-sample path: {out['check_1e6_s']} s, peak memory {out['check_1e6_peak_mb']} MB")


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--zip", required=True)
    ap.add_argument("--skip-large", action="store_true", help="only the demo size (a quick look)")
    args = ap.parse_args(argv)
    script = os.path.join(HERE, "follow_through.py")
    demo = last_json([sys.executable, script, "--zip", args.zip, "--size", "demo"], 300)
    if demo is None:
        sys.exit("the demo-size benchmark failed")
    large = None if args.skip_large else last_json([sys.executable, script, "--zip", args.zip, "--size", "large"], 1200)
    out = summary(demo, large, optional_figure("plan_speed.py", "plan_ms"),
                  *optional_figures("check_path.py", ("check_1e6_s", "check_1e6_peak_mb")))
    _print(out, demo, large)
    print(json.dumps(out))


if __name__ == "__main__":
    main()
