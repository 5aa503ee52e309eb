"""The quick one-turn limit of the dip against the sample-by-sample check it replaces.

A dip must unweight, then brake: its acceleration, sampled at 4 x 97 points, changes
sign once, from below zero to above. The planner used to test that pattern sample by
sample and bisect towards it; it now writes it as two limit lines (the dip starts at
rest with no acceleration, so a(s) = s q(s) with q quadratic, and on the grid it turns
once exactly when its first sample is below zero and its last, a_b, above). The old
check is kept as the slow exact path (``LineTables(spec, turn_by_lines=False)``); these
tests hold the quick one to it. The same model on both sides: only the solver differs.
"""

import itertools

import numpy as np
import pytest

from leapwright.core.base.constants import STANDARD_GRAVITY as G
from leapwright.core.base.errors import InfeasibleJumpError
from leapwright.core.plan import contact_shapes, shape_choice, shape_search
from leapwright.core.plan.contact_shapes import DIP, PROPULSION, EndState, StretchSpec
from leapwright.core.plan.goals import JumpGoals
from leapwright.core.plan.planner import plan_jump


def _dip(depth, v0, e=0.1):
    return StretchSpec(EndState(0.0, 0.0, 0.0), -depth, EndState(e, v0, -G), DIP, PROPULSION, G)


def test_two_lines_turn_the_dip_once_exactly_where_the_sample_check_does():
    # Polynomial fact (a cubic through a(0) = 0 is s times a quadratic, which changes sign at most
    # twice): the two lines must agree with the sign-pattern check on every random draw.
    rng = np.random.default_rng(11)
    for _ in range(40):
        tables = shape_search.LineTables(_dip(rng.uniform(0.05, 0.6), rng.uniform(1.0, 4.0)),
                                         turn_by_lines=False)
        first = np.exp(rng.uniform(np.log(0.1), np.log(2.0), 200))
        powers = shape_search.duration_powers(first, np.full(200, 0.3))
        a_b = rng.uniform(-5.0, 60.0, 200) * rng.choice([1.0, 0.01], 200)
        band = 1e-9 * G
        by_lines = (powers @ tables.turn_offset[:, 0] + a_b * tables.turn_slope[0] < -band) & (a_b > band)
        assert np.array_equal(tables._dip_turns_once(powers, a_b), by_lines)


def test_least_peaks_match_the_sample_check_for_held_durations():
    rng = np.random.default_rng(5)
    for _ in range(30):
        spec = _dip(rng.uniform(0.1, 0.6), rng.uniform(1.5, 3.8))
        dip = np.exp(rng.uniform(np.log(0.15), np.log(1.2), 60))
        push = np.exp(rng.uniform(np.log(0.05), np.log(0.8), 60))
        fast_ab, fast = shape_search.LineTables(spec).least_peaks(dip, push)
        slow_ab, slow = shape_search.LineTables(spec, turn_by_lines=False).least_peaks(dip, push)
        assert np.array_equal(np.isfinite(fast), np.isfinite(slow))
        ok = np.isfinite(slow)
        assert np.allclose(fast[ok], slow[ok], rtol=0.0, atol=1e-6 * G)  # 1e-6 BW
        assert np.allclose(fast_ab[ok], slow_ab[ok], rtol=1e-6, atol=1e-6)


def _goal_sets():
    for h, depth, dip, push, hops in itertools.product((0.1, 0.4, 0.9), (None, 0.2, 0.5), (None, 0.35, 0.9),
                                                      (None, 0.25), (1, 3)):
        goals = dict(height=h, depth=depth, dip_duration=dip, push_duration=push, hops=hops)
        yield {k: v for k, v in goals.items() if v is not None}
    # Real jumps' own timing (reference-values.md: jumpmetrics 0.2.0 recordings; the four long dips).
    yield dict(takeoff_speed=2.478, depth=0.219, takeoff_extension=0.136, dip_duration=0.7745, push_duration=0.253)
    yield dict(takeoff_speed=3.456, depth=0.376, takeoff_extension=0.158, dip_duration=0.6615, push_duration=0.2835)
    yield dict(takeoff_speed=3.4, distance=1.0)
    yield dict(height=0.4, gravity=1.62)  # Moon (NASA fact sheet)
    # Rebounds down a step: both durations free and not a mirror image, where many pairs share the
    # least peak and the pick depends on every rounding of the search.
    yield dict(height=0.5, landing_height=-0.3, hops=2)
    yield dict(height=0.5, landing_height=0.2, hops=3, distance=0.5)


def _plan_or_refusal(goals):
    try:
        return plan_jump(JumpGoals(**goals))
    except InfeasibleJumpError as refused:
        return str(refused)


def test_plans_match_the_sample_check_on_a_grid_of_goals(monkeypatch):
    # Item 1 of the speed issue: same plans within 1e-6 m and 1e-4 BW as the solver they replace.
    goal_sets = list(_goal_sets())
    fast = [_plan_or_refusal(g) for g in goal_sets]

    def slow_tables(spec):
        return shape_search.LineTables(spec, turn_by_lines=False)
    monkeypatch.setattr(shape_choice, "line_tables", slow_tables)
    monkeypatch.setattr(contact_shapes, "line_tables", slow_tables)
    contact_shapes.choose_shape.cache_clear()  # shapes kept from the quick run would hide the slow path
    try:
        slow = [_plan_or_refusal(g) for g in goal_sets]
    finally:
        contact_shapes.choose_shape.cache_clear()
    planned = 0
    for goals, a, b in zip(goal_sets, fast, slow):
        assert type(a) is type(b), goals
        if isinstance(a, str):
            assert a == b  # the same refusal, word for word
            continue
        planned += 1
        assert a.duration_s == pytest.approx(b.duration_s, abs=1e-6)
        t = np.linspace(0.0, a.duration_s, 6001)
        assert np.max(np.abs(a.height(t) - b.height(t))) < 1e-6, goals
        assert np.max(np.abs(a.forward(t) - b.forward(t))) < 1e-6, goals
        for name in ("peak_push_force_bw", "min_unweighting_force_bw", "peak_landing_force_bw"):
            assert getattr(a.report, name) == pytest.approx(getattr(b.report, name), abs=1e-4), (goals, name)
    assert planned >= len(goal_sets) // 2


def test_a_kept_shape_is_the_shape_a_fresh_search_finds():
    # Shapes are kept per stretch while a slider drags: a plan drawn from kept shapes must be the
    # plan a cold search draws, and dragging one goal must re-plan the stretch it touches.
    goals = dict(height=0.4, hops=2, distance=0.5)
    contact_shapes.choose_shape.cache_clear()
    cold = plan_jump(JumpGoals(**goals))
    warm = plan_jump(JumpGoals(**goals))
    assert warm.shapes == cold.shapes
    t = np.linspace(0.0, cold.duration_s, 4001)
    assert np.array_equal(warm.height(t), cold.height(t)) and np.array_equal(warm.forward(t), cold.forward(t))
    dragged = plan_jump(JumpGoals(**goals, depth=0.30))
    assert dragged.shapes[0] != cold.shapes[0] and dragged.shapes[1:] == cold.shapes[1:]
    contact_shapes.choose_shape.cache_clear()
    assert plan_jump(JumpGoals(**goals, depth=0.30)).shapes == dragged.shapes
