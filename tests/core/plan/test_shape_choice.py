"""The fast shape choice against independent searches of the same objective.

The objective: over a grid of 97 local times per piece, the largest upward
acceleration of a two-quintic contact stretch, minimised over the bottom
acceleration a_b subject to the ground never pulling and the speed keeping one
sign in each piece. References here rebuild it from the quintics themselves
(:func:`quintic_between`) and search it with scipy (linprog for a_b, a bounded
scalar minimiser or Nelder-Mead for the durations, started from a dense grid).
"""

import math

import numpy as np
import pytest

scipy_optimize = pytest.importorskip("scipy.optimize")

from leapwright.core.base.constants import STANDARD_GRAVITY as G
from leapwright.core.base.piecewise import quintic_between
from leapwright.core.plan.contact_shapes import (ABSORPTION, DIP, PROPULSION, RECOVERY, EndState, StretchSpec,
    choose_shape)
from leapwright.core.plan.goals import JumpGoals
from leapwright.core.plan.planner import plan_jump
from leapwright.core.plan.shape_search import FORCE_MARGIN, SAMPLES, line_tables

_S = np.linspace(0.0, 1.0, SAMPLES)
_SIGN = {DIP: -1.0, PROPULSION: 1.0, ABSORPTION: -1.0, RECOVERY: 1.0}


def _lines(spec, d1, d2):
    """Acceleration and speed samples of both pieces as (offset, slope) in a_b, from the quintics."""
    s, e, zb = spec.start, spec.end, spec.bottom_height
    out = []
    for a_b in (0.0, 1.0):
        first = quintic_between(s.height, s.speed, s.acceleration, zb, 0.0, a_b, d1)
        second = quintic_between(zb, 0.0, a_b, e.height, e.speed, e.acceleration, d2)
        out.append([(p.deriv(k)(_S * d), p) for p, d in ((first, d1), (second, d2)) for k in (1, 2)])
    return [(base[0], probe[0] - base[0]) for base, probe in zip(out[0], out[1])]


def lp_least_peak(spec, d1, d2):
    """Least peak acceleration over a_b by linear programming (scipy), or inf."""
    (v1, bv1), (a1, ba1), (v2, bv2), (a2, ba2) = _lines(spec, d1, d2)
    rows, rhs = [], []
    for acc, slope in ((a1, ba1), (a2, ba2)):
        for k in range(SAMPLES):  # acc <= t ; -(acc + g - margin) <= 0
            rows.append([slope[k], -1.0]); rhs.append(-acc[k])
            margin = 0.0 if k in (0, SAMPLES - 1) else G * FORCE_MARGIN
            rows.append([-slope[k], 0.0]); rhs.append(acc[k] + G - margin)
    for (speed, slope), kind in (((v1, bv1), spec.first_kind), ((v2, bv2), spec.second_kind)):
        for k in range(1, SAMPLES - 1):
            rows.append([-_SIGN[kind] * slope[k], 0.0]); rhs.append(_SIGN[kind] * speed[k])
    bounds = [(0.0 if spec.first_kind == DIP else -1e3 * G, 1e3 * G), (None, None)]
    res = scipy_optimize.linprog([0.0, 1.0], A_ub=np.array(rows), b_ub=np.array(rhs), bounds=bounds,
                                 method="highs")
    return res.fun if res.status == 0 else math.inf


def _landing(v_td, depth, e=0.1):
    return StretchSpec(EndState(e, -v_td, -G), e - depth, EndState(0.0, 0.0, 0.0), ABSORPTION, RECOVERY, G)


def _rebound(v, depth, e=0.1):
    return StretchSpec(EndState(e, -v, -G), e - depth, EndState(e, v, -G), ABSORPTION, PROPULSION, G)


def test_least_peak_for_fixed_durations_matches_linear_programming():
    # Inner problem: for held durations the least peak over a_b is a linear programme
    # (minimise t with every acceleration sample <= t); scipy's HiGHS solves it independently.
    rng = np.random.default_rng(7)
    for _ in range(40):
        spec = _landing(rng.uniform(1.0, 4.5), rng.uniform(0.15, 0.6))
        d1, d2 = np.exp(rng.uniform(np.log(0.08), np.log(1.5), 2))
        _, ours = line_tables(spec).least_peaks(np.array([d1]), np.array([d2]))
        ref = lp_least_peak(spec, d1, d2)
        if math.isinf(ref):
            assert math.isinf(ours[0])
        else:
            assert ours[0] == pytest.approx(ref, abs=1e-6 * G)


def _objective(spec, fixed, free_is_first):
    tables = line_tables(spec)

    def peak(d):
        d = np.atleast_1d(np.asarray(d, dtype=float))
        other = np.full(d.shape, fixed)
        return tables.least_peaks(*((d, other) if free_is_first else (other, d)))[1]
    return peak


def reference_duration(spec, fixed, free_is_first, lo=0.04, hi=3.0):
    """Dense geometric grid (2,000 points) then scipy's bounded scalar minimiser around its best."""
    peak = _objective(spec, fixed, free_is_first)
    grid = np.geomspace(lo, hi, 2000)
    values = peak(grid)
    k = int(np.argmin(values))
    res = scipy_optimize.minimize_scalar(lambda d: min(float(peak(d)[0]), 1e9), method="bounded",
                                         bounds=(grid[max(k - 1, 0)], grid[min(k + 1, 1999)]),
                                         options={"xatol": 1e-11})
    return (res.x, res.fun) if res.fun <= values[k] else (grid[k], values[k])


