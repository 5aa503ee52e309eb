"""Finding the ballistic stretches of a sampled height curve and fitting their gravity.

A body in free fall follows ``z(t) = z0 + v0 t - g t^2 / 2``: its samples lie on one
parabola, whatever the frame rate. A flight is therefore searched as a stretch of
samples that one concave-down parabola explains within the sampling noise. Stepped
(constant-interpolation) keys are reduced to their key samples first, so held frames
do not read as zero acceleration.

References
----------
Galileo's law of fall: distances from rest grow as the odd numbers 1:3:5:7 per equal
time step, i.e. equal second differences ``g dt^2`` (textbook mechanics).
"""

import functools

import numpy as np

from .parabola import Parabola, Stretch, fit_parabola, range_fits, window_fits  # noqa: F401  (re-exported)
from .stylised_flights import merge_stylised
from .local_fits import window_derivatives, window_residual_rms

#: Smallest number of key samples accepted as a flight; a parabola has 3 parameters,
#: so 5 samples leave two degrees of freedom to test it.
MIN_FLIGHT_SAMPLES = 5
#: Fit tolerance floor [m]: a quarter millimetre, below a tenth of a pixel on a 2 m
#: character framed full height at 1080 lines.
FIT_TOLERANCE_FLOOR_M = 2.5e-4
#: Fit tolerance in units of the estimated sample noise; uniform noise of
#: half-width w has sd w/sqrt(3), so 4 sd covers it.
FIT_TOLERANCE_NOISE_FACTOR = 4.0
#: A flight must have a gravity of at least this fraction of the scene's; gentler
#: concave stretches are contact (settling into a stand), not free fall.
MIN_FLIGHT_GRAVITY_FRACTION = 0.1
#: A stretch whose top is not inside it (a fall from rest) is read as a flight only if
#: it lasts this long [s]: the start of a dip also accelerates downward nearly evenly
#: for a tenth of a second or so.
MIN_ONE_SIDED_FALL_S = 0.25
#: Runs of 2..4 exactly repeated samples are holds of stepped keys (on twos/threes/fours).
MAX_HOLD_FRAMES = 4


def key_samples(positions):
    """Indices of the samples that carry information: the first of each short hold.

    Parameters
    ----------
    positions : ndarray, shape (n, 3)  [m]

    Returns
    -------
    keep : ndarray of int
        All indices for smooth curves; for stepped keys (three or more holds of
        2..4 identical frames) the first frame of every hold. Long holds (standing
        still) keep every frame, since they are motion, not stepping.
    stepped : bool
    """
    n = len(positions)
    if n < 2:
        return np.arange(n), False
    same = np.all(positions[1:] == positions[:-1], axis=1)
    # Runs of identical samples: a run starts where a sample differs from the one before.
    starts = np.flatnonzero(np.concatenate([[True], ~same]))
    lengths = np.diff(np.concatenate([starts, [n]]))
    short = (lengths >= 2) & (lengths <= MAX_HOLD_FRAMES)
    moving_frames = int(lengths[lengths <= MAX_HOLD_FRAMES].sum())
    held = int(lengths[short].sum())
    if int(short.sum()) < 3 or held < 0.4 * max(moving_frames, 1):
        return np.arange(n), False
    # Short holds keep their first frame; long holds (standing still) keep every frame.
    long_run = lengths > MAX_HOLD_FRAMES
    per_sample_keep = np.repeat(long_run, lengths)
    first_of_run = np.zeros(n, bool)
    first_of_run[starts] = True
    keep = np.flatnonzero(per_sample_keep | first_of_run)
    if len(keep) < 3:
        return np.arange(n), False
    return keep, True


def local_derivatives(t, z, half_width=2):
    """Value, first and second derivative by a local quadratic fit at every sample.

    Parameters
    ----------
    t : ndarray  increasing times [s]
    z : ndarray  values [m]
    half_width : int  samples each side (windows are shifted inward at the ends)

    Returns
    -------
    speed, acceleration : ndarray  [m/s], [m/s^2]
    """
    return window_derivatives(t, z, half_width)


