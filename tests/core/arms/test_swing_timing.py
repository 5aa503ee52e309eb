"""Re-timing a swing: detection in sampled motion, contact windows, the monotone warp, warnings."""

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st
from scipy.interpolate import PchipInterpolator

from leapwright.core.arms.swing import (BezierKeys, SwingAmplitudes, arm_com_distance, arm_mass_fraction,
    bezier_from_hermite, place_swing)
from leapwright.core.base.errors import InvalidGoalError, InvalidTrajectoryError, LeapwrightError
from leapwright.core.plan.feet import foot_ball_path
from leapwright.core.plan.goals import JumpGoals
from leapwright.core.base.keys import HermiteKeys
from leapwright.core.plan.planner import plan_jump
from leapwright.core.arms.timing import (ContactWindow, DetectedSwing, detect_swing, elevation_angles,
    monotone_warp, plan_swing_report, retime_swing, swing_warnings, swing_warp, torso_drop, warp_keys,
    window_from_com, window_from_feet, window_from_plan)

FPS = 24.0
LATE = 6  # frames, issue 6's deliberately late swing


def bezier_eval(keys, t):
    """A Bezier F-curve at times t: solve x(u) = t by bisection per span, then y(u) (cubic Bernstein)."""
    t = np.asarray(t, dtype=float)
    k = np.clip(np.searchsorted(keys.times, t, side="right") - 1, 0, len(keys.times) - 2)
    x0, x3 = keys.times[k], keys.times[k + 1]
    x1, x2 = keys.right_handles[k, 0], keys.left_handles[k + 1, 0]
    y0, y3 = keys.values[k], keys.values[k + 1]
    y1, y2 = keys.right_handles[k, 1], keys.left_handles[k + 1, 1]
    lo, hi = np.zeros_like(t), np.ones_like(t)
    for _ in range(60):
        u = 0.5 * (lo + hi)
        x = (1 - u) ** 3 * x0 + 3 * (1 - u) ** 2 * u * x1 + 3 * (1 - u) * u**2 * x2 + u**3 * x3
        lo, hi = np.where(x < t, u, lo), np.where(x < t, hi, u)
    u = 0.5 * (lo + hi)
    y = (1 - u) ** 3 * y0 + 3 * (1 - u) ** 2 * u * y1 + 3 * (1 - u) * u**2 * y2 + u**3 * y3
    return np.where(t <= keys.times[0], keys.values[0], np.where(t >= keys.times[-1], keys.values[-1], y))


@pytest.fixture(scope="module")
def plan():
    return plan_jump(JumpGoals(height=0.35))


def _frames(plan):
    return np.arange(int(plan.duration_s * FPS) + 1) / FPS


def _late_curve(plan, frames_late=LATE):
    keys = place_swing(plan).keys
    return bezier_from_hermite(HermiteKeys(keys.times + frames_late / FPS, keys.values, keys.slopes))


def test_a_swing_six_frames_late_peaks_at_takeoff_after_retiming(plan):
    # Issue 6 acceptance: the late swing peaks at take-off (+-1 frame) after re-timing, keeps its key
    # values exactly, and the warp keeps key order and handles uncrossed.
    curve = _late_curve(plan)
    t = _frames(plan)
    window = window_from_plan(plan)
    before = detect_swing(t, bezier_eval(curve, t), search=(0.0, plan.duration_s - 0.2))
    assert (before.peak_s - window.takeoff_s) * FPS == pytest.approx(LATE, abs=1.0)
    (new,), report = retime_swing([curve], before, window, FPS)
    after = detect_swing(t, bezier_eval(new, t), search=(0.0, plan.duration_s - 0.2))
    assert abs(after.peak_s - window.takeoff_s) * FPS <= 1.0
    assert after.upswing_start_s >= window.push_start_s - 1.0 / FPS
    assert np.array_equal(new.values, curve.values)
    assert np.all(np.diff(new.times) > 0)
    assert np.all(new.left_handles[:, 0] <= new.times) and np.all(new.right_handles[:, 0] >= new.times)
    assert np.all(new.right_handles[:-1, 0] <= new.left_handles[1:, 0] + 1e-12)
    assert report.peak_shift_frames == pytest.approx(-LATE, abs=1.0)
    assert report.max_frames_moved == pytest.approx(LATE, abs=1.5)
    assert any("after take-off" in w for w in report.warnings_before)
    assert swing_warnings(after, window, FPS) == ()


