"""Where each simulated bone sits in the padded per-tree arrays, and the joint hold.

Bones are grouped into trees (independent chains), parents before children, each
tree padded to the same size so a whole bake steps as a few array passes. Walking
a tree is done one depth level at a time over all trees at once, so every
operation here costs in proportion to the bones (no bones x bones matrix).
"""

from dataclasses import dataclass

import numpy as np

__all__ = ["ChainSlots", "limit_joints"]


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
    parent_position : numpy.ndarray of int, shape (trees, size)
        Position of each slot's parent within its tree (0 where it has none).
    has_parent : numpy.ndarray of bool, shape (trees, size)
        Whether the slot holds a bone with a simulated parent.
    parent_slot : numpy.ndarray of int, shape (trees * size,)
        Flat slot of each slot's parent, -1 for chain roots and padding.
    levels : tuple of numpy.ndarray
        Flat slots of the bones at depth 1, 2, ... (a chain's first bone is depth 0).
    """

    parents: np.ndarray
    slot: np.ndarray
    trees: int
    size: int
    parent_position: np.ndarray
    has_parent: np.ndarray
    parent_slot: np.ndarray
    levels: tuple

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
        parent_position = np.zeros((trees, size), dtype=int)
        has_parent = np.zeros((trees, size), dtype=bool)
        parent_slot = np.full(trees * size, -1, dtype=int)
        child = np.nonzero(parents >= 0)[0]
        parent_position[tree_of[child], position[child]] = position[parents[child]]
        has_parent[tree_of[child], position[child]] = True
        parent_slot[slot[child]] = slot[parents[child]]
        levels = tuple(np.sort(slot[depth == level]) for level in range(1, int(depth.max(initial=0)) + 1))
        return cls(parents, slot, trees, size, parent_position, has_parent, parent_slot, levels)

    @property
    def depth(self):
        """Longest parent-to-child path in any tree (0 for lone bones)."""
        return len(self.levels)

    def to_slots(self, per_bone, fill=0.0):
        """Scatter (..., B, k) per-bone values into (..., trees * size, k) slots."""
        per_bone = np.asarray(per_bone, dtype=float)
        shape = per_bone.shape[:-2] + (self.trees * self.size,) + per_bone.shape[-1:]
        out = np.empty(shape)
        out[...] = fill
        out[..., self.slot, :] = per_bone
        return out

    def of_parents(self, values):
        """``values`` (..., slots) taken at each slot's parent, 0 where there is none."""
        out = np.zeros_like(values)
        for level in self.levels:
            out[..., level] = values[..., self.parent_slot[level]]
        return out

    def down_the_tree(self, own):
        """Each slot's ``own`` (..., slots) plus all its ancestors' (a sum from the root)."""
        total = np.array(own, dtype=float, copy=True)
        for level in self.levels:
            total[..., level] += total[..., self.parent_slot[level]]
        return total


def limit_joints(psi, slots, limit):
    """Offsets (3, nodes, trees * size), component-first, with every joint's bend
    (its offset relative to its parent's) held within ``limit`` (trees * size,) [rad]."""
    rel = psi - slots.of_parents(psi)
    angle2 = rel[0] * rel[0] + rel[1] * rel[1] + rel[2] * rel[2]
    over = angle2 > limit * limit
    if not np.any(over):
        return psi
    shrink = np.where(over, limit / np.sqrt(np.where(over, angle2, 1.0)) - 1.0, 0.0)
    # each joint pulled back moves itself and everything below it by the same rotation
    return psi + slots.down_the_tree(rel * shrink)
