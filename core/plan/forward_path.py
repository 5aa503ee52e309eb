"""The forward (horizontal) path of the centre of mass while the feet are on the ground.

In a push the horizontal force is a ramp times the vertical force, Fx = k w(s) Fz
with w the smoothstep over the push proper, so it starts at 0 and fades with Fz at
take-off; through the release of a countermovement push (:mod:`.release`) the
ramp stays at 1 and Fx falls with Fz to 0. On landing the mirror ramp absorbs the forward speed. The constant
k (per m/s of speed change) is the largest Fx / Fz: the friction the step needs.
Plain coefficient arrays (ascending powers) keep it quick: the panel re-plans
while a value is dragged.
"""

import numpy as np
from numpy.polynomial import Polynomial

from ..base.piecewise import smoothstep

_polyval = np.polynomial.polynomial.polyval


def _integral(coef):
    """Coefficients of the integral from 0 of a polynomial (ascending powers)."""
    return np.concatenate([[0.0], coef / np.arange(1, coef.size + 1)])


def _ramped_support(z_piece, duration, gravity, absorbing):
    """Coefficients of w(s) (g + z'') (push) or (1 - w(s)) (g + z'') (absorption)."""
    c = z_piece.coef
    support = c[2:] * np.arange(2, c.size) * np.arange(1, c.size - 1)  # z'' + g
    support[0] += gravity
    w = smoothstep(float(duration)).coef
    return np.convolve(support, np.array([1.0, 0.0, 0.0, 0.0]) - w if absorbing else w)


def landing_unit_path(z_piece, duration, gravity):
    """Forward travel over an absorption for 1 m/s of touchdown speed, brought to rest.

    Parameters
    ----------
    z_piece : numpy.polynomial.Polynomial
        Height [m] over the absorption, of local time [s].
    duration : float
        Absorption duration [s].
    gravity : float
        [m/s^2]

    Returns
    -------
    (Polynomial, float)
        Forward position [m per m/s] of local time, and k, the largest Fx / Fz per m/s [s/m].
    """
    pushed = _integral(_ramped_support(z_piece, duration, gravity, True))
    k = 1.0 / float(_polyval(float(duration), pushed))
    speed = -k * pushed
    speed[0] += 1.0
    return Polynomial(_integral(speed)), k


def push_unit_paths(z_piece, duration, release, gravity):
    """Forward travel over a push and its release for 1 m/s of take-off speed, from rest.

    Parameters
    ----------
    z_piece : numpy.polynomial.Polynomial
        Height [m] over the push proper (bottom to the release), of local time [s].
    duration : float
        Its duration [s].
    release : float
        Release duration tau [s]; there g + z'' = g (1 - t / tau). 0: no release.
    gravity : float
        [m/s^2]

    Returns
    -------
    (Polynomial, Polynomial, float)
        Forward position [m per m/s] over the push proper and over the release (each of its local
        time, the release's starting where the push's ends), and k, the largest Fx / Fz per m/s [s/m].
    """
    pushed = _integral(_ramped_support(z_piece, duration, gravity, False))
    at_release = float(_polyval(float(duration), pushed))
    # w = 1 through the release (none: a rebound leaves at the end of its stretch)
    released = _integral(np.array([gravity, -gravity / release])) if release > 0.0 else np.zeros(3)
    k = 1.0 / (at_release + float(_polyval(release, released)))
    push_x = _integral(k * pushed)
    release_speed = k * released
    release_speed[0] += k * at_release
    release_x = _integral(release_speed)
    release_x[0] += float(_polyval(float(duration), push_x))
    return Polynomial(push_x), Polynomial(release_x), k
