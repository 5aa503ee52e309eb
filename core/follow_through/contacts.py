"""Keeping chains out of the body and above the ground.

The body is a set of capsules (a segment and a radius: head, neck, torso, pelvis,
limbs) that move with the animation, and the ground a plane square to gravity. Each
sweep of the integrator holds every bone's tip outside them: a tip found inside is
moved to the nearest point of the surface and its bone turned about its own head to
reach it, root to tip, so the chain slides along the surface. Like the angle limit
this is a hold on the path, not an impact: the rate is not stopped, and the path
only ever loses the part of the motion that went into the body, so a contact never
adds energy.

The geometry is the baked pose as it plays: a chain's first bone keeps its animated
head, and every other bone's head rides on its parent's simulated rotation (the
animated offset from the parent's head, turned by the parent's offset), as the rig
carries it. The dynamics stay single-link (:mod:`.integrator`); only the hold sees
the moved heads. Every operation is one array pass per chain level and capsule, so
the cost grows as bones x frames x capsules.

References
----------
Ericson, C. 2005, "Real-Time Collision Detection", Morgan Kaufmann, sec. 5.1.2
(closest point on a segment) and 4.5 (capsules).
"""

from dataclasses import dataclass

import numpy as np

from ..base.errors import InvalidGoalError
from ..base.rotation_vectors import quaternion_multiply, quaternion_to_rotvec, rotate, rotvec_to_quaternion
from .samples import midpoint_values

__all__ = ["Colliders", "closest_on_segments", "contact_arrays", "contact_nodes", "contact_part", "hold_outside",
           "push_outside"]

#: Most rounds of turning a bone so its tip leaves the surface it is deepest inside (the
#: turn is exact for that surface; a tip then inside another one is looked at again:
#: about three rounds per chain level on a dropped chain among twelve capsules).
_ROUNDS = 64
#: A tip this close to the surface [m] counts as outside (far below what shows).
_REACHED = 1e-6
#: Angle step [rad] (0.5 deg) and directions per cone of the search that clears a tip caught
#: between two surfaces.
_CLEAR_STEP = np.radians(0.5)
_CLEAR_AZIMUTHS = 36
#: Halvings of the last step along the chosen direction (the turn to about 1e-6 rad).
_CLEAR_BISECTIONS = 14


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


def contact_arrays(colliders, frames, bones, substeps, g_ref):
    """Checked collider arrays for a whole bake, or None without colliders."""
    if colliders is None:
        return None
    if not isinstance(colliders, Colliders):
        raise InvalidGoalError(f"colliders must be Colliders, got {type(colliders).__name__}; build one with Colliders(...)")
    if substeps != 1:
        raise InvalidGoalError(f"body contact is held at the frames and halfway between them, so it needs substeps 1, got {substeps}")
    starts, ends, radii, ground, lengths = colliders.checked(frames, bones)
    gnorm = float(np.linalg.norm(g_ref))
    up = -g_ref / gnorm if gnorm > 0.0 else np.array([0.0, 0.0, 1.0])
    return {"starts": starts, "ends": ends, "radii": radii, "ground": ground, "up": up, "lengths": lengths}


