"""The least peak force of a contact stretch, for many durations at once.

A stretch (:mod:`.contact_shapes`) is two quintics meeting at the bottom of the
crouch. On a fixed grid of local times s in [0, 1] a piece of duration T has

    a(s) = P(s) / T^2 + V(s) / T + A(s) + B(s) a_b,
    v(s) = P'(s) / T + V'(s) + A'(s) T + B'(s) T a_b,

with P, V, A set by the end heights, speeds and accelerations and a_b the
acceleration at the bottom. Every sample is therefore a line in a_b whose
offset is a polynomial in 1/T (and the speed limits, divided by their slope,
too). For fixed durations the ground-cannot-pull and one-way-speed limits cut
a_b to an interval and the peak force is the upper envelope of the lines:
:func:`.line_envelope.lowest_envelope` finds its minimum exactly. Along a free duration the
least peak is then piecewise quadratic in u = 1/T, its minimum the vertex of
one quadratic or the crossing of two (a closed form once the two are known);
:mod:`.shape_choice` finds them from a few batches of durations.
"""

import functools
from dataclasses import dataclass

import numpy as np

from ..base.piecewise import quintic_between
from .line_envelope import lowest_envelope

SAMPLES = 97  # grid points per piece
FORCE_MARGIN = 2e-3  # BW kept above zero on the inner samples so the force stays >= 0 between them
_TURN_SAMPLES = 4 * SAMPLES  # grid of the dip's one-turn check
_TURN_BAND = 1e-9  # g: a dip's acceleration within it counts as zero (neither sign)
_SPEED_SIGN = {"dip": -1, "propulsion": +1, "absorption": -1, "recovery": +1}


def _unit_quintic_basis():
    """Coefficients of the six quintic Hermite basis functions on s in [0, 1]."""
    rows = []
    for k in range(6):
        cond = np.zeros(6)
        cond[k] = 1.0
        rows.append(quintic_between(*cond, 1.0).coef)
    return np.array(rows)


def _derivative_table(grid, order):
    """Derivative ``order`` in s of each basis function on ``grid``: shape (6, len(grid))."""
    coef = _BASIS
    for _ in range(order):
        coef = coef[:, 1:] * np.arange(1, coef.shape[1])
    return coef @ (grid[None, :] ** np.arange(coef.shape[1])[:, None])


_BASIS = _unit_quintic_basis()
_GRID = np.linspace(0.0, 1.0, SAMPLES)
_D = {order: _derivative_table(_GRID, order) for order in (1, 2)}
_D3_ENDS = _derivative_table(np.array([0.0, 1.0]), 3)
_TURN_D2 = _derivative_table(np.linspace(0.0, 1.0, _TURN_SAMPLES)[1:], 2)
_ENVELOPE_SLOPE = np.concatenate([_D[2][5], _D[2][2]])

# Columns of the duration powers: T1^-3, T1^-2, T1^-1, 1, T1, T2^-3, T2^-2, T2^-1, T2.
_POWER = {(1, -3): 0, (1, -2): 1, (1, -1): 2, (1, 0): 3, (1, 1): 4,
          (2, -3): 5, (2, -2): 6, (2, -1): 7, (2, 0): 3, (2, 1): 8}


def duration_powers(first, second):
    """The (n, 9) matrix of duration powers that :class:`LineTables` multiplies."""
    out = np.empty((first.shape[0], 9))
    out[:, 2] = r1 = 1.0 / first
    out[:, 1] = r1 * r1
    out[:, 0] = out[:, 1] * r1
    out[:, 3] = 1.0
    out[:, 4] = first
    out[:, 7] = r2 = 1.0 / second
    out[:, 6] = r2 * r2
    out[:, 5] = out[:, 6] * r2
    out[:, 8] = second
    return out


def _piece_rows(table, ends, piece, order):
    """Coefficient rows (9, m) of derivative ``order`` of a piece over the duration powers."""
    p0, v0, a0, p1, v1, a1 = ends
    rows = np.zeros((9, table.shape[1]))
    rows[_POWER[piece, -order]] += p0 * table[0] + p1 * table[3]
    rows[_POWER[piece, 1 - order]] += v0 * table[1] + v1 * table[4]
    rows[_POWER[piece, 2 - order]] += a0 * table[2] + a1 * table[5]
    return rows


