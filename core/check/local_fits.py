"""Least-squares polynomials over sliding windows, as linear filters (fast on long paths).

On evenly spaced samples a least-squares polynomial over a fixed window is a fixed
linear combination of the window's samples (Savitzky & Golay 1964), so every window
of a million-sample path is fitted by a few convolutions instead of a million small
solves. Uneven samples (hand-keyed frames on a retimed strip) fall back to solving
each window, in chunks so that memory stays bounded.

References
----------
Savitzky & Golay 1964, Analytical Chemistry 36(8):1627-1639: smoothing and
differentiation by least-squares polynomials over a moving window.
"""

import numpy as np

#: Windows solved at once when the samples are uneven (bounds memory to ~100 MB).
CHUNK = 100_000


def evenly_spaced(t):
    """True when the sample times are evenly spaced (to 1e-9 of a step)."""
    if len(t) < 3:
        return True
    dt = np.diff(t)
    step = float(np.median(dt))
    return bool(step > 0 and np.max(np.abs(dt - step)) <= 1e-9 * step)


def _projector_rows(offsets, degree):
    """Rows turning window samples at ``offsets`` into polynomial coefficients."""
    design = np.vander(offsets, degree + 1, increasing=True)
    return np.linalg.pinv(design)


def window_derivatives(t, z, half_width):
    """Speed and acceleration by a least-squares quadratic over ``2 half_width + 1`` samples.

    Windows are shifted inward at the ends, so every sample gets a value.

    Parameters
    ----------
    t : ndarray (n,)  increasing times [s]
    z : ndarray (n,)  values [m]
    half_width : int  samples each side

    Returns
    -------
    speed, acceleration : ndarray (n,)  [m/s], [m/s^2]
    """
    n = len(t)
    w = min(2 * half_width + 1, n)
    if w < 3:
        return np.zeros(n), np.zeros(n)
    if not evenly_spaced(t):
        return _uneven_derivatives(t, z, w)
    step = (t[-1] - t[0]) / (n - 1)
    speed, accel = np.empty(n), np.empty(n)
    h = w // 2
    rows = _projector_rows((np.arange(w) - h) * step, 2)
    # np.correlate(z, k, "valid")[i] = sum_j z[i + j] k[j]: the window starting at i.
    speed[h:n - w + h + 1] = np.correlate(z, rows[1], "valid")
    accel[h:n - w + h + 1] = 2.0 * np.correlate(z, rows[2], "valid")
    for i in list(range(h)) + list(range(n - w + h + 1, n)):
        s = min(max(i - h, 0), n - w)
        r = _projector_rows((np.arange(w) + s - i) * step, 2)
        speed[i], accel[i] = r[1] @ z[s:s + w], 2.0 * (r[2] @ z[s:s + w])
    return speed, accel


def _uneven_derivatives(t, z, w):
    n = len(t)
    speed, accel = np.empty(n), np.empty(n)
    for c0 in range(0, n, CHUNK):
        i = np.arange(c0, min(c0 + CHUNK, n))
        starts = np.clip(i - w // 2, 0, n - w)
        idx = starts[:, None] + np.arange(w)[None, :]
        dt = t[idx] - t[i][:, None]
        span = np.maximum(np.ptp(dt, axis=1), 1e-300)[:, None]
        u = dt / span
        design = np.stack([np.ones_like(u), u, u * u], axis=2)
        ata = np.einsum("nwi,nwj->nij", design, design)
        atb = np.einsum("nwi,nw->ni", design, z[idx])
        coef = np.linalg.solve(ata + 1e-12 * np.eye(3)[None], atb[..., None])[..., 0]
        speed[i] = coef[:, 1] / span[:, 0]
        accel[i] = 2.0 * coef[:, 2] / span[:, 0] ** 2
    return speed, accel


def window_residual_rms(t, z, width, degree):
    """RMS residual [m] of a degree-``degree`` least-squares fit over every window of ``width`` samples.

    Returns an array of ``n - width + 1`` values, one per window start.
    """
    n = len(t)
    if n < width:
        return np.empty(0)
    if evenly_spaced(t):
        offsets = np.arange(width) - width // 2
        design = np.vander(offsets.astype(float), degree + 1, increasing=True)
        # Residual operator I - X X^+; each of its rows is one residual filter.
        resid_op = np.eye(width) - design @ np.linalg.pinv(design)
        total = np.zeros(n - width + 1)
        for row in resid_op:
            r = np.correlate(z, row, "valid")
            total += r * r
        return np.sqrt(total / width)
    out = np.empty(n - width + 1)
    for s in range(n - width + 1):
        tt = t[s:s + width] - t[s + width // 2]
        u = tt / max(float(np.ptp(tt)), 1e-300)
        design = np.vander(u, degree + 1)
        coef, *_ = np.linalg.lstsq(design, z[s:s + width], rcond=None)
        r = z[s:s + width] - design @ coef
        out[s] = np.sqrt(np.mean(r * r))
    return out


def acceleration_noise_gain(step, half_width):
    """Standard deviation of :func:`window_derivatives`' acceleration per metre of white
    sample noise [1/s^2]: ``2 sqrt(sum of the second-derivative row squared)`` (the
    window's linear filter applied to independent samples).

    Parameters
    ----------
    step : float  time between samples [s]
    half_width : int  samples each side of the window
    """
    w = 2 * half_width + 1
    rows = _projector_rows((np.arange(w) - half_width) * float(step), 2)
    return 2.0 * float(np.sqrt(np.sum(rows[2] ** 2)))
