"""Placing an arm swing, its plane from rest data, and the gain model against published figures."""

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, example, given, settings, strategies as st
from scipy.spatial.transform import Rotation

from leapwright.core.base import constants as C
from leapwright.core.arms.swing import (SwingAmplitudes, arm_com_distance, arm_directions, arm_mass_fraction,
    bone_local_rotations, goals_with_swing, place_swing, quaternion_keys, swing_gain, swing_plane,
    swing_rotations)
from leapwright.core.base.errors import InvalidGoalError, LeapwrightError
from leapwright.core.plan.goals import JumpGoals
from leapwright.core.plan.planner import plan_jump
from leapwright.core.arms.timing import detect_swing

FPS = 24.0
G0 = 9.80665  # m/s^2, 3rd CGPM 1901


def _phase(plan, name, hop=1):
    return next(p for p in plan.phases if p.name == name and p.hop == hop)


GOALS = [JumpGoals(height=0.3), JumpGoals(height=0.5, distance=0.8), JumpGoals(height=0.2, landing_height=0.1),
         JumpGoals(height=0.25, standing_com_height=0.6, gravity=C.MOON_GRAVITY)]


@pytest.mark.parametrize("goals", GOALS)
def test_placed_peak_is_within_one_frame_of_takeoff_and_the_upswing_inside_propulsion(goals):
    # Issue 6 acceptance: peak at take-off +-1 frame at 24 fps, upswing inside propulsion
    # (phases as named by McMahon et al. 2018, Strength Cond J 40(4)).
    plan = plan_jump(goals)
    swing = place_swing(plan)
    t = np.arange(int(plan.duration_s * FPS) + 1) / FPS
    elevation = swing.elevation(t)
    takeoff = plan.hops[0].takeoff_time_s
    landing_end = plan.duration_s
    in_jump = t < plan.hops[0].touchdown_time_s
    assert abs(t[np.argmax(np.where(in_jump, elevation, -np.inf))] - takeoff) * FPS <= 1.0
    found = detect_swing(t, elevation, search=(0.0, plan.hops[0].touchdown_time_s))
    push = _phase(plan, "propulsion")
    assert found.upswing_start_s >= push.start_s - 1.0 / FPS
    assert found.peak_s <= takeoff + 1.0 / FPS
    assert abs(found.peak_s - takeoff) * FPS <= 1.0
    assert found.peak_rad == pytest.approx(math.radians(90.0), abs=math.radians(0.5))
    assert swing.elevation(landing_end) == 0.0


def test_angular_speed_peaks_before_takeoff_and_is_zero_there():
    # The arm slows to its highest point exactly as the feet leave (issue 6; common practice):
    # the peak rate falls inside propulsion, strictly before take-off.
    plan = plan_jump(JumpGoals(height=0.4))
    swing = place_swing(plan)
    push = _phase(plan, "propulsion")
    t = np.linspace(push.start_s, push.end_s, 20001)
    w = swing.angular_speed(t)
    assert t[np.argmax(w)] < push.end_s - 0.25 * (push.end_s - push.start_s)
    assert abs(swing.angular_speed(push.end_s)) < 1e-9
    assert np.all(w >= -1e-12)  # monotone upswing (Fritsch & Carlson 1980 slopes)
    # The rate is the derivative of the elevation (central differences, numpy).
    h = 1e-6
    mid = t[::1000][1:-1]
    numeric = (swing.elevation(mid + h) - swing.elevation(mid - h)) / (2 * h)
    np.testing.assert_allclose(swing.angular_speed(mid), numeric, rtol=1e-5, atol=1e-6)


def test_backswing_reaches_its_extreme_at_the_upswing_start_and_hops_each_get_a_swing():
    plan = plan_jump(JumpGoals(height=0.3, hops=2))
    a = SwingAmplitudes(backswing_deg=30, upswing_deg=120, landing_reach_deg=60, flight_deg=100)
    swing = place_swing(plan, a)
    for hop in (1, 2):
        push = _phase(plan, "propulsion", hop)
        assert swing.elevation(push.start_s) == pytest.approx(-math.radians(30))
        assert swing.elevation(plan.hops[hop - 1].takeoff_time_s) == pytest.approx(math.radians(120))
        assert swing.elevation(plan.hops[hop - 1].touchdown_time_s) == pytest.approx(math.radians(60))
        flight = np.linspace(plan.hops[hop - 1].takeoff_time_s, plan.hops[hop - 1].touchdown_time_s, 2001)
        assert np.max(swing.elevation(flight)) <= math.radians(120) + 1e-12


