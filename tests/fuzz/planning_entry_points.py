"""Fuzzed entry points of the jump itself: the planner, key extraction, the arm swing.

Each entry is ``(name, strategy, call)`` (see :mod:`tests.fuzz.entry_points`).
"""

import numpy as np
from hypothesis import strategies as st

from leapwright.core.plan.goals import JumpGoals
from leapwright.core.base.keys import held_pose_keys, hermite_keys
from leapwright.core.plan.planner import plan_jump

FINITE = dict(allow_nan=False, allow_infinity=False)
# Wild values as well as sensible ones: fuzzing is for what users type by mistake.
wild = st.one_of(st.floats(), st.floats(-5.0, 5.0, **FINITE), st.none())


@st.composite
def sensible_goal_dicts(draw):
    """Goals an animator might type: mostly valid, some infeasible combinations."""
    kind = draw(st.sampled_from(["height", "flight_time", "takeoff_speed"]))
    kw = {kind: draw(st.floats(0.02, 2.5, **FINITE))}
    kw["distance"] = draw(st.floats(-1.5, 2.5, **FINITE))
    kw["landing_height"] = draw(st.floats(-1.0, 0.8, **FINITE))
    kw["gravity"] = draw(st.sampled_from([9.80665, 9.81, 1.62, 3.71, 24.8]))
    kw["hops"] = draw(st.integers(1, 3))
    kw["standing_com_height"] = draw(st.floats(0.3, 2.5, **FINITE))
    for name, lo, hi in (("depth", 0.05, 0.7), ("dip_duration", 0.15, 1.2), ("push_duration", 0.1, 0.6),
                         ("landing_depth", 0.15, 0.7), ("fall_gravity_scale", 0.5, 3.0), ("apex_hang", 0.0, 0.3)):
        if draw(st.integers(0, 3)) == 0:
            kw[name] = draw(st.floats(lo, hi, **FINITE))
    return kw


def goal_dicts():
    return st.one_of(sensible_goal_dicts(), wild_goal_dicts())


@st.composite
def wild_goal_dicts(draw):
    kw = {}
    for name in ("height", "flight_time", "takeoff_speed"):
        if draw(st.booleans()):
            kw[name] = draw(st.one_of(st.floats(0.01, 3.0, **FINITE), st.floats()))
    for name in ("distance", "landing_height", "depth", "dip_duration", "push_duration", "landing_depth",
                 "landing_duration", "takeoff_extension", "recovery_duration", "standing_com_height",
                 "fall_gravity_scale", "apex_hang", "mass"):
        if draw(st.integers(0, 3)) == 0:
            kw[name] = draw(wild)
    if draw(st.booleans()):
        kw["gravity"] = draw(st.one_of(st.sampled_from([9.80665, 1.62, 3.71]), st.floats()))
    if draw(st.integers(0, 4)) == 0:
        kw["hops"] = draw(st.one_of(st.integers(-2, 4), st.floats(0, 3)))
    return kw


def _plan(kw):
    plan = plan_jump(JumpGoals(**kw))
    t = np.linspace(0.0, plan.duration_s, 512)
    r = plan.report
    return [plan.height(t), plan.forward(t), plan.vertical_speed(t), plan.force_bw(t),
            r.peak_push_force_bw, r.peak_landing_force_bw, r.takeoff_speed_m_s, plan.duration_s]


def _keys(example):
    kw, tol, step = example
    plan = plan_jump(JumpGoals(**kw))
    # The held poses first: a bad step is refused before the costlier spline search.
    out = [held_pose_keys(plan, channel, 24.0, step).values for channel in ("height", "forward")]
    for channel in ("height", "forward"):
        k = hermite_keys(plan, channel, tol)
        out += [k.times, k.values, k.slopes]
    return out


@st.composite
def swing_inputs(draw):
    from leapwright.core.arms.swing import SwingAmplitudes

    kw = draw(sensible_goal_dicts())
    amps = dict(backswing_deg=draw(st.one_of(st.floats(0, 90, **FINITE), st.floats())),
                upswing_deg=draw(st.one_of(st.floats(10, 180, **FINITE), st.floats())))
    return kw, amps, SwingAmplitudes


def _arm_swing(example):
    from leapwright.core.arms.swing import place_swing
    from leapwright.core.arms.timing import detect_swing

    kw, amps, cls = example
    plan = plan_jump(JumpGoals(**kw))
    swing = place_swing(plan, cls(**amps))
    t, elevation = swing.sample(24.0, plan.duration_s)
    found = detect_swing(t, elevation)
    return [swing.keys.values, swing.keys.slopes, found.peak_s, found.upswing_start_s]



ENTRY_POINTS = [
    ("planner", goal_dicts(), _plan),
    # Mostly usable goals and tolerances, so that the key search itself is what gets fuzzed.
    ("keys", st.tuples(st.one_of(sensible_goal_dicts(), sensible_goal_dicts(), wild_goal_dicts()),
                       st.one_of(st.floats(1e-5, 0.05, **FINITE), st.floats(1e-5, 0.05, **FINITE), st.floats()),
                       st.one_of(st.integers(1, 5), st.integers(-1, 13))), _keys),
    ("arm swing", swing_inputs(), _arm_swing),
]
