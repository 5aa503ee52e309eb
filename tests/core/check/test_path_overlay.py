"""Overlay geometry: ticks on the path, the implied parabola, the planned arc."""

import numpy as np
import pytest

from leapwright.core.check.analysis import analyse_trajectory
from leapwright.core.plan.goals import JumpGoals
from leapwright.core.check.overlay import implied_flight_arc, planned_arc_points, spacing_ticks
from leapwright.core.plan.planner import plan_jump

FPS = 24.0


@pytest.fixture(scope="module")
def jump():
    return plan_jump(JumpGoals(height=0.4, distance=0.8))


def test_ticks_are_centred_on_each_sample_and_across_the_path(jump):
    pts = planned_arc_points(jump, FPS, (0, 0, 0), (0, -1, 0))
    ticks = spacing_ticks(pts, length=0.05)
    assert ticks.shape == (len(pts), 2, 3)
    assert np.allclose(ticks.mean(axis=1), pts)
    assert np.allclose(np.linalg.norm(ticks[:, 1] - ticks[:, 0], axis=1), 0.05)
    tangent = np.gradient(pts, axis=0)
    moving = np.linalg.norm(tangent, axis=1) > 1e-9
    dots = np.einsum("ij,ij->i", ticks[moving, 1] - ticks[moving, 0], tangent[moving])
    assert np.allclose(dots, 0.0, atol=1e-12)


def test_planned_arc_is_the_plan_sample_for_sample(jump):
    pts = planned_arc_points(jump, FPS, (1.0, 2.0, 0.0), (0, -1, 0))
    s = jump.sample(FPS)
    assert np.allclose(pts[:, 1], 2.0 - s.forward)
    assert np.allclose(pts[:, 2], 1.0 + s.height)


def test_implied_arc_follows_free_fall_under_the_fitted_gravity(jump):
    # Projectile motion: the overlay's parabola passes through the sampled flight.
    pts = planned_arc_points(jump, FPS, (0, 0, 0), (0, -1, 0))
    frames = np.arange(len(pts), dtype=float) + 1
    result = analyse_trajectory(frames, pts, FPS)
    flight = result.flights[0]
    arc = implied_flight_arc(frames, pts, flight, FPS, samples_per_frame=1)
    grid = np.linspace(flight.first_frame, flight.last_frame, len(arc))
    on_frames = np.isclose(grid, np.round(grid))
    idx = np.round(grid[on_frames]).astype(int) - 1
    assert np.max(np.abs(arc[on_frames] - pts[idx])) < 1e-6
    # Second difference of height = -g / fps^2 (constant acceleration).
    dz = np.diff(arc[:, 2], 2)
    assert np.allclose(dz, -flight.gravity_m_s2 / FPS**2, rtol=1e-9)
