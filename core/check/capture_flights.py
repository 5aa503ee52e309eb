"""Flights of a measured path (motion capture): free fall found through noise and soft tissue.

A captured path is not keyed: markers jitter (white noise) and sit on skin that moves
over the bones (a slow wobble of millimetres). A real flight therefore sits 0.5-2.6 mm
RMS off its best parabola at 120 fps, far more than the jitter alone predicts, while a
body standing, walking or shifting its weight traces gentle curves that a parabola
also fits within millimetres. So here a flight is found from the physics of free fall,
not from a closeness of fit alone:

1. the vertical acceleration, smoothed over about 0.08 s, stays well below zero
   (:data:`MIN_FLIGHT_GRAVITY_FRACTION` of the scene's gravity) over a stretch;
2. one parabola explains the stretch within the noise model (jitter plus wobble);
3. the acceleration is the same at the top as near the ends (free fall keeps it
   constant; a walking crest's bend fades away from its top);
4. the body rises and falls at least :data:`MIN_RISE_M` on both sides (it leaves
   its support; a step's crest moves the centre of mass by about 2 cm);
5. take-off and touchdown are placed where the path leaves and rejoins the parabola,
   by a two-piece least-squares fit: the parabola in the air and, on the ground, the
   parabola plus the push (or the landing) growing from zero as ``c u^2 + b u^3``
   (a ground force that starts from, or falls to, a value ``>= 0``).

The implied gravity carries a 95 % confidence interval from the fit, widened for
residuals that are correlated (wobble) rather than independent.

References
----------
Law of fall: z = z0 + v0 t - g t^2 / 2 with g constant in the air (textbook mechanics).
Residual sizes of real flights: captured countermovement jumps, hips and whole-body COM,
0.5-2.6 mm RMS at 120 fps (measured for this project, /work/shared/reference-values.md).
Confidence interval with lag-1 autocorrelated residuals: effective sample size
n (1 - rho) / (1 + rho) (Bartlett 1946; common practice in time-series regression).
"""

from dataclasses import dataclass

import numpy as np

from .local_fits import acceleration_noise_gain, window_derivatives, window_residual_rms
from .parabola import Parabola, Stretch, fit_parabola

#: Sample noise above this sd [m] means the path was measured, not keyed: keyed curves
#: are smooth to rounding (1e-7 m), captured ones jitter by a tenth of a millimetre or more.
MEASURED_NOISE_M = 2.0e-5
#: Sample noise above this sd [m] is read as measured whatever its texture: even the
#: quietest 9 frames of a keyed curve miss a quartic by far less (a 0.3 m keyed sine at
#: 24 fps: 0.11 mm).
SURELY_MEASURED_M = 5.0e-4
#: Soft-tissue and marker-placement wobble allowed around a real flight's parabola [m]:
#: the largest RMS seen on real flights at 120 fps (reference-values.md).
SOFT_TISSUE_WOBBLE_M = 2.6e-3
#: A stretch is a flight only if it bends down by at least this fraction of the scene's g.
MIN_FLIGHT_GRAVITY_FRACTION = 0.1
#: Smallest rise (and fall) of a captured flight on each side of its top [m]: 5 cm is a
#: take-off speed of 1 m/s (real jumps take off at 2-3 m/s, Feltner et al. 1999); the centre
#: of mass of a walk moves 4-5 cm from its lowest to its highest point (from memory), and a
#: parabola fits only the top of that.
MIN_RISE_M = 0.05
#: Largest change of the fall acceleration between the top and the ends, as a fraction
#: of it: free fall keeps it constant; a sine-like crest (a step) loses most of it.
MAX_ACCELERATION_DRIFT = 0.35
#: Smoothing window of the acceleration [s] (at least 5 samples).
ACCELERATION_WINDOW_S = 0.08
#: Runs of downward acceleration closer than this [s] are searched as one flight; a step's
#: crests are at least 0.3 s apart (two steps a second or fewer, common practice).
BRIDGE_S = 0.15
#: Two-sided 95 % normal quantile.
Z95 = 1.96