REST_FORWARD, REST_UP = np.array([0.0, -1.0, 0.0]), np.array([0.0, 0.0, 1.0])
SHOULDER, HAND = np.array([0.18, 0.0, 1.45]), np.array([0.21, -0.05, 0.86])


def test_swing_plane_follows_a_rig_rotated_90_degrees_about_z():
    # Rotating every rest vector rotates the plane with it (rotation covariance; scipy Rotation
    # as the reference implementation).
    R = Rotation.from_euler("z", 90, degrees=True)
    base = swing_plane(REST_FORWARD, REST_UP, SHOULDER, HAND)
    turned = swing_plane(R.apply(REST_FORWARD), R.apply(REST_UP), R.apply(SHOULDER), R.apply(HAND))
    np.testing.assert_allclose(turned.axis, R.apply(base.axis), atol=1e-12)
    np.testing.assert_allclose(turned.forward, [1.0, 0.0, 0.0], atol=1e-12)
    np.testing.assert_allclose(turned.axis, [0.0, -1.0, 0.0], atol=1e-12)  # forward x up = X x Z = -Y
    assert turned.rest_elevation == pytest.approx(base.rest_elevation, abs=1e-12)
    angles = np.radians([-45.0, 0.0, 90.0, 170.0])
    np.testing.assert_allclose(arm_directions(turned, angles), R.apply(arm_directions(base, angles)), atol=1e-12)
    # A positive elevation lifts the hanging arm forward: at 90 deg it points along forward.
    np.testing.assert_allclose(arm_directions(turned, [math.pi / 2])[0], turned.forward, atol=1e-12)


@pytest.mark.parametrize("hand", [HAND, SHOULDER + np.array([0.6, 0.0, 0.0]), SHOULDER + np.array([0.4, -0.1, -0.4])],
                         ids=["hanging", "t-pose", "a-pose"])
def test_swing_rotations_carry_the_rest_arm_onto_the_swing_direction(hand):
    plane = swing_plane(REST_FORWARD, REST_UP, SHOULDER, hand)
    angles = np.radians(np.linspace(-60, 180, 25))
    q = swing_rotations(plane, angles)
    r = Rotation.from_quat(q[:, [1, 2, 3, 0]])  # scipy: scalar last
    np.testing.assert_allclose(r.apply(plane.rest_arm), arm_directions(plane, angles), atol=1e-12)
    assert np.all(np.abs(np.linalg.norm(q, axis=1) - 1) < 1e-12)
    assert np.all(np.sum(q[1:] * q[:-1], axis=1) > 0)  # no hemisphere flip between neighbours


def test_bone_local_rotations_reproduce_the_rig_space_rotation():
    # Pose rotation q_local of a bone with rest orientation B gives B q_local in rig space,
    # which must equal q B (scipy Rotation composition as the reference).
    rng = np.random.default_rng(6)
    B = Rotation.from_rotvec(rng.normal(size=3))
    q = Rotation.from_rotvec(rng.normal(size=(5, 3)))
    local = bone_local_rotations(q.as_quat()[:, [3, 0, 1, 2]], B.as_matrix())
    got = B * Rotation.from_quat(local[:, [1, 2, 3, 0]])
    want = q * B
    assert np.all((got.inv() * want).magnitude() < 1e-9)


def test_quaternion_keys_follow_the_swing_within_half_a_degree():
    plan = plan_jump(JumpGoals(height=0.4))
    swing = place_swing(plan, SwingAmplitudes(upswing_deg=150))
    plane = swing_plane(REST_FORWARD, REST_UP, SHOULDER, HAND)
    curves = quaternion_keys(swing, plane)
    t0, t1 = curves[0].times[:-1], curves[0].times[1:]
    u = np.linspace(0, 1, 17)[None, :]
    ts = t0[:, None] + (t1 - t0)[:, None] * u
    quats = []
    for c in curves:
        # Handles at thirds make a Bezier's time linear in u: y(u) is the cubic Bernstein form.
        p0, p3 = c.values[:-1, None], c.values[1:, None]
        p1, p2 = c.right_handles[:-1, 1, None], c.left_handles[1:, 1, None]
        quats.append((1 - u) ** 3 * p0 + 3 * (1 - u) ** 2 * u * p1 + 3 * (1 - u) * u**2 * p2 + u**3 * p3)
    q = np.stack(quats, axis=-1).reshape(-1, 4)
    q /= np.linalg.norm(q, axis=1, keepdims=True)
    got = Rotation.from_quat(q[:, [1, 2, 3, 0]]).apply(plane.rest_arm)
    want = arm_directions(plane, swing.elevation(ts.reshape(-1)))
    err = np.degrees(np.arccos(np.clip(np.sum(got * want, axis=1), -1, 1)))
    assert err.max() < 0.5
    for c in curves:
        np.testing.assert_allclose(c.right_handles[:-1, 0], c.times[:-1] + np.diff(c.times) / 3)


