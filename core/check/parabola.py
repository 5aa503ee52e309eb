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

    Notes
    -----
    The checker fits hundreds of thousands of short stretches on a long path, so the
    3x3 normal equations are solved directly (in centred, scaled time and height, where
    they are well conditioned) rather than through a general least-squares solver, whose
    fixed cost per call is ten times the arithmetic here.
    """
    t = np.asarray(t, float)
    z = np.asarray(z, float)
    n = len(t)
    t0 = float(t.mean())
    span = float(t.max() - t.min()) or 1.0
    # Scaled, centred time keeps the 3x3 problem well conditioned at frame 10 000.
    u = (t - t0) / span
    z0 = float(z.mean())
    zc = z - z0
    u2 = u * u
    s1, s2, s3, s4 = float(u.sum()), float(u2.sum()), float(u2 @ u), float(u2 @ u2)
    b2, b1, b0 = float(zc @ u2), float(zc @ u), float(zc.sum())
    coef = _solve_normal(s1, s2, s3, s4, float(n), b2, b1, b0)
    if coef is None:
        design = np.stack([u2, u, np.ones_like(u)], axis=1)
        coef = np.linalg.lstsq(design, zc, rcond=None)[0]
    a2, a1, a0 = (float(c) for c in coef)
    resid = zc - (a2 * u2 + a1 * u + a0)
    return _vertex(a2, a1, a0 + z0, t0, span, float(np.sqrt(resid @ resid / n)), float(np.abs(resid).max()))


def _solve_normal(s1, s2, s3, s4, s0, b2, b1, b0):
    """(a2, a1, a0) of the 3x3 normal equations by Cramer's rule, or None when singular."""
    m11, m12, m13, m22, m23, m33 = s4, s3, s2, s2, s1, s0
    c11 = m22 * m33 - m23 * m23
    c12 = m13 * m23 - m12 * m33
    c13 = m12 * m23 - m13 * m22
    det = m11 * c11 + m12 * c12 + m13 * c13
    if not det > 1e-12 * max(m11 * m22 * m33, 1e-300):
        return None
    c22 = m11 * m33 - m13 * m13
    c23 = m12 * m13 - m11 * m23
    c33 = m11 * m22 - m12 * m12
    return ((c11 * b2 + c12 * b1 + c13 * b0) / det,
            (c12 * b2 + c22 * b1 + c23 * b0) / det,
            (c13 * b2 + c23 * b1 + c33 * b0) / det)


def _vertex(a2, a1, a0, t0, span, rms, max_abs):
    """The Parabola of ``a2 u^2 + a1 u + a0`` in scaled time ``u = (t - t0) / span``."""
    c2, c1, c0 = a2 / (span * span), a1 / span, a0
    gravity = -2.0 * c2
    if abs(c2) * span * span > 1e-12 * (abs(c1) * span + abs(c0) + 1e-300):
        apex_time = t0 - c1 / (2.0 * c2)
        apex_height = c0 - c1 * c1 / (4.0 * c2)
    else:
        gravity, apex_time, apex_height = 0.0, t0, c0
    if not (np.isfinite(apex_time) and np.isfinite(apex_height)):
        gravity, apex_time, apex_height = 0.0, t0, c0
    return Parabola(float(gravity), float(apex_time), float(apex_height), rms, max_abs)


def window_fits(t, z, width, chunk=200_000):
    """Gravity [m/s^2] and largest residual [m] of the parabola over every ``width`` samples.

    The same fits as :func:`fit_parabola` on ``t[s:s + width]`` for every start ``s``,
    solved all at once (in chunks, so memory stays bounded on long paths).

    Returns
    -------
    gravity, max_abs : ndarray (n - width + 1,)
    """
    n = len(t)
    if n < width:
        return np.empty(0), np.empty(0)
    tw_all = np.lib.stride_tricks.sliding_window_view(np.asarray(t, float), width)
    zw_all = np.lib.stride_tricks.sliding_window_view(np.asarray(z, float), width)
    gravity, max_abs = np.empty(len(tw_all)), np.empty(len(tw_all))
    for c in range(0, len(tw_all), chunk):
        gravity[c:c + chunk], max_abs[c:c + chunk] = _fit_rows(tw_all[c:c + chunk], zw_all[c:c + chunk], None)
    return gravity, max_abs


def range_fits(t, z, firsts, lasts):
    """Gravity [m/s^2] and largest residual [m] of :func:`fit_parabola` on each ``t[a:b + 1]``.

    Parameters
    ----------
    t, z : ndarray  increasing times [s] and heights [m]
    firsts, lasts : sequence of int  inclusive index ranges, each of at least 3 samples

    Returns
    -------
    gravity, max_abs : ndarray (len(firsts),)
    """
    firsts, lasts = np.asarray(firsts, int), np.asarray(lasts, int)
    width = int(np.max(lasts - firsts)) + 1
    idx = firsts[:, None] + np.arange(width)[None]
    inside = idx <= lasts[:, None]
    # Padding repeats each range's first sample with zero weight: it changes no sum.
    idx = np.where(inside, idx, firsts[:, None])
    t = np.asarray(t, float)
    return _fit_rows(t[idx], np.asarray(z, float)[idx], inside, (t[lasts] - t[firsts])[:, None])


def _fit_rows(tw, zw, inside, span=None):
    """Gravity and largest residual of a parabola fitted to each row (``inside`` marks the
    samples; ``span`` each row's time span [s] when known)."""
    w = np.ones(tw.shape) if inside is None else inside.astype(float)
    count = w.sum(1, keepdims=True)
    t0 = (tw * w).sum(1, keepdims=True) / count
    if span is None:
        span = tw.max(1, keepdims=True) - tw.min(1, keepdims=True)
    span[span == 0] = 1.0
    u = (tw - t0) / span * w
    z0 = (zw * w).sum(1) / count[:, 0]
    zc = (zw - z0[:, None]) * w
    u2 = u * u
    s0, s1, s2 = count[:, 0], u.sum(1), u2.sum(1)
    s3, s4 = (u2 * u).sum(1), (u2 * u2).sum(1)
    b2, b1, b0 = (zc * u2).sum(1), (zc * u).sum(1), zc.sum(1)
    c11 = s2 * s0 - s1 * s1
    c12 = s2 * s1 - s3 * s0
    c13 = s3 * s1 - s2 * s2
    det = s4 * c11 + s3 * c12 + s2 * c13
    good = det > 1e-12 * np.maximum(s4 * s2 * s0, 1e-300)
    det = np.where(good, det, 1.0)
    c22 = s4 * s0 - s2 * s2
    c23 = s3 * s2 - s4 * s1
    c33 = s4 * s2 - s3 * s3
    a2 = (c11 * b2 + c12 * b1 + c13 * b0) / det
    a1 = (c12 * b2 + c22 * b1 + c23 * b0) / det
    a0 = (c13 * b2 + c23 * b1 + c33 * b0) / det
    resid = (zc - (a2[:, None] * u2 + a1[:, None] * u + a0[:, None] * w)) * w
    flat = ~(np.abs(a2) > 1e-12 * (np.abs(a1) + np.abs(a0 + z0) + 1e-300))
    gravity = np.where(flat | ~good, 0.0, -2.0 * a2 / span[:, 0] ** 2)
    max_abs = np.where(good, np.abs(resid).max(axis=1), np.inf)
    for k in np.flatnonzero(~good):
        keep = w[k] > 0
        fit = fit_parabola(tw[k][keep], zw[k][keep])
        gravity[k], max_abs[k] = fit.gravity, fit.max_abs
    return gravity, max_abs
