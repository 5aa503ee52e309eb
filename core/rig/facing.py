"""Which way a rig faces, read from its rest pose: no armature axis is taken as its left.

A humanoid rig is built left-right symmetric (its sagittal plane; common practice for
rigs) and not front-back symmetric (feet, knee targets and the face point forward). So
the best mirror of the rest pose across the up axis is the character's side-to-side
line, one way or the other; the rest shoulders then fix that line exactly, and the
feet, which point forward, say which end is left (left = up x forward, right-handed).

:func:`faced_rig` gives the rig with its ``left`` found and its landmarks, so a rig
built facing +Y, or turned inside its armature, maps the same as one built facing -Y
(Blender's front view).
"""

import dataclasses
import math

import numpy as np

from ..base.errors import InvalidGoalError, LeapwrightError
from .landmarks import map_by_topology

__all__ = ["mirror_normal", "faced_rig"]

#: Directions tried for the mirror plane: every degree of a half turn (the rest
#: shoulders then fix the line exactly).
MIRROR_STEPS = 180
#: Bone ends that are mirrored to score a plane: those farthest from the up axis through
#: the rig's middle, whose mirror images move most when the plane turns (hands, feet,
#: shoulders). Every end is still a candidate match, so a big rig costs ends x this,
#: not ends squared (design choice: 96 keep a 30-bone rig's scoring whole).
MIRROR_PROBES = 96


def mirror_normal(rest):
    """Unit horizontal normal (3,) of the plane the rest pose is most nearly mirrored in.

    Score: the mean distance from each mirrored probe end (:data:`MIRROR_PROBES`) to the
    nearest bone end [rest units], mirrored about a plane through the rig's middle.
    ``rest`` is a :class:`core.rig.landmarks.RigData`; its ``up`` is used.
    """
    up = np.asarray(rest.up, dtype=float)
    pts = np.unique(np.vstack([rest.heads, rest.tails]), axis=0)  # a child's head is its parent's tail
    e1 = np.cross(up, [1.0, 0.0, 0.0] if abs(up[0]) < 0.9 else [0.0, 1.0, 0.0])
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(up, e1)
    sq = np.einsum("ij,ij->i", pts, pts)
    middle = pts.mean(axis=0)
    across = (pts - middle) - np.outer((pts - middle) @ up, up)
    probes = pts[np.argsort(-np.einsum("ij,ij->i", across, across), kind="stable")[:MIRROR_PROBES]]
    best, normal = math.inf, e1
    for a in np.linspace(0.0, math.pi, MIRROR_STEPS, endpoint=False):
        n = math.cos(a) * e1 + math.sin(a) * e2
        mirrored = probes - 2.0 * np.outer(probes @ n - middle @ n, n)
        gap2 = (mirrored * mirrored).sum(axis=1)[:, None] + sq[None, :] - 2.0 * mirrored @ pts.T
        score = float(np.sqrt(np.maximum(gap2.min(axis=1), 0.0)).mean())
        if score < best - 1e-12:
            best, normal = score, n
    return normal


def _horizontal_unit(v, up):
    h = v - (v @ up) * up
    n = np.linalg.norm(h)
    return h / n if n > 1e-12 else None


def _toe_forward(rest, marks):
    """Mean horizontal ankle-to-toe-tip direction (3,) of both feet, not normalised."""
    up = np.asarray(rest.up, dtype=float)
    out = np.zeros(3)
    for side in "LR":
        (ankle, _), = marks.points[f"ankle.{side}"]
        (toe, _), = marks.points[f"toe_tip.{side}"]
        d = rest.tails[toe] - rest.heads[ankle]
        out += d - (d @ up) * up
    return out


def faced_rig(rest):
    """The rig with the character's left found from its rest pose, and its landmarks.

    Parameters
    ----------
    rest : core.rig.landmarks.RigData
        Its ``up`` is trusted; its ``left`` is ignored.

    Returns
    -------
    rest : RigData
        The same rig with ``left`` along its rest shoulders, pointing to the character's left.
    marks : Landmarks
        :func:`core.rig.landmarks.map_by_topology` of it.

    Raises
    ------
    LeapwrightError
        When the tree does not read as a humanoid, or the feet do not tell front from
        back (the message says what was found).
    """
    up = np.asarray(rest.up, dtype=float)
    side = mirror_normal(rest)
    # map across the mirror normal, then again across the found shoulders (which fix the
    # line exactly), then once more if the feet say left and right are swapped
    for step in range(3):
        probe = dataclasses.replace(rest, left=tuple(side))
        marks = map_by_topology(probe)
        if step == 0:
            across = _horizontal_unit(rest.heads[marks.points["shoulder.L"][0][0]]
                                      - rest.heads[marks.points["shoulder.R"][0][0]], up)
            side = side if across is None else across
            continue
        forward = _toe_forward(probe, marks)
        if np.linalg.norm(forward) < 1e-9 or abs(forward @ side) > 0.7 * np.linalg.norm(forward):
            raise InvalidGoalError(f"the feet point along the shoulders' line (ankle to toe "
                                   f"{np.round(forward, 3).tolist()}), so the rig's front cannot be told; "
                                   "map the bones by hand")
        if np.cross(up, forward) @ side > 0:
            return probe, marks
        side = -side
    raise LeapwrightError("the feet and the shoulders do not agree on the character's left; map the bones by hand")
