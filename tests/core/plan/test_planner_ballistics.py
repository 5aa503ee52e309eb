"""The planner against physics laws and published jump figures."""

import math

import numpy as np
import pytest

from leapwright.core.base import constants as C
from leapwright.core.base.errors import InfeasibleJumpError, InvalidGoalError
from leapwright.core.plan.goals import JumpGoals, gravity_from
from leapwright.core.plan.planner import PHASE_NAMES, plan_jump


def _flight(plan, hop=0):
    h = plan.hops[hop]
    return h.takeoff_time_s, h.touchdown_time_s


@pytest.mark.parametrize("v0", [0.8, 2.44, 2.75, 4.0])
@pytest.mark.parametrize("g", [C.STANDARD_GRAVITY, C.MOON_GRAVITY, C.MARS_GRAVITY])
def test_flight_time_and_apex_follow_projectile_laws(v0, g):
    # Textbook projectile motion: T = 2 v / g and h = v^2 / 2 g for a level landing.
    plan = plan_jump(JumpGoals(takeoff_speed=v0, gravity=g))
    assert plan.report.flight_time_s == pytest.approx(2 * v0 / g, rel=1e-9)
    assert plan.report.apex_rise_m == pytest.approx(v0 * v0 / (2 * g), rel=1e-9)
    t0, t1 = _flight(plan)
    t = np.linspace(t0, t1, 101)
    apex = plan.height(0.5 * (t0 + t1)) - plan.height(t0)
    assert apex == pytest.approx(v0 * v0 / (2 * g), rel=1e-9)
    assert np.max(plan.height(t)) - plan.height(t0) <= v0 * v0 / (2 * g) * (1 + 1e-12)


def test_gravity_presets_match_their_sources():
    assert gravity_from("earth") == 9.80665  # 3rd CGPM 1901 (exact)
    assert gravity_from("moon") == 1.62  # NASA Moon fact sheet
    assert gravity_from("mars") == 3.71  # NASA Mars fact sheet
    with pytest.raises(InvalidGoalError, match="jupiter"):
        gravity_from("jupiter")


def test_flight_is_an_exact_parabola_under_the_chosen_gravity():
    plan = plan_jump(JumpGoals(height=0.4, gravity=3.71, distance=0.8))
    t0, t1 = _flight(plan)
    t = np.linspace(t0, t1, 50)
    assert np.allclose(plan.vertical_acceleration(t[1:-1]), -3.71, atol=1e-12)
    # Constant horizontal speed in flight (no horizontal force without contact).
    assert np.ptp(plan.forward_speed(t[1:-1])) < 1e-12


def test_impulse_momentum_on_sampled_output():
    # Impulse-momentum theorem: integral of (F - mg) dt from rest to take-off = m v0,
    # i.e. trapezoid of g (F/BW - 1) over 240 fps samples = sqrt(2 g h).
    h = 0.45
    plan = plan_jump(JumpGoals(height=h))
    s = plan.sample(240.0)
    t_off = plan.hops[0].takeoff_time_s
    before = s.times <= t_off
    t = np.append(s.times[before], t_off)
    f = np.append(s.force_bw[before], 0.0)
    impulse = np.trapezoid(C.STANDARD_GRAVITY * (f - 1.0), t) if hasattr(np, "trapezoid") else \
        np.trapz(C.STANDARD_GRAVITY * (f - 1.0), t)
    assert impulse == pytest.approx(math.sqrt(2 * C.STANDARD_GRAVITY * h), rel=0.005)


@pytest.mark.parametrize("goals", [JumpGoals(height=0.4), JumpGoals(height=0.3, hops=3, distance=0.6),
                                   JumpGoals(height=0.9, distance=1.2, landing_height=0.5)])
def test_force_is_continuous_and_zero_at_takeoff_and_touchdown(goals):
    plan = plan_jump(goals)
    g = plan.gravity
    # Continuity by refinement: a jump in F would not shrink with the sample step.
    coarse = np.max(np.abs(np.diff(plan.force_bw(np.arange(0, plan.duration_s, 1e-3)))))
    fine = np.max(np.abs(np.diff(plan.force_bw(np.arange(0, plan.duration_s, 1e-4)))))
    assert fine <= 0.15 * coarse
    assert coarse < 0.25  # force rate below 250 BW/s: no spike steeper than a stiff landing
    eps = 1e-9
    for hop in plan.hops:
        for t in (hop.takeoff_time_s, hop.touchdown_time_s):
            assert abs(1.0 + plan.vertical_acceleration(t - eps) / g) < 1e-6
            assert abs(1.0 + plan.vertical_acceleration(t + eps) / g) < 1e-6
            assert plan.force_bw(t) == pytest.approx(0.0, abs=1e-9)
    # Left and right limits agree at every piece join: the path is C2.
    for start in plan.z_path.starts[1:]:
        for order in (0, 1, 2):
            left = plan.z_path.evaluate(start - 1e-10, order)
            right = plan.z_path.evaluate(start + 1e-10, order)
            assert left == pytest.approx(right, abs=1e-6)


