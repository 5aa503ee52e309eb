"""In-air correction on the mannequin of test_body_mass.py, with a late arm raise in flight."""

import importlib.util
import math
import pathlib

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from leapwright.core.body import mass as bm
from leapwright.core.base.errors import InvalidGoalError, InvalidTrajectoryError
from leapwright.core.body.arc import FlightStretch, check_flight, correct_flight, takeoff_motion, takeoff_velocity

_spec = importlib.util.spec_from_file_location("mannequin_rig", pathlib.Path(__file__).with_name("test_body_mass.py"))
rig = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(rig)

G = 9.80665  # m/s^2, standard gravity (3rd CGPM 1901)
FPS = 24.0
TAKEOFF = 10  # index of the take-off frame
V0 = np.array([0.0, -0.9, 2.6])  # m/s take-off root velocity: forward (-Y) and up (invented)
PUSH = 1.3 * G  # m/s^2 upward root acceleration over the last contact frames (invented)
LAST = TAKEOFF + int(2 * V0[2] / G * FPS)  # last frame before the arc comes back to take-off height
N = LAST + 6
# de Leva 1996 male (shared/reference-values.md): upper arm, forearm, hand (mass, COM from proximal).
ARM = ((0.0271, 0.5772), (0.0162, 0.4574), (0.0061, 0.7900))
ARM_LENGTHS = (0.30, 0.25, 0.10)  # the mannequin's upper arm, forearm, hand (shoulder to knuckles) [m]


def root_track():
    tau = (np.arange(N) - TAKEOFF) / FPS
    acc = np.where(tau < 0, PUSH, -G)  # constant push, then free fall; velocity continuous at take-off
    z = V0[2] * tau + 0.5 * acc * tau ** 2
    return np.stack([np.zeros(N), V0[1] * tau, 1.0 + z], axis=1)


def arm_angles(start=TAKEOFF + 3, end=TAKEOFF + 9, down=-1.1, up=0.9):
    x = np.clip((np.arange(N) - start) / (end - start), 0, 1)
    return down + (up - down) * x * x * (3 - 2 * x)


def arm_com_from_shoulder():
    # Distance of one straight arm's COM from the shoulder, by hand from de Leva 1996.
    starts = np.concatenate([[0.0], np.cumsum(ARM_LENGTHS)[:-1]])
    m = np.array([a[0] for a in ARM])
    d = np.array([s + a[1] * l for s, a, l in zip(starts, ARM, ARM_LENGTHS)])
    return float(m @ d / m.sum()), 2 * float(m.sum())


@pytest.fixture(scope="module")
def take():
    model = bm.mass_model(bm.map_by_topology(rig.mannequin()), "de_leva_male")
    heads, tails = rig.pose(root_track(), arm_angles())
    return model, heads, tails


def test_corrected_com_follows_the_take_off_parabola_within_a_millimetre(take):
    model, heads, tails = take
    com = bm.whole_body_com(model, heads, tails)
    fix = correct_flight(com, [FlightStretch(TAKEOFF, LAST)], FPS, G)
    moved = bm.whole_body_com(model, heads + fix.offsets[:, None], tails + fix.offsets[:, None])
    # Free fall (Newton): c(t) = c0 + v0 t - g t^2/2 from the take-off state the push
    # delivered: position at the take-off frame, velocity V0 (the body is rigid there).
    tau = (np.arange(TAKEOFF, LAST + 1) - TAKEOFF)[:, None] / FPS
    parabola = com[TAKEOFF] + V0 * tau - 0.5 * G * tau ** 2 * np.array([0, 0, 1.0])
    assert np.abs(moved[TAKEOFF:LAST + 1] - parabola).max() < 1e-3
    np.testing.assert_allclose(fix.velocities[0], V0, atol=1e-9)
    assert not fix.offsets[:TAKEOFF].any() and not fix.offsets[LAST + 1:].any()
    assert TAKEOFF + 9 <= fix.largest_frame <= LAST and fix.largest > 0.02


def test_torso_drop_matches_the_arms_share_of_their_rise(take):
    model, heads, tails = take
    fix, found = check_flight(model, heads, tails, [(TAKEOFF, LAST)], FPS, G, tolerance=0.005, first_frame=1)
    d, m_arms = arm_com_from_shoulder()
    # Issue 5 / momentum: dz_torso = -(m_arms / M) dz_arms,rel, with the arms' rise
    # relative to the shoulders computed by hand from the joint angles (M = 1, de Leva male sums to 1).
    ang = arm_angles()
    rise = d * (np.sin(ang) - np.sin(ang[TAKEOFF]))
    frames = np.arange(TAKEOFF, LAST + 1)
    expected = -m_arms * rise[frames]
    moving = np.abs(expected) > 1e-3
    np.testing.assert_allclose(fix.offsets[frames[moving], 2], expected[moving], rtol=0.02)
    (dep,) = found
    np.testing.assert_allclose(dep.torso_drop_cm, 100 * fix.offsets[dep.frames, 2], rtol=1e-9)
    np.testing.assert_allclose(dep.limb_drop_cm["arms"], -100 * m_arms * rise[dep.frames], rtol=0.02)
    assert math.isclose(dep.mass_shares["arms"], m_arms, rel_tol=1e-9)
    assert f"frames {dep.frames[0] + 1}-" in dep.message.lower() and "arms" in dep.message
    assert "cm" in dep.message and dep.suggestion


