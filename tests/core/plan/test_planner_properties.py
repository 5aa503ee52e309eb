"""Property-based checks over the goal space: invariants hold, or the core's error is raised."""

import math

import numpy as np
from hypothesis import HealthCheck, example, given, settings, strategies as st

from leapwright.core.base.errors import LeapwrightError
from leapwright.core.plan.goals import JumpGoals
from leapwright.core.plan.planner import plan_jump

finite = dict(allow_nan=False, allow_infinity=False)


@st.composite
def goals(draw):
    kind = draw(st.sampled_from(["height", "flight_time", "takeoff_speed"]))
    value = draw(st.floats(0.01, 3.0, **finite))
    kw = {kind: value}
    kw["gravity"] = draw(st.sampled_from([9.80665, 1.62, 3.71, 9.81, 20.0]))
    kw["distance"] = draw(st.floats(-2.0, 3.0, **finite))
    kw["landing_height"] = draw(st.floats(-1.5, 1.0, **finite))
    kw["hops"] = draw(st.integers(1, 3))
    kw["standing_com_height"] = draw(st.floats(0.2, 3.0, **finite))
    for name, lo, hi in (("depth", 0.05, 0.8), ("dip_duration", 0.1, 1.5), ("push_duration", 0.08, 0.8),
                         ("landing_depth", 0.12, 0.8), ("landing_duration", 0.05, 1.0)):
        if draw(st.booleans()):
            kw[name] = draw(st.floats(lo, hi, **finite))
    return kw


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(goals())
# Found by hypothesis: a short moon landing whose force left 0 at touchdown going down
# (-0.0007 BW for a moment) before the first inner sample could see it.
@example({"height": 0.416015625, "gravity": 1.62, "distance": 0.0, "landing_height": -0.4375, "hops": 1,
          "standing_com_height": 0.416015625, "landing_duration": 0.12})
def test_plans_keep_their_invariants_or_raise_the_core_error(kw):
    try:
        plan = plan_jump(JumpGoals(**kw))
    except LeapwrightError:
        return
    g = plan.gravity
    t = np.linspace(0, plan.duration_s, 4001)
    for series in (plan.height(t), plan.forward(t), plan.vertical_speed(t), plan.force_bw(t)):
        assert np.all(np.isfinite(series))
    assert plan.force_bw(t).min() >= -1e-6  # the ground never pulls
    hop = plan.hops[0]
    # Projectile laws hold for whatever goal was given.
    rise = plan.resolved_goals.landing_height
    v0 = hop.takeoff_speed_m_s
    assert math.isclose(hop.apex_rise_m, v0 * v0 / (2 * g), rel_tol=1e-9)
    assert math.isclose(v0 * hop.flight_time_s - 0.5 * g * hop.flight_time_s ** 2, rise,
                        rel_tol=1e-7, abs_tol=1e-9)
    for h in plan.hops:
        assert abs(plan.force_bw(h.takeoff_time_s)) < 1e-6
        assert abs(plan.force_bw(h.touchdown_time_s)) < 1e-6
    names = {p.name for p in plan.phases}
    assert names <= {"weighing", "unweighting", "braking", "propulsion", "flight", "landing"}
    assert abs(plan.vertical_speed(plan.duration_s)) < 1e-9
