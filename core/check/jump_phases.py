"""Force-plate phases read back from a sampled jump, as frames.

References
----------
McMahon, Suchomel, Lake & Comfort 2018, Strength Cond J 40(4):96-106: phase names
(weighing, unweighting, braking, propulsion, flight, landing) and their boundaries
(force back at body weight = fastest descent; zero speed = lowest point).
"""

from dataclasses import dataclass

import numpy as np

from .parabola import fit_parabola


@dataclass(frozen=True)
class PhaseSpan:
    """A force-plate phase (McMahon et al. 2018 names).

    Attributes
    ----------
    name : str
    hop : int  from 0
    first_frame, last_frame : float  samples in the phase, inclusive
    start_estimate_frame : float  sub-frame estimate of where the phase begins [frame]
    """

    name: str
    hop: int
    first_frame: float
    last_frame: float
    start_estimate_frame: float



def _extremum_frame(frames, y, i):
    """Sub-frame position of the extremum at sample ``i`` by a 3-point parabola [frame]."""
    if i <= 0 or i >= len(y) - 1:
        return float(frames[i])
    fit = fit_parabola(frames[i - 1:i + 2], y[i - 1:i + 2])
    if fit.gravity == 0.0:
        return float(frames[i])
    return float(np.clip(fit.apex_time, frames[i - 1], frames[i + 1]))


def _onset_frame(frames, dz, onset):
    """Sub-frame start of a departure from rest [frame].

    A smooth start leaves rest as ``c (t - t0)^k``; the first three moved samples fix
    ``t0`` for the power ``k`` in 2..5 that best predicts the third.
    """
    if onset <= 0 or onset + 2 >= len(dz) or np.any(dz[onset:onset + 3] <= 0):
        return float(frames[onset])
    f1, f2, f3 = frames[onset:onset + 3]
    d1, d2, d3 = dz[onset:onset + 3]
    best, estimate = np.inf, float(frames[onset])
    for k in (2, 3, 4, 5):
        r = (d2 / d1) ** (1.0 / k)
        if not np.isfinite(r) or r <= 1.0:
            continue
        t0 = (f2 - r * f1) / (1.0 - r)
        if not np.isfinite(t0) or t0 >= f1:
            continue
        miss = abs(np.log(d1 * ((f3 - t0) / (f1 - t0)) ** k / d3))
        if miss < best:
            best, estimate = miss, float(t0)
    return float(np.clip(estimate, frames[onset - 1], frames[onset]))


def phase_spans(frames, z, speed, spans, noise):
    """Force-plate phases from the samples, as frames.

    Before the first flight: weighing (still), unweighting (from the first sample that
    leaves the rest height to the fastest descent), braking (to the lowest point),
    propulsion (to take-off); then flight, and landing up to the next push or the end.
    Between two flights, landing runs to the lowest point and propulsion from there.
    Each phase also carries a sub-frame estimate of its start: take-off and
    touchdown half-way between the last sample on one side and the first on the
    other, the fastest descent and the lowest point by 3-point parabolas.
    """
    out = []
    n = len(z)
    start = 0
    # Leaving the rest height is judged against the noise alone (0.1 um for clean
    # data): a smooth dip departs by under a micrometre in its first frame.
    onset_tol = max(4.0 * noise, 1e-7)

    def between(i):
        return 0.5 * (frames[i - 1] + frames[i]) if 0 < i < n else float(frames[min(i, n - 1)])

    for hop, (i0, i1) in enumerate(spans):
        e = i0 - 1
        if e >= start:
            lowest = start + int(np.argmin(z[start:e + 1]))
            low_est = _extremum_frame(frames, z, lowest)
            if hop == 0:
                dz = np.abs(z - z[0])
                moved = np.flatnonzero(dz[:lowest + 1] > onset_tol)
                onset = int(moved[0]) if len(moved) else lowest
                fastest = onset + int(np.argmin(speed[onset:lowest + 1]))
                if onset > 0:
                    out.append(PhaseSpan("weighing", hop, frames[0], frames[onset - 1], float(frames[0])))
                if fastest > onset:
                    out.append(PhaseSpan("unweighting", hop, frames[onset], frames[fastest - 1],
                                         _onset_frame(frames, dz, onset)))
                if lowest > fastest:
                    out.append(PhaseSpan("braking", hop, frames[fastest], frames[lowest - 1],
                                         _extremum_frame(frames, speed, fastest)))
            elif lowest > start:
                out.append(PhaseSpan("landing", hop - 1, frames[start], frames[lowest - 1], between(start)))
            out.append(PhaseSpan("propulsion", hop, frames[lowest], frames[e], low_est))
        out.append(PhaseSpan("flight", hop, frames[i0], frames[i1], between(i0)))
        start = i1 + 1
    if spans and start < n:
        out.append(PhaseSpan("landing", len(spans) - 1, frames[start], frames[n - 1], between(start)))
    return out
