"""Keeping chains out of the body and above the ground.

The body is a set of capsules (a segment and a radius: head, neck, torso, pelvis,
limbs) that move with the animation, and the ground a plane square to gravity. Each
sweep of the integrator holds every bone's tip outside them: a tip found inside is
moved to the nearest point of the surface and its bone turned about its own head to
reach it, root to tip, so the chain slides along the surface. Like the angle limit
this is a hold on the path, not an impact: the rate is not stopped, and the path
only ever loses the part of the motion that went into the body, so a contact never
adds energy.

References
----------
Ericson, C. 2005, "Real-Time Collision Detection", Morgan Kaufmann, sec. 5.1.2
(closest point on a segment) and 4.5 (capsules).
"""

from dataclasses import dataclass

import numpy as np

from ..base.errors import InvalidGoalError
from ..base.rotation_vectors import quaternion_multiply, quaternion_to_rotvec, rotvec_to_quaternion
from .chain_mechanics import turned

__all__ = ["Colliders", "closest_on_segments", "push_outside", "hold_outside"]

#: Rounds of pushing a tip out and turning its bone towards it (a tip whose head lies
#: close to a surface needs a second look once turned).
_ROUNDS = 8


@dataclass(frozen=True)
class Colliders:
    """What the chains must stay out of.

    Parameters
    ----------
    starts, ends : array_like, shape (F, K, 3)
        World ends of each capsule's segment at every sample [m] (equal for a sphere).
    radii : array_like, shape (K,)
        Capsule radii [m], > 0.
    ground : float or None
        Height of the ground plane along "up" (against gravity) [m]; None for no ground.
    lengths : array_like, shape (B,)
        Length of every simulated bone [m]: its tip is ``head + length * direction``.
    """

    starts: object = None
    ends: object = None
    radii: object = None
    ground: object = None
    lengths: object = None

    def checked(self, frames, bones):
        """Arrays ``(starts, ends, radii, ground, lengths)``, refusing bad shapes or values."""
        count = 0 if self.radii is None else len(np.atleast_1d(self.radii))
        starts = np.zeros((frames, 0, 3)) if count == 0 else np.asarray(self.starts, dtype=float)
        ends = np.zeros((frames, 0, 3)) if count == 0 else np.asarray(self.ends, dtype=float)
        radii = np.zeros(0) if count == 0 else np.asarray(self.radii, dtype=float).reshape(-1)
        for name, arr in (("capsule starts", starts), ("capsule ends", ends)):
            if arr.shape != (frames, count, 3) or not np.all(np.isfinite(arr)):
                raise InvalidGoalError(f"{name} must be finite, one per capsule and sample ({frames}, {count}, 3), "
                                       f"got shape {arr.shape}; read the body once per sampled frame")
        if np.any(~np.isfinite(radii)) or np.any(radii <= 0.0):
            raise InvalidGoalError(f"capsule radii must be positive, got {radii.tolist()}; give each body part its thickness, e.g. 0.09 m for a head")
        lengths = np.asarray(self.lengths if self.lengths is not None else np.zeros(bones), dtype=float).reshape(-1)
        if lengths.shape != (bones,) or np.any(~np.isfinite(lengths)) or np.any(lengths < 0.0):
            raise InvalidGoalError(f"bone lengths must be {bones} lengths of 0 m or more, got {lengths.tolist()}")
        ground = None if self.ground is None else float(self.ground)
        if ground is not None and not np.isfinite(ground):
            raise InvalidGoalError(f"ground height must be a finite number of metres, got {self.ground!r}")
        return starts, ends, radii, ground, lengths


def closest_on_segments(points, starts, ends):
    """Closest points (..., K, 3) on segments ``starts``-``ends`` (..., K, 3) to ``points`` (..., 3)."""
    axis = ends - starts
    span = np.sum(axis * axis, axis=-1)
    along = np.sum((points[..., None, :] - starts) * axis, axis=-1) / np.where(span > 0.0, span, 1.0)
    return starts + np.clip(along, 0.0, 1.0)[..., None] * axis


def push_outside(points, starts, ends, radii, ground, up):
    """``points`` (..., 3) moved to the nearest surface point where they are inside a
    capsule (``starts``, ``ends`` (..., K, 3), ``radii`` (K,)) or below the ground."""
    out = np.array(points, dtype=float, copy=True)
    for k in range(len(radii)):
        near = closest_on_segments(out, starts[..., k:k + 1, :], ends[..., k:k + 1, :])[..., 0, :]
        away = out - near
        dist = np.linalg.norm(away, axis=-1)
        inside = dist < radii[k]
        if np.any(inside):
            # a point on the segment itself leaves along the segment's normal nearest "up"
            fallback = np.broadcast_to(up, away.shape)
            unit = np.where((dist > 1e-12)[..., None], away / np.where(dist > 1e-12, dist, 1.0)[..., None], fallback)
            out = np.where(inside[..., None], near + radii[k] * unit, out)
    if ground is not None:
        below = ground - out @ up
        out = out + np.maximum(below, 0.0)[..., None] * up
    return out


def hold_outside(psi, slots, forcing, contact):
    """Offsets (3, nodes, N) with every bone's tip held outside the capsules and above the
    ground, bones turned about their heads, root to tip.

    ``forcing`` holds the animated ``d0``, ``levers`` and ``heads`` (3, nodes, N);
    ``contact`` the capsules at the nodes (``starts``, ``ends`` (nodes, K, 3)), ``radii``,
    ``ground``, ``up`` (3,) and the slots' bone ``lengths`` (N,).
    """
    psi = psi.copy()
    d0, levers = forcing["d0"], forcing["levers"]
    heads = forcing["heads"].copy()
    roots = np.nonzero(slots.parent_slot < 0)[0]
    for level in [roots] + list(slots.levels):
        at = (slice(None), slice(None), level)
        if level is not roots:
            parent = slots.parent_slot[level]
            lever = levers[at]
            heads[at] = heads[:, :, parent] + lever + turned(*psi[:, :, parent], lever)
        length = contact["lengths"][level]
        for _ in range(_ROUNDS):
            d = d0[at] + turned(*psi[at], d0[at])
            tip = (heads[at] + length * d).transpose(1, 2, 0)  # (nodes, nb, 3)
            moved = push_outside(tip, contact["starts"][:, None], contact["ends"][:, None], contact["radii"],
                                 contact["ground"], contact["up"])
            shift = np.linalg.norm(moved - tip, axis=-1)
            if not np.any(shift > 0.0):
                break
            want = moved - heads[at].transpose(1, 2, 0)
            want /= np.maximum(np.linalg.norm(want, axis=-1, keepdims=True), 1e-12)
            now = d.transpose(1, 2, 0)
            turn = np.cross(now, want)
            sine = np.linalg.norm(turn, axis=-1, keepdims=True)
            angle = np.arctan2(sine, np.sum(now * want, axis=-1, keepdims=True))
            rotvec = np.where(sine > 1e-15, turn / np.where(sine > 1e-15, sine, 1.0) * angle, 0.0)
            rotvec = np.where((shift > 0.0)[..., None], rotvec, 0.0)
            q = quaternion_multiply(rotvec_to_quaternion(rotvec), rotvec_to_quaternion(psi[at].transpose(1, 2, 0)))
            psi[at] = quaternion_to_rotvec(q).transpose(2, 0, 1)
    return psi
