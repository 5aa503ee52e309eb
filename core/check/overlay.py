"""Geometry of the path overlay: the COM path with a tick per frame, the flight
parabola its timing implies, and the planned arc, all as plain point arrays.

Spacing is what animators read on a path: the ticks sit one per frame, so an even
spread means an even speed and bunching means slowing in (common practice).
Everything here is world space in the caller's length unit; the viewport layer
only draws these arrays.
"""

import numpy as np

from ..base.errors import InvalidTrajectoryError


def _rows(points, name):
    p = np.asarray(points, dtype=float)
    if p.ndim != 2 or p.shape[1] != 3 or len(p) < 2 or not np.all(np.isfinite(p)):
        raise InvalidTrajectoryError(f"{name} must be finite (n >= 2, 3) points, got shape {p.shape}")
    return p


def spacing_ticks(points, up=(0.0, 0.0, 1.0), length=0.03):
    """A short segment across the path at every sample: ``(n, 2, 3)`` end points.

    Each tick lies in the plane of the path and ``up``, across the local
    direction of travel; where the path stands still it is horizontal.

    Parameters
    ----------
    points : array (n, 3)
    up : array (3,)
    length : float
        Tick length [same unit as ``points``].
    """
    p = _rows(points, "path")
    up = np.asarray(up, dtype=float) / np.linalg.norm(up)
    # Where the path stands still or runs along `up`, the tick lies level instead.
    level = np.cross(up, [1.0, 0.0, 0.0] if abs(up[0]) < 0.9 else [0.0, 1.0, 0.0])
    level /= np.linalg.norm(level)
    # Only the direction of travel matters: scaled to the path's extent and then per
    # sample, so no difference or cross product overflows or underflows, whatever the unit.
    span = float(np.max(np.abs(p))) or 1.0
    tangent = np.gradient(p / span, axis=0)
    scale = np.max(np.abs(tangent), axis=1, keepdims=True)
    moving = scale > 0.0
    tangent = tangent / np.where(moving, scale, 1.0)
    across = np.cross(np.cross(tangent, up), tangent)
    size = np.linalg.norm(across, axis=1, keepdims=True)
    ok = moving & (size > 1e-12)  # |tangent| >= 1 where moving
    across = np.where(ok, across / np.where(ok, size, 1.0), level)
    half = 0.5 * length * across
    return np.stack([p - half, p + half], axis=1)


def implied_flight_arc(frames, points, flight, fps, up=(0.0, 0.0, 1.0), samples_per_frame=4):
    """The parabola a checked flight implies, as points ``(m, 3)``.

    Vertical: z = apex_height - g/2 ((f - apex_frame) / fps)^2 with the flight's
    fitted gravity (its rise gravity up to the apex and fall gravity after, for a
    stylised flight). Across: the path's own positions at the first and last
    airborne frames joined at constant speed (no horizontal force in flight).

    Parameters
    ----------
    frames : array (n,)
    points : array (n, 3)
        The sampled path, with heights measured along ``up`` [m].
    flight : analysis.Flight
    fps : float
    """
    p = _rows(points, "path")
    f = np.asarray(frames, dtype=float)
    up = np.asarray(up, dtype=float) / np.linalg.norm(up)
    f0, f1 = float(flight.first_frame), float(flight.last_frame)
    grid = np.linspace(f0, f1, max(2, int(round((f1 - f0) * samples_per_frame)) + 1))
    a, b = (np.array([np.interp(x, f, p[:, k]) for k in range(3)]) for x in (f0, f1))
    across = a + (b - a) * ((grid - f0) / (f1 - f0))[:, None]
    across -= np.outer(across @ up, up)
    s = (grid - flight.apex_frame) / fps
    g = np.where(grid <= flight.apex_frame, flight.rise_gravity_m_s2, flight.fall_gravity_m_s2)
    hang = flight.apex_hang_s * fps
    s = np.where(grid > flight.apex_frame, np.maximum(grid - flight.apex_frame - hang, 0.0) / fps, s)
    height = flight.apex_height_m - 0.5 * g * s * s
    return across + np.outer(height, up)


def planned_arc_points(plan, fps, origin, forward, up=(0.0, 0.0, 1.0), standing_com_height=None):
    """The plan's COM path at every frame as world points ``(n, 3)`` [m].

    ``origin`` is the standing COM's ground point (the take-off spot), ``forward``
    and ``up`` unit directions; height is measured from the ground.
    """
    s = plan.sample(fps)
    origin = np.asarray(origin, dtype=float)
    forward = np.asarray(forward, dtype=float) / np.linalg.norm(forward)
    up = np.asarray(up, dtype=float) / np.linalg.norm(up)
    stand = plan.resolved_goals.standing_com_height if standing_com_height is None else standing_com_height
    return origin + np.outer(s.forward, forward) + np.outer(stand + s.height, up)