def test_warp_leaves_far_keys_exactly_where_they_were(plan):
    curve = _late_curve(plan)
    t = _frames(plan)
    found = detect_swing(t, bezier_eval(curve, t), search=(0.0, plan.duration_s - 0.2))
    warp = swing_warp(found, window_from_plan(plan))
    (new,), _ = retime_swing([curve], found, window_from_plan(plan), FPS)
    far = (curve.times <= warp.old[0]) | (curve.times >= warp.old[-1])
    assert far.any()
    assert np.array_equal(new.times[far], curve.times[far])
    assert np.array_equal(new.left_handles[far], curve.left_handles[far])


def test_monotone_warp_matches_scipy_pchip_and_joins_the_identity_smoothly():
    # Reference implementation: scipy.interpolate.PchipInterpolator (Fritsch & Butland 1984 slopes).
    old, new = [0.0, 1.0, 1.3, 2.0], [0.0, 0.85, 1.16, 2.0]
    pchip = monotone_warp(old, new, end_slopes=None)
    x = np.linspace(0, 2, 2001)[1:-1]  # inside the knots; outside, the warp is the identity by design
    np.testing.assert_allclose(pchip(x), PchipInterpolator(old, new)(x), atol=1e-12)
    np.testing.assert_allclose(pchip.slope(x), PchipInterpolator(old, new).derivative()(x), atol=1e-9)
    smooth = monotone_warp(old, new)
    assert np.all(np.diff(smooth(x)) > 0)
    assert smooth.slope(np.array([1e-9, 2 - 1e-9])) == pytest.approx([1.0, 1.0], abs=1e-6)
    np.testing.assert_allclose(smooth(np.array(old)), new, atol=1e-12)


def _numeric_slope(warp, t, h=1e-6):
    return (warp(t + h) - warp(t - h)) / (2 * h)  # central differences


def test_handles_scale_with_the_local_warp_slope():
    # Each handle's time offset is multiplied by the warp's slope at its key (checked against central
    # differences of the warp); values, and so handle values, stay as they were.
    keys = BezierKeys(np.array([1.0, 1.5, 2.0]), np.array([0.0, 1.0, 0.5]),
                      np.array([[0.95, -0.1], [1.45, 0.8], [1.95, 0.6]]),
                      np.array([[1.05, 0.1], [1.55, 1.2], [2.05, 0.4]]))
    warp = monotone_warp([0.0, 1.0, 2.0, 4.0], [0.0, 1.3, 3.0, 4.0])
    new = warp_keys(keys, warp)
    k = _numeric_slope(warp, keys.times)
    np.testing.assert_allclose(new.times, warp(keys.times))
    np.testing.assert_allclose(new.right_handles[:, 0] - new.times, k * (keys.right_handles[:, 0] - keys.times),
                               rtol=1e-6)
    np.testing.assert_allclose(new.times - new.left_handles[:, 0], k * (keys.times - keys.left_handles[:, 0]),
                               rtol=1e-6)
    np.testing.assert_array_equal(new.left_handles[:, 1], keys.left_handles[:, 1])
    np.testing.assert_array_equal(new.values, keys.values)


def test_overlapping_handles_are_shortened_along_their_direction():
    # Compressing a span until the handles would pass each other: both shrink by one factor (time and
    # value offsets alike), so each keeps its time-scaled direction, as Blender keeps a span a
    # function of time.
    keys = BezierKeys(np.array([0.0, 1.0, 2.0]), np.array([0.0, 1.0, 0.0]),
                      np.array([[-0.3, 0.0], [0.4, 0.7], [1.6, 0.2]]), np.array([[0.6, 0.3], [1.6, 1.3], [2.3, 0.0]]))
    warp = monotone_warp([-1.0, 0.0, 1.0, 2.0, 3.0], [-1.0, 0.0, 0.2, 2.0, 3.0])
    new = warp_keys(keys, warp)
    assert np.all(new.right_handles[:-1, 0] <= new.left_handles[1:, 0] + 1e-12)
    k = _numeric_slope(warp, keys.times[0])
    old_dt, old_dv = k * (keys.right_handles[0, 0] - keys.times[0]), keys.right_handles[0, 1] - keys.values[0]
    new_dt, new_dv = new.right_handles[0, 0] - new.times[0], new.right_handles[0, 1] - new.values[0]
    assert new_dt < old_dt
    assert new_dv / new_dt == pytest.approx(old_dv / old_dt, rel=1e-5)
    assert np.array_equal(new.values, keys.values)


