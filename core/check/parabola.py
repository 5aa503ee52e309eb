"""A free-fall parabola fitted to samples, and a run of samples it explains."""

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Parabola:
    """``z(t) = apex_height - gravity/2 (t - apex_time)^2``.

    Attributes
    ----------
    gravity : float  downward acceleration [m/s^2] (positive for concave down)
    apex_time : float  time of the vertex [s]
    apex_height : float  height of the vertex [m]
    rms : float  root-mean-square residual of the fitted samples [m]
    max_abs : float  largest absolute residual [m]
    """

    gravity: float
    apex_time: float
    apex_height: float
    rms: float
    max_abs: float

    def height(self, t):
        """Height at times ``t`` [s] -> [m]."""
        return self.apex_height - 0.5 * self.gravity * (np.asarray(t, float) - self.apex_time) ** 2

    def speed(self, t):
        """Vertical speed at times ``t`` [s] -> [m/s]."""
        return -self.gravity * (np.asarray(t, float) - self.apex_time)


@dataclass(frozen=True)
class Stretch:
    """A run of key samples ``first..last`` (inclusive indices) fitted by one or two parabolas.

    ``rise`` and ``fall`` are the same object for a plain flight; for a stylised flight
    they are fitted separately on each side of the top.
    """

    first: int
    last: int
    rise: Parabola
    fall: Parabola
    rms: float
    max_abs: float


def fit_parabola(t, z):
    """Least-squares parabola through samples.

    Parameters
    ----------
    t : ndarray  times [s], at least 3 distinct
    z : ndarray  heights [m]

    Returns
    -------
    Parabola
        With ``gravity`` 0 and the vertex at the mean time when the samples are collinear.
    """
    t = np.asarray(t, float)
    z = np.asarray(z, float)
    t0 = float(t.mean())
    span = float(t.max() - t.min()) or 1.0
    # Scaled, centred time keeps the 3x3 problem well conditioned at frame 10 000.
    u = (t - t0) / span
    design = np.stack([u * u, u, np.ones_like(u)], axis=1)
    coef, *_ = np.linalg.lstsq(design, z, rcond=None)
    resid = z - design @ coef
    c2, c1, c0 = coef / np.array([span * span, span, 1.0])
    gravity = -2.0 * c2
    if abs(c2) * span * span > 1e-12 * (abs(c1) * span + abs(c0) + 1e-300):
        apex_time = t0 - c1 / (2.0 * c2)
        apex_height = c0 - c1 * c1 / (4.0 * c2)
    else:
        gravity, apex_time, apex_height = 0.0, t0, c0
    if not (np.isfinite(apex_time) and np.isfinite(apex_height)):
        gravity, apex_time, apex_height = 0.0, t0, c0
    return Parabola(float(gravity), float(apex_time), float(apex_height),
                    float(np.sqrt(np.mean(resid * resid))), float(np.max(np.abs(resid))))