def _slope_rows(table, piece, order):
    """Coefficient rows (9, m) of the a_b slope of a piece's derivative ``order``."""
    rows = np.zeros((9, table.shape[1]))
    rows[_POWER[piece, 2 - order]] = table[5] if piece == 1 else table[2]
    return rows


def _limit_rows(x, first_kind, second_kind, zero_force, lined):
    """Every limit of a stretch as ``offset + slope a_b >= 0``, each (9, m), for parameters ``x``.

    ``x`` is (start height, speed, acceleration, bottom height, end height, speed,
    acceleration, g); the offsets are linear in it and the slopes do not depend on it, so
    :func:`_layout` builds them once per kind of stretch. Also the envelope's offsets
    (the acceleration at every sample) and the dip's turn-check offsets.
    """
    sh, sv, sa, zb, eh, ev, ea, g = x
    ends = {1: (sh, sv, sa, zb, 0.0, 0.0), 2: (zb, 0.0, 0.0, eh, ev, ea)}
    acc = np.concatenate([_piece_rows(_D[2], ends[k], k, 2) for k in (1, 2)], axis=1)
    margin = np.full(2 * SAMPLES, g * FORCE_MARGIN)
    margin[[0, SAMPLES - 1, SAMPLES, 2 * SAMPLES - 1]] = 0.0  # the ends may sit exactly at -g
    force = acc.copy()
    force[3] += g - margin
    offsets, slopes = [force], [np.concatenate([_slope_rows(_D[2], k, 2) for k in (1, 2)], axis=1)]
    for piece, column, into, zero in ((1, 0, 1.0, zero_force[0]), (2, 1, -1.0, zero_force[1])):
        if zero:
            # A zero-force end (touchdown, take-off) needs the force growing into the piece.
            table = _D3_ENDS[:, [column]]
            offsets.append(into * _piece_rows(table, ends[piece], piece, 3))
            slopes.append(into * _slope_rows(table, piece, 3))
    for piece, kind in ((1, first_kind), (2, second_kind)):
        sign = _SPEED_SIGN[kind]  # the speed keeps its sign strictly inside the piece
        inner = _D[1][:, 1:-1]
        offsets.append(sign * _piece_rows(inner, ends[piece], piece, 1))
        slopes.append(sign * _slope_rows(inner, piece, 1))
    # Outer bounds keep a_b finite (a thousand g either way); a dip needs an upward push at the bottom.
    for offset, slope in ((1e3 * g, 1.0), (1e3 * g, -1.0)) + (((0.0, 1.0),) if first_kind == "dip" else ()):
        offsets.append(np.zeros((9, 1)))
        offsets[-1][3] = offset
        slopes.append(np.zeros((9, 1)))
        slopes[-1][3] = slope
    turn = _piece_rows(_TURN_D2, ends[1], 1, 2) if first_kind == "dip" else np.zeros((9, 0))
    if lined:
        # A dip from rest with no acceleration has a(s) = s q(s), q quadratic: on the grid it turns
        # once exactly when its first sample is below zero and its last (a_b) above, two more lines.
        band = _TURN_BAND * g
        offsets += [-turn[:, :1], np.zeros((9, 1))]
        offsets[-2][3] -= band
        offsets[-1][3] = -band
        slopes += [np.zeros((9, 1)), np.zeros((9, 1))]
        slopes[-2][3], slopes[-1][3] = -_TURN_D2[5][0], 1.0
    return acc, np.concatenate(offsets, axis=1), np.concatenate(slopes, axis=1), turn


@dataclass(frozen=True)
class _Layout:
    """A kind of stretch's limits as linear maps of its eight parameters (see :func:`_layout`):
    the envelope's offsets (8, 9, m), the bounds on a_b stacked (8, 9, limits), the dip's turn
    lines, where the flat, lower and upper bounds sit in the stack, and each bound group's
    ``(starts, duration power)``."""

    envelope: np.ndarray
    stacked: np.ndarray
    turn: np.ndarray
    cuts: list
    groups: list