def contact_nodes(contact, lo, hi, slots, times, heads, directions, cyclic):
    """What :func:`hold_outside` needs for samples ``lo:hi``, at the frames then halfway between.

    ``heads`` and ``directions`` (F, B, 3) are the segment's animated bone heads [m] and
    unit directions; capsules are linear between samples, heads and directions follow
    the drive's midpoints (:func:`.samples.midpoint_values`).
    """
    parents = slots.parents
    levers = np.where((parents >= 0)[None, :, None], heads - heads[:, np.maximum(parents, 0)], 0.0)
    out = {name: contact[name] for name in ("radii", "ground", "up")}
    for name in ("starts", "ends"):
        seg = contact[name][lo:hi]
        out[name] = np.concatenate([seg, 0.5 * (seg[:-1] + seg[1:])])
    for name, value in (("heads", heads), ("levers", levers), ("d0", directions)):
        nodes = slots.to_slots(np.concatenate([value, midpoint_values(times, value, cyclic)]))
        out[name] = nodes
    out["d0"] = out["d0"] / np.maximum(np.linalg.norm(out["d0"], axis=-1, keepdims=True), 1e-12)
    out["lengths"] = slots.to_slots(contact["lengths"][:, None])[:, 0]
    parent_slot = np.full(slots.trees * slots.size, -1)
    parent_slot[slots.slot[parents >= 0]] = slots.slot[parents[parents >= 0]]
    depth = np.zeros(len(parents), dtype=int)
    node = parents.copy()
    while np.any(node >= 0):
        depth += node >= 0
        node = np.where(node >= 0, parents[np.maximum(node, 0)], -1)
    out["parent_slot"] = parent_slot
    out["levels"] = [np.sort(slots.slot[depth == level]) for level in range(int(depth.max(initial=-1)) + 1)]
    return out


#: What :func:`contact_nodes` gives at every node (axis 0, frames then middles); the rest is per bone.
NODE_KEYS = ("starts", "ends", "heads", "levers", "d0")


def contact_part(contact, cut):
    """``contact`` from :func:`contact_nodes` with ``cut`` applied to each value given at every node
    (a frame, the first frames, a window's nodes); the per-bone values are shared."""
    return {name: cut(value) if name in NODE_KEYS else value for name, value in contact.items()}


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
            # a point on the segment itself leaves along "up"
            fallback = np.broadcast_to(up, away.shape)
            unit = np.where((dist > 1e-12)[..., None], away / np.where(dist > 1e-12, dist, 1.0)[..., None], fallback)
            out = np.where(inside[..., None], near + radii[k] * unit, out)
    if ground is not None:
        below = ground - out @ up
        out = out + np.maximum(below, 0.0)[..., None] * up
    return out


def _turn_towards(now, want):
    """Rotation vectors (..., 3) [rad] taking unit directions ``now`` onto ``want`` (shortest arc)."""
    turn = np.cross(now, want)
    sine = np.linalg.norm(turn, axis=-1, keepdims=True)
    angle = np.arctan2(sine, np.sum(now * want, axis=-1, keepdims=True))
    return np.where(sine > 1e-15, turn / np.where(sine > 1e-15, sine, 1.0) * angle, 0.0)


def hold_outside(psi, contact, clear_corners=False):
    """Offsets (3, nodes, N) with every bone's tip held outside the capsules and above the
    ground, bones turned about their heads, root to tip.

    With ``clear_corners``, a tip still inside after :data:`_ROUNDS` (caught where two surfaces
    meet) is turned by a least angle that clears every surface at once (:func:`_turn_clear`).
    The integrator does this on the path it returns, not inside its sweeps: fed back into the
    sweeps, the jump from one side of a corner to the other kept them from converging.

    ``contact`` is :func:`contact_nodes`' dict: the animated ``d0``, ``heads`` and
    ``levers`` (nodes, N, 3), the capsules at the nodes (``starts``, ``ends`` (nodes, K, 3)),
    ``radii``, ``ground``, ``up`` (3,), the slots' bone ``lengths`` (N,), ``parent_slot``
    and the slots of each depth (``levels``, roots first).
    """
    offsets = psi.transpose(1, 2, 0).copy()  # (nodes, N, 3)
    d0, levers = contact["d0"], contact["levers"]
    heads = contact["heads"].copy()
    for depth, level in enumerate(contact["levels"]):
        if depth:
            parent = contact["parent_slot"][level]
            heads[:, level] = heads[:, parent] + rotate(offsets[:, parent], levers[:, level])
        node, bone = np.meshgrid(np.arange(len(offsets)), level, indexing="ij")
        node, bone = node.ravel(), bone.ravel()
        for _ in range(_ROUNDS):
            # only the tips still inside are looked at again
            node, bone = _turn_out(offsets, heads, d0, contact, node, bone)
            if not node.size:
                break
        if node.size and clear_corners:  # caught between two surfaces (a concave corner)
            _turn_clear(offsets, heads, d0, contact, node, bone)
    return offsets.transpose(2, 0, 1)


