"""Bones to body segments, and the whole-body centre of mass (COM) over frames.

Rig data in
-----------
A rig is plain data (:class:`RigData`): bone names, parent indices (-1 for none) and the
rest-pose head and tail of every bone [m], all in one space (armature or world), plus
that space's up axis and the character's left. In Blender (character facing -Y, left
on +X, Z up; the defaults here)::

    bones = arm.data.bones
    names = [b.name for b in bones]
    parents = [names.index(b.parent.name) if b.parent else -1 for b in bones]
    heads = np.empty(3 * n); bones.foreach_get("head_local", heads)   # (n, 3) after reshape
    tails = np.empty(3 * n); bones.foreach_get("tail_local", tails)

Pass deform bones only when a rig also has control bones; only the tree with the most
bones is read. Posed positions per frame are arrays ``heads, tails`` of shape
``(n_frames, n_bones, 3)`` in world space [m], bones in the same order as the rig:
either ``pose.bones.foreach_get("head"/"tail")`` per frame times ``matrix_world``, or the
pose matrices through :func:`bone_points_from_matrices`.

Landmarks
---------
A table (:mod:`.segment_tables`) places each segment between two landmarks (joints and
tips). :func:`map_by_topology` finds them from the tree alone: the highest leaf is the
head, the most lateral leaves are the hands, the lowest leaf on each side is a foot;
the legs meet at the pelvis, the arms at the chest. Names are never read, so renamed
or reordered bones map the same. :func:`map_by_hand` takes the landmarks written out.
Creatures give a mass per bone (:func:`mass_model_from_bone_masses`).
"""

from dataclasses import dataclass

import numpy as np

from ..base.errors import InvalidGoalError, InvalidTrajectoryError
from ..rig.landmarks import HOW_TO_MAP, Landmarks, RigData, map_by_hand, map_by_topology  # noqa: F401
from .segment_tables import SIDED_LANDMARKS, get_table


@dataclass(frozen=True, eq=False)
class MassModel:
    """Segments of a body as weights on bone heads and tails.

    Attributes
    ----------
    bone_names : tuple of str
    segment_names : tuple of str  e.g. ``"upper_arm.L"``
    groups : tuple of str  body part of each segment ("trunk", "head", "arms", "legs", ...)
    fractions : ndarray, shape (n_segments,)  mass shares, summing to 1 [-]
    weights : ndarray, shape (n_segments, 2 * n_bones)
        Segment COM = weights @ [heads; tails] (heads first).
    source : str  where the masses come from
    """

    bone_names: tuple
    segment_names: tuple
    groups: tuple
    fractions: np.ndarray
    weights: np.ndarray
    source: str

    def group_fraction(self, group):
        """Mass share of one body part [-] (0 when absent)."""
        return float(self.fractions[np.array(self.groups) == group].sum())


def mass_model(landmarks, table="de_leva_male"):
    """Mass model of a humanoid from its landmarks and a segment table.

    Fractions are divided by the table's total (0.9999 for de Leva's female table) so
    the whole-body COM is a weighted mean.
    """
    t = get_table(table) if isinstance(table, str) else table
    n = len(landmarks.bone_names)
    names, groups, fracs, rows, missing = [], [], [], [], []
    for e in t.entries:
        for sfx in ((".L", ".R") if e.bilateral else ("",)):
            keys = [k + sfx if k in SIDED_LANDMARKS else k for k in (e.start, e.end)]
            missing += [k for k in keys if k not in landmarks.points]
            if missing:
                continue
            row = np.zeros(2 * n)
            for key, share in zip(keys, (1.0 - e.com_fraction, e.com_fraction)):
                pairs = landmarks.points[key]
                for b, end in pairs:
                    row[end * n + b] += share / len(pairs)
            names.append(e.name + sfx)
            groups.append(e.group)
            fracs.append(e.mass_fraction)
            rows.append(row)
    if missing:
        raise InvalidGoalError(f"table {t.key!r} needs landmarks {', '.join(sorted(set(missing)))} "
                               f"that the mapping lacks; add them to the mapping")
    f = np.array(fracs)
    return MassModel(tuple(landmarks.bone_names), tuple(names), tuple(groups), f / f.sum(),
                     np.array(rows), t.source)


