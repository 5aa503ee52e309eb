"""Figures that emerge from the planner, checked against published jump data."""

import math

import numpy as np
import pytest

from leapwright.core.base import constants as C
from leapwright.core.plan.contact_shapes import build_pieces
from leapwright.core.plan.goals import JumpGoals
from leapwright.core.plan.planner import plan_jump
from leapwright.core.plan.stylisation import gravity_for_timing, scale_for_timing

FELTNER_SPEED = 2.44  # m/s, Feltner et al. 1999, J Sports Sci 17 (CMJ without arms)


@pytest.fixture(scope="module")
def cmj():
    return plan_jump(JumpGoals(takeoff_speed=FELTNER_SPEED))


def test_min_unweighting_force_in_published_range(cmj):
    # PMC11208864 (2024): 0.43 BW at self-chosen depth; 0.58 BW shallow -> accept 0.3-0.6 BW.
    assert 0.3 <= cmj.report.min_unweighting_force_bw <= 0.6


def test_peak_propulsive_force_in_range(cmj):
    # CMJ peak propulsive force about 2.0-2.8 BW (from memory); issue range 1.8-3.0 BW.
    assert 1.8 <= cmj.report.peak_push_force_bw <= 3.0


def test_peak_speed_comes_just_before_takeoff(cmj):
    # Harman et al. 1990, Med Sci Sports Exerc 22(6): peak COM speed ~0.03 s before
    # take-off, falling 6-7% by take-off -> accept 0.01-0.06 s and 2-10%.
    t_off = cmj.hops[0].takeoff_time_s
    t = np.linspace(t_off - 0.3, t_off, 30001)
    v = cmj.vertical_speed(t)
    k = int(np.argmax(v))
    assert 0.01 <= t_off - t[k] <= 0.06
    drop = (v[k] - v[-1]) / v[k]
    assert 0.02 <= drop <= 0.10


def test_default_depth_in_balster_range(cmj):
    # Balster, Lim & Kong 2016, IJHMSS 4(4): 0.38 +- 0.08 m; accept 0.38 +- 0.16 m.
    bottom = min(cmj.height(np.linspace(0, cmj.hops[0].takeoff_time_s, 5001)))
    assert 0.22 <= -bottom <= 0.54


def _stretch_peak(spec, a_b, d1, d2):
    """Largest acceleration over both pieces, or inf when the limits break."""
    first, second = build_pieces(spec, a_b, d1, d2)
    g = spec.gravity
    peak = -np.inf
    for poly, dur, sign in ((first, d1, -1 if spec.first_kind in ("dip", "absorption") else 1),
                            (second, d2, 1 if spec.second_kind in ("propulsion", "recovery") else -1)):
        t = np.linspace(0, dur, 4001)
        a, v = poly.deriv(2)(t), poly.deriv(1)(t)
        # A speed of the wrong sign below 1e-5 m/s (a 1e-7 m overshoot) is sampling noise.
        if a.min() < -g - 1e-9 or np.any(sign * v[1:-1] < -1e-5):
            return np.inf
        peak = max(peak, a.max())
    return peak


def release_start_state(plan):
    """Where the push's release starts (force 1 BW), by integrating its force backwards from take-off.

    The release lasts the propulsion phase less the push quintic, its force falling linearly from
    1 BW to 0, a = -g t / tau (kinematics, textbook): v = v0 + g tau / 2, z = e - v0 tau - g tau^2 / 3.
    """
    from leapwright.core.plan.contact_shapes import EndState
    G, g, v0 = plan.resolved_goals, plan.gravity, plan.hops[0].takeoff_speed_m_s
    push = next(p for p in plan.phases if p.name == "propulsion")
    tau = push.end_s - push.start_s - plan.shapes[0].second_duration
    return EndState(G.takeoff_extension - v0 * tau - g * tau * tau / 3.0, v0 + 0.5 * g * tau, 0.0)


def _stretch_specs(plan):
    from leapwright.core.plan.contact_shapes import DIP, PROPULSION, ABSORPTION, RECOVERY, EndState, StretchSpec
    G, g = plan.resolved_goals, plan.gravity
    e, v0 = G.takeoff_extension, plan.hops[0].takeoff_speed_m_s
    v_td = v0 - g * plan.hops[0].flight_time_s
    start = StretchSpec(EndState(0, 0, 0), -G.depth, release_start_state(plan), DIP, PROPULSION, g)
    land = StretchSpec(EndState(e, v_td, -g), e - G.landing_depth, EndState(0, 0, 0), ABSORPTION, RECOVERY, g)
    return start, land


@pytest.mark.parametrize("which", [0, 1])
def test_free_parameters_sit_at_a_minimum_of_the_peak_force(cmj, which):
    # The planner's own claim, checked by brute force: moving any free value by
    # +-10% (the others held) never lowers the peak force.
    spec = _stretch_specs(cmj)[which]
    shape = cmj.shapes[which]
    base = (shape.bottom_acceleration, shape.first_duration, shape.second_duration)
    best = _stretch_peak(spec, *base)
    assert np.isfinite(best)
    free = [0, 2] if which == 0 else [0, 1]  # (a_b, push) at the start; (a_b, landing) at the end
    for index in free:
        for factor in (0.9, 1.1):
            moved = list(base)
            moved[index] *= factor
            assert _stretch_peak(spec, *moved) >= best - 1e-6 * abs(best)