def noise_level(t, z):
    """Robust estimate of the sample noise sd [m].

    Quartic fits over sliding 9-sample windows follow any smooth motion (a sine crest,
    a dip) closely, so what they leave is mostly noise: RMS^2 * 9 / sd^2 follows
    chi-squared with 9 - 5 = 4 degrees of freedom, whose 10th percentile is 1.064
    (chi-squared tables). The lowest tenth of windows are used, so that the jerks of
    take-off and landing do not count as noise. Both this and the third-difference
    estimate only overstate the noise when motion leaks in, so the smaller is used.
    """
    w = 9
    by_jerk = _noise_from_third_differences(t, z)
    if len(t) < w + 2:
        return by_jerk if np.isfinite(by_jerk) else 0.0
    rms = window_residual_rms(t, z, w, 4)
    return min(float(np.percentile(rms, 10) / np.sqrt(1.064 / w)), by_jerk)


def _noise_from_third_differences(t, z):
    """Noise sd [m] from third differences, which vanish on parabolas and still stretches.

    Noise of sd s gives third differences of sd s*sqrt(20) (1+9+9+1); the 10th
    percentile of their absolute values is 0.1257 of that for a normal law (normal
    tables). Short clips with no quiet 9-sample window still have quiet triples.
    """
    if len(z) < 4:
        return np.inf
    dt = np.diff(t)
    # Third differences are only meaningful on evenly spaced samples.
    even = np.abs(dt - np.median(dt)) <= 1e-9 * max(float(np.median(dt)), 1e-300)
    d3 = np.abs(np.diff(z, 3))
    ok = even[:-2] & even[1:-1] & even[2:]
    if not np.any(ok):
        return np.inf
    return float(np.percentile(d3[ok], 10) / (0.1257 * np.sqrt(20.0)))


def noise_from_stretches(stretches, min_samples=6, samples=None):
    """Noise sd [m] from the residuals of fitted flights, or None if none is long enough.

    Pools ``sum(rms^2 n) / sum(n - 3)`` over plain (one-parabola) stretches of at
    least ``min_samples`` samples. With ``samples`` (key times [s], heights [m]) each
    stretch's two end samples are left out of its scatter: an end that is really the
    last push frame or the first landing frame would otherwise widen the very
    tolerance that let it in (a 6-key flight on threes with a landing key 1.4 mm off
    read its noise as 0.34 mm and kept that key).
    """
    num = dof = 0.0
    for s in stretches:
        first, last = (s.first + 1, s.last - 1) if samples is not None else (s.first, s.last)
        n = last - first + 1
        if s.rise is s.fall and s.last - s.first + 1 >= min_samples:
            rms = s.rms if samples is None else fit_parabola(samples[0][first:last + 1],
                                                             samples[1][first:last + 1]).rms
            num += rms ** 2 * n
            dof += n - 3
    return float(np.sqrt(num / dof)) if dof else None


def fit_tolerance(noise_sd):
    """Largest residual [m] still read as noise."""
    return max(FIT_TOLERANCE_NOISE_FACTOR * noise_sd, FIT_TOLERANCE_FLOOR_M)


def _grow(t, z, first, last, tol, taken):
    """Extend ``first..last`` one sample at a time while one parabola fits within ``tol``.

    The two ends take turns (left, then right); once an end fails it stays put. The
    trials of the next steps are fitted together (:func:`_first_failure`), which gives
    the same ends as trying them one by one at a fraction of the cost on long flights.
    """
    n = len(t)
    can_left = can_right = True
    batch = 8
    while can_left or can_right:
        steps = []  # (side, first, last) of each trial, in the order they would be tried
        a, b = first, last
        for _ in range(batch):
            if can_left:
                a -= 1
                steps.append(("left", a, b))
            if can_right:
                b += 1
                steps.append(("right", a if can_left else first, b))
        k = _first_failure(t, z, steps, tol, taken, n)
        if k > 0:
            first, last = steps[k - 1][1], steps[k - 1][2]
        if k < len(steps):
            if steps[k][0] == "left":
                can_left = False
            else:
                can_right = False
            # After a failed left trial the right one is still tried from the same start.
            batch = 8
        else:
            batch = min(2 * batch, 32)
    return _settle(t, z, first, last, fit_parabola(t[first:last + 1], z[first:last + 1]), tol, taken)


