"""What a written jump plays as, against what was planned: body path, flight, feet, legs.

Plain arrays in, findings out. The add-on samples the evaluated deform skeleton (world
space, scene time) and gives it here with the plan's own path; these functions say how
far the two differ and where, so the add-on can name the cause in the animator's words.
"""

from dataclasses import dataclass

import numpy as np

__all__ = ["PathGap", "path_gap", "implied_gravity", "leg_stretch", "foot_slide", "PATH_TOLERANCE",
           "GRAVITY_TOLERANCE", "STRETCH_TOLERANCE", "SLIDE_TOLERANCE"]

#: The played body may leave the planned path by this much [m] (design choice: 1 cm, below
#: what reads on screen at a full-body framing).
PATH_TOLERANCE = 0.01
#: Share by which the played flight's gravity may differ from the planned one [-] (design
#: choice; a float32 key time alone moves it by far less).
GRAVITY_TOLERANCE = 0.02
#: Largest leg stretch beyond its rest length [-] (design choice: 1 %).
STRETCH_TOLERANCE = 0.01
#: Largest slide of a planted foot [m] (design choice: 1 cm).
SLIDE_TOLERANCE = 0.01


@dataclass(frozen=True)
class PathGap:
    """The largest distance between the played and planned displacements.

    Attributes
    ----------
    largest : float  [m]
    index : int  sample where it is largest
    played_rise, planned_rise : float  highest rise above the first sample [m]
    """

    largest: float
    index: int
    played_rise: float
    planned_rise: float


def path_gap(played, planned, up=(0.0, 0.0, 1.0)):
    """Compare two paths as displacements from their first sample.

    Parameters
    ----------
    played, planned : array_like (F, 3)  positions [m], world space, same sample times
    up : 3-vector  the world's up

    Returns
    -------
    PathGap
    """
    played, planned = np.asarray(played, float), np.asarray(planned, float)
    a, b = played - played[0], planned - planned[0]
    gap = np.linalg.norm(a - b, axis=1)
    up = np.asarray(up, float)
    k = int(np.argmax(gap))
    return PathGap(float(gap[k]), k, float((a @ up).max()), float((b @ up).max()))


def implied_gravity(heights, fps):
    """Gravity a falling height series implies: minus twice the quadratic term of a fit [m/s^2].

    Parameters
    ----------
    heights : array_like (F,)  heights at successive frames of one flight [m], F >= 3
    fps : float  frames per second [1/s]

    References
    ----------
    Free fall: z(t) = z0 + v0 t - g t^2 / 2 (a physics law), fitted by least squares.
    """
    z = np.asarray(heights, float)
    if z.size < 3:
        return float("nan")
    t = np.arange(z.size) / float(fps)
    return float(-2.0 * np.polyfit(t, z, 2)[0])


def leg_stretch(hips, knees, ankles, rest_length):
    """Stretch of a two-piece leg beyond its rest length, per sample [-] (0.03 = 3 % longer).

    Parameters
    ----------
    hips, knees, ankles : array_like (F, 3)  joint positions [m]
    rest_length : float  thigh plus shin at rest [m]
    """
    hips, knees, ankles = (np.asarray(x, float) for x in (hips, knees, ankles))
    length = np.linalg.norm(knees - hips, axis=1) + np.linalg.norm(ankles - knees, axis=1)
    return length / float(rest_length) - 1.0


def foot_slide(ankles, up=(0.0, 0.0, 1.0)):
    """Largest horizontal distance [m] of a foot from where it stood at the first sample."""
    ankles = np.asarray(ankles, float)
    up = np.asarray(up, float)
    d = ankles - ankles[0]
    d = d - np.outer(d @ up, up)
    return float(np.linalg.norm(d, axis=1).max()) if len(d) else 0.0