def test_arms_still_in_flight_need_no_correction():
    # Rigid body on a ballistic root: the COM is already on its arc (Newton).
    model = bm.mass_model(bm.map_by_topology(rig.mannequin()))
    heads, tails = rig.pose(root_track(), np.full(N, -0.4))
    fix, found = check_flight(model, heads, tails, [(TAKEOFF, LAST)], FPS, G)
    assert fix.largest < 1e-9 and found == []


def test_hips_keyed_off_the_arc_are_told_apart_from_limbs():
    # Rigid body whose root rises 3 cm above free fall late in the air: the whole offset
    # is the torso's own, none of it comes from limbs (Newton; the body moves as one).
    model = bm.mass_model(bm.map_by_topology(rig.mannequin()))
    root = root_track()
    bump = 0.03 * np.clip((np.arange(N) - TAKEOFF - 4) / 4, 0, 1)
    root[:, 2] += bump
    heads, tails = rig.pose(root, np.full(N, -0.4))
    fix, (dep,) = check_flight(model, heads, tails, [(TAKEOFF, LAST)], FPS, G)
    np.testing.assert_allclose(fix.offsets[TAKEOFF:LAST + 1, 2], -bump[TAKEOFF:LAST + 1], atol=1e-9)
    assert all(np.abs(v).max() < 1e-9 for v in dep.limb_drop_cm.values())
    assert "torso itself is keyed +3.0 cm off the arc" in dep.message


def test_an_arm_swing_started_at_the_take_off_is_reported_with_its_share_of_the_speed():
    # The add-on reads the launch speed at the first frame surely in the air (take-off + 1).
    # Arms still through contact that start swinging at the take-off frame put their share
    # of their own change of speed into that reading (momentum: in the air the limbs cannot
    # change the COM's speed). By hand: the arms' COM sits d from the shoulder (de Leva
    # 1996), each arm turns by ang, so its height relative to the torso is d sin(ang).
    model = bm.mass_model(bm.map_by_topology(rig.mannequin()), "de_leva_male")
    heads, tails = rig.pose(root_track(), arm_angles(start=TAKEOFF, end=TAKEOFF + 6))
    first = TAKEOFF + 1
    (found,) = takeoff_motion(model, heads, tails, [(first, LAST)], FPS, tolerance=0.01, first_frame=1)
    d, m_arms = arm_com_from_shoulder()
    z = d * np.sin(arm_angles(start=TAKEOFF, end=TAKEOFF + 6))
    expected = m_arms * FPS * (z[first] - 2 * z[first - 1] + z[first - 2])
    assert math.isclose(found.speed_error[2], expected, rel_tol=0.02)
    assert abs(found.speed_error[0]) < 1e-9  # the two arms' sideways motions cancel
    assert math.isclose(found.arc_shift_cm, 100 * abs(found.speed_error[2]) * (LAST - first) / FPS, rel_tol=1e-9)
    assert found.message.startswith("The arms start moving") and f"frame {TAKEOFF + 1})" in found.message
    assert found.stretch == FlightStretch(first, LAST)


def test_limbs_moving_later_in_the_air_steadily_or_slowing_through_the_take_off_are_not_reported(take):
    # The usual late raise starts 3 frames into the flight: the reading is clean.
    model, heads, tails = take
    assert takeoff_motion(model, heads, tails, [(TAKEOFF + 1, LAST)], FPS) == []
    still = rig.pose(root_track(), np.full(N, -0.4))
    assert takeoff_motion(model, *still, [(TAKEOFF + 1, LAST)], FPS) == []
    # A swing already under way in contact that carries on at the same pace is part of the
    # launch (no change of speed between the two frames).
    steady = rig.pose(root_track(), 0.05 * (np.arange(N) - TAKEOFF))
    assert takeoff_motion(model, *steady, [(TAKEOFF + 1, LAST)], FPS) == []
    # A swing timed to the push peaks at the take-off and slows through it (common
    # practice): its change of speed is part of the launch, so it is not reported, though
    # it is as large as the start from rest above.
    peaked = rig.pose(root_track(), 0.9 - 0.08 * (np.arange(N) - TAKEOFF) ** 2)
    assert takeoff_motion(model, *peaked, [(TAKEOFF + 1, LAST)], FPS) == []


