"""Every core entry point with a hypothesis strategy of its inputs, for fuzzing.

Each entry is ``(name, strategy, call)``: ``call(example)`` returns an iterable of
numpy arrays / floats that must all be finite, or raises one of the core's own
errors (a rejection). Anything else is a crash. The entries live by area:

- :mod:`tests.fuzz.planning_entry_points` - the planner, key extraction, the arm swing;
- :mod:`tests.fuzz.motion_entry_points` - analysis, chain dynamics, segment COM, the
  in-air correction, the path overlay;
- :mod:`tests.fuzz.command_line_entry_points` - ``plan``, ``check``, ``bake`` through the parser;
- :mod:`tests.fuzz.export_entry_points` - the export checks and the key snap.
"""

import numpy as np

from tests.fuzz import command_line_entry_points, export_entry_points, motion_entry_points, planning_entry_points

ENTRY_POINTS = (planning_entry_points.ENTRY_POINTS + motion_entry_points.ENTRY_POINTS
                + command_line_entry_points.ENTRY_POINTS + export_entry_points.ENTRY_POINTS)


def all_finite(values):
    """Whether every array or number in ``values`` is free of NaN and inf."""
    for v in values:
        a = np.asarray(v, dtype=float)
        if not np.all(np.isfinite(a)):
            return False
    return True