def test_detection_finds_the_swing_through_half_a_degree_of_noise(plan):
    # +-0.5 deg uniform noise, fixed seed; true landmarks from the placed keys (push start, take-off).
    rng = np.random.default_rng(20260602)
    swing = place_swing(plan)
    for offset in rng.uniform(0, 1 / FPS, 8):
        t = _frames(plan) + offset
        noisy = swing.elevation(t) + np.radians(rng.uniform(-0.5, 0.5, len(t)))
        found = detect_swing(t, noisy, search=(0.0, plan.hops[0].touchdown_time_s))
        assert abs(found.peak_s - plan.hops[0].takeoff_time_s) * FPS <= 1.0
        assert abs(found.upswing_start_s - swing.upswing_starts_s[0]) * FPS <= 1.0


def test_detection_without_backswing_starts_where_the_arm_leaves_rest():
    t = np.arange(0, 60) / FPS
    rise = np.clip((t - 1.0) / 0.3, 0, 1)
    elevation = np.radians(100) * (3 * rise**2 - 2 * rise**3)
    found = detect_swing(t, elevation)
    assert abs(found.upswing_start_s - 1.0) * FPS <= 1.0 and abs(found.peak_s - 1.3) * FPS <= 1.0


def test_contact_window_from_the_com_and_from_the_feet_match_the_plan(plan):
    # The plan's own take-off/touchdown are the truth; samples at 24 fps resolve them to a frame. The push
    # starts at the bottom of the dip, where braking ends at zero speed (McMahon et al. 2018).
    t = _frames(plan)
    truth = window_from_plan(plan)
    com = window_from_com(t, plan.height(t), plan.gravity)
    for got in (com, window_from_feet(t, foot_ball_path(plan, t)[1], com_height=plan.height(t))):
        assert abs(got.takeoff_s - truth.takeoff_s) * FPS <= 1.0
        assert abs(got.touchdown_s - truth.touchdown_s) * FPS <= 1.0
        assert abs(got.push_start_s - truth.push_start_s) * FPS <= 1.0


def test_late_warning_names_the_frames_and_the_torso_drop(plan):
    # In flight the whole-body COM keeps its arc, so arms rising dz make the rest drop (m_arms/M) dz
    # (textbook mechanics; masses de Leva 1996).
    t = _frames(plan)
    curve = _late_curve(plan)
    found = detect_swing(t, bezier_eval(curve, t), search=(0.0, plan.duration_s - 0.2))
    window = window_from_plan(plan)
    (warning,) = [w for w in swing_warnings(found, window, FPS) if "after take-off" in w]
    assert f"{(found.peak_s - window.takeoff_s) * FPS:.1f} frames" in warning
    dz = arm_com_distance() * (math.cos(found.elevation(window.takeoff_s)) - math.cos(found.peak_rad))
    assert torso_drop(found, window) == pytest.approx(-arm_mass_fraction() * dz)
    assert f"{arm_mass_fraction() * dz * 100:.1f} cm" in warning
    assert torso_drop(found, window) < -0.005


def test_swings_outside_contact_and_early_peaks_are_warned(plan):
    t = _frames(plan)
    window = window_from_plan(plan)
    in_air = detect_swing(t, bezier_eval(_late_curve(plan, 9), t), search=(0.0, plan.duration_s - 0.2))
    assert any("outside contact" in w for w in swing_warnings(in_air, window, FPS))
    early = detect_swing(t, bezier_eval(_late_curve(plan, -5), t), search=(0.0, plan.duration_s - 0.2))
    assert any("before take-off" in w or "before the push" in w for w in swing_warnings(early, window, FPS))


def test_plan_report_for_the_cli_has_no_warning_for_a_placed_swing(plan):
    lines = plan_swing_report(plan, SwingAmplitudes(), FPS)
    assert len(lines) == 2 and "m/s" in lines[1]


