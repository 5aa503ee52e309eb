"""The joint hold walks the trees level by level: the same result as the dense
bones x bones matrices (numpy.linalg.inv of I - P, the path-sum matrix, as reference)."""

import numpy as np

from leapwright.core.follow_through.slots import ChainSlots, limit_joints


def dense_limit(psi, parents, slots, limit):
    """Reference: joint rotations by (I - P) and their sums down the tree by (I - P)^-1."""
    count = slots.trees * slots.size
    parent_of = np.zeros((count, count))
    for bone, par in enumerate(parents):
        if par >= 0:
            parent_of[slots.slot[bone], slots.slot[par]] = 1.0
    joint = np.eye(count) - parent_of
    path = np.linalg.inv(joint)
    rel = psi @ joint.T
    angle = np.linalg.norm(rel, axis=0)
    shrink = np.where(angle > limit, limit / np.where(angle > limit, angle, 1.0) - 1.0, 0.0)
    return psi + (rel * shrink) @ path.T


def test_level_walk_matches_dense_matrices():
    rng = np.random.default_rng(11)
    # two chains, one branching tree and a lone bone, bones listed out of order
    parents = [-1, 0, 1, -1, 3, 3, 5, -1, 2, 7, 9]
    slots = ChainSlots.from_parents(parents)
    psi = np.zeros((3, 17, slots.trees * slots.size))
    psi[:, :, slots.slot] = rng.normal(size=(3, 17, len(parents))) * 1.2
    limit = np.full(slots.trees * slots.size, np.pi)
    limit[slots.slot] = rng.uniform(0.2, 1.5, size=len(parents))
    got = limit_joints(psi, slots, limit)
    assert not np.allclose(got, psi)  # the limits really act
    assert np.allclose(got, dense_limit(psi, parents, slots, limit), rtol=0, atol=1e-12)
