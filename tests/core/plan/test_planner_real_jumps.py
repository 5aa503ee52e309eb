"""The planner against what real jumps show: their timing is accepted, its defaults sit in their spread.

"Real jumps" are the countermovement jumps on force plates of shared/reference-values.md ("Real
jumps measured here": six from the PyPI package jumpmetrics 0.2.0, one from a public force-plate
repository, analysed by impulse-momentum with McMahon et al. 2018 phases).
"""

import re

import numpy as np
import pytest

from leapwright.core.base.errors import InfeasibleJumpError
from leapwright.core.plan.goals import JumpGoals
from leapwright.core.plan.planner import plan_jump

FELTNER_SPEED = 2.44  # m/s, Feltner et al. 1999, J Sports Sci 17 (CMJ without arms)


def _figures(plan):
    phase = {p.name: p for p in plan.phases}
    push = phase["propulsion"]
    t = np.linspace(push.start_s, push.end_s, 20001)
    v = plan.vertical_speed(t)
    k = int(np.argmax(v))
    durations = {n: phase[n].end_s - phase[n].start_s for n in ("unweighting", "braking", "propulsion")}
    return durations, push.end_s - t[k], 1.0 - v[-1] / v[k]


@pytest.mark.parametrize("goals", [dict(takeoff_speed=FELTNER_SPEED), dict(takeoff_speed=2.5), dict(height=0.4)],
                         ids=["2.44 m/s", "2.5 m/s", "0.4 m"])
def test_default_figures_sit_in_the_spread_of_real_jumps(goals):
    plan = plan_jump(JumpGoals(**goals))
    durations, lead, loss = _figures(plan)
    # reference-values.md, real jumps: unweighting 0.34-0.66 s, braking 0.15-0.38 s, propulsion 0.24-0.34 s.
    assert 0.34 <= durations["unweighting"] <= 0.66
    assert 0.15 <= durations["braking"] <= 0.38
    assert 0.24 <= durations["propulsion"] <= 0.34
    # Lowest unweighting force 0.15-0.86 BW (real jumps; PMC11208864: 0.43 self-chosen, 0.58 shallow).
    assert 0.15 <= plan.report.min_unweighting_force_bw <= 0.86
    # Peak COM speed 0.019-0.032 s before take-off, 3.1-6.3 % lost by take-off (real jumps;
    # Harman et al. 1990: about 0.03 s and 6-7 %).
    assert 0.019 <= lead <= 0.032
    assert 0.031 <= loss <= 0.063


# Own timing of recorded jumps (measured here from jumpmetrics 0.2.0's FZsum traces, impulse-momentum
# from rest): take-off speed [m/s], depth [m], take-off rise [m], dip (unweighting + braking) and push [s].
RECORDED = {
    "F02_CTRL2": (2.478, 0.219, 0.136, 0.7745, 0.253),
    "F04_CTRL2": (2.607, 0.203, 0.133, 0.704, 0.2515),
    "M07_CTRL1": (3.456, 0.376, 0.158, 0.6615, 0.2835),
    "cmj_example": (2.501, 0.174, 0.158, 0.8175, 0.241),
}


@pytest.mark.parametrize("name", sorted(RECORDED))
def test_long_shallow_dips_of_real_jumps_are_accepted(name):
    # These four were refused ("needs the ground to pull"): at the least-peak bottom push the
    # long dip's acceleration changed sign three times; a stronger bottom push turns it once,
    # and the ground never pulls (force >= 0 everywhere in contact).
    v0, depth, rise, dip, push = RECORDED[name]
    plan = plan_jump(JumpGoals(takeoff_speed=v0, depth=depth, takeoff_extension=rise, dip_duration=dip,
                               push_duration=push))
    phase = {p.name: p for p in plan.phases}
    assert phase["braking"].end_s - phase["unweighting"].start_s == pytest.approx(dip, abs=1e-9)
    assert phase["propulsion"].end_s - phase["propulsion"].start_s == pytest.approx(push, abs=1e-9)
    contact = np.concatenate([np.linspace(phase[n].start_s, phase[n].end_s, 2001)
                              for n in ("unweighting", "braking", "propulsion")])
    assert plan.force_bw(contact).min() >= -1e-9
    acc = plan.vertical_acceleration(np.linspace(phase["unweighting"].start_s, phase["braking"].end_s, 4001)[1:])
    # Unweights, then brakes: one sign change of the force about body weight, counting changes
    # larger than 1e-4 BW (at the edge of turning once the dip may start 4e-6 BW above weight).
    signs = np.sign(acc[np.abs(acc) > 1e-4 * plan.gravity])
    assert signs[0] < 0 and np.count_nonzero(np.diff(signs)) == 1


@pytest.mark.parametrize("goals", [dict(height=0.4, depth=0.5, dip_duration=0.2),
                                   dict(height=0.4, depth=0.5, dip_duration=0.2, push_duration=0.1),
                                   dict(height=1.0, depth=0.5, dip_duration=0.838, push_duration=0.05),
                                   dict(height=0.4, landing_depth=0.15, landing_duration=0.05)])
