"""The joint hold on a sweep's path, against a plain loop over the joints.

The hold scales every joint's bend (its offset less its parent's) back to the joint's
limit and moves every bone below it by the same correction. The reference here is
that definition written joint by joint in plain Python (no matrices), on trees of
different shapes in one bake: chains of 5, 3 and 4 bones and a tree that branches.
"""

import numpy as np

from leapwright.core.follow_through.slots import ChainSlots, joint_groups, limit_joints

PARENTS = [-1, 0, 1, 2, 3, -1, 5, 6, -1, 8, 9, 10, -1, 12, 13, 13]


def held_by_loop(psi_bones, parents, limit):
    """(3, nodes, bones) offsets held joint by joint: bends from the input, corrections summed down."""
    bones = len(parents)
    bend = psi_bones.copy()
    for b in range(bones):
        if parents[b] >= 0:
            bend[:, :, b] = psi_bones[:, :, b] - psi_bones[:, :, parents[b]]
    correction = np.zeros_like(psi_bones)
    for b in range(bones):
        size = np.sqrt((bend[:, :, b] ** 2).sum(axis=0))
        over = size > limit
        correction[:, :, b] = np.where(over, limit / np.where(over, size, 1.0) - 1.0, 0.0) * bend[:, :, b]
    held = psi_bones.copy()
    for b in range(bones):
        node = b
        while node >= 0:  # this joint's and every ancestor's correction reach bone b
            held[:, :, b] += correction[:, :, node]
            node = parents[node]
    return held


def test_the_hold_matches_the_joint_by_joint_definition_on_mixed_trees():
    slots = ChainSlots.from_parents(PARENTS)
    rng = np.random.default_rng(7)
    psi_bones = rng.normal(0.0, 0.4, (3, 40, len(PARENTS)))
    limit = np.radians(20.0)
    psi = np.zeros((3, 40, slots.trees * slots.size))
    psi[:, :, slots.slot] = psi_bones
    limits = np.full(slots.trees * slots.size, np.pi)
    limits[slots.slot] = limit
    held = limit_joints(psi, joint_groups(slots), limits)[:, :, slots.slot]
    expected = held_by_loop(psi_bones, PARENTS, limit)
    assert np.max(np.abs(held - expected)) < 1e-12
    # and the hold did act: some bends were past the limit before, none after
    bends = held.copy()
    for b, p in enumerate(PARENTS):
        if p >= 0:
            bends[:, :, b] = held[:, :, b] - held[:, :, p]
    assert np.sqrt((psi_bones ** 2).sum(axis=0)).max() > 2 * limit
    assert np.sqrt((bends ** 2).sum(axis=0)).max() <= limit * (1 + 1e-9)
