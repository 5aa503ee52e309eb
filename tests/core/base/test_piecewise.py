"""Piecewise polynomials against scipy's own.

References: ``scipy.interpolate.BPoly.from_derivatives`` builds the polynomial in
Bernstein form with given derivatives at both ends (an independent algorithm from
the closed-form coefficients ``quintic_between`` uses); ``scipy.interpolate.PPoly``
evaluates a piecewise polynomial in local powers (its own search and evaluation).
"""

import numpy as np
import pytest

interpolate = pytest.importorskip("scipy.interpolate")

from numpy.polynomial import Polynomial

from leapwright.core.base.piecewise import PiecewisePolynomial, quintic_between


@pytest.mark.parametrize("duration", [0.02, 0.15, 0.4, 1.3, 7.0])
def test_quintic_between_matches_scipy_hermite(duration):
    rng = np.random.default_rng(int(duration * 1000))
    for _ in range(20):
        p0, v0, a0, p1, v1, a1 = rng.normal(0.0, [0.3, 2.0, 15.0, 0.3, 2.0, 15.0])
        ours = quintic_between(p0, v0, a0, p1, v1, a1, duration)
        ref = interpolate.BPoly.from_derivatives([0.0, duration], [[p0, v0, a0], [p1, v1, a1]])
        t = np.linspace(0.0, duration, 41)
        for order in range(3):
            scale = max(1.0, np.max(np.abs(ref(t, order))))
            assert np.allclose(ours.deriv(order)(t), ref(t, order), rtol=0.0, atol=1e-10 * scale)


@pytest.mark.parametrize("shuffled", [False, True], ids=["times in order", "times shuffled"])
def test_piecewise_values_match_scipy_ppoly(shuffled):
    # Times in order are evaluated piece by piece in runs, others piece by piece by mask:
    # both must be scipy's piecewise polynomial, breakpoints included (the piece starting there).
    rng = np.random.default_rng(7)
    starts = np.cumsum(np.concatenate([[0.3], rng.uniform(0.05, 0.4, 8)]))
    end = starts[-1] + 0.25
    coefs = [rng.normal(0.0, 1.0, rng.integers(1, 7)) for _ in starts]
    path = PiecewisePolynomial(tuple(starts), end, tuple(Polynomial(c) for c in coefs))
    table = np.zeros((6, len(starts)))
    for i, c in enumerate(coefs):
        table[6 - len(c):, i] = c[::-1]  # scipy's highest power first
    ref = interpolate.PPoly(table, np.append(starts, end))
    t = np.concatenate([rng.uniform(starts[0], end, 300), starts, [end]])
    t = rng.permutation(t) if shuffled else np.sort(t)
    for order in range(3):
        assert np.allclose(path.evaluate(t, order), ref(t, order), rtol=1e-12, atol=1e-12)
