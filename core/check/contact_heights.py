"""Heights in contact from a sampled path: the lowest point after a landing, the depth
of the countermovement, each with its standard error (0 for keyed paths), which the
checker's landing and dip figures carry.
"""

import numpy as np

from .capture_flights import MEASURED_NOISE_M


def lowest_height(frames, z, low, first, last, fps, noise, step=None):
    """Height of the lowest point after a landing [m] and its standard error [m].

    Keyed paths: the lowest sample. Measured paths: the bottom of a quadratic fitted
    over about 0.1 s around the lowest sample, so that one sample's jitter does not set it.
    """
    if noise <= MEASURED_NOISE_M:
        return float(z[low]), 0.0
    if step is None:
        step = median_step(frames, fps)
    half = max(2, int(round(0.05 / max(step, 1e-12))))
    a, b = max(low - half, first), min(low + half, last)
    if b - a < 3:
        return float(z[low]), noise
    tt = (frames[a:b + 1] - frames[low]) / fps
    coef = np.polyfit(tt, z[a:b + 1], 2)
    if coef[0] <= 0:
        return float(z[low]), noise
    bottom = float(coef[2] - coef[1] ** 2 / (4 * coef[0]))
    return min(bottom, float(np.max(z[a:b + 1]))), noise * float(np.sqrt(3.0 / (b - a + 1)))


def median_step(frames, fps):
    """Median time between samples [s] (1 for a single sample)."""
    return float(np.median(np.diff(frames))) / fps if len(frames) > 1 else 1.0


def dip_depth(frames, z, s, lowest, fps, noise, step):
    """Depth of the countermovement [m] and its standard error [m] (see :class:`HopForces`)."""
    quiet = max(1, int(round(0.1 / max(step, 1e-12))))
    top = z[s:min(s + quiet, lowest) + 1]
    z_low, low_sd = lowest_height(frames, z, lowest, s, lowest, fps, noise, step)
    if noise <= MEASURED_NOISE_M:
        return float(np.mean(top) - z_low), 0.0
    return float(np.mean(top) - z_low), float(np.hypot(low_sd, noise / np.sqrt(len(top))))
