"""Chains kept out of body capsules and above the ground (contact as a hold on the path)."""

import math

import numpy as np
import pytest

from leapwright.core.base.constants import STANDARD_GRAVITY
from leapwright.core.base.rotation_vectors import rotvec_to_matrix
from leapwright.core.base.errors import InvalidGoalError
from leapwright.core.follow_through.chains import BakeOptions, Colliders, LinkCoefficients, bake_chains
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


def test_without_colliders_or_far_from_them_the_bake_is_unchanged():
    # Contact is a hold on the path: where no tip ever reaches a collider the bake must be
    # bit for bit the bake without colliders (and colliders=None is no colliders at all).
    t = np.arange(0.0, 1.6, 1.0 / 24.0)
    heads, rot, parents = level_chain(t)
    params = chain_preset("hair")
    plain = bake_chains(t, heads, rot, parents, params)
    none = bake_chains(t, heads, rot, parents, params, colliders=None)
    far_ball = np.broadcast_to([5.0, 5.0, 5.0], (len(t), 1, 3))
    far = bake_chains(t, heads, rot, parents, params,
                      colliders=Colliders(starts=far_ball, ends=far_ball + 0.3, radii=[0.2], ground=-50.0, lengths=[BONE] * 3))
    for bake in (none, far):
        for name in ("rotvecs", "quaternions", "world_offsets", "key_mask", "peak_offsets"):
            assert np.array_equal(getattr(plain, name), getattr(bake, name)), name
        assert bake.passes == plain.passes


def test_branching_chains_and_a_second_chain_all_stay_above_the_ground():
    # A root with two children side by side, and a separate two-bone chain, all level
    # and dropped as in a landing: every tip of every chain stays above the ground.
    t = np.arange(0.0, 1.6, 1.0 / 30.0)
    heads3, rot3, _ = level_chain(t)
    heads = np.concatenate([heads3[:, :2], heads3[:, 1:2], heads3[:, :2] + [0.3, 0.0, 0.0]], axis=1)
    rot = np.concatenate([rot3[:, :2], rot3[:, :1], rot3[:, :2]], axis=1)
    parents = [-1, 0, 0, -1, 3]
    # the child at index 2 points along +X from the root's tip
    rot[:, 2] = np.array([[0.0, 1.0, 0.0], [-1.0, 0.0, 0.0], [0.0, 0.0, 1.0]])
    ground = -0.1
    bake = bake_chains(t, heads, rot, parents, chain_preset("hair"),
                       colliders=Colliders(ground=ground, lengths=[BONE] * 5))
    d = (rotvec_to_matrix(bake.world_offsets) @ rot)[..., :, 1]
    tip = np.empty_like(heads)
    for b, p in enumerate(parents):
        # a child's head rides on its parent's simulated rotation (the rig carries it)
        head = heads[:, b] if p < 0 else heads[:, p] + np.einsum("fij,fj->fi", rotvec_to_matrix(bake.world_offsets[:, p]),
                                                                 heads[:, b] - heads[:, p])
        tip[:, b] = head + BONE * d[:, b]
    assert tip[..., 2].min() >= ground - 1e-3
    free = bake_chains(t, heads, rot, parents, chain_preset("hair"))
    assert np.max(np.abs(free.world_offsets - bake.world_offsets)) > 0.05  # the ground did hold them


def test_bad_colliders_are_refused_with_the_values():
    t = np.arange(0.0, 0.5, 1.0 / 24.0)
    heads, rot, parents = level_chain(t)
    params = chain_preset("hair")
    with pytest.raises(InvalidGoalError, match="substeps 1, got 2"):
        bake_chains(t, heads, rot, parents, params, options=BakeOptions(substeps=2),
                    colliders=Colliders(ground=0.0, lengths=[BONE] * 3))
    with pytest.raises(InvalidGoalError, match=r"capsule starts .*\(12, 1, 3\)"):
        bake_chains(t, heads, rot, parents, params,
                    colliders=Colliders(starts=np.zeros((3, 1, 3)), ends=np.zeros((3, 1, 3)), radii=[0.1], lengths=[BONE] * 3))
    with pytest.raises(InvalidGoalError, match=r"radii must be positive, got \[-0.1\]"):
        ball = np.zeros((len(t), 1, 3))
        bake_chains(t, heads, rot, parents, params, colliders=Colliders(starts=ball, ends=ball, radii=[-0.1], lengths=[BONE] * 3))
    with pytest.raises(InvalidGoalError, match="3 lengths"):
        bake_chains(t, heads, rot, parents, params, colliders=Colliders(ground=0.0, lengths=[BONE] * 2))
    with pytest.raises(InvalidGoalError, match="must be Colliders, got dict"):
        bake_chains(t, heads, rot, parents, params, colliders={"ground": 0.0})


@pytest.mark.parametrize("multi_link", [False, True], ids=["follows-parent", "pulls-on-parent"])
def test_a_tip_in_the_corner_of_two_capsules_is_turned_out_of_both(multi_link):
    # Two overlapping balls under a hanging bone, the crevice between them right below its head:
    # the rest tip is inside both (by 19 mm), and turning it out of the one it is deepest in puts it
    # into the other. Plain geometry decides (closest point on a segment, Ericson 2005 sec. 5.1.2):
    # every baked tip must be outside both balls within 1 mm, at every frame.
    fps = 24.0
    t = np.arange(0.0, 1.0, 1.0 / fps)
    length = 0.11
    head = np.array([0.0, 0.0, 1.0])
    heads = np.broadcast_to(head, (len(t), 1, 3)).copy()
    down = np.column_stack([[1.0, 0.0, 0.0], [0.0, 0.0, -1.0], [0.0, 1.0, 0.0]])  # +Y along -Z
    rot = np.broadcast_to(down, (len(t), 1, 3, 3)).copy()
    centres = head + np.array([[0.05, 0.0, -0.12], [-0.05, 0.0, -0.12]])
    radius = 0.07
    starts = np.broadcast_to(centres, (len(t), 2, 3)).copy()
    rest_tip = head + np.array([0.0, 0.0, -length])
    assert np.all(radius - np.linalg.norm(rest_tip - centres, axis=1) > 0.018)  # inside both at rest
    colliders = Colliders(starts, starts.copy(), np.full(2, radius), None, np.array([length]))
    bake = bake_chains(t, heads, rot, [-1], chain_preset("hair"), colliders=colliders,
                       options=BakeOptions(multi_link=multi_link))
    d = (rotvec_to_matrix(bake.world_offsets) @ rot)[:, 0, :, 1]
    tip = head + length * d
    gap = np.linalg.norm(tip[:, None] - centres[None], axis=-1) - radius
    assert gap.min() > -1e-3, gap.min()
    assert np.all(np.isfinite(bake.world_offsets))