@pytest.mark.parametrize("seed", range(8))
def test_free_push_and_landing_durations_match_a_dense_reference_search(seed):
    # Human goals: take-off 1.5-3.5 m/s (Feltner et al. 1999: 2.44-2.75 m/s mean), depth
    # 0.2-0.5 m (Balster et al. 2016: 0.38 +- 0.08 m), dip 0.45-0.9 s; landing depth 0.2-0.5 m.
    rng = np.random.default_rng(seed)
    v0, depth, dip = rng.uniform(1.5, 3.5), rng.uniform(0.2, 0.5), rng.uniform(0.45, 0.9)
    cases = [(StretchSpec(EndState(0, 0, 0), -depth, EndState(0.1, v0, -G), DIP, PROPULSION, G), dip, False),
             (_landing(v0, rng.uniform(0.2, 0.5)), rng.uniform(0.4, 0.8), True)]
    for spec, fixed, free_is_first in cases:
        shape = choose_shape(spec, None if free_is_first else fixed, fixed if free_is_first else None,
                             (0.04, 3.0))
        d_ref, p_ref = reference_duration(spec, fixed, free_is_first)
        assert shape is not None
        # Same least peak force within 1e-4 BW, never worse than the reference.
        assert shape.peak_acceleration / G <= p_ref / G + 1e-4
        assert shape.peak_acceleration / G >= p_ref / G - 1e-4
        d_new = shape.first_duration if free_is_first else shape.second_duration
        assert d_new == pytest.approx(d_ref, abs=2e-6)


def test_mirror_rebound_chooses_equal_durations_as_a_two_dimensional_search_does():
    # Both durations free on level ground: the stretch played backwards is itself, so the
    # least peak lies where both durations are equal. scipy's Nelder-Mead over both, started
    # from the best of a 40 x 40 grid, must not find a lower peak.
    for v, depth in ((2.8, 0.3), (2.0, 0.4), (3.4, 0.25)):
        spec = _rebound(v, depth)
        shape = choose_shape(spec, None, None, (0.04, 3.0))
        tables = line_tables(spec)
        grid = np.geomspace(0.05, 1.5, 40)
        d1, d2 = np.repeat(grid, 40), np.tile(grid, 40)
        values = tables.least_peaks(d1, d2)[1]
        k = int(np.argmin(values))
        res = scipy_optimize.minimize(lambda x: float(tables.least_peaks(x[:1], x[1:])[1][0]),
                                      [d1[k], d2[k]], method="Nelder-Mead",
                                      options={"xatol": 1e-9, "fatol": 1e-12, "maxiter": 4000})
        assert shape.first_duration == shape.second_duration
        assert shape.peak_acceleration / G <= res.fun / G + 1e-4


@pytest.mark.parametrize("goals", [dict(height=0.4), dict(height=0.25, distance=0.8), dict(takeoff_speed=3.2),
                                   dict(height=0.5, depth=0.3, dip_duration=0.7)])
def test_plans_follow_the_reference_durations_within_a_micrometre(goals):
    # Planning with the reference search's push and landing durations given as goals
    # must draw the same centre-of-mass path within 1e-6 m and the same peak force within 1e-4 BW.
    plan = plan_jump(JumpGoals(**goals))
    G0 = plan.resolved_goals
    push_spec, landing_spec = _stretch_specs(plan)
    push_ref, _ = reference_duration(push_spec, G0.dip_duration, False)
    land_ref, _ = reference_duration(landing_spec, G0.recovery_duration, True)
    push = next(p for p in plan.phases if p.name == "propulsion")
    release = push.end_s - push.start_s - plan.shapes[0].second_duration  # the push's last part, force 1 -> 0 BW
    ref = plan_jump(JumpGoals(**goals, push_duration=push_ref + release, landing_duration=land_ref))
    t = np.linspace(0.0, min(plan.duration_s, ref.duration_s), 4001)
    assert np.max(np.abs(plan.height(t) - ref.height(t))) < 1e-6
    assert plan.report.peak_push_force_bw == pytest.approx(ref.report.peak_push_force_bw, abs=1e-4)
    assert plan.report.peak_landing_force_bw == pytest.approx(ref.report.peak_landing_force_bw, abs=1e-4)


def release_start_state(plan):
    """Where the push's release starts (force 1 BW): its force falls linearly from 1 BW to 0,
    a = -g t / tau, so integrating back from take-off (kinematics, textbook) gives
    v = v0 + g tau / 2, z = e - v0 tau - g tau^2 / 3; tau is the propulsion phase less the push quintic."""
    G0, g, v0 = plan.resolved_goals, plan.gravity, plan.hops[0].takeoff_speed_m_s
    push = next(p for p in plan.phases if p.name == "propulsion")
    tau = push.end_s - push.start_s - plan.shapes[0].second_duration
    return EndState(G0.takeoff_extension - v0 * tau - g * tau * tau / 3.0, v0 + 0.5 * g * tau, 0.0)


def _stretch_specs(plan):
    G0, hop = plan.resolved_goals, plan.hops[0]
    e, g = G0.takeoff_extension, plan.gravity
    push = StretchSpec(EndState(0.0, 0.0, 0.0), -G0.depth, release_start_state(plan), DIP, PROPULSION, g)
    v_td = -plan.vertical_speed(hop.touchdown_time_s)
    landing = StretchSpec(EndState(e, -v_td, -g), e - G0.landing_depth, EndState(0.0, 0.0, 0.0), ABSORPTION,
                          RECOVERY, g)
    return push, landing
