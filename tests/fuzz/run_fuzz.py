"""The long fuzz profile (`make fuzz`): >= 10,000 examples per core entry point.

Prints, per entry point, the inputs tried, rejections by error type, crashes and
NaN/inf outputs; its last line is one JSON object with ``examples`` (the smallest
count over the entry points), ``crashes`` and ``nan``. Exit 1 on any crash or NaN.
"""

import argparse
import collections
import json
import pathlib
import sys
import traceback
from concurrent.futures import ProcessPoolExecutor

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[2]))

from hypothesis import HealthCheck, Phase, given, settings  # noqa: E402

from leapwright.core.base.errors import LeapwrightError  # noqa: E402


#: Entry points by falling cost per example (a chain bake of a whole jump is the dearest).
SLOW_FIRST = ("chain dynamics", "in-air correction", "cli check", "analysis", "arm swing", "keys", "planner")


def fuzz_one(name, examples, progress=0):
    from tests.fuzz.entry_points import ENTRY_POINTS, all_finite

    strategy, call = next((s, c) for n, s, c in ENTRY_POINTS if n == name)
    stats = {"name": name, "tried": 0, "rejected": collections.Counter(), "crashes": 0, "nan": 0, "first_crash": None}

    @settings(max_examples=examples, deadline=None, database=None, phases=[Phase.generate],
              suppress_health_check=list(HealthCheck))
    @given(strategy)
    def run(example):
        stats["tried"] += 1
        if progress and stats["tried"] % progress == 0:
            print(f"  {name}: {stats['tried']} tried, {stats['crashes']} crashes, {stats['nan']} nan",
                  file=sys.stderr, flush=True)
        try:
            values = call(example)
        except LeapwrightError as exc:
            stats["rejected"][type(exc).__name__] += 1
            return
        except Exception:  # noqa: BLE001 - counting crashes is the point
            stats["crashes"] += 1
            if stats["first_crash"] is None:
                stats["first_crash"] = f"{example!r}\n{traceback.format_exc()}"
            return
        if not all_finite(values):
            stats["nan"] += 1
            if stats["first_crash"] is None:
                stats["first_crash"] = f"NaN/inf output for {example!r}"

    run()
    stats["rejected"] = dict(stats["rejected"])
    return stats


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--examples", type=int, default=10_000)
    parser.add_argument("--only", action="append", help="entry point name(s) to fuzz")
    parser.add_argument("--jobs", type=int, default=2)
    args = parser.parse_args(argv)
    from tests.fuzz.entry_points import ENTRY_POINTS

    names = [n for n, _, _ in ENTRY_POINTS if not args.only or n in args.only]
    # The costliest first, so the last worker to finish is not left with it alone.
    order = sorted(names, key=lambda n: SLOW_FIRST.index(n) if n in SLOW_FIRST else len(SLOW_FIRST))
    with ProcessPoolExecutor(max_workers=args.jobs) as pool:
        done = dict(zip(order, pool.map(fuzz_one, order, [args.examples] * len(order),
                                        [max(args.examples // 10, 1)] * len(order))))
    results = [done[n] for n in names]
    for r in results:
        print(f"{r['name']:<16} tried {r['tried']:>6}  rejected {sum(r['rejected'].values()):>6} "
              f"{r['rejected']}  crashes {r['crashes']}  nan {r['nan']}")
        if r["first_crash"]:
            print("  first problem:", r["first_crash"])
    summary = {"examples": min(r["tried"] for r in results), "crashes": sum(r["crashes"] for r in results),
               "nan": sum(r["nan"] for r in results), "entry_points": names}
    print(json.dumps(summary))
    return 1 if summary["crashes"] or summary["nan"] else 0


if __name__ == "__main__":
    sys.exit(main())