def _first_failure(t, z, steps, tol, taken, n):
    """Index of the first trial range that one parabola does not fit (len(steps) if none)."""
    firsts = np.array([s[1] for s in steps])
    lasts = np.array([s[2] for s in steps])
    inside = (firsts >= 0) & (lasts < n)
    new = np.where([s[0] == "left" for s in steps], firsts, lasts)
    inside[inside] &= ~taken[new[inside]]
    ok = inside.copy()
    if inside.any():
        gravity, max_abs = range_fits(t, z, firsts[inside], lasts[inside])
        ok[inside] = (max_abs <= tol) & (gravity > 0)
    bad = np.flatnonzero(~ok)
    return int(bad[0]) if len(bad) else len(steps)


def _settle(t, z, first, last, fit, tol, taken):
    """Re-decide the ends from the fit of the interior alone.

    Greedy growth can take in a contact sample that happens to lie within ``tol``,
    which tilts the fit and stops growth at the other end; judging every sample
    against the interior's parabola undoes that.
    """
    for _ in range(4):
        if last - first + 1 < MIN_FLIGHT_SAMPLES + 2:
            break
        core = fit_parabola(t[first + 1:last], z[first + 1:last])
        a, b = _reach_of(t, z, core, first + 1, last - 1, tol, taken)
        if (a, b) == (first, last):
            break
        trial = fit_parabola(t[a:b + 1], z[a:b + 1])
        if trial.max_abs > tol or trial.gravity <= 0 or b - a < last - first:
            break
        first, last, fit = a, b, trial
    return first, last, fit


def _reach_of(t, z, fit, a, b, tol, taken):
    """Widen ``a..b`` to every neighbour on either side that ``fit`` explains within ``tol``.

    Samples are judged in windows that double until the run ends, so the cost follows
    the stretch, not the whole path.
    """
    n = len(t)
    reach = max(b - a + 1, 8)
    while True:
        lo, hi = max(a - reach, 0), min(b + reach, n - 1)
        ok = (np.abs(z[lo:hi + 1] - fit.height(t[lo:hi + 1])) <= tol) & ~taken[lo:hi + 1]
        i, j = a - lo, b - lo
        while i > 0 and ok[i - 1]:
            i -= 1
        while j < len(ok) - 1 and ok[j + 1]:
            j += 1
        if (i > 0 or lo == 0) and (j < len(ok) - 1 or hi == n - 1):
            return i + lo, j + lo
        reach *= 2


def _trim_edges(t, z, first, last, noise_sd, max_rounds=2):
    """Drop end samples that the parabola of the interior does not pass through.

    Near take-off the ground force fades to zero, so the last contact samples lie
    within ``tol`` of the flight's parabola; against the fit of the interior they
    still stand out, by more than four times that fit's own scatter.
    """
    for _ in range(max_rounds):
        if last - first + 1 < MIN_FLIGHT_SAMPLES + 2:
            break
        core = fit_parabola(t[first + 1:last], z[first + 1:last])
        n = last - first - 1
        limit = 4.0 * max(core.rms * np.sqrt(n / (n - 3)), noise_sd) + 1e-9
        drop_first = abs(z[first] - core.height(t[first])) > limit
        drop_last = abs(z[last] - core.height(t[last])) > limit
        if not (drop_first or drop_last):
            break
        first, last = first + int(drop_first), last - int(drop_last)
    return first, last, fit_parabola(t[first:last + 1], z[first:last + 1])


