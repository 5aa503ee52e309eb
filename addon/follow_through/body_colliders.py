"""The body and the ground that baked chains keep out of.

The body's capsules (:mod:`..core.rig.capsules`) are fitted to the rig's deform
skeleton through the body map the other passes read (:func:`..rig.skeleton.read_body`):
each part runs between two landmarks, and its radius is measured on the skin where a
mesh is skinned to the rig (the vertices weighted mostly to the part's bones), else
taken from the body's height and typical proportions; the panel says which. A radius
typed in the panel replaces the fitted one. The fit is kept per rig until its rest
pose or its meshes change, so a tuning re-bake does not fit again.

The bake samples the landmark bones with the chains, once per frame, and turns them
into per-frame capsules here; the ground is the lower of the take-off ground (the
rig's origin) and the jump panel's landing ground.
"""

import json
from dataclasses import dataclass

import numpy as np

from ..core.rig.capsules import BODY_PARTS, capsule_segments, chain_radii, proportional_radius, skin_radius
from ..rig import sampling as rig_sampling
from ..rig.skeleton import BodyError, read_body

#: Panel settings that replace a fitted radius, by the part's name without its side (0 = fitted).
RADIUS_SETTINGS = ("head", "neck", "torso", "pelvis", "upper_arm", "forearm", "thigh", "shin")

_FITS: dict = {}  # rig pointer -> (key, BodyFit)


@dataclass(frozen=True)
class BodyFit:
    """The capsules of one rig, as fitted (radii before the panel's own).

    Parameters
    ----------
    parts : tuple of core.rig.capsules.BodyPart
    bones : tuple of str
        Bones sampled to place the capsules.
    lengths : numpy.ndarray (L,)
        Rest length of each of ``bones`` [BU].
    ends : tuple of ((index, end), ...) pairs
        Per part, the start's and the end's landmark as (bone in ``bones``, 0 head / 1 tail) lists.
    radii : numpy.ndarray (K,)
        Fitted radii [m].
    sources : tuple of str
        Where each radius came from, in the panel's words.
    """

    parts: tuple
    bones: tuple
    lengths: np.ndarray
    ends: tuple
    radii: np.ndarray
    sources: tuple


def _metres_per_unit(scene, rig):
    scale = float(np.mean(np.abs(np.array(rig.matrix_world.to_scale()))))
    return (scene.unit_settings.scale_length or 1.0) * scale


def _fit_key(rig, meshes):
    bones = rig.data.bones
    ends = np.empty(6 * len(bones), dtype=np.float32)
    bones.foreach_get("head_local", ends[:3 * len(bones)])
    bones.foreach_get("tail_local", ends[3 * len(bones):])
    rest = hash(ends.tobytes())
    return (rig.data.as_pointer(), len(rig.data.bones), rest,
            tuple((m.as_pointer(), len(m.data.vertices), tuple(m.matrix_world.translation)) for m in meshes))


def _point(rest, pairs, tails):
    return np.mean([tails[b] if e else rest.heads[b] for b, e in pairs], axis=0)


def _part_bones(rest, landmarks, parts):
    """Bones on the tree path between each part's landmarks, each given to the nearest part's segment."""
    def chain(i):
        out = [i]
        while rest.parents[out[-1]] >= 0:
            out.append(rest.parents[out[-1]])
        return out
    tails = np.asarray(rest.tails)
    candidates = set()
    for part in parts:
        a, b = landmarks.points[part.start][0][0], landmarks.points[part.end][0][0]
        ca, cb = chain(a), chain(b)
        common = next(i for i in ca if i in cb)
        candidates |= set(ca[:ca.index(common) + 1]) | set(cb[:cb.index(common) + 1])
    segments = [(_point(rest, landmarks.points[p.start], tails), _point(rest, landmarks.points[p.end], tails))
                for p in parts]
    owner = {k: [] for k in range(len(parts))}
    for i in sorted(candidates):
        mid = 0.5 * (rest.heads[i] + tails[i])
        dist = [np.linalg.norm(mid - (s + np.clip((mid - s) @ (e - s) / max((e - s) @ (e - s), 1e-12), 0, 1) * (e - s)))
                for s, e in segments]
        owner[int(np.argmin(dist))].append(rest.names[i])
    return owner, segments


