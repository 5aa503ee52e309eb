"""The quick fuzz profile: every core entry point, a few dozen wild examples each.

The same entry points run >= 10,000 examples each under `make fuzz`.
"""

import pytest

from tests.fuzz.entry_points import ENTRY_POINTS
from tests.fuzz.run_fuzz import fuzz_one


@pytest.mark.parametrize("name", [n for n, _, _ in ENTRY_POINTS])
def test_entry_point_never_crashes_or_returns_nan(name):
    stats = fuzz_one(name, 30)
    assert stats["tried"] >= 10
    assert stats["crashes"] == 0, stats["first_crash"]
    assert stats["nan"] == 0, stats["first_crash"]
