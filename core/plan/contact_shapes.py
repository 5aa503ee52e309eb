"""Shapes of the centre of mass's vertical path while the feet are on the ground.

A contact stretch is two quintic pieces meeting at the *bottom* of the crouch,
where the vertical speed is zero. Each piece is fixed by position, speed and
acceleration at both ends (see :func:`.piecewise.quintic_between`), so the whole
path is C2 and the ground force F = m (g + z'') is continuous. The one value the
boundary conditions leave free is the acceleration at the bottom, ``a_b``; with
the durations held, every acceleration sample is affine in ``a_b``, so the peak
force is a convex function of it and the physical limits (force never below 0,
speed of one sign in each piece) cut it to an interval (:mod:`.shape_search`
solves that exactly). Free durations are chosen where the least peak force is
lowest (:mod:`.shape_choice`).
"""

from dataclasses import dataclass
import functools
import math

import numpy as np

from ..base.piecewise import quintic_between
from .shape_choice import least_peak_duration
from .shape_search import line_tables

# Piece kinds and the sign its vertical speed must keep inside the piece.
DIP, PROPULSION, ABSORPTION, RECOVERY = "dip", "propulsion", "absorption", "recovery"


@dataclass(frozen=True)
class EndState:
    """Height [m], vertical speed [m/s] and vertical acceleration [m/s^2]."""

    height: float
    speed: float
    acceleration: float


@dataclass(frozen=True)
class StretchShape:
    """The chosen free values of one contact stretch."""

    bottom_acceleration: float  # m/s^2, acceleration at the bottom of the crouch
    first_duration: float  # s, start of the stretch to the bottom
    second_duration: float  # s, bottom to the end of the stretch
    peak_acceleration: float  # m/s^2, largest upward acceleration in the stretch


@dataclass(frozen=True)
class StretchSpec:
    """What a contact stretch must join: start, bottom height, end, piece kinds, g."""

    start: EndState
    bottom_height: float
    end: EndState
    first_kind: str
    second_kind: str
    gravity: float


def build_pieces(spec, bottom_acceleration, first_duration, second_duration):
    """The two quintics of a stretch for given free values (local time each)."""
    s, e = spec.start, spec.end
    first = quintic_between(s.height, s.speed, s.acceleration, spec.bottom_height, 0.0,
                            bottom_acceleration, first_duration)
    second = quintic_between(spec.bottom_height, 0.0, bottom_acceleration, e.height, e.speed,
                             e.acceleration, second_duration)
    return first, second


def best_bottom_acceleration(spec, first_duration, second_duration):
    """``(a_b, peak acceleration)`` minimising the peak force, or ``None`` if infeasible."""
    tables = line_tables(spec)
    tables.hint = None
    a_b, peak = tables.least_peaks(np.array([float(first_duration)]),
                                              np.array([float(second_duration)]))
    return None if not np.isfinite(peak[0]) else (float(a_b[0]), float(peak[0]))


def is_mirror_image(spec):
    """Whether the stretch played backwards is itself (a rebound on level ground).

    Then swapping the two durations swaps nothing physical, and the least peak
    force lies where they are equal.
    """
    s, e = spec.start, spec.end
    same = (math.isclose(s.height, e.height, rel_tol=1e-9, abs_tol=1e-12) and math.isclose(s.speed, -e.speed, rel_tol=1e-9)
            and math.isclose(s.acceleration, e.acceleration, rel_tol=1e-9))
    return (spec.first_kind, spec.second_kind) == (ABSORPTION, PROPULSION) and same


def _both_free(spec, lo, hi):
    """Both durations free: along the diagonal for a mirror image, else alternate one at a time."""
    if is_mirror_image(spec):
        found = least_peak_duration(spec, None, True, lo, hi)
        return None if found is None else (found[0], found[0])
    grid = np.geomspace(lo, hi, 9)
    first, second = np.repeat(grid, 9), np.tile(grid, 9)
    _, peak = line_tables(spec).least_peaks(first, second)
    k = int(np.argmin(peak))
    if not np.isfinite(peak[k]):
        return None
    d1, d2 = first[k], second[k]
    for _ in range(3):
        for free_is_first in (False, True):
            found = least_peak_duration(spec, d2 if free_is_first else d1, free_is_first, lo, hi)
            if found is None:
                return None
            d1, d2 = (found[0], d2) if free_is_first else (d1, found[0])
    return d1, d2


@functools.lru_cache(maxsize=256)
def choose_shape(spec, first_duration, second_duration, duration_range):
    """Free values of a stretch that make its peak force as low as the goals allow.

    Parameters
    ----------
    spec : StretchSpec
    first_duration, second_duration : float or None
        Given durations [s]; ``None`` lets the search choose it in ``duration_range``.
    duration_range : (float, float)
        Search bounds for a free duration [s].

    Returns
    -------
    StretchShape or None
        ``None`` when no choice meets the physical limits.

    Notes
    -----
    Kept per stretch (an immutable spec and durations give the same shape every time): while a
    slider drags one goal, the stretches it does not touch (the landing, while the dip is dragged)
    are not searched again.
    """
    lo, hi = duration_range
    d1, d2 = first_duration, second_duration
    if d1 is None and d2 is None:
        found = _both_free(spec, lo, hi)
        if found is None:
            return None
        d1, d2 = found
    elif d1 is None or d2 is None:
        free_is_first = d1 is None
        found = least_peak_duration(spec, d2 if free_is_first else d1, free_is_first, lo, hi)
        if found is None:
            return None
        d1, d2 = (found[0], d2) if free_is_first else (d1, found[0])
        # The search's own a_b and peak at the duration it chose: no need to solve it again.
        return StretchShape(float(found[1]), float(d1), float(d2), float(found[2]))
    found = best_bottom_acceleration(spec, d1, d2)
    if found is None:
        return None
    return StretchShape(found[0], float(d1), float(d2), found[1])
