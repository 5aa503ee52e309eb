"""Shapes of the centre of mass's vertical path while the feet are on the ground.

A contact stretch is two quintic pieces meeting at the *bottom* of the crouch,
where the vertical speed is zero. Each piece is fixed by position, speed and
acceleration at both ends (see :func:`.piecewise.quintic_between`), so the whole
path is C2 and the ground force F = m (g + z'') is continuous. The one value the
boundary conditions leave free is the acceleration at the bottom, ``a_b``; with
the durations held, every acceleration sample is affine in ``a_b``, so the peak
force is a convex function of it and the physical limits (force never below 0,
speed of one sign in each piece) cut it to an interval. Free durations are then
chosen by a bracketed golden-section search on the peak force.
"""

from dataclasses import dataclass

import numpy as np

from ..base.piecewise import quintic_between

_SAMPLES = 97
_FORCE_MARGIN = 2e-3  # BW kept above zero on the samples so the force stays >= 0 between them
_GOLDEN = 0.5 * (np.sqrt(5.0) - 1.0)

# Piece kinds and the sign its vertical speed must keep inside the piece.
DIP, PROPULSION, ABSORPTION, RECOVERY = "dip", "propulsion", "absorption", "recovery"
_SPEED_SIGN = {DIP: -1, PROPULSION: +1, ABSORPTION: -1, RECOVERY: +1}


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


def _unit_quintic_basis():
    """Coefficients of the six quintic Hermite basis functions on s in [0, 1].

    Row k is the polynomial whose (value, slope, curvature) at s = 0 and s = 1
    is the k-th unit vector of (p0, v0, a0, p1, v1, a1).
    """
    rows = []
    for k in range(6):
        cond = np.zeros(6)
        cond[k] = 1.0
        rows.append(quintic_between(*cond, 1.0).coef)
    return np.array(rows)


_BASIS = _unit_quintic_basis()
_GRID = np.linspace(0.0, 1.0, _SAMPLES)
_POWERS = _GRID[None, :] ** np.arange(6)[:, None]
# First and second derivatives in s of each basis function on the grid: (6, samples).
_D1 = (_BASIS[:, 1:] * np.arange(1, 6)) @ _POWERS[:5]
_D2 = (_BASIS[:, 2:] * np.arange(2, 6) * np.arange(1, 5)) @ _POWERS[:4]
# Third derivative in s at the two ends (s = 0, 1): (6, 2).
_D3_ENDS = (_BASIS[:, 3:] * np.array([6.0, 24.0, 60.0])) @ np.array([[1.0, 1.0], [0.0, 1.0], [0.0, 1.0]])


def _piece_samples(p0, v0, a0, p1, v1, a1, duration):
    """Speed [m/s] and acceleration [m/s^2] of a quintic piece on the unit grid."""
    speed, acc, _ = _piece_samples_and_jerk(p0, v0, a0, p1, v1, a1, duration)
    return speed, acc


def _piece_samples_and_jerk(p0, v0, a0, p1, v1, a1, duration):
    """:func:`_piece_samples` plus the jerk [m/s^3] at the piece's two ends."""
    T = duration
    weights = np.array([p0, v0 * T, a0 * T * T, p1, v1 * T, a1 * T * T])
    return weights @ _D1 / T, weights @ _D2 / (T * T), weights @ _D3_ENDS / T ** 3


def _affine_samples(spec, first_duration, second_duration):
    """Acceleration and speed samples, and the end jerks, as ``alpha + beta * a_b`` for both pieces.

    Returns ``[((acc_alpha, acc_beta), (speed_alpha, speed_beta), (jerk_alpha, jerk_beta)), ...]``,
    one per piece (jerks at the piece's start and end).
    """
    s, e = spec.start, spec.end
    v1, acc1, j1 = _piece_samples_and_jerk(s.height, s.speed, s.acceleration, spec.bottom_height, 0.0, 0.0,
                                           first_duration)
    bv1, bacc1, bj1 = _piece_samples_and_jerk(0, 0, 0, 0, 0, 1.0, first_duration)
    v2, acc2, j2 = _piece_samples_and_jerk(spec.bottom_height, 0.0, 0.0, e.height, e.speed, e.acceleration,
                                           second_duration)
    bv2, bacc2, bj2 = _piece_samples_and_jerk(0, 0, 1.0, 0, 0, 0, second_duration)
    return [((acc1, bacc1), (v1, bv1), (j1, bj1)), ((acc2, bacc2), (v2, bv2), (j2, bj2))]


def _minimise_peak(alpha, beta, lo, hi):
    """Minimum over x in [lo, hi] of max_i(alpha_i + beta_i x), by grid refinement.

    The function is convex (a maximum of lines), so shrinking the bracket around
    the best grid point converges to the minimum.
    """
    for _ in range(6):
        x = np.linspace(lo, hi, 25)
        peaks = np.max(alpha[:, None] + beta[:, None] * x[None, :], axis=0)
        k = int(np.argmin(peaks))
        lo, hi = x[max(k - 1, 0)], x[min(k + 1, len(x) - 1)]
    x_best = 0.5 * (lo + hi)
    return x_best, float(np.max(alpha + beta * x_best))


