"""The deform skeleton of a production rig: the bones that move the mesh, as one tree.

A production rig (Rigify's, for one) has hundreds of bones in layers: controls the
animator poses, mechanism bones that compute, and the deform bones that skin the mesh
and copy the mechanism. Only the deform bones say where the body is, but they are not
always one tree: a deform thigh may hang from a mechanism copy of the spine rather than
from the deform spine. Such a bone is joined to the deform bone that sits where its
nearest non-deform ancestor sits in the rest pose (its "twin": the same head and
tail), which is how layered rigs are built (common practice: each layer duplicates the
bones of the one below). Names are never read.
"""

import numpy as np

__all__ = ["deform_tree", "TWIN_TOLERANCE"]

#: Two bones are twins when their rest heads and tails agree to this fraction of the
#: rig's size (design choice: rig layers are exact copies, to float32 rounding).
TWIN_TOLERANCE = 1e-4


def deform_tree(parents, heads, tails, deform):
    """Indices and parents of the deform bones, joined into a tree through their twins.

    Parameters
    ----------
    parents : sequence of int  parent index of each bone of the whole rig, -1 for none
    heads, tails : array_like (n, 3)  rest positions [any length unit, one space]
    deform : sequence of bool  which bones deform the mesh

    Returns
    -------
    keep : ndarray of int  indices (into the whole rig) of the deform bones, in rig order
    tree_parents : ndarray of int  parent of each kept bone as an index into ``keep``, -1 for a root

    Notes
    -----
    Each deform bone's parent is its nearest deform ancestor, or else the deform twin of
    its nearest ancestor that has one; a deform bone whose ancestors have neither is a root.
    """
    heads, tails = np.asarray(heads, float).reshape(-1, 3), np.asarray(tails, float).reshape(-1, 3)
    deform = np.asarray(deform, bool)
    parents = np.asarray(parents, int)
    keep = np.flatnonzero(deform)
    where = {int(b): k for k, b in enumerate(keep)}
    size = float(np.ptp(np.vstack([heads, tails]), axis=0).max()) if len(heads) else 0.0
    tol = TWIN_TOLERANCE * max(size, 1e-12)
    ends = np.hstack([heads[keep], tails[keep]])  # (k, 6)

    def twin(i):
        gap = np.abs(ends - np.concatenate([heads[i], tails[i]])).max(axis=1)
        hits = np.flatnonzero(gap <= tol)
        return int(hits[0]) if hits.size else None

    out = np.full(len(keep), -1, dtype=int)
    for k, bone in enumerate(keep):
        j, steps = int(parents[bone]), 0
        while j >= 0 and steps <= len(parents):
            if deform[j]:
                out[k] = where[j]
                break
            t = twin(j)
            if t is not None and t != k and not _descends(out, t, k):
                out[k] = t
                break
            j, steps = int(parents[j]), steps + 1
    return keep, out


def _descends(tree_parents, a, b):
    """Whether ``a`` is ``b`` or already hangs below ``b`` (a join there would make a loop)."""
    seen = 0
    while a >= 0 and seen <= len(tree_parents):
        if a == b:
            return True
        a, seen = int(tree_parents[a]), seen + 1
    return False
