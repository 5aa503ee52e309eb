"""The elbow bend that follows the swing, against plane geometry and scipy's rotations."""

import math

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from leapwright.core.arms.swing import place_swing
from leapwright.core.arms.elbow import (BentArmSwing, elbow_bend_keys, elbow_rotations, hand_line_lift,
    hand_line_lift_per_bend)
from leapwright.core.base.errors import InvalidGoalError
from leapwright.core.plan.goals import JumpGoals
from leapwright.core.plan.planner import plan_jump
from leapwright.core.arms.plane import swing_plane, swing_rotations

FORWARD, UP = np.array([0.0, -1.0, 0.0]), np.array([0.0, 0.0, 1.0])


def _wxyz_to_scipy(q):
    return Rotation.from_quat(np.roll(np.atleast_2d(q), -1, axis=1))


@pytest.mark.parametrize("a, b", [(0.3, 0.25), (0.28, 0.45)])
def test_hand_line_lift_is_the_angle_of_a_two_link_arm(a, b):
    # Plane geometry: shoulder at 0, elbow at a along x, hand at the elbow plus b turned by the bend.
    for bend in np.radians([0.0, 10.0, 35.0, 80.0]):
        hand = np.array([a + b * math.cos(bend), b * math.sin(bend)])
        assert hand_line_lift(bend, a, b) == pytest.approx(math.atan2(hand[1], hand[0]), abs=1e-12)
        h = 1e-6  # central difference of the lift as the slope's reference
        numeric = (hand_line_lift(bend + h, a, b) - hand_line_lift(bend - h, a, b)) / (2 * h)
        assert hand_line_lift_per_bend(bend, a, b) == pytest.approx(numeric, rel=1e-7)


def test_bend_keys_peak_at_each_backswing_bottom_and_are_zero_at_takeoff():
    plan = plan_jump(JumpGoals(height=0.4))
    placed = place_swing(plan)
    bend = elbow_bend_keys(placed, 20.0)
    t = np.asarray(bend.times)
    assert bend.values[np.isclose(t, placed.upswing_starts_s[0])] == pytest.approx(math.radians(20.0))
    assert bend.values[np.isclose(t, placed.takeoffs_s[0])] == pytest.approx(0.0)
    swing = BentArmSwing(placed, bend, 0.3, 0.3)
    dense = np.linspace(t[0], t[-1], 2001)
    bottom = np.array([placed.upswing_starts_s[0]])
    # Zero slopes: each key is the curve's extreme, so the bend never overshoots the amplitude or 0.
    assert swing.bend_at(bottom)[0] == pytest.approx(math.radians(20.0), abs=1e-12)
    assert swing.bend_at(dense).max() <= math.radians(20.0) + 1e-12
    assert swing.bend_at(dense).min() >= -1e-12
    # Equal lengths: the hand line sits half the bend forward of the upper arm (isosceles triangle).
    assert (placed.elevation(bottom) - swing.elevation(bottom))[0] == pytest.approx(math.radians(10.0), abs=1e-12)
    with pytest.raises(InvalidGoalError, match="more than 90 deg"):
        elbow_bend_keys(placed, 120.0)


@pytest.mark.parametrize("forearm_rest", [(0.0, 0.0, -1.0), (0.2, -0.3, -1.0), (1.0, 0.0, 0.0)])
def test_elbow_rotation_lays_the_forearm_bend_degrees_past_the_upper_arm_in_the_swing_plane(forearm_rest):
    upper = swing_plane(FORWARD, UP, np.zeros(3), np.array([0.1, 0.05, -0.3]))
    f0 = np.asarray(forearm_rest, dtype=float)
    fore = swing_plane(FORWARD, UP, np.zeros(3), f0)
    u0 = upper.rest_arm
    for elevation, bend in ((-0.7, 0.35), (0.4, 0.0), (1.5, 0.6)):
        q_u = swing_rotations(upper, np.array([elevation]))
        rel = elbow_rotations(upper, fore, np.array([bend]))
        u = _wxyz_to_scipy(q_u).apply(u0)[0]
        f = (_wxyz_to_scipy(q_u) * _wxyz_to_scipy(rel)).apply(f0 / np.linalg.norm(f0))[0]
        assert math.atan2(np.linalg.norm(np.cross(u, f)), u @ f) == pytest.approx(bend, abs=1e-9)
        assert f @ upper.axis == pytest.approx(0.0, abs=1e-9)  # in the swing plane
        # Forward and up of the upper arm: the forearm's elevation is the upper arm's plus the bend.
        assert math.atan2(f @ FORWARD, -(f @ UP)) == pytest.approx(elevation + bend, abs=1e-9)