def test_take_off_velocity_is_exact_for_constant_acceleration_and_has_the_taylor_error():
    h = 1 / FPS
    t = np.arange(-6, 1) * h
    c = np.stack([0.3 * t, -0.7 + 1.9 * t + 6.0 * t ** 2, np.zeros_like(t)], axis=1)
    for k in (3, 5, 7):  # a quadratic is recovered from any window (least squares, exact data)
        np.testing.assert_allclose(takeoff_velocity(c, 6, FPS, k), [0.3, 1.9, 0.0], atol=1e-9)
    # Cubic z = j t^3 / 6 has zero speed at t = 0; the 3-point backward difference reads
    # -j h^2 / 3 (Taylor series of the one-sided second-order difference).
    j = 200.0
    cubic = np.stack([np.zeros_like(t), np.zeros_like(t), j * t ** 3 / 6], axis=1)
    assert math.isclose(takeoff_velocity(cubic, 6, FPS, 3)[2], -j * h ** 2 / 3, rel_tol=1e-9)


def test_known_take_off_velocity_and_settling_after_landing():
    com = np.zeros((20, 3))
    fix = correct_flight(com, [(2, 10)], FPS, G, takeoff_velocities=[[0, 0, 1.0]], settle_frames=4)
    tau = np.arange(9) / FPS
    np.testing.assert_allclose(fix.offsets[2:11, 2], tau - 0.5 * G * tau ** 2)  # free fall
    tail = fix.offsets[11:15, 2] / fix.offsets[10, 2]
    assert np.all(np.diff(np.concatenate([[1.0], tail, [0.0]])) < 0) and not fix.offsets[15:].any()


def test_two_hops_get_their_own_arcs():
    # Each flight has its own take-off state; between them the offset is 0 (Newton, per flight).
    def hop(i, takeoff, v0, push):  # constant push, then free fall, velocity continuous
        tau = (i - takeoff) / FPS
        return 1.0 + v0 * tau + 0.5 * np.where(tau < 0, push, -G) * tau ** 2

    i = np.arange(40)
    z = np.where(i < 24, hop(i, 12, 2.0, 6.0), hop(i, 30, 1.5, 2 * G))
    com = np.stack([0.01 * i, np.zeros(40), z], axis=1)
    fix = correct_flight(com, [(12, 20), (30, 39)], FPS, G, settle_frames=5)
    assert np.abs(fix.offsets).max() < 1e-9  # both stretches already ballistic
    com[34:, 2] += 0.02  # a 2 cm step in the second flight is undone there only
    fix = correct_flight(com, [(12, 20), (30, 39)], FPS, G, settle_frames=5)
    np.testing.assert_allclose(fix.offsets[34:, 2], -0.02, atol=1e-9)
    assert np.abs(fix.offsets[:34]).max() < 1e-9


def test_bad_stretches_say_what_to_change():
    com = np.zeros((20, 3))
    with pytest.raises(InvalidTrajectoryError, match="earlier"):
        correct_flight(com, [(1, 10)], FPS)
    with pytest.raises(InvalidGoalError, match="overlap"):
        correct_flight(com, [(3, 10), (8, 15)], FPS)
    with pytest.raises(InvalidGoalError, match="0 <= first < last < 20"):
        correct_flight(com, [(3, 25)], FPS)
    with pytest.raises(InvalidGoalError, match="fps"):
        correct_flight(com, [(3, 10)], 0)


@settings(max_examples=60, deadline=None)
@given(st.integers(0, 2 ** 32 - 1), st.floats(1.0, 120.0), st.floats(0.0, 30.0))
def test_random_poses_never_crash_or_give_nan(seed, fps, gravity):
    rng = np.random.default_rng(seed)
    model = bm.mass_model(bm.map_by_topology(rig.mannequin()))
    n = int(rng.integers(6, 40))
    heads = rng.normal(scale=2.0, size=(n, len(rig.NAMES), 3))
    tails = heads + rng.normal(scale=0.5, size=heads.shape)
    first = int(rng.integers(2, n - 2))
    last = int(rng.integers(first + 1, n))
    fix, found = check_flight(model, heads, tails, [(first, last)], fps, gravity, tolerance=0.01,
                              settle_frames=int(rng.integers(0, 4)))
    assert np.isfinite(fix.offsets).all() and math.isfinite(fix.largest)
    moved = bm.whole_body_com(model, heads + fix.offsets[:, None], tails + fix.offsets[:, None])
    np.testing.assert_allclose(moved[first:last + 1], fix.arcs[0], atol=1e-6 * (1 + np.abs(fix.arcs[0]).max()))
    for dep in found:
        assert np.isfinite(dep.torso_drop_cm).all() and all(np.isfinite(v).all() for v in dep.limb_drop_cm.values())


@pytest.mark.parametrize("fps", [2.152989292011759e-226, 1e-7, 1e5])
def test_frame_rate_outside_blenders_range_is_refused(fps):
    # Blender's RenderSettings allow fps 1..32767 over fps_base 1e-5..1e6 (its RNA hard limits); far
    # outside, frame times overflow and the least-squares take-off fit did not converge.
    com = np.zeros((30, 3))
    with pytest.raises(InvalidGoalError, match="fps"):
        correct_flight(com, [(10, 20)], fps)