def looks_measured(t, z, noise_sd):
    """True when the path jitters like a measurement rather than a keyed curve.

    Besides noise above :data:`MEASURED_NOISE_M`, what a quartic over 9 samples leaves
    must be random: a fit of degree 6 over the same windows leaves sqrt(2/4) = 0.71 of
    independent noise (least-squares degrees of freedom), but a small fraction of a smooth
    curve's misfit (a keyed sine, a spline that is not quite a parabola: the next terms of
    its Taylor series). Read over the quietest third of the windows; above 0.45 is jitter.
    Noise above :data:`SURELY_MEASURED_M` is jitter whatever its texture (at 24 fps a
    wobble of a few hertz is as rough as jitter and fools the ratio).
    """
    if noise_sd <= MEASURED_NOISE_M or len(z) < 12:
        return False
    if noise_sd > SURELY_MEASURED_M:
        return True
    quartic = window_residual_rms(t, z, 9, 4)
    sextic = window_residual_rms(t, z, 9, 6)
    quiet = quartic <= np.percentile(quartic, 33)
    ratio = np.median(sextic[quiet] / np.maximum(quartic[quiet], 1e-300))
    return bool(ratio > 0.45)


@dataclass(frozen=True)
class MeasuredFlight:
    """A flight of a measured path.

    Attributes
    ----------
    stretch : Stretch  airborne samples ``first..last`` and their parabola
    takeoff_time_s, touchdown_time_s : float  sub-sample estimates [s]
    gravity_low, gravity_high : float  95 % confidence interval of the implied g [m/s^2]
    """

    stretch: Stretch
    takeoff_time_s: float
    touchdown_time_s: float
    gravity_low: float
    gravity_high: float


def smoothing_half_width(t):
    """Half-width [samples] of the acceleration window for these sample times."""
    step = float(np.median(np.diff(t))) if len(t) > 1 else 1.0
    return max(2, int(round(0.5 * ACCELERATION_WINDOW_S / max(step, 1e-12))))


def measured_acceleration(t, z):
    """Speed [m/s] and acceleration [m/s^2] smoothed over :data:`ACCELERATION_WINDOW_S`."""
    return window_derivatives(t, z, smoothing_half_width(t))


def force_noise_bw(t, noise_sd, gravity):
    """Standard error [BW] of the apparent weight of :func:`measured_acceleration` from
    sample jitter ``noise_sd`` [m] under ``gravity`` [m/s^2]."""
    if len(t) < 2:
        return 0.0
    step = float(np.median(np.diff(t)))
    return noise_sd * acceleration_noise_gain(step, smoothing_half_width(t)) / gravity


def _runs(mask):
    idx = np.flatnonzero(np.diff(np.concatenate([[0], mask.astype(np.int8), [0]])))
    return [(int(a), int(b) - 1) for a, b in zip(idx[::2], idx[1::2])]


def _bridged(runs, t, gap_s):
    """Runs joined across gaps up to ``gap_s`` [s]: under a weak gravity (the Moon's) a
    wobble lifts the smoothed acceleration above the threshold for a moment mid-flight."""
    out = []
    for a, b in runs:
        if out and t[a] - t[out[-1][1]] <= gap_s:
            out[-1] = (out[-1][0], b)
        else:
            out.append((a, b))
    return out


def _grow(t, z, first, last, lo, hi, tol):
    """Widen ``first..last`` (within ``lo..hi``) to every neighbour its parabola explains."""
    for _ in range(8):
        fit = fit_parabola(t[first:last + 1], z[first:last + 1])
        ok = np.abs(z[lo:hi + 1] - fit.height(t[lo:hi + 1])) <= tol
        mid = (first + last) // 2 - lo
        if not ok[mid]:
            return first, last
        a, b = mid, mid
        while a > 0 and ok[a - 1]:
            a -= 1
        while b < len(ok) - 1 and ok[b + 1]:
            b += 1
        a, b = a + lo, b + lo
        if (a, b) == (first, last) or b - a < 4:
            return first, last
        first, last = a, b
    return first, last


