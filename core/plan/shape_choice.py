"""Choosing a contact stretch's free durations: the least peak force in a few batches.

Along one free duration T the least peak acceleration of a stretch
(:mod:`.shape_search`) is piecewise quadratic in u = 1/T: between changes of
which sample or limit is active, every quantity is a fixed combination of
offsets that are polynomials in u. Its minimum is where a falling quadratic
meets a rising one (or a quadratic's own vertex), solved in closed form from
three samples on each side (:func:`_crossing`), or the edge of the feasible
durations (:func:`_feasible_edge`). A coarse geometric grid finds the basin, a
finer batch the two quadratics, and three points in the next batch confirm the
crossing; where the confirmation fails the bracket shrinks around the lowest
sample and the next batch tries again, so the worst case is a grid refinement.
"""

import functools
import math

import numpy as np

from ..base.quadratic import quadratic_roots
from .shape_search import line_tables

_COARSE = 41  # geometric grid over the whole duration range (steps of 11 %)
_FINE = 25  # points per refining batch
_CONFIRM = 1e-9  # relative step either side of a crossing that confirms it
_EDGE_POINTS = 33  # points per batch walking up to the edge of the feasible durations


@functools.lru_cache(maxsize=16)
def _coarse_grid(lo, hi):
    """The coarse geometric grid of durations [s] (the same range for every plan at one scale)."""
    grid = np.geomspace(lo, hi, _COARSE)
    grid.flags.writeable = False
    return grid


def _durations(fixed, free_is_first, free):
    other = free if fixed is None else np.full(free.shape, fixed)
    return (free, other) if free_is_first else (other, free)


def _parabola(u, p):
    """Coefficients (c2, c1, c0) of the parabola through three points (divided differences).

    Plain floats and the math module: three points are too few for numpy's per-call cost.
    """
    u0, u1, u2 = float(u[0]), float(u[1]), float(u[2])
    p0, p1, p2 = float(p[0]), float(p[1]), float(p[2])
    s01, s12 = (p1 - p0) / (u1 - u0), (p2 - p1) / (u2 - u1)
    c2 = (s12 - s01) / (u2 - u0)
    c1 = s01 - c2 * (u0 + u1)
    return c2, c1, p0 - c1 * u0 - c2 * u0 * u0


def _crossing(u, p, m):
    """Closed-form minimiser of a piecewise quadratic around the lowest sample ``m``, or ``None``."""
    if m < 3 or m > len(u) - 4 or not all(math.isfinite(x) for x in p[m - 3:m + 4]):
        return None
    left, right = _parabola(u[m - 3:m], p[m - 3:m]), _parabola(u[m + 1:m + 4], p[m + 1:m + 4])
    lo, hi = float(u[m - 1]), float(u[m + 1])
    difference = [a - b for a, b in zip(left, right)]
    if max(abs(x) for x in difference) <= 1e-9 * max(abs(x) for x in left):
        if left[0] <= 0.0:  # one smooth quadratic: its vertex, if it has a minimum
            return None
        vertex = -left[1] / (2.0 * left[0])
        return vertex if lo <= vertex <= hi else None
    roots = [r for r in quadratic_roots(*difference) if lo <= r <= hi]
    return roots[0] if len(roots) == 1 else None


def _feasible_edge(tables, fixed, free_is_first, u_in, u_out):
    """The last feasible point before ``u_out`` going from ``u_in``, to 1e-9 relative: (u, a_b, peak).

    Feasibility near the edge is one-sided, so each batch keeps the last
    feasible point and the first infeasible one after it.
    """
    a_in, p_in = None, None
    for _ in range(12):
        u = np.linspace(u_in, u_out, _EDGE_POINTS)
        a_b, peak = tables.least_peaks(*_durations(fixed, free_is_first, 1.0 / u))
        k = int(np.argmax(~np.isfinite(peak))) - 1  # the point before the first infeasible one
        if k < 0:
            break
        u_in, u_out, a_in, p_in = u[k], u[k + 1], a_b[k], peak[k]
        if abs(u_out - u_in) <= 1e-9 * abs(u_in):
            break
    return None if p_in is None else (u_in, a_in, p_in)


def _edge_next_to(tables, fixed, free_is_first, u, peak, m, best):
    """The feasible edge next to the lowest sample ``m``, if an infeasible sample neighbours it."""
    for side in (-1, 1):
        n = m + side
        if 0 <= n < len(u) and not np.isfinite(peak[n]):
            edge = _feasible_edge(tables, fixed, free_is_first, u[m], u[n])
            if edge is not None and edge[2] <= best[2]:
                return 1.0 / edge[0], edge[1], edge[2]
    return None


def least_peak_duration(spec, fixed, free_is_first, lo, hi):
    """The free duration in ``[lo, hi]`` [s] giving the least peak force.

    Parameters
    ----------
    spec : contact_shapes.StretchSpec
    fixed : float or None
        The other piece's duration [s]; ``None`` gives both pieces the free duration.
    free_is_first : bool
        Whether the free duration is the first piece's (ignored when ``fixed`` is None).
    lo, hi : float
        Search range [s].

    Returns
    -------
    (duration [s], a_b [m/s^2], peak [m/s^2]) or None when no duration is feasible.
    """
    tables = line_tables(spec)
    tables.hint = None  # each search starts afresh: the same goals give the same plan
    grid = _coarse_grid(lo, hi)
    a_b, peak = tables.least_peaks(*_durations(fixed, free_is_first, grid))
    if not np.isfinite(peak).any():
        return None
    k = int(np.argmin(peak))
    best = (grid[k], a_b[k], peak[k])
    u_lo, u_hi = 1.0 / grid[min(k + 1, _COARSE - 1)], 1.0 / grid[max(k - 1, 0)]
    candidate = None
    for _ in range(16):
        u = np.linspace(u_lo, u_hi, _FINE)
        if candidate is not None:  # confirm the last crossing in the same batch
            u = np.concatenate([u, candidate * (1.0 + _CONFIRM * np.array([-1.0, 0.0, 1.0]))])
        a_b, peak = tables.least_peaks(*_durations(fixed, free_is_first, 1.0 / u))
        if candidate is not None:
            p_c = peak[_FINE:]
            lowest = min(best[2], peak[:_FINE].min())
            if p_c[1] <= min(p_c[0], p_c[2]) and p_c[1] <= lowest + 1e-12 * abs(lowest):
                return 1.0 / u[_FINE + 1], a_b[_FINE + 1], p_c[1]
            u, a_b, peak = u[:_FINE], a_b[:_FINE], peak[:_FINE]
        m = int(np.argmin(peak))
        if peak[m] <= best[2]:
            best = (1.0 / u[m], a_b[m], peak[m])
        candidate = _crossing(u, peak, m)
        if candidate is None:
            edge = _edge_next_to(tables, fixed, free_is_first, u, peak, m, best)
            if edge is not None:
                return edge
        u_lo, u_hi = u[max(m - 1, 0)], u[min(m + 1, _FINE - 1)]
        if u_hi - u_lo <= 1e-11 * u_hi:
            break
    return best
