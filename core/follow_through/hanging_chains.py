"""The first swing mode of a chain hanging free under gravity: uniform, or tapering.

A flexible chain (hair, a tail, a cloth panel) held at its top and hanging under its
weight swings sideways, for small angles, by ``rho y_tt = (T y_x)_x`` with the
tension ``T(x) = g * (mass below x)``. Its first mode sets how fast the part swings,
and from it the presets from a physical description (:mod:`.presets`).

References
----------
Textbook hanging-chain result (Bernoulli and Euler): a uniform chain of length L
swings at ``omega_1 = (j_0,1 / 2) sqrt(g / L)``, ``j_0,1 = 2.4048`` the first zero
of the Bessel function J0 (the formula from memory, the zero from any table of J0).
"""

import math

import numpy as np

from ..base.constants import STANDARD_GRAVITY

__all__ = ["BESSEL_J0_FIRST_ZERO", "hanging_frequency", "tapered_hanging_frequency"]

#: First zero of the Bessel function J0 (any table of J0).
BESSEL_J0_FIRST_ZERO = 2.404825557695773
#: Point masses the tapering chain is split into (and half as many): the lumped chain's
#: first mode is off by about 0.25 / count, first order, so the two counts'
#: Richardson extrapolation ``2 f(n) - f(n / 2)`` is taken.
_LUMPS = 400


def hanging_frequency(length, gravity=STANDARD_GRAVITY):
    """First-mode frequency [Hz] of a uniform chain of ``length`` [m] hanging free:
    ``(2.4048 / 2) sqrt(g / L) / (2 pi)`` (textbook hanging-chain result)."""
    return 0.5 * BESSEL_J0_FIRST_ZERO * math.sqrt(gravity / length) / (2.0 * math.pi)


def tapered_hanging_frequency(length, density, gravity=STANDARD_GRAVITY):
    """First-mode frequency [Hz] of a chain of ``length`` [m] hanging free whose mass per
    length, from the top down, is ``density(s)`` (``s`` from 0 at the top to 1 at the
    free end; only its shape matters, not its scale).

    The chain is split into equal links with the mass of each slice at its lower end (a
    lumped hanging chain); each link's tension is g times the mass below it, and the
    small sideways swing is the eigenproblem ``M y'' = -K y`` with ``K`` tridiagonal
    (link tension over link length), extrapolated in the number of links (Richardson).

    Parameters
    ----------
    length : float
        Hanging length [m], > 0.
    density : callable
        Mass per length (relative) at the fractions ``s`` (numpy array), > 0.
    gravity : float
        Gravity [m/s^2].

    Returns
    -------
    float
        Frequency [Hz].
    """
    return 2.0 * _lumped_frequency(length, density, gravity, _LUMPS) - _lumped_frequency(length, density, gravity, _LUMPS // 2)


def _lumped_frequency(length, density, gravity, n):
    """First-mode frequency [Hz] of the chain as ``n`` point masses on equal links."""
    edges = np.linspace(0.0, 1.0, n + 1)
    # mass of each slice by Simpson's rule, hung at its lower end
    mass = (density(edges[:-1]) + 4.0 * density(0.5 * (edges[:-1] + edges[1:])) + density(edges[1:])) / (6.0 * n)
    tension = gravity * np.cumsum(mass[::-1])[::-1]  # link i carries slices i..n-1
    stiff = tension / (length / n)
    k = np.diag(stiff + np.append(stiff[1:], 0.0)) - np.diag(stiff[1:], 1) - np.diag(stiff[1:], -1)
    scale = 1.0 / np.sqrt(mass)
    omega2 = np.linalg.eigvalsh(scale[:, None] * k * scale[None, :])[0]
    return math.sqrt(omega2) / (2.0 * math.pi)