def test_force_never_below_zero_in_contact_and_exactly_zero_in_flight():
    plan = plan_jump(JumpGoals(height=0.6, distance=1.0))
    t = np.linspace(0, plan.duration_s, 20001)
    f = plan.force_bw(t)
    assert f.min() >= -1e-9
    t0, t1 = _flight(plan)
    inside = (t > t0) & (t < t1)
    assert np.all(f[inside] == 0.0)


def test_phases_follow_force_plate_definitions():
    # McMahon et al. 2018 (Strength Cond J 40(4)): unweighting F < BW ending at peak
    # downward speed; braking F > BW ending at zero speed; propulsion to take-off.
    plan = plan_jump(JumpGoals(height=0.4))
    names = [p.name for p in plan.phases]
    assert names == list(PHASE_NAMES)
    ph = {p.name: p for p in plan.phases}
    g = plan.gravity

    def inside(p):
        return np.linspace(p.start_s, p.end_s, 202)[1:-1]

    assert np.all(plan.force_bw(inside(ph["weighing"])) == pytest.approx(1.0))
    assert np.all(plan.force_bw(inside(ph["unweighting"])) < 1.0)
    assert np.all(plan.force_bw(inside(ph["braking"])) > 1.0)
    assert plan.vertical_speed(ph["braking"].end_s) == pytest.approx(0.0, abs=1e-9)
    v = plan.vertical_speed(inside(ph["unweighting"]))
    assert abs(plan.vertical_speed(ph["unweighting"].end_s)) >= np.max(np.abs(v)) - 1e-9
    assert plan.height(ph["braking"].end_s) == pytest.approx(-plan.resolved_goals.depth, abs=1e-9)
    assert np.all(plan.vertical_speed(inside(ph["propulsion"])) > 0)
    assert 1.0 + plan.vertical_acceleration(ph["landing"].end_s) / g == pytest.approx(1.0, abs=1e-9)
    assert plan.vertical_speed(ph["landing"].end_s) == pytest.approx(0.0, abs=1e-9)


def test_ledge_above_apex_is_infeasible_with_a_fix_in_the_message():
    with pytest.raises(InfeasibleJumpError, match=r"0\.6.*apex.*0\.4"):
        plan_jump(JumpGoals(height=0.4, landing_height=0.6))


def test_dip_faster_than_free_fall_is_infeasible_and_says_what_to_lengthen():
    with pytest.raises(InfeasibleJumpError, match="lengthen the dip"):
        plan_jump(JumpGoals(height=0.4, dip_duration=0.15, depth=0.5))


def test_contradictory_and_bad_goals_raise_the_core_error():
    with pytest.raises(InvalidGoalError, match="exactly one"):
        JumpGoals(height=0.4, flight_time=0.5)
    with pytest.raises(InvalidGoalError, match="exactly one"):
        JumpGoals()
    for bad in (dict(height=-0.1), dict(height=float("nan")), dict(height=0.4, gravity=0),
                dict(height=0.4, depth=-1), dict(height=0.4, hops=0), dict(height=0.4, hops=2.5)):
        with pytest.raises(InvalidGoalError):
            JumpGoals(**bad)


def test_ledge_jump_lands_on_the_ledge_and_flight_time_goal_is_met():
    plan = plan_jump(JumpGoals(flight_time=0.5, landing_height=0.3, distance=1.0))
    t0, t1 = _flight(plan)
    assert t1 - t0 == pytest.approx(0.5, rel=1e-12)
    assert plan.height(t1) - plan.height(t0) == pytest.approx(0.3, abs=1e-12)
    assert plan.height(plan.duration_s) == pytest.approx(0.3, abs=1e-9)  # standing on the ledge
    assert plan.forward(plan.duration_s) == pytest.approx(1.0, abs=1e-9)


def test_hops_flow_into_each_other_without_a_stop():
    plan = plan_jump(JumpGoals(height=0.25, hops=3, distance=0.5))
    assert len(plan.hops) == 3
    landings = [p for p in plan.phases if p.name == "landing"]
    pushes = [p for p in plan.phases if p.name == "propulsion"]
    for land, push in zip(landings[:-1], pushes[1:]):
        assert land.end_s == pytest.approx(push.start_s)
        # At the bottom the speed is zero for an instant only: the force is above BW.
        assert plan.force_bw(land.end_s) > 1.0
    spots = [plan.forward(p.end_s) for p in landings]
    assert np.allclose(np.diff([0.0] + spots), 0.5, atol=1e-9)
