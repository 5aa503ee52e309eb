"""Benchmark: ``leapwright check``'s analysis of a 1,000,000-sample path.

Two paths of 1,000,000 samples each, checked by ``analyse_trajectory`` (the same call the
command line and the panel make):

* measured: captured-like, 240 fps (69 minutes): countermovement jumps every 3 s with
  quiet standing between them, 0.5 mm jitter and 1.5 mm soft-tissue wobble;
* keyed: the same jumps without noise (a hand-keyed path is smooth to rounding).

The jumps come from textbook mechanics (a smooth push to a 2.6 m/s take-off, free flight,
a settle back to standing), not from the planner, so the bench measures the checker alone.
Each path is checked in a child process of its own, so its peak memory is the check's:
the child's resident peak (``resource.getrusage`` maxrss: the interpreter, numpy, the
path itself and everything the check holds at once). Time is wall-clock for one run
(and the child's CPU time, ``_cpu``). The last line is one JSON object.

Usage::

    .venv/bin/python bench/check_path.py [--samples 1000000]
"""

import argparse
import json
import os
import resource
import subprocess
import sys
import time

import numpy as np

from leapwright.core.check.analysis import analyse_trajectory

FPS = 240.0
G = 9.81
#: The issue's targets for 1,000,000 samples.
TARGET_S = 10.0
TARGET_MB = 1024.0


def jump_cycle(fps, period_s=3.0, v0=2.6, dip_m=0.3):
    """Heights [m] of one jump cycle: stand, dip and push, fly, settle, stand."""
    t = np.arange(int(period_s * fps)) / fps
    push_s = 0.45
    t_off = 0.8
    t_fl = 2 * v0 / G
    z = np.zeros_like(t)
    dip = (t >= t_off - push_s) & (t < t_off)
    s = (t[dip] - (t_off - push_s)) / push_s
    # Down and back up, leaving at v0: z(0) = z(1) = 0 and dz/dt(1) = v0.
    z[dip] = v0 * push_s * (s ** 3 - s ** 2) - dip_m * 4 * s * (1 - s) ** 2
    air = (t >= t_off) & (t < t_off + t_fl)
    tau = t[air] - t_off
    z[air] = v0 * tau - 0.5 * G * tau ** 2
    land = t >= t_off + t_fl
    tau = t[land] - (t_off + t_fl)
    z[land] = -0.12 * np.sin(np.pi * np.minimum(tau / 0.5, 1.0)) * np.exp(-tau)
    return 1.0 + z


def long_path(samples, noisy, seed=0):
    cycle = jump_cycle(FPS)
    z = np.tile(cycle, samples // len(cycle) + 1)[:samples]
    t = np.arange(samples) / FPS
    pos = np.stack([0.1 * np.sin(0.05 * t), np.zeros_like(t), z], axis=1)
    if noisy:
        rng = np.random.default_rng(seed)
        pos += rng.normal(0, 5e-4, pos.shape)
        wob = sum(rng.normal() * np.sin(2 * np.pi * rng.uniform(1.5, 6.0) * t + rng.uniform(0, 6.3)) for _ in range(4))
        pos[:, 2] += 1.5e-3 * wob / np.std(wob)
    return pos, samples // len(cycle)


def timed(pos):
    frames = np.arange(len(pos), dtype=float)
    start, cpu = time.perf_counter(), time.process_time()
    result = analyse_trajectory(frames, pos, FPS, gravity=G)
    timed.cpu_s = time.process_time() - cpu
    return time.perf_counter() - start, result


def check_one(name, samples):
    """Check one path in this process: its figures, with this process's resident peak [MB]."""
    pos, jumps = long_path(samples, name == "measured")
    seconds, result = timed(pos)
    good = [f for f in result.flights if abs(f.gravity_m_s2 / G - 1) < 0.05]
    print(f"{name}: {samples} samples ({jumps} jumps) checked in {seconds:.2f} s "
          f"(processor {timed.cpu_s:.2f} s); {len(result.flights)} flights, {len(good)} within 5% of g; "
          f"measured={result.measured}")
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0  # Linux: kilobytes
    # Processor time too: on a machine shared with other jobs the wall clock waits for them.
    return {f"check_1e6_{name}_s": round(seconds, 3), f"check_1e6_{name}_cpu": round(timed.cpu_s, 3),
            f"check_1e6_{name}_flights": len(result.flights), f"check_1e6_{name}_jumps": jumps,
            f"check_1e6_{name}_peak_mb": round(peak_mb, 1)}


def _in_child(name, samples):
    cmd = [sys.executable, os.path.abspath(__file__), "--samples", str(samples), "--paths", name, "--child"]
    done = subprocess.run(cmd, capture_output=True, text=True, check=False)
    sys.stdout.write("".join(line + "\n" for line in done.stdout.splitlines() if not line.startswith("{")))
    lines = [line for line in done.stdout.splitlines() if line.startswith("{")]
    if done.returncode != 0 or not lines:
        sys.exit(f"checking the {name} path failed: {done.stderr.strip()[-500:]}")
    return json.loads(lines[-1])


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--samples", type=int, default=1_000_000)
    parser.add_argument("--paths", default="measured,keyed", help="which paths to check (comma-separated)")
    parser.add_argument("--child", action="store_true", help="check in this process (one path; used internally)")
    args = parser.parse_args(argv)
    names = [n for n in ("measured", "keyed") if n in args.paths.split(",")]
    if args.child:
        print(json.dumps(check_one(names[0], args.samples)))
        return 0
    out = {}
    for name in names:
        out.update(_in_child(name, args.samples))
    out["check_1e6_s"] = max(v for k, v in out.items() if k.endswith("_s"))
    out["check_1e6_peak_mb"] = max(v for k, v in out.items() if k.endswith("_peak_mb"))
    out["targets"] = {"seconds": TARGET_S, "megabytes": TARGET_MB}
    print(f"slowest {out['check_1e6_s']:.2f} s, peak resident memory {out['check_1e6_peak_mb']:.0f} MB "
          f"(targets: {TARGET_S:g} s, {TARGET_MB:g} MB)")
    print(json.dumps(out))
    return 0


if __name__ == "__main__":
    sys.exit(main())