def test_every_fix_a_refusal_suggests_plans(goals):
    # Refusals only where physics forbids (the ground cannot pull), and each suggested fix is
    # one the goals allow: applied alone, it gives a physical jump.
    with pytest.raises(InfeasibleJumpError) as refused:
        plan_jump(JumpGoals(**goals))
    message = str(refused.value)
    fixes = {
        r"leave the push duration to be chosen": lambda m: {"push_duration": None},
        r"leave the landing duration to be chosen": lambda m: {"landing_duration": None},
        r"lengthen the dip to at least ([0-9.]+) s": lambda m: {"dip_duration": float(m.group(1))},
        r"lengthen the landing to at least ([0-9.]+) s": lambda m: {"landing_duration": float(m.group(1))},
        r"make the dip at most ([0-9.]+) m deep": lambda m: {"depth": float(m.group(1))},
        r"deepen the landing to ([0-9.]+) m": lambda m: {"landing_depth": float(m.group(1))},
    }
    found = 0
    for pattern, change in fixes.items():
        for match in re.finditer(pattern, message):
            found += 1
            changed = {**goals, **change(match)}
            if "dip_duration" in change(match):
                assert changed["dip_duration"] > goals["dip_duration"]
            plan_jump(JumpGoals(**{k: v for k, v in changed.items() if v is not None}))
    assert found >= 1, message


def test_default_landing_peak_sits_between_the_recorded_landings():
    # reference-values.md, real jumps: the two recorded landings peak at 3.50 and 3.82 BW
    # (jumpmetrics 0.2.0 force-plate traces); the panel's default goal is a 0.4 m jump.
    plan = plan_jump(JumpGoals(height=0.4))
    assert 3.50 <= plan.report.peak_landing_force_bw <= 3.82


def test_landing_peaks_of_three_to_six_body_weights_are_reachable_by_the_landing_depth():
    # Peak landing force of 0.3-0.6 m drops, about 3-6 BW (general literature, from memory in
    # reference-values.md): a 0.4 m jump reaches both ends by its landing depth alone, and a
    # shorter stop gives the larger force (work-energy: mean force BW (1 + h / stop), textbook).
    peaks = {d: plan_jump(JumpGoals(height=0.4, landing_depth=d)).report.peak_landing_force_bw
             for d in (0.12, 0.2, 0.25, 0.35)}
    assert peaks[0.35] <= 3.0 and peaks[0.12] >= 6.0
    assert peaks[0.12] > peaks[0.2] > peaks[0.25] > peaks[0.35]


@pytest.mark.parametrize("depth, dip, low, high", [(0.3, 0.4, 0.15, 0.2), (0.4, 0.5, 0.2, 0.37),
                                                   (0.2, 1.0, 0.86, 1.0)])
def test_the_recorded_spread_of_unweighting_is_reachable_by_the_dip_goals(depth, dip, low, high):
    # Real jumps' lowest unweighting force 0.15-0.86 BW (reference-values.md, the seven force-plate
    # jumps; PMC11208864: 0.43 BW self-chosen, 0.58 shallow): a quicker or deeper dip unweights more,
    # a slow shallow one less, and each such plan stays physical (the ground never pulls).
    plan = plan_jump(JumpGoals(height=0.4, depth=depth, dip_duration=dip))
    assert low <= plan.report.min_unweighting_force_bw <= high
    phase = {p.name: p for p in plan.phases}
    t = np.linspace(phase["unweighting"].start_s, phase["propulsion"].end_s, 4001)
    assert plan.force_bw(t).min() >= -1e-9


@pytest.mark.parametrize("v0", [2.44, 2.8, 3.0, 3.3, 3.4, 3.5])
def test_peak_speed_leads_take_off_as_in_real_jumps_at_several_speeds(v0):
    # reference-values.md, the seven real force-plate jumps (six from jumpmetrics 0.2.0, take-off
    # 2.48-3.46 m/s): peak COM speed 0.019-0.032 s before take-off, 3.1-6.3 % of it lost by take-off
    # (Harman et al. 1990, Med Sci Sports Exerc 22(6): about 0.03 s and 6-7 %). Take-off speeds from
    # Feltner et al. 1999 (2.44 m/s) up past the fastest recorded jump (3.46 m/s).
    plan = plan_jump(JumpGoals(takeoff_speed=v0))
    _, lead, loss = _figures(plan)
    assert 0.019 <= lead <= 0.032
    assert 0.031 <= loss <= 0.063
    # The physics stays exact: the take-off speed of the goal, and impulse-momentum over the push,
    # integral (F - mg) dt = m (v_takeoff - 0) from the bottom at rest (Newton's second law).
    push = next(p for p in plan.phases if p.name == "propulsion")
    assert plan.vertical_speed(push.end_s - 1e-12) == pytest.approx(v0, rel=1e-9)
    assert plan.height(push.end_s) == pytest.approx(plan.resolved_goals.takeoff_extension, abs=1e-9)
    t = np.linspace(push.start_s, push.end_s, 200001)
    f = plan.force_bw(t[1:-1])
    impulse = np.trapezoid(np.concatenate([[plan.force_bw(push.start_s)], f, [0.0]]) - 1.0, t) * plan.gravity
    assert impulse == pytest.approx(v0, rel=1e-6)


def test_the_force_falls_below_body_weight_only_in_the_last_hundredths_before_take_off():
    # Shape of a real take-off (reference-values.md force-plate jumps; McMahon et al. 2018): the force
    # crosses body weight once on its way down, 0.019-0.032 s before take-off, and reaches 0 at take-off
    # without pulling; after the crossing the speed only falls.
    plan = plan_jump(JumpGoals(height=0.4))
    push = next(p for p in plan.phases if p.name == "propulsion")
    t = np.linspace(push.start_s, push.end_s, 20001)
    f = plan.force_bw(t[:-1])
    below = t[:-1][f < 1.0 - 1e-9]
    assert below.size and 0.019 <= push.end_s - below[0] <= 0.032
    assert np.all(np.diff(f[t[:-1] >= below[0]]) <= 1e-12) and f.min() >= -1e-9
    assert plan.force_bw(push.end_s - 1e-9) == pytest.approx(0.0, abs=1e-6)