@functools.lru_cache(maxsize=32)
def _layout(first_kind, second_kind, zero_force, lined):
    """The limits of one kind of stretch, kept as bounds on a_b, each a matrix product.

    Every slope is one duration power ``p_k`` times a constant ``c`` (``p_k > 0``), so a
    limit's bound ``-offset / slope`` is ``(powers @ (-offset / c)) / p_k``: rising limits
    (``c > 0``) are lower bounds, falling ones upper bounds, flat ones a plain test. Grouped by
    ``k``, each group's tightest bound is one reduction before the division by its power.
    Offsets are linear in the stretch's parameters, so each table is kept per parameter
    (8, 9, m) and a stretch's own is one contraction.
    """
    rows = [_limit_rows(unit, first_kind, second_kind, zero_force, lined) for unit in np.eye(8)]
    slope = rows[0][2]
    live = np.abs(slope) > 1e-12
    if np.any(live.sum(axis=0) > 1):
        raise AssertionError("a limit's slope spans two duration powers")  # _limit_rows forbids it
    power = live.argmax(axis=0)
    c = np.where(live.any(axis=0), slope[power, np.arange(slope.shape[1])], 0.0)
    offset = np.stack([r[1] for r in rows])  # (8, 9, m)
    parts, groups = [offset[:, :, c == 0.0]], []
    for side in (c > 0.0, c < 0.0):
        order = np.flatnonzero(side)[np.argsort(power[side], kind="stable")]
        ks, starts = np.unique(power[order], return_index=True)
        groups.append((starts, ks))
        parts.append(-offset[:, :, order] / c[order])
    ends = np.cumsum([0] + [p.shape[2] for p in parts]).tolist()
    return _Layout(np.stack([r[0] for r in rows]), np.concatenate(parts, axis=2),
                   np.stack([r[3] for r in rows]), [slice(a, b) for a, b in zip(ends[:-1], ends[1:])], groups)


