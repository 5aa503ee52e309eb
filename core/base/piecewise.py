"""Piecewise polynomials of time: the exact form every planned curve takes."""

import functools
from dataclasses import dataclass

import numpy as np
from numpy.polynomial import Polynomial


@dataclass(frozen=True)
class PiecewisePolynomial:
    """A curve made of polynomials in local time, one per stretch.

    Parameters
    ----------
    starts : tuple of float
        Start time of each piece [s], increasing; piece ``i`` covers
        ``[starts[i], starts[i+1])`` and the last one ``[starts[-1], end]``.
    end : float
        End time of the last piece [s]. Outside ``[starts[0], end]`` the curve
        holds its end values (position kept, derivatives zero).
    pieces : tuple of numpy.polynomial.Polynomial
        Polynomial of local time ``t - starts[i]`` [s] for each piece.
    """

    starts: tuple
    end: float
    pieces: tuple

    def derivative_pieces(self, order):
        if not order:
            return self.pieces
        return tuple(Polynomial(c) for c in self._coefficients(order))

    @functools.cached_property
    def _derivatives(self):
        return {}

    def _coefficients(self, order):
        """Coefficient arrays of every piece's derivative ``order``, kept: differentiating through
        Polynomial objects costs more than evaluating, and key searches ask for speeds thousands of times."""
        cache = self._derivatives
        if order not in cache:
            out = []
            for p in self.pieces:
                if p.domain[0] != p.window[0] or p.domain[1] != p.window[1]:  # array_equal's checks cost more
                    p = p.convert()  # plain power series in local time
                c = np.array(p.coef, dtype=float)
                for _ in range(order):  # the same products as numpy's polyder, so the same bits
                    c = c[1:] * np.arange(1, len(c)) if len(c) > 1 else np.zeros(1)
                out.append(c)
            cache[order] = tuple(out)
        return cache[order]

    def evaluate(self, t, order=0):
        """Value (``order`` 0), speed (1) or acceleration (2) at times ``t`` [s]."""
        t = np.asarray(t, dtype=float)
        flat = np.atleast_1d(t).ravel()
        out = np.empty_like(flat)
        starts = np.asarray(self.starts)
        index = np.clip(np.searchsorted(starts, flat, side="right") - 1, 0, len(starts) - 1)
        if np.all(index[1:] >= index[:-1]):  # times in order: each piece's are one run, no masks
            runs = np.searchsorted(index, np.arange(len(starts) + 1))
            for i, coef in enumerate(self._coefficients(order)):
                if runs[i] < runs[i + 1]:  # times outside the curve are set below
                    out[runs[i]:runs[i + 1]] = _horner(coef, flat[runs[i]:runs[i + 1]] - starts[i])
        else:
            inside = (flat >= starts[0]) & (flat <= self.end)
            for i, coef in enumerate(self._coefficients(order)):
                sel = (index == i) & inside
                if sel.any():
                    out[sel] = _horner(coef, flat[sel] - starts[i])
        before, after = flat < starts[0], flat > self.end
        if order == 0:
            out[before] = self.pieces[0](0.0)
            out[after] = self.pieces[-1](self.end - starts[-1])
        else:
            out[before | after] = 0.0
        return out.reshape(t.shape) if t.ndim else float(out[0])

    def piece_bounds(self):
        """``(start, end)`` of every piece [s]."""
        ends = tuple(self.starts[1:]) + (self.end,)
        return tuple(zip(self.starts, ends))


def _horner(coef, x):
    """``sum(coef[k] x^k)`` by Horner's rule, the order numpy's polyval uses (the same bits)."""
    out = np.full(x.shape, coef[-1])
    for c in coef[-2::-1]:
        out = out * x + c
    return out


def quintic_between(p0, v0, a0, p1, v1, a1, duration):
    """The quintic with given position, speed and acceleration at both ends.

    Parameters
    ----------
    p0, v0, a0 : float
        Position [m], speed [m/s] and acceleration [m/s^2] at local time 0.
    p1, v1, a1 : float
        The same at local time ``duration`` [s].

    Returns
    -------
    numpy.polynomial.Polynomial
        Six conditions fix the six coefficients: joining such pieces makes a
        curve with continuous acceleration (C2), so the ground force is continuous.
    """
    T = float(duration)
    c0, c1, c2 = p0, v0, 0.5 * a0
    # What the end conditions leave for t^3..t^5 (position, speed, acceleration at T). With
    # c_k = d_k / T^k the system is [[1, 1, 1], [3, 4, 5], [6, 12, 20]] d = (r0, r1 T, r2 T^2),
    # whose inverse is [[10, -4, 1/2], [-15, 7, -1], [6, -3, 1/2]] (determinant 2).
    r0 = p1 - (c0 + c1 * T + c2 * T * T)
    r1 = (v1 - (c1 + 2.0 * c2 * T)) * T
    r2 = (a1 - 2.0 * c2) * T * T
    c3 = (10.0 * r0 - 4.0 * r1 + 0.5 * r2) / T**3
    c4 = (-15.0 * r0 + 7.0 * r1 - r2) / T**4
    c5 = (6.0 * r0 - 3.0 * r1 + 0.5 * r2) / T**5
    return Polynomial([c0, c1, c2, c3, c4, c5])


def smoothstep(duration):
    """``3s^2 - 2s^3`` with ``s = t / duration``: 0 -> 1 with zero slope at both ends."""
    T = float(duration)
    return Polynomial([0.0, 0.0, 3.0 / T**2, -2.0 / T**3])