# --- The gain model --------------------------------------------------------------------------

def test_default_swing_turns_feltners_no_arm_speed_into_the_arm_speed():
    # Feltner et al. 1999 (J Sports Sci 17:449-466): 2.44 -> 2.75 m/s. The work ratio is calibrated
    # to this pair, so this guards the constant and the formula against drift (5%).
    gain = swing_gain(2.44)
    assert gain.takeoff_speed_m_s == pytest.approx(2.75, rel=0.05)
    assert gain.takeoff_speed_m_s == pytest.approx(2.75, rel=0.005)


def test_default_swing_splits_the_gain_as_lees_and_gains_as_vaverka():
    # Predictions, not fitted: Lees, Vanrenterghem & De Clercq 2004 (J Biomech 37:1929-1940) split the
    # arm gain 28% higher take-off / 72% faster take-off; Vaverka et al. 2016 (J Hum Kinet 53:41-50)
    # +38% jump height. Tolerances: 3 points of share, 5 points of gain.
    gain = swing_gain(2.44)
    assert gain.position_share == pytest.approx(C.ARM_SWING_POSITION_SHARE, abs=0.03)  # 0.28
    assert gain.speed_share == pytest.approx(C.ARM_SWING_SPEED_SHARE, abs=0.03)  # 0.72
    no_arm_rise = 2.44**2 / (2 * G0)  # projectile law
    assert gain.total_gain_m / no_arm_rise == pytest.approx(C.ARM_SWING_HEIGHT_GAIN_RATIO, abs=0.05)  # 0.38
    # Lees' absolute +0.086 m is not met at Feltner's faster jumps: documented, and bounded here.
    assert C.ARM_SWING_HEIGHT_GAIN < gain.total_gain_m < 1.5 * C.ARM_SWING_HEIGHT_GAIN
    assert gain.flight_rise_gain_m == pytest.approx((gain.takeoff_speed_m_s**2 - 2.44**2) / (2 * G0))


def test_takeoff_lift_equals_the_whole_body_com_shift_of_raised_arms():
    # Textbook mechanics: the body's COM is the mass-weighted mean of its segments' COMs; de Leva 1996
    # fractions (shared/reference-values.md), segments laid end to end along the arm.
    de_leva = [(0.0271, 0.5772), (0.0162, 0.4574), (0.0061, 0.7900)]
    stature = 1.0 / 0.56  # from memory, as in constants
    lengths = np.array([0.186, 0.146, 0.108]) * stature
    ends = np.concatenate([[0], np.cumsum(lengths)])
    for up in (60.0, 90.0, 135.0):
        shift = 0.0
        for (m, c), start, length in zip(de_leva, ends[:-1], lengths):
            z_hanging, z_raised = -(start + c * length), -(start + c * length) * math.cos(math.radians(up))
            shift += 2 * m * (z_raised - z_hanging)  # both arms
        gain = swing_gain(2.44, SwingAmplitudes(upswing_deg=up))
        assert gain.takeoff_height_gain_m == pytest.approx(shift, rel=1e-9)
    assert arm_mass_fraction() == pytest.approx(2 * (0.0271 + 0.0162 + 0.0061))


def test_no_swing_adds_nothing_and_more_swing_adds_more():
    none = swing_gain(2.44, SwingAmplitudes(backswing_deg=0, upswing_deg=0))
    assert none.takeoff_speed_m_s == 2.44 and none.total_gain_m == 0.0
    assert swing_gain(2.44, mass_fraction=0.0).total_gain_m == 0.0
    gains = [swing_gain(2.44, SwingAmplitudes(upswing_deg=u)).total_gain_m for u in (30, 60, 90, 120, 150, 180)]
    assert np.all(np.diff(gains) > 0)


def test_gain_obeys_dynamic_similarity():
    # Froude scaling: at the same v0 / sqrt(g L), heights scale with L (common practice in biomechanics).
    human = swing_gain(2.44)
    L, g = 0.5, C.MOON_GRAVITY
    scaled = swing_gain(2.44 * math.sqrt(g * L / G0), gravity=g, standing_com_height=L)
    assert scaled.total_gain_m == pytest.approx(human.total_gain_m * L, rel=1e-9)
    assert scaled.position_share == pytest.approx(human.position_share, rel=1e-9)


