"""Stylised flights: a fall gravity other than the rise's, and a hang at the apex."""

import numpy as np
import pytest

from leapwright.core.base import constants as C
from leapwright.core.base.errors import InfeasibleJumpError, InvalidGoalError
from leapwright.core.plan.goals import JumpGoals
from leapwright.core.plan.planner import plan_jump

FPS = 24.0


def _fit_gravity(t, z):
    """-2 x the quadratic coefficient of a least-squares parabola (numpy.polyfit)."""
    return -2.0 * np.polyfit(t, z, 2)[0]


@pytest.mark.parametrize("scale", [1.0, 1.6, 2.1])
def test_rise_and_fall_fit_their_two_gravities(scale):
    plan = plan_jump(JumpGoals(height=0.5, fall_gravity_scale=scale))
    hop = plan.hops[0]
    g = C.STANDARD_GRAVITY
    apex_t = hop.takeoff_time_s + hop.takeoff_speed_m_s / g
    frames = np.arange(0, plan.duration_s, 1 / FPS)
    rise = frames[(frames > hop.takeoff_time_s) & (frames < apex_t)]
    fall = frames[(frames > apex_t) & (frames < hop.touchdown_time_s)]
    assert _fit_gravity(rise, plan.height(rise)) == pytest.approx(g, rel=0.005)
    assert _fit_gravity(fall, plan.height(fall)) == pytest.approx(scale * g, rel=0.005)
    if scale != 1.0:
        assert any(f"{scale:.2g} g" in note for note in plan.report.stylisations)
        assert not any("falls" in w for w in plan.report.warnings)  # a deviation, not an error
    else:
        assert plan.report.stylisations == ()


def test_apex_hang_holds_the_top_and_lengthens_the_flight():
    plain = plan_jump(JumpGoals(height=0.4))
    hang = plan_jump(JumpGoals(height=0.4, apex_hang=4 / FPS))
    assert hang.report.flight_time_s == pytest.approx(plain.report.flight_time_s + 4 / FPS, rel=1e-12)
    hop = hang.hops[0]
    apex_t = hop.takeoff_time_s + hop.takeoff_speed_m_s / C.STANDARD_GRAVITY
    t = np.linspace(apex_t, apex_t + 4 / FPS, 50)
    assert np.ptp(hang.height(t)) == 0.0
    assert any("hangs" in note for note in hang.report.stylisations)
    # Touchdown speed still sqrt(2 g h) for the plain fall of 0.4 m (free fall).
    v = -hang.vertical_speed(hop.touchdown_time_s - 1e-12)
    assert v == pytest.approx(np.sqrt(2 * C.STANDARD_GRAVITY * 0.4), rel=1e-9)


def test_flight_time_goal_is_met_with_stylisation():
    plan = plan_jump(JumpGoals(flight_time=0.6, fall_gravity_scale=2.0, apex_hang=0.1))
    assert plan.report.flight_time_s == pytest.approx(0.6, rel=1e-9)


def test_bad_stylisation_values_are_refused():
    with pytest.raises(InvalidGoalError):
        JumpGoals(height=0.4, fall_gravity_scale=0)
    with pytest.raises(InvalidGoalError):
        JumpGoals(height=0.4, apex_hang=-0.1)
    with pytest.raises(InfeasibleJumpError, match="hang"):
        plan_jump(JumpGoals(flight_time=0.3, apex_hang=0.4))


def test_keys_hold_the_apex_hang_exactly():
    from leapwright.core.base.keys import evaluate_hermite, hermite_keys

    plan = plan_jump(JumpGoals(height=0.4, apex_hang=4 / FPS, fall_gravity_scale=1.5))
    keys = hermite_keys(plan, "height")
    hop = plan.hops[0]
    t = np.linspace(hop.takeoff_time_s, hop.touchdown_time_s, 2001)
    # Each flight piece is a polynomial of degree <= 2: cubic Hermite spans reproduce it exactly.
    assert np.max(np.abs(evaluate_hermite(keys, t) - plan.height(t))) < 1e-9
