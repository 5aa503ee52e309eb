"""Benchmark: how long the planner takes for one hop and for three hops.

The panel re-plans on every value change, so a plan must be quick enough to
follow a dragged slider. Each figure is the minimum over 30 plans of fresh
goals (the shape search keeps nothing between plans that could flatter it; what
stays is the per-kind layout of a stretch's limits, built once per process like the
sample tables), and,
as the panel sees it while a slider drags, the minimum over plans whose dip depth
changes by a millimetre each time (the stretches the depth does not touch are kept).
The last line is one JSON object.

Usage::

    .venv/bin/python bench/plan_speed.py
"""

import json
import time

from leapwright.core.plan import contact_shapes, shape_search
from leapwright.core.plan.goals import JumpGoals
from leapwright.core.plan.planner import plan_jump

REPEATS = 30
#: The targets of the speed issue [ms].
ONE_HOP_TARGET_MS = 2.0
THREE_HOP_TARGET_MS = 5.0


def plan_ms(goals):
    """Minimum wall time of one plan [ms] over REPEATS, with the stretch tables rebuilt each time."""
    best = float("inf")
    for _ in range(REPEATS):
        shape_search.line_tables.cache_clear()
        contact_shapes.choose_shape.cache_clear()
        start = time.perf_counter()
        plan_jump(goals)
        best = min(best, time.perf_counter() - start)
    return 1e3 * best


def drag_ms(**goals):
    """Minimum wall time of one plan [ms] while the dip depth is dragged (0.30 m, then 1 mm deeper each)."""
    best = float("inf")
    for k in range(REPEATS):
        changed = JumpGoals(depth=0.30 + 0.001 * k, **goals)
        start = time.perf_counter()
        plan_jump(changed)
        best = min(best, time.perf_counter() - start)
    return 1e3 * best


def main():
    plan_jump(JumpGoals(height=0.4))  # imports and first-call set-up outside the timing
    one = plan_ms(JumpGoals(height=0.4))
    three = plan_ms(JumpGoals(height=0.4, hops=3))
    print(f"plan, 1 hop (0.4 m):  {one:6.2f} ms (target <= {ONE_HOP_TARGET_MS:g} ms)")
    print(f"plan, 3 hops (0.4 m): {three:6.2f} ms (target <= {THREE_HOP_TARGET_MS:g} ms)")
    drag = drag_ms(height=0.4)
    print(f"plan while the dip depth is dragged, 1 hop: {drag:6.2f} ms")
    print(json.dumps({"plan_ms": round(one, 3), "plan_3_hops_ms": round(three, 3), "plan_drag_ms": round(drag, 3)}))


if __name__ == "__main__":
    main()