def _edge_sse(tw, yw, grid, side, g):
    """SSE of the two-piece model on one edge for every candidate time in ``grid``.

    In the air the parabola (curvature ``g`` fixed, height and speed free); on the ground
    side of the candidate time ``tc`` the same plus ``c u^2 + b u^3`` with ``b, c >= 0``
    (``u`` the time from ``tc``): a ground force starting from, or ending at, any value
    >= 0 and changing at a steady rate.
    """
    tc = grid[:, None]
    u = np.maximum(tc - tw[None], 0.0) if side == "start" else np.maximum(tw[None] - tc, 0.0)
    # g (t - tc)^2 / 2 differs from g t^2 / 2 by a line in t, which the free height and
    # speed absorb: the data side does not depend on tc.
    y = yw + 0.5 * g * (tw - tw.mean()) ** 2
    # Every model holds the line [1, t]: taking it out of the data and the ground terms
    # first (Frisch-Waugh) leaves at most a 2x2 problem per candidate time.
    tc = tw - tw.mean()
    tt = float(tc @ tc) or 1.0

    def off_line(v):
        v = v - v.mean(axis=-1, keepdims=True)
        return v - (v @ tc)[..., None] * tc / tt

    yp = off_line(y)
    a, b = off_line(u * u), off_line(u ** 3)
    aa, bb, ab = np.einsum("kw,kw->k", a, a), np.einsum("kw,kw->k", b, b), np.einsum("kw,kw->k", a, b)
    ay, by = a @ yp, b @ yp
    best = np.full(len(grid), float(yp @ yp))
    tiny = 1e-12 * (aa + bb + 1e-300)
    with np.errstate(divide="ignore", invalid="ignore"):
        det = aa * bb - ab * ab
        both = ((bb * ay - ab * by) / det, (aa * by - ab * ay) / det, det > tiny * (aa + bb))
        for c2, c3, ok in (both, (ay / aa, 0.0, aa > tiny), (0.0, by / bb, bb > tiny)):
            ok = ok & (np.asarray(c2) >= 0) & (np.asarray(c3) >= 0)
            r = yp[None] - np.asarray(c2)[..., None] * a - np.asarray(c3)[..., None] * b
            sse = np.einsum("kw,kw->k", r, r)
            best = np.where(ok & (sse < best), sse, best)
    return best


def _edge_time(t, z, edge, inner, side, g, step):
    """Sub-sample time where the path leaves (``start``) or rejoins (``end``) free fall."""
    n = len(t)
    reach = max(3, int(round(0.12 / step)))
    # Candidates reach as far into the stretch as out of it: the grown stretch takes in every
    # sample within the wobble tolerance of its parabola, so a push that fades to zero puts
    # its last frames inside it, and the true take-off can lie a full ``reach`` in (a grid
    # ending half a reach in could only ever start such a flight early).
    if side == "start":
        a, b = max(edge - reach, 0), min(inner, edge + 2 * reach, n - 1)
        grid = np.arange(t[a], t[max(min(edge + reach, b - 3), a)] + 1e-12, step / 4)
    else:
        a, b = max(inner, edge - 2 * reach, 0), min(edge + reach, n - 1)
        grid = np.arange(t[min(max(edge - reach, a + 3), b)], t[b] + 1e-12, step / 4)
    tw, zw = t[a:b + 1], z[a:b + 1]
    if len(tw) < 6 or len(grid) == 0:
        return float(t[edge] - step / 2 if side == "start" else t[edge] + step / 2)
    coarse = grid[::4]
    k = int(np.argmin(_edge_sse(tw, zw, coarse, side, g)))
    fine = np.arange(coarse[max(k - 1, 0)], coarse[min(k + 1, len(coarse) - 1)] + 1e-12, step / 8)
    return float(fine[int(np.argmin(_edge_sse(tw, zw, fine, side, g)))])