def test_elevation_from_positions_in_a_turned_frame_recovers_the_angles():
    # Right-hand rotation about Z by 90 deg turns forward -Y into +X (rotation matrices, textbook).
    angles = np.radians(np.linspace(-50, 200, 40))
    forward, up = np.array([1.0, 0.0, 0.0]), np.array([0.0, 0.0, 1.0])
    shoulder = np.tile([0.0, 0.2, 1.4], (40, 1))
    hand = shoulder + 0.6 * (np.cos(angles)[:, None] * -up + np.sin(angles)[:, None] * forward)
    np.testing.assert_allclose(elevation_angles(shoulder, hand, forward, up), angles, atol=1e-12)


@pytest.mark.parametrize("make, words", [
    (lambda: ContactWindow(1.0, 1.0), ["1 s", "not before take-off", "give"]),
    (lambda: ContactWindow(1.2, 1.0), ["-0.2 s", "give the propulsion start"]),
    (lambda: ContactWindow(float("nan"), 1.0), ["nan"]),
    (lambda: swing_warp(DetectedSwing(1.0, 1.0, 0, 1, np.zeros(5), np.zeros(5)), ContactWindow(0.8, 1.1)),
     ["1..1 s", "no length"]),
    (lambda: monotone_warp([0, 1, 1], [0, 1, 1]), ["increase strictly"]),
    (lambda: monotone_warp([0, 1, 2], [0, 1, 3]), ["end knots", "same"]),
])
def test_bad_windows_raise_with_the_value_and_a_fix(make, words):
    with pytest.raises(InvalidGoalError) as err:
        make()
    for w in words:
        assert w in str(err.value)


def test_flat_or_broken_samples_raise_trajectory_errors():
    t = np.arange(30) / FPS
    with pytest.raises(InvalidTrajectoryError, match="no swing"):
        detect_swing(t, np.zeros(30))
    with pytest.raises(InvalidTrajectoryError, match="NaN"):
        detect_swing(t, np.full(30, np.nan))
    with pytest.raises(InvalidTrajectoryError, match="increase"):
        detect_swing(t[::-1], np.sin(t))


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.floats(-10, 10), min_size=0, max_size=80), st.floats(1, 240))
def test_random_samples_never_crash_and_never_give_nan(values, fps):
    t = np.arange(len(values)) / fps
    try:
        found = detect_swing(t, np.array(values))
        window = ContactWindow(found.upswing_start_s - 0.1, found.upswing_start_s + 0.2)
        warnings = swing_warnings(found, window, fps)
    except LeapwrightError:
        return
    assert math.isfinite(found.peak_s) and math.isfinite(found.upswing_start_s) and found.peak_s > found.upswing_start_s
    assert all(isinstance(w, str) for w in warnings)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.floats(0.01, 1.0), min_size=2, max_size=12), st.floats(-2, 2), st.floats(0.02, 1.0),
       st.floats(-1, 3), st.floats(0.02, 1.0))
def test_random_warps_keep_order_values_and_uncrossed_handles(gaps, a, swing_len, A, push_len):
    times = np.cumsum(gaps)
    values = np.sin(3 * times)
    keys = bezier_from_hermite(HermiteKeys(times, values, np.cos(3 * times)))
    try:
        warp = swing_warp(DetectedSwing(a, a + swing_len, 0, 1, times, values), ContactWindow(A, A + push_len))
    except LeapwrightError:
        return
    new = warp_keys(keys, warp)
    assert np.all(np.isfinite(new.times)) and np.all(np.diff(new.times) > 0)
    assert np.array_equal(new.values, keys.values)
    assert np.all(new.right_handles[:-1, 0] <= new.left_handles[1:, 0] + 1e-9)
    x = np.linspace(warp.old[0] - 1, warp.old[-1] + 1, 4001)
    assert np.all(np.diff(warp(x)) >= 0)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.floats(-3, 3), min_size=0, max_size=60), st.floats(1, 240), st.floats(0.001, 0.5))
def test_random_heights_give_a_window_or_a_core_error(heights, fps, clearance):
    t = np.arange(len(heights)) / fps
    z = np.array(heights)
    for find in (lambda: window_from_com(t, z), lambda: window_from_feet(t, z, clearance=clearance),
                 lambda: window_from_feet(t, z, com_height=z, clearance=clearance)):
        try:
            w = find()
        except LeapwrightError:
            continue
        assert math.isfinite(w.push_start_s) and w.push_start_s < w.takeoff_s < w.touchdown_s