class LineTables:
    """Every sample of a stretch as a line in a_b, its offset and slope linear in the duration powers."""

    def __init__(self, spec, turn_by_lines=True):
        s, e, zb, g = spec.start, spec.end, spec.bottom_height, spec.gravity
        self.spec = spec
        self.dip = spec.first_kind == "dip"
        # (``turn_by_lines=False`` keeps the sample-by-sample check of the dip's one turn: the
        # slow exact path the tests compare with.)
        self.turn_by_lines = turn_by_lines and self.dip and abs(s.acceleration) <= 1e-12 * g
        zero_force = tuple(bool(abs(a + g) <= 1e-9 * g) for a in (s.acceleration, e.acceleration))
        layout = _layout(spec.first_kind, spec.second_kind, zero_force, self.turn_by_lines)
        x = np.array([s.height, s.speed, s.acceleration, zb, e.height, e.speed, e.acceleration, g], dtype=float)
        self.envelope_offset = np.tensordot(x, layout.envelope, 1)
        self.envelope_slope = _ENVELOPE_SLOPE
        if self.dip and not self.turn_by_lines:  # the sample-by-sample turn check alone reads them
            self.turn_offset = np.tensordot(x, layout.turn, 1)
            self.turn_slope = _TURN_D2[5]
        self._stacked = np.tensordot(x, layout.stacked, 1)
        self._cuts, self._groups = layout.cuts, layout.groups
        self.hint = None  # the (falling, rising) line pairs that crossed at the last batch's minima

    def feasible_interval(self, powers):
        """``(lo, hi)``: the a_b interval meeting the limits at each duration pair (empty: ``lo >= hi``)."""
        products = powers @ self._stacked
        flat, lower, upper = (products[:, cut] for cut in self._cuts)
        (lower_starts, lower_k), (upper_starts, upper_k) = self._groups
        ok = flat.min(axis=1, initial=np.inf) >= -1e-9
        lo = (np.maximum.reduceat(lower, lower_starts, axis=1) / powers[:, lower_k]).max(axis=1)
        hi = (np.minimum.reduceat(upper, upper_starts, axis=1) / powers[:, upper_k]).min(axis=1)
        eps = 1e-9 * np.maximum(1.0, np.maximum(np.abs(lo), np.abs(hi)))
        return np.where(ok, lo + eps, np.inf), np.where(ok, hi - eps, -np.inf)

    def least_peaks(self, first, second):
        """``(a_b, peak acceleration [m/s^2])`` for duration arrays; peak ``inf`` where infeasible."""
        powers = duration_powers(np.asarray(first, dtype=float), np.asarray(second, dtype=float))
        lo, hi = self.feasible_interval(powers)
        feasible = lo < hi
        a_b, peak = np.zeros(len(lo)), np.full(len(lo), np.inf)
        if feasible.any():  # infeasible durations (most of a coarse grid, often) need no envelope
            p = powers[feasible] if not feasible.all() else powers
            a_b[feasible], peak[feasible], self.hint = lowest_envelope(
                p @ self.envelope_offset, self.envelope_slope, lo[feasible], hi[feasible], self.hint)
        if self.dip and not self.turn_by_lines:
            turns = self._dip_turns_once(powers, a_b)
            if not np.all(turns | ~feasible):
                a_b, peak, turns = self._turn_once(powers, a_b, peak, turns, lo, hi, feasible)
            feasible &= turns
        return a_b, np.where(feasible, peak, np.inf)

    def _turn_once(self, powers, a_b, peak, turns, lo, hi, feasible):
        """Where the least-peak bottom acceleration makes the dip turn twice, the nearest one that turns once.

        The peak is convex in a_b, so the best a_b that turns once is the edge of the
        turning-once set nearest the unconstrained best: found by bisection towards
        whichever interval end turns once (the lower peak first).
        """
        rows = np.flatnonzero(~turns & feasible)
        p, x0 = powers[rows], a_b[rows]
        alpha = p @ self.envelope_offset
        ends = []
        for end in (lo[rows], hi[rows]):
            ok = self._dip_turns_once(p, end)
            ends.append((end, ok, np.max(alpha + self.envelope_slope * end[:, None], axis=1)))
        (lo_x, lo_ok, lo_peak), (hi_x, hi_ok, hi_peak) = ends
        use_hi = hi_ok & (~lo_ok | (hi_peak <= lo_peak))
        good = np.where(use_hi, hi_x, lo_x)
        bad = x0.copy()
        for _ in range(14):
            mid = 0.5 * (good + bad)
            ok = self._dip_turns_once(p, mid)
            good, bad = np.where(ok, mid, good), np.where(ok, bad, mid)
        good = self._snap_to_turn(p, good, bad)
        found = lo_ok | hi_ok
        a_b, peak, turns = a_b.copy(), peak.copy(), turns.copy()
        a_b[rows] = np.where(found, good, a_b[rows])
        peak[rows] = np.where(found, np.max(alpha + self.envelope_slope * good[:, None], axis=1), peak[rows])
        turns[rows] = found
        return a_b, peak, turns

    def _snap_to_turn(self, powers, good, bad):
        """The exact edge in each bracket: where a checked sample of the dip crosses its zero band.

        The sign pattern only changes where a sample's acceleration crosses +-1e-9 g, a line in
        a_b; of those crossings inside (bad, good], the one nearest ``bad`` that turns once.
        """
        band = _TURN_BAND * self.spec.gravity
        offsets = powers @ self.turn_offset
        out = good.copy()
        for row in range(len(good)):
            lo, hi = sorted((bad[row], good[row]))
            cross = np.concatenate([(band - offsets[row]) / self.turn_slope, (-band - offsets[row]) / self.turn_slope])
            cross = cross[np.isfinite(cross) & (cross > lo) & (cross <= hi)]
            step = 1e-12 * max(1.0, abs(good[row]))
            trial = np.sort(cross + np.sign(good[row] - bad[row]) * step)
            trial = trial[::-1] if bad[row] > good[row] else trial
            if trial.size:
                ok = self._dip_turns_once(np.repeat(powers[row:row + 1], trial.size, axis=0), trial)
                if ok.any():
                    out[row] = trial[np.argmax(ok)]
        return out

    def _dip_turns_once(self, powers, a_b):
        """The dip must unweight (a < 0) then brake (a > 0): one sign change only."""
        acc = powers @ self.turn_offset + a_b[:, None] * self.turn_slope
        signs = np.where(np.abs(acc) > _TURN_BAND * self.spec.gravity, np.sign(acc), 0.0)
        # Carry the last non-zero sign over zeros, then count the changes.
        index = np.where(signs != 0, np.arange(signs.shape[1]), 0)
        np.maximum.accumulate(index, axis=1, out=index)
        carried = np.take_along_axis(signs, index, axis=1)
        first_sign = carried[np.arange(len(a_b)), np.argmax(signs != 0, axis=1)]
        changes = np.count_nonzero((carried[:, 1:] != carried[:, :-1]) & (carried[:, :-1] != 0), axis=1)
        return (first_sign < 0) & (changes == 1)


@functools.lru_cache(maxsize=64)
def line_tables(spec):
    """:class:`LineTables` of a stretch (kept: a rebound stretch is shared by every hop)."""
    return LineTables(spec)