def correlation_length(r):
    """Samples per independent residual: 1 + 2 sum of the residuals' autocorrelations up to
    their first negative value (integrated autocorrelation time; common practice)."""
    n = len(r)
    r = r - r.mean()
    var = float(r @ r)
    if n < 4 or var <= 0:
        return 1.0
    total = 1.0
    for lag in range(1, n // 2):
        rho = float(r[:-lag] @ r[lag:]) / var
        if rho <= 0:
            break
        total += 2.0 * rho
    return min(total, n / 3.0)


def _fit_spread(t, z, fit, noise_sd, columns):
    """Least-squares coefficients of ``columns`` on ``z - fit`` residual scale: (coef, cov)."""
    design = np.stack(columns, axis=1)
    coef, *_ = np.linalg.lstsq(design, z, rcond=None)
    r = z - design @ coef
    n, p = design.shape
    sigma = max(float(np.sqrt(r @ r / max(n - p, 1))), noise_sd)
    cov = np.linalg.pinv(design.T @ design) * sigma ** 2 * correlation_length(r)
    return coef, cov


def gravity_interval(t, z, fit, noise_sd):
    """95 % confidence interval of a parabola's gravity [m/s^2].

    The fit's standard error, with the residual scale never below the sample jitter, and
    widened by the residuals' correlation length (a wobble moves neighbouring samples
    together, so they count once).
    """
    if len(t) < 5:
        return fit.gravity, fit.gravity
    tc = t - t.mean()
    _, cov = _fit_spread(t, z, fit, noise_sd, [tc * tc, tc, np.ones_like(tc)])
    se = 2.0 * float(np.sqrt(max(cov[0, 0], 0.0)))
    # Where the air starts and ends is known to about a sample: the gravity of the
    # stretches one sample shorter at either end counts as a second, independent spread.
    n = len(t)
    shifted = [fit_parabola(t[a:b], z[a:b]).gravity for a, b in ((1, n), (0, n - 1)) if b - a >= 4]
    edge = max((abs(g - fit.gravity) for g in shifted), default=0.0)
    se = float(np.hypot(se, edge))
    return fit.gravity - Z95 * se, fit.gravity + Z95 * se


def _drift(t, z, fit, noise_sd):
    """Change of the fall acceleration from the top to the ends, as a fraction of it, less
    twice its standard error (a wobble may bend a short flight's ends by chance)."""
    tau = t - fit.apex_time
    coef, cov = _fit_spread(t, z, fit, noise_sd, [np.ones_like(tau), tau, tau * tau, tau ** 4])
    top = 2.0 * coef[2]
    reach = 12.0 * float(np.max(tau * tau))
    change = abs(reach * coef[3]) - 2.0 * reach * float(np.sqrt(max(cov[3, 3], 0.0)))
    return max(change, 0.0) / max(abs(top), 1e-12)


def find_measured_flights(t, z, scene_gravity, noise_sd):
    """Flights of a measured path.

    Parameters
    ----------
    t, z : ndarray (n,)  times [s] and heights [m]
    scene_gravity : float  [m/s^2]
    noise_sd : float  sample jitter sd [m] (``flight_fit.noise_level``)

    Returns
    -------
    list of MeasuredFlight, in time order
    """
    n = len(t)
    if n < 7:
        return []
    step = float(np.median(np.diff(t)))
    _, accel = measured_acceleration(t, z)
    tol = 3.0 * float(np.hypot(noise_sd, SOFT_TISSUE_WOBBLE_M))
    min_g = MIN_FLIGHT_GRAVITY_FRACTION * scene_gravity
    spans = []
    for a, b in _bridged(_runs(accel < -min_g), t, BRIDGE_S):
        if b - a < 2:
            continue
        margin = max(8, int(round(0.3 / step)))
        lo, hi = max(a - margin, 0), min(b + margin, n - 1)
        if spans and lo <= spans[-1][1]:
            lo = spans[-1][1] + 1
        if b - a < 4:
            a, b = max(a - 1, lo), min(b + 1, hi)
        if a < lo or b - a < 4:
            continue
        first, last = _grow(t, z, a, b, lo, hi, tol)
        if spans and first <= spans[-1][1]:
            p0, p1 = spans.pop()
            first, last = _grow(t, z, min(p0, first), max(p1, last), max(min(p0, first) - margin, 0), hi, tol)
        spans.append((first, last))
    out = []
    for first, last in spans:
        flight = _refine(t, z, first, last, noise_sd, min_g, step)
        if flight is not None:
            out.append(flight)
    return out


def _plausible(tt, zz, fit, min_g, step, noise_sd):
    """Free fall's signs: bends down enough, top inside, rises and falls, steady bend."""
    if fit.gravity < min_g or not tt[0] - step <= fit.apex_time <= tt[-1] + step:
        return False
    if fit.apex_height - zz[0] < MIN_RISE_M or fit.apex_height - zz[-1] < MIN_RISE_M:
        return False
    return len(tt) < 7 or _drift(tt, zz, fit, noise_sd) <= MAX_ACCELERATION_DRIFT


def _refine(t, z, first, last, noise_sd, min_g, step):
    """Place take-off and touchdown, then judge the stretch as a flight (None if it is not one)."""
    fit = fit_parabola(t[first:last + 1], z[first:last + 1])
    if not _plausible(t[first:last + 1], z[first:last + 1], fit, min_g, step, noise_sd):
        return None
    best = None
    for _ in range(2):
        if fit.gravity < min_g or last - first < 4:
            break
        t_off = _edge_time(t, z, first, (first + last) // 2, "start", fit.gravity, step)
        t_td = _edge_time(t, z, last, (first + last) // 2, "end", fit.gravity, step)
        a = int(np.searchsorted(t, t_off, side="right"))
        b = int(np.searchsorted(t, t_td, side="left")) - 1
        if b - a < 4:
            break
        trial = fit_parabola(t[a:b + 1], z[a:b + 1])
        if not _plausible(t[a:b + 1], z[a:b + 1], trial, min_g, step, noise_sd):
            break  # a wobble pulled an edge into the air: keep the last good ends
        first, last, fit, best = a, b, trial, (t_off, t_td)
    if best is None:
        return None
    t_off, t_td = best
    tt, zz = t[first:last + 1], z[first:last + 1]
    low, high = gravity_interval(tt, zz, fit, noise_sd)
    return MeasuredFlight(Stretch(first, last, fit, fit, fit.rms, fit.max_abs), t_off, t_td, low, high)