def _feasible_interval(spec, samples):
    """Interval of ``a_b`` meeting the linear limits, or ``None`` when empty."""
    lo, hi = -np.inf, np.inf
    g = spec.gravity
    for (acc, speed, jerk), kind in zip(samples, (spec.first_kind, spec.second_kind)):
        # a >= -g: the ground cannot pull. Inside the piece a small margin keeps the
        # limit between samples too; the ends may sit exactly at -g (take-off, touchdown).
        margin = np.full(acc[0].shape, g * _FORCE_MARGIN)
        margin[[0, -1]] = 0.0
        constraints = [(acc[0] + g - margin, acc[1])]
        # An end where the force is 0 (touchdown, take-off) must have the force growing into
        # the piece, or it dips below 0 before the first inner sample can see it.
        for end, into in ((0, 1.0), (-1, -1.0)):
            if abs(acc[1][end]) <= 1e-12 and abs(acc[0][end] + g) <= 1e-9 * g:
                constraints.append((np.array([into * jerk[0][end]]), np.array([into * jerk[1][end]])))
        sign = _SPEED_SIGN[kind]
        # Speed must keep its sign strictly inside the piece (ends are 0 or given).
        inner = slice(1, -1)
        constraints.append((sign * speed[0][inner], sign * speed[1][inner]))
        for alpha, beta in constraints:
            # alpha + beta * x >= 0 for every sample
            pos, neg, zero = beta > 1e-12, beta < -1e-12, np.abs(beta) <= 1e-12
            if np.any(zero & (alpha < -1e-9)):
                return None
            if pos.any():
                lo = max(lo, float(np.max(-alpha[pos] / beta[pos])))
            if neg.any():
                hi = min(hi, float(np.min(-alpha[neg] / beta[neg])))
    if spec.first_kind == DIP:
        lo = max(lo, 0.0)  # a braking stretch needs an upward push at the bottom
    if not lo < hi:
        return None
    return lo, hi


def best_bottom_acceleration(spec, first_duration, second_duration):
    """``(a_b, peak acceleration)`` minimising the peak force, or ``None`` if infeasible.

    The peak is the maximum of affine functions of ``a_b`` (convex), so a
    bracket refinement on the feasible interval finds its minimum.
    """
    samples = _affine_samples(spec, first_duration, second_duration)
    interval = _feasible_interval(spec, samples)
    if interval is None:
        return None
    lo, hi = interval
    # Keep a margin inside the interval so the speed limits hold strictly.
    span = hi - lo if np.isfinite(hi - lo) else None
    if span is None:
        lo = lo if np.isfinite(lo) else -1e3 * spec.gravity
        hi = hi if np.isfinite(hi) else 1e3 * spec.gravity
    eps = 1e-9 * max(1.0, abs(lo), abs(hi))
    lo, hi = lo + eps, hi - eps
    if not lo < hi:
        return None
    alpha = np.concatenate([samples[0][0][0], samples[1][0][0]])
    beta = np.concatenate([samples[0][0][1], samples[1][0][1]])
    a_b, peak = _minimise_peak(alpha, beta, lo, hi)
    if spec.first_kind == DIP and not _dip_has_one_turn(spec, a_b, first_duration, second_duration):
        return None
    return a_b, peak


def _dip_has_one_turn(spec, a_b, first_duration, second_duration):
    """The dip must unweight (a < 0) then brake (a > 0): one sign change only."""
    first, _ = build_pieces(spec, a_b, first_duration, second_duration)
    a = first.deriv(2)(np.linspace(0.0, first_duration, 4 * _SAMPLES)[1:])
    signs = np.sign(a[np.abs(a) > 1e-9 * spec.gravity])
    return signs.size > 0 and signs[0] < 0 and np.count_nonzero(np.diff(signs)) == 1


def _golden_min(f, lo, hi, iterations=40):
    """Minimum of a unimodal ``f`` on ``[lo, hi]``; ``f`` returns inf where infeasible."""
    # Scan first: infeasible ends and shallow plateaus defeat a bare golden search.
    grid = np.geomspace(lo, hi, 17)
    values = np.array([f(x) for x in grid])
    if not np.isfinite(values).any():
        return None
    k = int(np.argmin(values))
    a, b = grid[max(k - 1, 0)], grid[min(k + 1, len(grid) - 1)]
    c, d = b - _GOLDEN * (b - a), a + _GOLDEN * (b - a)
    fc, fd = f(c), f(d)
    for _ in range(iterations):
        if fc <= fd:
            b, d, fd = d, c, fc
            c = b - _GOLDEN * (b - a)
            fc = f(c)
        else:
            a, c, fc = c, d, fd
            d = a + _GOLDEN * (b - a)
            fd = f(d)
    best = min(((fc, c), (fd, d), (values[k], grid[k])))
    return best[1] if np.isfinite(best[0]) else None


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
    """

    def peak_for(d1, d2):
        found = best_bottom_acceleration(spec, d1, d2)
        return np.inf if found is None else found[1]

    lo, hi = duration_range
    free1, free2 = first_duration is None, second_duration is None
    d1, d2 = first_duration, second_duration
    if free1 and free2:
        # Both free: a coarse grid picks the start of the coordinate search.
        grid = np.geomspace(lo, hi, 9)
        values = [(peak_for(x, y), x, y) for x in grid for y in grid]
        best = min(values)
        if not np.isfinite(best[0]):
            return None
        d1, d2 = best[1], best[2]
    elif free1:
        d1 = np.sqrt(lo * hi)
    elif free2:
        d2 = np.sqrt(lo * hi)
    for _ in range(3 if (free1 and free2) else 1):
        if free2:
            d2 = _golden_min(lambda x: peak_for(d1, x), lo, hi)
            if d2 is None:
                return None
        if free1:
            d1 = _golden_min(lambda x: peak_for(x, d2), lo, hi)
            if d1 is None:
                return None
    found = best_bottom_acceleration(spec, d1, d2)
    if found is None:
        return None
    return StretchShape(found[0], float(d1), float(d2), found[1])