def find_ballistic_stretches(t, z, tol, min_gravity, noise_sd=0.0):
    """Maximal stretches of samples that one concave-down parabola fits within ``tol``.

    Parameters
    ----------
    t, z : ndarray  key-sample times [s] and heights [m]
    tol : float  largest residual [m]
    min_gravity : float  smallest accepted gravity [m/s^2]
    noise_sd : float  estimated sample noise [m], for trimming the ends

    Returns
    -------
    list of Stretch, in time order, not overlapping. Stretches whose vertex lies more
    than one sample outside them (a stretch of a dip or a settle, not a flight) and
    stretches gentler than ``min_gravity`` are left out.
    """
    n = len(t)
    m = MIN_FLIGHT_SAMPLES
    if n < m:
        return []
    # Every m-sample window is a seed if one parabola fits it: all windows at once.
    gravity, max_abs = window_fits(t, z, m)
    seeds = [(float(max_abs[s]), int(s)) for s in np.flatnonzero((max_abs <= tol) & (gravity >= min_gravity))]
    # Greedy growth from one seed can take in a contact sample and stop short at the
    # other end; regrowing from the middle of what it reached undoes that. Seeds inside
    # a range already grown add nothing new and are skipped.
    free = np.zeros(n, bool)
    visited = np.zeros(n, bool)
    candidates = {}
    # Growth from a seed depends on the seed alone here (nothing is taken yet): once per seed.
    grow_from = functools.lru_cache(maxsize=None)(lambda start: _grow(t, z, start, start + m - 1, tol, free))
    for _, s in seeds:
        if visited[s:s + m].all():
            continue
        first, last, _ = grow_from(s)
        for _ in range(3):
            mid = max(min((first + last) // 2 - m // 2, n - m), 0)
            again = grow_from(mid)
            if (again[0], again[1]) == (first, last) or again[1] - again[0] <= last - first:
                break
            first, last = again[0], again[1]
        visited[first:last + 1] = True
        if (first, last) in candidates:
            continue
        first_t, last_t, fit = _trim_edges(t, z, first, last, noise_sd)
        lo = t[max(first_t - 1, 0)]
        hi = t[min(last_t + 1, n - 1)]
        ok = fit.gravity >= min_gravity and lo <= fit.apex_time <= hi
        candidates[(first, last)] = (first_t, last_t, fit) if ok else None
    ranked = sorted((c for c in candidates.values() if c is not None),
                    key=lambda c: (-(c[1] - c[0]), c[2].max_abs, c[0]))
    taken = np.zeros(n, bool)
    found = []
    for first, last, fit in ranked:
        if taken[first:last + 1].any():
            # What a longer flight left of this one may still be the other side of a
            # stylised flight (a faster fall after the rise's top).
            free_runs = _free_runs(taken, first, last)
            if not free_runs:
                continue
            first, last = max(free_runs, key=lambda r: r[1] - r[0])
            if last - first + 1 < m:
                continue
            fit = fit_parabola(t[first:last + 1], z[first:last + 1])
            lo, hi = t[max(first - 1, 0)], t[min(last + 1, n - 1)]
            if fit.max_abs > tol or fit.gravity < min_gravity or not lo <= fit.apex_time <= hi:
                continue
        taken[first:last + 1] = True
        found.append(Stretch(first, last, fit, fit, fit.rms, fit.max_abs))
    found.sort(key=lambda s: s.first)
    found = merge_stylised(t, z, found, tol)
    two_sided = [_two_sided(t, z, s, tol) for s in found]
    # A fall from rest is kept only in a clip with no rising-and-falling flight: in a
    # jump, a concave stretch with no top inside is the start of the dip.
    return [s for s, both in zip(found, two_sided)
            if both or (not any(two_sided) and t[s.last] - t[s.first] >= MIN_ONE_SIDED_FALL_S)]


def _free_runs(taken, first, last):
    """(first, last) runs of untaken indices within ``first..last``."""
    runs, start = [], None
    for i in range(first, last + 1):
        if not taken[i] and start is None:
            start = i
        if taken[i] and start is not None:
            runs.append((start, i - 1))
            start = None
    if start is not None:
        runs.append((start, last))
    return runs


def _two_sided(t, z, s, tol):
    """True when the stretch visibly rises to its top and falls from it.

    Two samples on each side, and a rise and a fall of at least twice the tolerance,
    so that a still stretch before a dip does not count as the rising side.
    """
    tt = t[s.first:s.last + 1]
    top = max(s.rise.apex_height, s.fall.apex_height)
    return bool(np.sum(tt < s.rise.apex_time) >= 2 and np.sum(tt > s.fall.apex_time) >= 2
                and top - z[s.first] >= 2 * tol and top - z[s.last] >= 2 * tol)
