"""The body as capsules: head, neck, torso, pelvis and limbs, fitted to a rig's landmarks.

A capsule is a segment and a radius: every point closer to the segment than the
radius is inside the body. Each part runs between two landmarks (:mod:`.landmark_names`);
its radius comes from the skin where a mesh is skinned to the rig (how far the part's
vertices lie from its segment) or else from the body's height and typical
proportions. The head and the torso end where their landmarks are (their segments
are pulled in by the radius at the inset ends), so the torso's top does not swell
into the neck and the head does not reach below the skull base.

A chain that hangs from the body (hair from the head, a tail from the pelvis) starts
on a part's surface: :func:`chain_radii` gives each chain the radii it can collide
with from where it is attached, a part that must touch it (its attachment inside
the part) made smaller for it, or left out when it would have to shrink by half.
"""

from dataclasses import dataclass

import numpy as np

__all__ = ["BODY_PARTS", "BodyPart", "proportional_radius", "skin_radius", "capsule_segments", "chain_radii",
           "SKIN_PERCENTILE", "CHAIN_MARGIN", "SHRINK_LIMIT"]


@dataclass(frozen=True)
class BodyPart:
    """One capsule of the body.

    Parameters
    ----------
    name : str
        What the panel calls it.
    start, end : str
        Landmarks at the segment's ends (``.L``/``.R`` for sided parts).
    stature_fraction : float
        Radius as a fraction of standing height [-].
    inset : (bool, bool)
        Pull the segment's start / end in by the radius (the capsule ends at the landmark).
    """

    name: str
    start: str
    end: str
    stature_fraction: float
    inset: tuple = (False, False)


# Radii: adult circumference / 2 pi over a 1.75 m stature (head 0.57 m, neck 0.38 m, upper arm 0.32 m,
# forearm 0.27 m, thigh 0.57 m, calf 0.37 m); torso half the chest depth (0.25 m), pelvis half the hip
# depth (0.21 m). From memory (adult anthropometric surveys); a capsule is a rough fit in any case.
BODY_PARTS = (
    BodyPart("head", "skull_base", "vertex", 0.052, (True, True)),
    BodyPart("neck", "neck_base", "skull_base", 0.034),
    BodyPart("torso", "hip_mid", "neck_base", 0.072, (True, True)),
    BodyPart("pelvis", "hip.L", "hip.R", 0.060),
) + tuple(BodyPart(f"{part}.{side}", f"{a}.{side}", f"{b}.{side}", frac)
          for side in "LR"
          for part, a, b, frac in (("upper_arm", "shoulder", "elbow", 0.029), ("forearm", "elbow", "wrist", 0.025),
                                   ("thigh", "hip", "knee", 0.052), ("shin", "knee", "ankle", 0.034)))

#: Share of a part's skin vertices a capsule encloses (design choice: the outliers are the nose,
#: ears and fingers' roots, which a capsule does not need to hold).
SKIN_PERCENTILE = 80.0
#: Gap kept between a chain's attachment and a part made smaller for it [m] (design choice).
CHAIN_MARGIN = 0.005
#: A part that would shrink below this share of its radius for a chain is left out for it (design choice).
SHRINK_LIMIT = 0.5


def proportional_radius(part, stature):
    """Radius of ``part`` (a :class:`BodyPart`) on a body ``stature`` tall [m]."""
    return float(part.stature_fraction * stature)


def _distance_to_segment(points, start, end):
    axis = end - start
    span = float(axis @ axis)
    along = np.clip((points - start) @ axis / span, 0.0, 1.0) if span > 0.0 else np.zeros(len(points))
    return np.linalg.norm(points - (start + along[:, None] * axis), axis=1)


def skin_radius(vertices, start, end):
    """Radius that encloses :data:`SKIN_PERCENTILE` % of a part's skin ``vertices`` (V, 3) [m],
    measured from the segment ``start``-``end`` (3,) [m]; None for fewer than 8 vertices."""
    vertices = np.asarray(vertices, dtype=float).reshape(-1, 3)
    if len(vertices) < 8:
        return None
    dist = _distance_to_segment(vertices, np.asarray(start, float), np.asarray(end, float))
    return float(np.percentile(dist, SKIN_PERCENTILE))


def capsule_segments(starts, ends, radii, insets):
    """Segment ends (..., K, 3) with the inset ends pulled in by the radius.

    Parameters
    ----------
    starts, ends : array_like, shape (..., K, 3)
        Landmark positions at the parts' ends [m].
    radii : array_like, shape (K,)
        Radii [m].
    insets : sequence of K (bool, bool)

    Returns
    -------
    (starts, ends) : numpy.ndarray, each (..., K, 3)
        A part shorter than its insets becomes a sphere at its middle.
    """
    starts, ends = np.asarray(starts, float), np.asarray(ends, float)
    axis = ends - starts
    length = np.linalg.norm(axis, axis=-1, keepdims=True)
    unit = axis / np.maximum(length, 1e-12)
    r = np.asarray(radii, float)[:, None]
    pull = np.array([[a, b] for a, b in insets], dtype=float).reshape(-1, 2)
    total = r[:, 0] * pull.sum(axis=1)
    # never pull past the middle: scale both pulls down together when the part is short
    scale = np.minimum(1.0, length[..., 0] / np.maximum(total, 1e-12))[..., None]
    new_starts = starts + unit * (r * pull[:, :1]) * scale
    new_ends = ends - unit * (r * pull[:, 1:]) * scale
    return new_starts, new_ends


def chain_radii(attachment, starts, ends, radii):
    """The radii a chain collides with, given where it is attached.

    Parameters
    ----------
    attachment : array_like, shape (P, 3)
        Points of the chain that are where they must be at its first sample: its first
        bone's head and every bone's tip in the animated pose [m].
    starts, ends : array_like, shape (K, 3)
        The parts' segments at that sample [m].
    radii : array_like, shape (K,)

    Returns
    -------
    numpy.ndarray, shape (K,)
        Each part's radius for this chain; 0 where the part is left out for it.
    """
    points = np.asarray(attachment, float).reshape(-1, 3)
    out = np.array(radii, dtype=float, copy=True)
    for k in range(len(out)):
        clear = float(np.min(_distance_to_segment(points, np.asarray(starts[k], float), np.asarray(ends[k], float))))
        if clear >= out[k]:
            continue
        allowed = clear - CHAIN_MARGIN
        out[k] = allowed if allowed >= SHRINK_LIMIT * out[k] else 0.0
    return out