def _surface_targets(tip, head, length, contact, node):
    """Where each tip (M, 3) goes, and how deep it is inside [m] (<= 0 outside).

    The surface it is deepest inside is taken: a capsule as the sphere about its nearest
    segment point, or the ground plane. The target is where the sphere of the bone's
    length about its head meets that surface (the circle's point nearest the tip), else
    the nearest surface point.
    """
    up, ground = contact["up"], contact["ground"]
    count = len(contact["radii"])
    depth, centre, rad = np.full(len(tip), -np.inf), np.zeros_like(tip), np.zeros(len(tip))
    if count:
        near = closest_on_segments(tip, contact["starts"][node], contact["ends"][node])  # (M, K, 3)
        inside = contact["radii"] - np.linalg.norm(tip[:, None] - near, axis=-1)
        pick = np.argmax(inside, axis=-1)
        rows = np.arange(len(tip))
        depth, centre, rad = inside[rows, pick], near[rows, pick], contact["radii"][pick]
    away = tip - centre
    span = np.linalg.norm(away, axis=-1)
    fallback = np.where((span > 1e-12)[:, None], away / np.maximum(span, 1e-12)[:, None], up)
    nearest = centre + rad[:, None] * fallback
    to_centre = centre - head
    dist = np.linalg.norm(to_centre, axis=-1)
    axis = to_centre / np.maximum(dist, 1e-12)[:, None]
    along = (length * length - rad * rad + dist * dist) / (2.0 * np.maximum(dist, 1e-12))
    usable = dist > 1e-12
    if ground is not None:  # the ground where it is deeper: the circle at ground height
        below = ground - tip @ up
        lower = below > depth
        axis[lower], along[lower], depth[lower], usable[lower] = up, (ground - head @ up)[lower], below[lower], True
        nearest[lower] = tip[lower] + below[lower, None] * up
    rel = tip - head
    perp = rel - np.sum(rel * axis, axis=-1, keepdims=True) * axis
    side = np.linalg.norm(perp, axis=-1)
    exact = usable & (np.abs(along) < length) & (side > 1e-12)
    circle = head + along[:, None] * axis + (np.sqrt(np.maximum(length * length - along * along, 0.0))
                                             / np.maximum(side, 1e-300))[:, None] * perp
    return np.where(exact[:, None], circle, nearest), depth


def _depth_inside(tips, contact, node):
    """How deep tips (M, C, 3) are inside any capsule at their nodes (M,) or below the ground [m]."""
    depth = np.full(tips.shape[:2], -np.inf)
    if len(contact["radii"]):
        starts, ends = contact["starts"][node][:, None], contact["ends"][node][:, None]  # (M, 1, K, 3)
        near = closest_on_segments(tips, starts, ends)  # (M, C, K, 3)
        depth = np.max(contact["radii"] - np.linalg.norm(tips[:, :, None] - near, axis=-1), axis=-1)
    if contact["ground"] is not None:
        depth = np.maximum(depth, contact["ground"] - tips @ contact["up"])
    return depth


