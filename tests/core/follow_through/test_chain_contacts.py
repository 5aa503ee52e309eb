"""Chains kept out of body capsules and above the ground (contact as a hold on the path)."""

import math

import numpy as np
import pytest

from leapwright.core.base.constants import STANDARD_GRAVITY
from leapwright.core.base.rotation_vectors import rotvec_to_matrix
from leapwright.core.follow_through.chains import Colliders, LinkCoefficients, bake_chains
from leapwright.core.follow_through.contacts import closest_on_segments, push_outside
from leapwright.core.follow_through.presets import chain_preset

G0 = STANDARD_GRAVITY
BONE = 0.1


def level_chain(t, bones=3):
    """A level chain along +Y of 0.1 m bones whose root drops 0.3 m from rest and stops
    hard in 0.08 s (a landing: the chain droops far down), then stays."""
    heads = np.zeros((len(t), bones, 3)) + BONE * np.arange(bones)[None, :, None] * np.array([0.0, 1.0, 0.0])
    fall = np.clip(t - 0.3, 0.0, None)
    impact = math.sqrt(2 * G0 * 0.3)
    stop_at = 0.3 + impact / G0
    s = np.clip(t - stop_at, 0.0, 0.08)
    z = np.where(t < stop_at, -0.5 * G0 * fall**2, -0.3 - impact * s + 0.5 * impact / 0.08 * s**2)
    heads[:, :, 2] += 0.25 + z[:, None]
    frame = np.column_stack([[1.0, 0, 0], [0, 1.0, 0], [0, 0, 1.0]])
    rot = np.broadcast_to(frame, (len(t), bones, 3, 3)).copy()
    return heads, rot, [-1] + list(range(bones - 1))


def tips(bake, heads, rot, parents):
    """World tips of the baked bones: FK from the root heads with the baked rotations."""
    world = rotvec_to_matrix(bake.world_offsets) @ rot
    d = world[..., :, 1]
    out = np.empty_like(heads)
    for b, p in enumerate(parents):
        head = heads[:, b] if p < 0 else out[:, p]
        out[:, b] = head + BONE * d[:, b]
    return out


def test_segment_closest_points_and_push_out():
    # closest point of a segment: the clamped projection (Ericson 2005, sec. 5.1.2)
    p = np.array([[0.5, 1.0, 0.0], [-1.0, 0.2, 0.0], [3.0, 0.0, 0.0]])
    near = closest_on_segments(p, np.zeros((3, 1, 3)), np.tile([[2.0, 0.0, 0.0]], (3, 1, 1)))[:, 0]
    assert np.allclose(near, [[0.5, 0, 0], [0, 0, 0], [2.0, 0, 0]])
    pushed = push_outside(np.array([[0.5, 0.1, 0.0], [0.5, 0.0, -0.2]]), np.zeros((2, 1, 3)),
                          np.tile([[2.0, 0.0, 0.0]], (2, 1, 1)), np.array([0.3]), -0.1, np.array([0.0, 0.0, 1.0]))
    assert np.allclose(pushed[0], [0.5, 0.3, 0.0])
    assert pushed[1][2] == pytest.approx(-0.1) or np.linalg.norm(pushed[1] - [0.5, 0, 0]) >= 0.3 - 1e-12


@pytest.mark.parametrize("obstacle", ["ground", "sphere"])
def test_dropped_chain_stays_outside_within_a_millimetre(obstacle):
    fps = 24.0
    t = np.arange(0.0, 1.6, 1.0 / fps)
    heads, rot, parents = level_chain(t)
    params = chain_preset("hair")
    free = tips(bake_chains(t, heads, rot, parents, params), heads, rot, parents)
    if obstacle == "ground":
        ground, starts, radii = -0.12, np.zeros((len(t), 0, 3)), None
        depth = lambda p: ground - p[..., 2]  # noqa: E731
    else:
        ground = None
        centre = np.array([0.0, 0.22, -0.2])
        starts, radii = np.broadcast_to(centre, (len(t), 1, 3)), [0.07]
        depth = lambda p: 0.07 - np.linalg.norm(p - centre, axis=-1)  # noqa: E731
    assert depth(free).max() > 0.02  # without the body the chain goes well into it
    colliders = Colliders(starts=starts, ends=starts, radii=radii, ground=ground, lengths=[BONE] * 3)
    held = tips(bake_chains(t, heads, rot, parents, params, colliders=colliders), heads, rot, parents)
    assert depth(held).max() <= 1e-3  # every frame, every tip (issue: within 1 mm)
    assert np.all(np.isfinite(held))


def test_energy_never_grows_in_a_contact():
    # A frictionless pendulum (spring 0, no damping) shoved sideways swings into a ball on
    # its path: its energy m (v^2 / 2 + g z) (textbook mechanics), by differences of the
    # baked bob, must never grow past its value once the shove is over (within the 2 %
    # the differences cost at 240 samples per second).
    length, fps = 0.5, 240.0
    t = np.arange(0.0, 3.0, 1.0 / fps)
    shove = np.clip((t - 0.1) / 0.3, 0.0, 1.0)
    heads = np.zeros((len(t), 1, 3))
    heads[:, 0, 0] = 0.25 * shove**3 * (10 - 15 * shove + 6 * shove**2)
    down = np.array([[1.0, 0.0, 0.0], [0.0, 0.0, 1.0], [0.0, -1.0, 0.0]])  # columns: +Y points down
    rot = np.broadcast_to(down, (len(t), 1, 3, 3)).copy()
    pendulum = LinkCoefficients(spring_rate=0.0, damping_rate=0.0, gravity_gain=1.0 / length, angle_limit=math.pi)
    centre = np.array([-0.05, 0.0, -0.55])
    ball = np.broadcast_to(centre, (len(t), 1, 3))
    bake = bake_chains(t, heads, rot, [-1], pendulum,
                       colliders=Colliders(starts=ball, ends=ball, radii=[0.12], lengths=[length]))
    d = (rotvec_to_matrix(bake.world_offsets) @ rot)[:, 0, :, 1]
    bob = heads[:, 0] + length * d
    assert (np.linalg.norm(bob - centre, axis=-1) < 0.12 + 1e-3).any()  # it does touch the ball
    speed = np.gradient(bob, t, axis=0)
    energy = 0.5 * np.sum(speed**2, axis=-1) + G0 * bob[:, 2]
    after = t > 0.45
    reference = energy[np.argmax(after)] - G0 * (-length)
    assert np.max(energy[after] - energy[np.argmax(after)]) <= 0.02 * reference
