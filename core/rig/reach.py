"""Keeping a leg within its length: how far to pivot the foot on its ball (heel lift).

A leg of thigh plus shin cannot reach farther than its rest length without stretching
(the rig's IK would scale its bones). When the planned hip rises farther from the planted
ball of the foot than the leg reaches with the foot flat, the heel lifts: the foot turns
about the ball's side-to-side axis and the ankle rises on a circle around the ball
(common practice: push-off rolls onto the toes). In the air the same turn points the toes.
"""

import numpy as np

__all__ = ["toe_pivot_angles", "MAX_PIVOT"]

#: Largest turn of the foot on its ball [rad] (design choice: 60 deg, a full rise onto the toes).
MAX_PIVOT = np.radians(60.0)
_GRID = 121  # turns tried per sample before bisection (0.5 deg apart)


def _turned(v, axis, angle):
    """``v`` (3,) turned about unit ``axis`` by ``angle`` [rad] (Rodrigues' rotation formula)."""
    c, s = np.cos(angle), np.sin(angle)
    return v * c + np.cross(axis, v) * s + axis * (axis @ v) * (1.0 - c)


def toe_pivot_angles(hips, ankles, balls, lateral, reach, max_angle=MAX_PIVOT, up=(0.0, 0.0, 1.0)):
    """Smallest heel lift per sample that keeps each hip-to-ankle distance within ``reach``.

    Parameters
    ----------
    hips, ankles, balls : array_like (F, 3)  hip joint, ankle and ball of the foot with the foot
        flat (as planned) [m]
    lateral : 3-vector  the foot's side-to-side axis (any sign)
    reach : float  the leg's rest length, thigh plus shin [m]
    max_angle : float  the largest turn allowed [rad]
    up : 3-vector

    Returns
    -------
    angles : ndarray (F,)  turn about ``axis`` that lifts the heel [rad], 0 where the leg reaches
    axis : ndarray (3,)  the unit axis the turn is about (the sign that lifts the heel)
    short : ndarray (F,)  how far the hip is still out of reach at ``max_angle`` [m], 0 where reached
    """
    hips, ankles, balls = (np.asarray(x, float).reshape(-1, 3) for x in (hips, ankles, balls))
    axis = np.asarray(lateral, float) / np.linalg.norm(lateral)
    up = np.asarray(up, float)
    probe = _turned(ankles[0] - balls[0], axis, 1e-3) + balls[0]
    if probe @ up < ankles[0] @ up:
        axis = -axis  # the sign that lifts the heel
    grid = np.linspace(0.0, max_angle, _GRID)
    angles, short = np.zeros(len(hips)), np.zeros(len(hips))
    for i, (h, a, b) in enumerate(zip(hips, ankles, balls)):
        def gap(th):
            return np.linalg.norm(h - (b + _turned(a - b, axis, th))) - reach
        if gap(0.0) <= 0.0:
            continue
        values = np.array([gap(th) for th in grid])
        hit = np.flatnonzero(values <= 0.0)
        if not hit.size:
            angles[i], short[i] = max_angle, float(values.min())
            continue
        lo, hi = grid[hit[0] - 1], grid[hit[0]]
        for _ in range(40):
            mid = 0.5 * (lo + hi)
            lo, hi = (mid, hi) if gap(mid) > 0.0 else (lo, mid)
        angles[i] = hi
    return angles, axis, short


def largest_rise(hip, ankle, ball, lateral, reach, max_angle=MAX_PIVOT, up=(0.0, 0.0, 1.0)):
    """How far the hip can rise straight up from its rest place with the ball planted [m].

    The leg keeps its length ``reach`` and the foot rolls onto its ball up to ``max_angle``
    (:func:`toe_pivot_angles`); found by bisection to 0.1 mm.

    Parameters
    ----------
    hip, ankle, ball : 3-vectors  rest positions [m]
    lateral, reach, max_angle, up : as :func:`toe_pivot_angles`
    """
    hip, up = np.asarray(hip, float), np.asarray(up, float)

    def reached(rise):
        return toe_pivot_angles([hip + rise * up], [ankle], [ball], lateral, reach, max_angle, up)[2][0] <= 0.0
    lo, hi = 0.0, float(reach)
    if not reached(lo):
        return 0.0
    while hi - lo > 1e-4:
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if reached(mid) else (lo, mid)
    return lo