def _skin_vertices(rig, meshes, bones):
    """Rest positions [BU, armature space] of the vertices weighted mostly to one of ``bones``, and the mesh."""
    to_rig = rig.matrix_world.inverted()
    for mesh in meshes:
        groups = {g.index: g.name for g in mesh.vertex_groups if g.name in bones}
        if not groups:
            continue
        place = np.array(to_rig @ mesh.matrix_world)
        picked = [v.co for v in mesh.data.vertices
                  if v.groups and groups.get(max(v.groups, key=lambda g: g.weight).group) is not None]
        if picked:
            pts = np.array(picked, dtype=float)
            return pts @ place[:3, :3].T + place[:3, 3], mesh.name
    return np.zeros((0, 3)), None


def fit_body(scene, rig):
    """The rig's :class:`BodyFit` (kept until its rest pose or meshes change).

    Raises
    ------
    BodyError
        When the rig cannot be read as a body (the message says how to map it).
    """
    meshes = rig_sampling.deformed_meshes(scene, rig)
    key = _fit_key(rig, meshes)
    kept = _FITS.get(rig.as_pointer())
    if kept is not None and kept[0] == key:
        if isinstance(kept[1], BodyError):
            raise kept[1]
        return kept[1]
    try:
        rest, landmarks = read_body(rig)
    except BodyError as exc:
        _FITS[rig.as_pointer()] = (key, exc)
        raise
    parts = tuple(p for p in BODY_PARTS if p.start in landmarks.points and p.end in landmarks.points)
    tails = np.asarray(rest.tails)
    up = np.asarray(rest.up, float)
    # standing height from the top of the skull to the lowest point of the feet (not the whole tree:
    # a ponytail or a prop held up would count)
    feet = [_point(rest, landmarks.points[n], tails) @ up for n in landmarks.points
            if n.split(".")[0] in ("ankle", "ball", "toe_tip")]
    span = np.concatenate([rest.heads @ up, tails @ up])
    top = _point(rest, landmarks.points["vertex"], tails) @ up if "vertex" in landmarks.points else span.max()
    metres = _metres_per_unit(scene, rig)
    stature = float(top - (min(feet) if feet else span.min())) * metres
    owner, segments = _part_bones(rest, landmarks, parts)
    radii, sources = [], []
    for k, part in enumerate(parts):
        vertices, mesh = _skin_vertices(rig, meshes, set(owner[k]))
        skin = skin_radius(vertices, *segments[k])
        if skin is not None and skin > 0.0:
            radii.append(skin * metres)
            sources.append(f"skin of {mesh}")
        else:
            radii.append(proportional_radius(part, stature))
            sources.append(f"proportions of a {stature:.2f} m body")
    used = sorted({b for p in parts for end in (p.start, p.end) for b, _ in landmarks.points[end]})
    index = {b: i for i, b in enumerate(used)}
    ends = tuple(tuple([(index[b], e) for b, e in landmarks.points[end]] for end in (p.start, p.end)) for p in parts)
    lengths = np.linalg.norm(tails[used] - rest.heads[used], axis=1)
    fit = BodyFit(parts, tuple(rest.names[i] for i in used), lengths, ends, np.array(radii), tuple(sources))
    _FITS[rig.as_pointer()] = (key, fit)
    return fit


def landmark_positions(fit, matrices, unit):
    """Landmark positions (F, K, 3) at the parts' starts and ends [m] from world ``matrices`` (F, L, 4, 4) [BU]."""
    heads = matrices[:, :, :3, 3]
    tails = heads + matrices[:, :, :3, 1] * fit.lengths[None, :, None]
    ends = np.stack([heads, tails], axis=2)  # (F, L, 2, 3)

    def where(pairs):
        return np.mean([ends[:, b, e] for b, e in pairs], axis=0)
    starts = np.stack([where(s) for s, _ in fit.ends], axis=1) * unit
    finishes = np.stack([where(e) for _, e in fit.ends], axis=1) * unit
    return starts, finishes


def body_segments(fit, radii, matrices, unit):
    """Capsule segments ``(starts, ends)`` (F, K, 3) [m] for radii ``radii`` [m]."""
    starts, finishes = landmark_positions(fit, matrices, unit)
    return capsule_segments(starts, finishes, radii, [p.inset for p in fit.parts])


def ground_height(scene, rig):
    """The lower of the take-off ground (the rig's origin) and the jump's landing ground [m]."""
    unit = scene.unit_settings.scale_length or 1.0
    takeoff = float(rig.matrix_world.translation.z) * unit
    jump = getattr(scene, "leapwright_plan", None)
    landing = takeoff + (float(jump.landing_height) * unit if jump is not None else 0.0)
    return min(takeoff, landing)