def mass_model_from_bone_masses(rig, masses, com_fractions=0.5, groups=None):
    """Mass model of any rig (creatures) from a mass per bone.

    Parameters
    ----------
    rig : RigData
    masses : array_like, shape (n_bones,)  mass of each bone [kg] (or any unit: only ratios count)
    com_fractions : float or array_like, shape (n_bones,)  COM from head (0) to tail (1) [-]
    groups : sequence of str, optional  body part of each bone; name the torso "trunk"
        for the flight report to split limbs from it. Default "body".
    """
    n = len(rig.names)
    m = np.asarray(masses, float).reshape(-1)
    f = np.broadcast_to(np.asarray(com_fractions, float), (n,)) if m.size == n else None
    if f is None or not (np.isfinite(m).all() and np.isfinite(f).all()) or (m < 0).any() or m.sum() <= 0:
        raise InvalidGoalError(f"give {n} finite masses of 0 or more with a positive sum, and COM "
                               f"fractions in [0, 1]; got {m.size} masses summing to {np.nansum(m):g}")
    if ((f < 0) | (f > 1)).any():
        raise InvalidGoalError(f"COM fractions must lie in [0, 1] (head to tail), got {f.min():g}..{f.max():g}")
    g = tuple(groups) if groups is not None else ("body",) * n
    if len(g) != n:
        raise InvalidGoalError(f"give one group per bone: {n} bones, {len(g)} groups")
    keep = np.flatnonzero(m > 0)
    w = np.zeros((keep.size, 2 * n))
    w[np.arange(keep.size), keep] = 1.0 - f[keep]
    w[np.arange(keep.size), n + keep] = f[keep]
    return MassModel(rig.names, tuple(rig.names[i] for i in keep), tuple(g[i] for i in keep),
                     m[keep] / m.sum(), w, "per-bone masses")


def _points(model, heads, tails):
    h, t = np.asarray(heads, float), np.asarray(tails, float)
    n = len(model.bone_names)
    if h.shape != t.shape or h.ndim not in (2, 3) or h.shape[-2:] != (n, 3):
        raise InvalidTrajectoryError(f"heads and tails must both have shape (n_frames, {n}, 3) "
                                     f"for this rig's {n} bones, got {h.shape} and {t.shape}")
    p = np.concatenate([h, t], axis=-2)
    return p if p.ndim == 3 else p[None]


def segment_coms(model, heads, tails):
    """COM of every segment [m], shape (n_frames, n_segments, 3).

    ``heads``, ``tails``: posed bone positions [m], shape (n_frames, n_bones, 3).
    """
    return np.einsum("sj,fjk->fsk", model.weights, _points(model, heads, tails))


def whole_body_com(model, heads, tails):
    """Whole-body COM [m], shape (n_frames, 3), from posed bone positions (n_frames, n_bones, 3)."""
    return np.einsum("j,fjk->fk", model.fractions @ model.weights, _points(model, heads, tails))


def group_coms(model, heads, tails):
    """Body part -> (mass share [-], COM [m] of shape (n_frames, 3))."""
    seg = segment_coms(model, heads, tails)
    out = {}
    for g in dict.fromkeys(model.groups):
        sel = np.array(model.groups) == g
        share = model.fractions[sel].sum()
        out[g] = (float(share), np.einsum("s,fsk->fk", model.fractions[sel] / share, seg[:, sel]))
    return out


def bone_points_from_matrices(matrices, lengths, world=None):
    """Posed heads and tails [m] from bone matrices, each of shape (n_frames, n_bones, 3).

    Parameters
    ----------
    matrices : array_like, shape (n_frames, n_bones, 16) column-major, as
        ``pose.bones.foreach_get("matrix", buf)`` fills ``buf``, or (n_frames, n_bones, 4, 4)
        row-major (``np.array(pose_bone.matrix)``). Armature space; the bone's Y axis runs
        head to tail.
    lengths : array_like, shape (n_bones,)  rest lengths [m] (``bones.foreach_get("length")``)
    world : array_like, shape (4, 4) or (n_frames, 4, 4), optional
        The armature object's ``matrix_world`` (row-major), per frame if it moves.
    """
    a = np.asarray(matrices, float)
    if a.shape[-1] == 16:
        a = a.reshape(a.shape[:-1] + (4, 4)).swapaxes(-1, -2)
    if a.ndim == 3:
        a = a[None]
    length = np.asarray(lengths, float).reshape(-1)
    if a.ndim != 4 or a.shape[-2:] != (4, 4) or a.shape[1] != length.size:
        raise InvalidTrajectoryError(f"matrices must be (n_frames, n_bones, 16) or (n_frames, n_bones, 4, 4) "
                                     f"with one length per bone; got {np.shape(matrices)} and {length.size} lengths")
    heads = a[..., :3, 3]
    tails = heads + a[..., :3, 1] * length[None, :, None]
    if world is not None:
        w = np.asarray(world, float).reshape(-1, 4, 4)
        heads, tails = (np.einsum("fij,fbj->fbi", w[:, :3, :3], p) + w[:, None, :3, 3] for p in (heads, tails))
    return heads, tails