@pytest.mark.parametrize("drop, speed", [(0.32, 2.5), (0.62, 3.5), (1.03, 4.5)])
def test_landing_impact_speed_matches_free_fall(drop, speed):
    # Zhang, Bates & Dufek 2000, Med Sci Sports Exerc 32(4): drops of 0.32/0.62/1.03 m
    # -> 2.5/3.5/4.5 m/s, i.e. sqrt(2 g h).
    rise = 0.02
    plan = plan_jump(JumpGoals(height=rise, landing_height=-(drop - rise)))
    t1 = plan.hops[0].touchdown_time_s
    v = -plan.vertical_speed(t1 - 1e-12)
    assert v == pytest.approx(math.sqrt(2 * C.STANDARD_GRAVITY * drop), rel=1e-9)
    assert v == pytest.approx(speed, abs=0.05)


@pytest.mark.parametrize("depth", [0.25, 0.35, 0.5])
def test_distance_averaged_landing_force_obeys_work_energy(depth):
    # Work-energy (textbook mechanics): (1/d) * integral F dz over the stopping
    # distance d = BW (1 + h / d), h the fall from the apex to touchdown.
    plan = plan_jump(JumpGoals(height=0.4, landing_depth=depth))
    landing = [p for p in plan.phases if p.name == "landing"][-1]
    t1 = landing.start_s
    t = np.linspace(t1, landing.end_s, 200001)
    v = plan.vertical_speed(t)
    bottom = int(np.argmax(v >= 0.0) if np.any(v[1:] >= 0) else len(t) - 1)
    bottom = np.flatnonzero(v[1:] >= 0.0)[0] + 1
    tt, f, vv = t[:bottom + 1], plan.force_bw(t[:bottom + 1]), v[:bottom + 1]
    work = np.sum(0.5 * (f[1:] * -vv[1:] + f[:-1] * -vv[:-1]) * np.diff(tt))
    d = plan.height(t1) - plan.height(tt[-1])
    h = plan.report.apex_rise_m
    assert d == pytest.approx(depth, rel=1e-6)
    assert work / d == pytest.approx(1 + h / d, rel=0.005)


def test_deeper_absorption_gives_a_lower_landing_peak():
    peaks = [plan_jump(JumpGoals(height=0.4, landing_depth=d)).report.peak_landing_force_bw
             for d in (0.2, 0.3, 0.45)]
    assert peaks[0] > peaks[1] > peaks[2]


def test_stylised_timing_gives_gravity_and_scale():
    # Hang time doubled at the same height: h = g T^2 / 8 gives g / 4, real for a
    # character 4 times the size (ballistic time scales as sqrt(L / g)).
    g = C.STANDARD_GRAVITY
    real = plan_jump(JumpGoals(height=0.5))
    T = real.report.flight_time_s
    assert gravity_for_timing(T, 0.5) == pytest.approx(g, rel=1e-12)
    g_implied = gravity_for_timing(2 * T, 0.5)
    assert g_implied == pytest.approx(g / 4, rel=1e-12)
    assert scale_for_timing(g_implied, g) == pytest.approx(4.0, rel=1e-12)
    giant = plan_jump(JumpGoals(height=0.5 * 4))
    assert giant.report.flight_time_s == pytest.approx(2 * T, rel=1e-12)


def test_friction_warning_when_the_push_needs_more_than_the_shoe_gives():
    plan = plan_jump(JumpGoals(height=0.3, distance=2.2))
    assert plan.report.friction_needed > C.SHOE_FRICTION_COEFFICIENT
    assert any("friction" in w for w in plan.report.warnings)
    calm = plan_jump(JumpGoals(height=0.3, distance=0.3))
    assert not any("friction" in w for w in calm.report.warnings)
    # Fx / Fz in the push is checked against what the planner reports.
    push = [p for p in calm.phases if p.name == "propulsion"][0]
    t = np.linspace(push.start_s, push.end_s, 2001)[1:-1]
    ax = calm.x_path.evaluate(t, 2)
    ratio = np.abs(ax) / (calm.gravity * calm.force_bw(t))
    assert np.max(ratio) <= calm.report.friction_needed * 1.01


def test_moon_jump_scales_defaults_and_stays_feasible():
    earth = plan_jump(JumpGoals(height=0.4))
    moon = plan_jump(JumpGoals(height=0.4, gravity=C.MOON_GRAVITY))
    # Dynamic similarity: same lengths, times scaled by sqrt(g_earth / g_moon), same forces in BW.
    ratio = math.sqrt(C.STANDARD_GRAVITY / C.MOON_GRAVITY)
    hold = earth.resolved_goals.weighing_duration  # a plain hold, not scaled
    assert moon.duration_s - hold == pytest.approx((earth.duration_s - hold) * ratio, rel=1e-3)
    assert moon.report.peak_push_force_bw == pytest.approx(earth.report.peak_push_force_bw, rel=1e-3)


def test_mass_gives_forces_in_newtons():
    plan = plan_jump(JumpGoals(height=0.4, mass=70.0))
    push = [f for f in plan.report.figures if f.name == "peak push force"][0]
    assert push.newtons == pytest.approx(push.value * 70.0 * C.STANDARD_GRAVITY)
