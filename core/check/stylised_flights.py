"""Flights stylised on purpose: a fall gravity unlike the rise's, frames held at the apex.

The plain search (:mod:`.flight_fit`) finds the rise and the fall of such a flight as
two stretches, since no single parabola fits both; here they are joined back into one
flight with a rise gravity, a fall gravity and the time held between their tops.
"""

import numpy as np

from .parabola import Stretch, fit_parabola


def merge_stylised(t, z, stretches, tol):
    """Join a rising stretch and a falling one that meet at the top into one flight.

    A fall faster than the rise, or frames held at the apex, break one parabola into
    two; they are still one flight, with a rise gravity, a fall gravity and a hang.
    """
    out = list(stretches)
    i = 0
    while i + 1 < len(out):
        a, b = out[i], out[i + 1]
        merged = _try_merge(t, z, a, b, tol)
        if merged is None:
            i += 1
        else:
            out[i:i + 2] = [merged]
    return out


def _try_merge(t, z, a, b, tol):
    gap = slice(a.last + 1, b.first)
    top = float(np.max(z[a.first:b.last + 1]))
    if b.first - a.last - 1 > 0 and np.min(z[gap]) < top - max(2 * tol, 1e-3):
        return None
    a_mid = 0.5 * (t[a.first] + t[a.last])
    b_mid = 0.5 * (t[b.first] + t[b.last])
    if a.fall.apex_time < a_mid or b.rise.apex_time > b_mid:
        return None
    idx = np.arange(a.first, b.last + 1)
    near_top = idx[z[idx] >= top - tol]
    q0, q1 = int(near_top[0]), int(near_top[-1])
    # The top may fall between samples: try the rise ending, and the fall starting,
    # one sample either side of the first and last samples near the top.
    best = None
    for p0 in (q0 - 1, q0, q0 + 1):
        for p1 in (q1 - 1, q1, q1 + 1):
            if p1 < p0 or p0 - a.first + 1 < 3 or b.last - p1 + 1 < 3:
                continue
            rise = fit_parabola(t[a.first:p0 + 1], z[a.first:p0 + 1])
            fall = fit_parabola(t[p1:b.last + 1], z[p1:b.last + 1])
            if rise.gravity <= 0 or fall.gravity <= 0 or max(rise.max_abs, fall.max_abs) > tol:
                continue
            # Prefer the split that explains the most samples, then the closest fit.
            score = ((p0 - a.first) + (b.last - p1), -max(rise.max_abs, fall.max_abs))
            if best is None or score > best[0]:
                best = (score, p0, p1, rise, fall)
    if best is None:
        return None
    _, p0, p1, rise, fall = best
    # The sample at the top may belong to the other side; judge it against the rest.
    p0, rise = _trim_inner(t, z, a.first, p0, "end")
    p1, fall = _trim_inner(t, z, p1, b.last, "start")
    # A short fall was too short to have its touchdown end trimmed on its own.
    first, rise = _trim_inner(t, z, a.first, p0, "start")
    last, fall = _trim_inner(t, z, p1, b.last, "end")
    if rise.gravity <= 0 or fall.gravity <= 0:
        return None  # a trim refitted one side flat or upward: not a flight after all
    n_r, n_f = p0 - first + 1, last - p1 + 1
    rms = float(np.sqrt((rise.rms ** 2 * n_r + fall.rms ** 2 * n_f) / (n_r + n_f)))
    return Stretch(first, last, rise, fall, rms, max(rise.max_abs, fall.max_abs))


def _trim_inner(t, z, first, last, side, max_drop=2):
    """Drop samples at one end of ``first..last`` that the others' parabola misses."""
    for _ in range(max_drop):
        if last - first + 1 < 5:
            break
        a, b, e = (first, last - 1, last) if side == "end" else (first + 1, last, first)
        rest = fit_parabola(t[a:b + 1], z[a:b + 1])
        n = b - a + 1
        if abs(z[e] - rest.height(t[e])) > 4.0 * rest.rms * np.sqrt(n / (n - 3)) + 1e-9:
            first, last = a, b
        else:
            break
    edge = last if side == "end" else first
    return edge, fit_parabola(t[first:last + 1], z[first:last + 1])
