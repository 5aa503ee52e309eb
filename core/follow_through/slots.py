"""Where each bone of the chains sits in the padded per-chain arrays the integrator steps,
and the joints' bend held within its limit.
"""

import functools
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class ChainSlots:
    """Where each bone sits in the padded per-chain arrays the integrator steps.

    Parameters
    ----------
    parents : numpy.ndarray of int, shape (B,)
        Chain parent of each bone (index into the bones, -1 for a chain's first bone).
    slot : numpy.ndarray of int, shape (B,)
        Flat slot ``tree * size + position`` of each bone.
    trees, size : int
        Number of independent chains (trees) and bones per padded tree.
    parent_matrix : numpy.ndarray, shape (trees, size, size)
        ``P[t, i, j] = 1`` when slot ``j`` is the parent of slot ``i``.
    path_matrix : numpy.ndarray, shape (trees, size, size)
        ``(I - P)^-1``: sums a bone's own and its ancestors' joint rotations.
    """

    parents: np.ndarray
    slot: np.ndarray
    trees: int
    size: int
    parent_matrix: np.ndarray
    path_matrix: np.ndarray

    @functools.cached_property
    def joints(self):
        """:func:`joint_groups` of these slots, made once (a tuning re-bake keeps its slots)."""
        return joint_groups(self)

    @functools.cached_property
    def map_layout(self):
        """:func:`step_map_layout` of these slots, made once."""
        return step_map_layout(self)

    @classmethod
    def from_parents(cls, parents):
        """Group bones into trees, parents before children (parents already checked acyclic)."""
        parents = np.asarray(parents, dtype=int)
        count = len(parents)
        root = np.arange(count)
        for _ in range(count):  # pointer jumping: at most depth rounds
            up = np.where(parents[root] >= 0, parents[root], root)
            if np.array_equal(up, root):
                break
            root = up
        depth = np.zeros(count, dtype=int)
        node = parents.copy()
        while np.any(node >= 0):
            depth += node >= 0
            node = np.where(node >= 0, parents[np.maximum(node, 0)], -1)
        roots, tree_of = np.unique(root, return_inverse=True)
        trees = len(roots)
        order = np.lexsort((np.arange(count), depth, tree_of))
        position = np.empty(count, dtype=int)
        sizes = np.bincount(tree_of, minlength=trees)
        size = int(sizes.max()) if count else 0
        start = np.concatenate([[0], np.cumsum(sizes)[:-1]])
        position[order] = np.arange(count) - start[tree_of[order]]
        slot = tree_of * size + position
        pm = np.zeros((trees, size, size))
        child = np.nonzero(parents >= 0)[0]
        pm[tree_of[child], position[child], position[parents[child]]] = 1.0
        path = np.linalg.inv(np.eye(size) - pm)
        return cls(parents, slot, trees, size, pm, np.rint(path))

    @property
    def depth(self):
        """Longest parent-to-child path in any tree (0 for lone bones)."""
        return int(self.path_matrix.sum(axis=-1).max()) - 1 if self.size else 0

    def to_slots(self, per_bone, fill=0.0):
        """Scatter (..., B, k) per-bone values into (..., trees * size, k) slots."""
        per_bone = np.asarray(per_bone, dtype=float)
        shape = per_bone.shape[:-2] + (self.trees * self.size,) + per_bone.shape[-1:]
        out = np.empty(shape)
        out[...] = fill
        out[..., self.slot, :] = per_bone
        return out


def limit_joints(psi, joints, limit):
    """Offsets (3, nodes, trees * size), component-first, with every joint's bend
    (its offset relative to its parent's) held within ``limit`` (trees * size,) [rad];
    ``joints`` from :func:`joint_groups`.

    Linear in the bones: each tree's bends and path sums are products with its own
    size x size matrices, and trees of the same shape share one product.
    """
    rel = _tree_products(psi, joints, 0)
    angle2 = rel[0] * rel[0] + rel[1] * rel[1] + rel[2] * rel[2]
    over = angle2 > limit * limit
    if not np.any(over):
        return psi
    shrink = np.where(over, limit / np.sqrt(np.where(over, angle2, 1.0)) - 1.0, 0.0)
    # each joint pulled back moves itself and everything below it by the same rotation
    return psi + _tree_products(rel * shrink, joints, 1)


def _tree_products(values, joints, which):
    """``values`` (3, nodes, trees * size) times each tree's matrix ``which`` (0: bends, 1: path sums).

    Each group is one product of a tall matrix (numpy loops over a stack of small ones).
    """
    size = joints.size
    if len(joints.groups) == 1:  # every tree the same shape: one product
        flat = np.ascontiguousarray(values).reshape(-1, size)
        return (flat @ joints.matrices[0][which]).reshape(values.shape)
    per_tree = values.reshape(values.shape[:2] + (len(joints.group_of_tree), size))
    out = np.empty_like(per_tree)
    for group, matrices in zip(joints.groups, joints.matrices):
        rows = per_tree[:, :, group]
        out[:, :, group] = (np.ascontiguousarray(rows).reshape(-1, size) @ matrices[which]).reshape(rows.shape)
    return out.reshape(values.shape)


@dataclass(frozen=True)
class JointGroups:
    """Trees grouped by shape: each tree's group, and for each group its trees (a slice when it is
    every tree) and its ``((I - P)^T, path^T)`` size x size matrices; what :func:`limit_joints` multiplies."""

    size: int
    group_of_tree: np.ndarray
    groups: tuple
    matrices: tuple


def joint_groups(slots):
    """:class:`JointGroups` of ``slots``."""
    shapes, index = np.unique(slots.parent_matrix.reshape(slots.trees, -1), axis=0, return_inverse=True)
    index = np.asarray(index).reshape(-1)
    groups, matrices = [], []
    for g in range(len(shapes)):
        members = np.flatnonzero(index == g)
        groups.append(slice(None) if len(members) == slots.trees else members)
        t = members[0]
        matrices.append(((np.eye(slots.size) - slots.parent_matrix[t]).T, slots.path_matrix[t].T))
    return JointGroups(slots.size, index, tuple(groups), tuple(matrices))


def step_map_layout(slots):
    """Where the entries of every bone's rows go in a tree's ``[Phi + E0 | push]`` block.

    Returns flat indices into (trees, n, 2, 5n), the matching columns of the per-step source
    ``[phi | g0 | beta]``, and per tree position (trees, n) its parent's and whether it has one.
    """
    trees, n = slots.trees, slots.size
    cols = 5 * n
    t, i, r, s = np.meshgrid(np.arange(trees), np.arange(n), np.arange(2), np.arange(2), indexing="ij")
    row = ((t * n + i) * 2 + r) * cols
    own = (row + 2 * i + s).ravel()
    own_src = (((t * n + i) * 2 + r) * 2 + s).ravel()
    parent_pos = slots.parent_matrix.argmax(axis=-1)  # (trees, n)
    has_parent = slots.parent_matrix.sum(axis=-1) > 0
    linked = has_parent[t, i].ravel()
    link = (row + 2 * parent_pos[t, i] + s).ravel()[linked]
    link_src = (4 * trees * n + own_src)[linked]
    t, i, r, node = np.meshgrid(np.arange(trees), np.arange(n), np.arange(2), np.arange(3), indexing="ij")
    push = (((t * n + i) * 2 + r) * cols + 2 * n + node * n + i).ravel()
    push_src = (8 * trees * n + ((t * n + i) * 3 + node) * 2 + r).ravel()
    return np.concatenate([own, link, push]), np.concatenate([own_src, link_src, push_src]), parent_pos, has_parent