def chains_of(parents):
    """Bone indices of each chain (a root and everything below it), in bake order."""
    out = {}
    for i in range(len(parents)):
        j = i
        while parents[j] >= 0:
            j = parents[j]
        out.setdefault(j, []).append(i)
    return list(out.values())


def body_bones(scene, rig):
    """The landmark bones to sample with the chains; none when the rig does not read as a body."""
    try:
        return fit_body(scene, rig).bones
    except BodyError:
        return ()


def body_for_bake(scene, rig, request, matrices, parents):
    """What :func:`.contact_bake.bake_kept_out` takes as ``body``, plus its readout under ``text``.

    Parameters
    ----------
    request : bake.LagRequest
    matrices : ndarray (F, B + L, 4, 4)
        World matrices [BU]: the request's B bones, then the fit's landmark bones.
    parents : sequence of int
        Each chosen bone's chosen parent (-1 for a chain's first bone).
    """
    chains = chains_of(parents)
    ground = ground_height(scene, rig)
    unit = scene.unit_settings.scale_length or 1.0
    chosen = len(request.bones)
    axes = matrices[0, :chosen, :3, 1]
    rest = np.array([rig.data.bones[n].length for n in request.bones])
    lengths = rest * np.linalg.norm(axes, axis=1) * unit
    try:
        fit = fit_body(scene, rig)
    except BodyError as exc:  # the ground still holds; the panel says why there is no body
        empty = np.zeros((matrices.shape[0], 0, 3))
        return {"starts": empty, "ends": empty, "chains": chains, "radii": [np.zeros(0)] * len(chains),
                "ground": ground, "lengths": lengths,
                "text": json.dumps({"parts": {}, "ground": round(ground, 4), "chains": {}, "problem": str(exc)})}
    typed = dict(request.radii)
    radii, sources = fit.radii.copy(), list(fit.sources)
    for k, part in enumerate(fit.parts):
        if typed.get(part.name.split(".")[0], 0.0) > 0.0:
            radii[k], sources[k] = typed[part.name.split(".")[0]], "panel"
    starts, ends = body_segments(fit, radii, matrices[:, chosen:], unit)
    heads = matrices[0, :chosen, :3, 3] * unit
    directions = axes / np.maximum(np.linalg.norm(axes, axis=1, keepdims=True), 1e-12)
    per_chain = []
    for members in chains:
        tips = heads[members] + lengths[members, None] * directions[members]
        own = chain_radii(np.vstack([heads[members[:1]], tips]), starts[0], ends[0], radii)
        per_chain.append(np.where(_within_reach(matrices[:, members[0], :3, 3] * unit, lengths[members].sum(),
                                                starts, ends, radii), own, -1.0))
    text = readout(fit, radii, ground, {request.bones[m[0]]: r for m, r in zip(chains, per_chain)}, sources)
    return {"starts": starts, "ends": ends, "chains": chains, "radii": [np.maximum(r, 0.0) for r in per_chain],
            "ground": ground,
            "lengths": lengths, "text": text}


def _within_reach(roots, reach, starts, ends, radii):
    """Which parts (K,) a chain whose first head moves along ``roots`` (F, 3) [m] and that is ``reach``
    long [m] can touch at some sample: the others are left out of its simulation (they cost time)."""
    axis = ends - starts
    span = np.maximum(np.sum(axis * axis, axis=-1), 1e-12)
    along = np.clip(np.sum((roots[:, None] - starts) * axis, axis=-1) / span, 0.0, 1.0)
    gap = np.linalg.norm(roots[:, None] - (starts + along[..., None] * axis), axis=-1) - radii[None]
    return np.min(gap, axis=0) <= reach


def readout(fit, radii, ground, per_chain, sources=None):
    """The panel's text about the body: radii and their sources (``sources``, else the fit's), the ground,
    what each chain collides with."""
    sources = fit.sources if sources is None else sources
    return json.dumps({"parts": {p.name: [round(float(r), 4), s] for p, r, s in zip(fit.parts, radii, sources)},
                       "ground": round(float(ground), 4),
                       "chains": {name: {p.name: round(float(r), 4) for p, r in zip(fit.parts, rs) if r >= 0.0}
                                  for name, rs in per_chain.items()}})


__all__ = ["BodyError", "BodyFit", "RADIUS_SETTINGS", "fit_body", "body_bones", "body_segments",
           "ground_height", "chains_of", "body_for_bake", "readout"]
