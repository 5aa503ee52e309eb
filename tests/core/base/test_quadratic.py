"""Quadratic roots against numpy's companion-matrix roots (``numpy.roots``, the reference)."""

import numpy as np

from leapwright.core.base.quadratic import quadratic_roots


def test_quadratic_roots_match_numpy_roots():
    rng = np.random.default_rng(3)
    for _ in range(500):
        c = rng.normal(size=3) * 10.0 ** rng.uniform(-3, 3, 3)
        ours = sorted(quadratic_roots(*c))
        ref = sorted(r.real for r in np.roots(c) if abs(r.imag) <= 1e-12 * max(1.0, abs(r)))
        assert len(ours) == len(ref)
        for a, b in zip(ours, ref):
            assert abs(a - b) <= 1e-9 * max(1.0, abs(b))


def test_a_zero_leading_coefficient_leaves_the_line_and_a_tiny_one_keeps_its_digits():
    assert quadratic_roots(0.0, 2.0, -3.0) == [1.5]
    assert quadratic_roots(0.0, 0.0, 1.0) == []
    # x^2 - 1e8 x + 1: the small root 1e-8 loses every digit in the textbook formula
    small = min(quadratic_roots(1.0, -1e8, 1.0))
    assert abs(small - 1e-8) <= 1e-20
