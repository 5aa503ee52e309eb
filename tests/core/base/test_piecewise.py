"""The quintic joining two ends against scipy's own Hermite construction.

Reference: ``scipy.interpolate.BPoly.from_derivatives`` builds the polynomial in
Bernstein form with given derivatives at both ends (an independent algorithm from
the closed-form coefficients ``quintic_between`` uses).
"""

import numpy as np
import pytest

interpolate = pytest.importorskip("scipy.interpolate")

from leapwright.core.base.piecewise import quintic_between


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