def _turn_clear(offsets, heads, d0, contact, node, bone):
    """Turn bones ``(node, bone)`` whose tips stay inside after :data:`_ROUNDS` by a least angle
    that puts the tip outside every surface at once, in place.

    Turning out of the deepest surface alone can swing a tip between two that meet at a concave
    corner (the neck and the torso), each turn putting it back into the other. The tip's reachable
    places are the sphere of the bone's length about its head: cones of growing angle about the
    bone are searched; in the first cone with directions outside everything, the one nearest where
    the deepest surface alone would send the tip gives the azimuth, and the least angle along it
    that clears is found by bisection. A tip no direction clears keeps its last turn.
    """
    now = rotate(offsets[node, bone], d0[node, bone])
    length = contact["lengths"][bone]
    target, _ = _surface_targets(heads[node, bone] + length[:, None] * now, heads[node, bone], length, contact, node)
    want = target - heads[node, bone]
    want /= np.maximum(np.linalg.norm(want, axis=-1, keepdims=True), 1e-12)
    side = np.cross(now, np.where(np.abs(now[:, :1]) < 0.9, [[1.0, 0.0, 0.0]], [[0.0, 1.0, 0.0]]))
    side /= np.linalg.norm(side, axis=-1, keepdims=True)
    other = np.cross(now, side)
    angle = np.arange(1, int(np.pi / _CLEAR_STEP) + 1) * _CLEAR_STEP  # (A,)
    around = np.linspace(0.0, 2.0 * np.pi, _CLEAR_AZIMUTHS, endpoint=False)  # (Z,)
    ring = np.cos(around)[:, None, None] * side[None] + np.sin(around)[:, None, None] * other[None]  # (Z, M, 3)
    chosen, found = now.copy(), np.zeros(len(node), dtype=bool)
    for a in angle:  # smallest angle first
        todo = np.flatnonzero(~found)
        if not todo.size:
            break
        dirs = (np.cos(a) * now[todo][None] + np.sin(a) * ring[:, todo]).transpose(1, 0, 2)  # (m, Z, 3)
        depth = _depth_inside(heads[node[todo], bone[todo]][:, None] + length[todo, None, None] * dirs, contact, node[todo])
        # of the clearing directions, the one nearest where the deepest surface alone would send the tip
        # (on neighbouring frames the same side of the corner, so the tip does not jump across it)
        score = np.where(depth <= 0.0, np.einsum("mzc,mc->mz", dirs, want[todo]), -np.inf)
        best = np.argmax(score, axis=1)
        clear = np.isfinite(score[np.arange(todo.size), best])
        rows = todo[clear]
        if rows.size:  # the least angle along that azimuth that clears, by bisection within the last step
            azimuth = ring[best[clear], rows]
            lo, hi = np.full(rows.size, a - _CLEAR_STEP), np.full(rows.size, a)
            for _ in range(_CLEAR_BISECTIONS):
                mid = 0.5 * (lo + hi)
                trial = np.cos(mid)[:, None] * now[rows] + np.sin(mid)[:, None] * azimuth
                ok = _depth_inside(heads[node[rows], bone[rows]][:, None] + length[rows, None, None] * trial[:, None],
                                   contact, node[rows])[:, 0] <= 0.0
                lo, hi = np.where(ok, lo, mid), np.where(ok, mid, hi)
            chosen[rows] = np.cos(hi)[:, None] * now[rows] + np.sin(hi)[:, None] * azimuth
            found[rows] = True
    turn = quaternion_multiply(rotvec_to_quaternion(_turn_towards(now[found], chosen[found])),
                               rotvec_to_quaternion(offsets[node[found], bone[found]]))
    offsets[node[found], bone[found]] = quaternion_to_rotvec(turn)


def _turn_out(offsets, heads, d0, contact, node, bone):
    """Turn bones ``(node, bone)`` whose tips are inside about their heads onto the surface
    (:func:`_surface_targets`), in place; the pairs turned (to look at again)."""
    now = rotate(offsets[node, bone], d0[node, bone])
    length = contact["lengths"][bone]
    tip = heads[node, bone] + length[:, None] * now
    target, depth = _surface_targets(tip, heads[node, bone], length, contact, node)
    inside = depth > _REACHED
    if not np.any(inside):
        return node[:0], bone[:0]
    node, bone, now = node[inside], bone[inside], now[inside]
    want = target[inside] - heads[node, bone]
    want /= np.maximum(np.linalg.norm(want, axis=-1, keepdims=True), 1e-12)
    q = quaternion_multiply(rotvec_to_quaternion(_turn_towards(now, want)), rotvec_to_quaternion(offsets[node, bone]))
    offsets[node, bone] = quaternion_to_rotvec(q)
    return node, bone