def test_goals_with_swing_give_a_higher_jump_from_the_same_push():
    goals = JumpGoals(height=0.3)
    base, armed = plan_jump(goals), plan_jump(goals_with_swing(goals))
    gain = swing_gain(base.hops[0].takeoff_speed_m_s)
    assert armed.hops[0].takeoff_speed_m_s == pytest.approx(gain.takeoff_speed_m_s)
    # Apex above standing = take-off extension + v^2 / 2g (projectile law).
    top = lambda p: p.resolved_goals.takeoff_extension + p.hops[0].apex_rise_m  # noqa: E731
    assert top(armed) - top(base) == pytest.approx(gain.total_gain_m, rel=1e-9)


# --- Bad input --------------------------------------------------------------------------------

@pytest.mark.parametrize("kwargs, words", [
    ({"upswing_deg": float("nan")}, ["upswing_deg", "nan"]),
    ({"backswing_deg": -10}, ["backswing_deg", "-10", "give"]),
    ({"upswing_deg": -50, "backswing_deg": 45}, ["-50", "larger upswing"]),
    ({"flight_deg": 120, "upswing_deg": 90}, ["120", "at most 90"]),
    ({"upswing_start_share": 0.95}, ["0.95", "0..0.9"]),
])
def test_bad_amplitudes_name_the_value_and_a_fix(kwargs, words):
    with pytest.raises(InvalidGoalError) as err:
        SwingAmplitudes(**kwargs)
    for w in words:
        assert w in str(err.value)


def test_bad_rest_data_and_model_input_are_refused():
    with pytest.raises(InvalidGoalError, match="parallel"):
        swing_plane([0, 0, 2], REST_UP, SHOULDER, HAND)
    with pytest.raises(InvalidGoalError, match="no direction"):
        swing_plane(REST_FORWARD, REST_UP, SHOULDER, SHOULDER)
    with pytest.raises(InvalidGoalError, match="nan"):
        swing_gain(float("nan"))
    with pytest.raises(InvalidGoalError, match="below 1"):
        swing_gain(2.0, mass_fraction=1.5)
    with pytest.raises(InvalidGoalError, match="standing COM height"):
        arm_com_distance(-1.0)


# --- Properties -------------------------------------------------------------------------------

@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(height=st.floats(0.02, 2.0), back=st.floats(0, 180), up=st.floats(-100, 300),
       reach=st.floats(-90, 200), share=st.floats(0, 0.9), hops=st.integers(1, 3))
def test_random_swings_never_crash_and_never_give_nan(height, back, up, reach, share, hops):
    try:
        plan = plan_jump(JumpGoals(height=height, hops=hops))
        swing = place_swing(plan, SwingAmplitudes(back, up, reach, None, share))
        gain = swing_gain(plan.hops[0].takeoff_speed_m_s, swing.amplitudes)
    except LeapwrightError:
        return
    t = np.linspace(0, plan.duration_s, 801)
    assert np.all(np.isfinite(swing.elevation(t))) and np.all(np.isfinite(swing.angular_speed(t)))
    assert np.all(np.diff(swing.keys.times) > 0)
    assert math.isfinite(gain.takeoff_speed_m_s) and gain.takeoff_speed_m_s >= plan.hops[0].takeoff_speed_m_s
    for hop in plan.hops:
        assert swing.elevation(hop.takeoff_time_s) == pytest.approx(math.radians(up))


vectors = st.lists(st.floats(-10, 10), min_size=3, max_size=3)


@settings(max_examples=80, deadline=None)
@given(vectors, vectors, vectors, vectors, st.floats(-7, 7))
# An arm resting 1.2e-7 rad off straight up (float32's epsilon): the half turn alone missed down by that.
@example([0.0, 0.0, 1.0], [0.0, 1.0, 1.192092896e-07], [0.0, 0.0, 0.0], [0.0, 1.0, 0.0], 0.0)
def test_random_rest_data_give_a_plane_or_a_core_error(forward, up, shoulder, hand, angle):
    try:
        plane = swing_plane(forward, up, shoulder, hand)
    except LeapwrightError:
        return
    q = swing_rotations(plane, np.array([angle]))
    assert np.all(np.isfinite(q)) and abs(np.linalg.norm(q) - 1) < 1e-9
    assert abs(np.dot(plane.axis, plane.up)) < 1e-9 and abs(np.dot(plane.axis, plane.forward)) < 1e-9
    # The rotation carries the rest arm onto the swing direction (scipy Rotation as reference).
    got = Rotation.from_quat(q[:, [1, 2, 3, 0]]).apply(plane.rest_arm)
    np.testing.assert_allclose(got, arm_directions(plane, [angle]), atol=1e-9)
