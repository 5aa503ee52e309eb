"""Re-timing an arm swing: find it in sampled motion, find the contact, warp the key times.

Everything is in seconds and radians; the Blender layer converts frames with
the scene's fps and start frame. The swing is found from the arm's sampled
elevation (:func:`elevation_angles`), never from key indices; the warp is a
monotone cubic of time, so key order is kept, and only times move.
"""

from dataclasses import dataclass
import math

import numpy as np

from ..base import constants as C
from .swing import BezierKeys, arm_com_distance, arm_mass_fraction, place_swing, swing_gain
from .push_window import (ContactWindow, checked_samples, sampled_extremum, true_runs, window_from_com,
    window_from_feet, window_from_plan)
from ..base.errors import InvalidGoalError, InvalidTrajectoryError, require_finite



def elevation_angles(shoulder, hand, forward, up):
    """Elevation [rad] (n,) of sampled shoulder-to-hand lines (n, 3) in a (moving) sagittal frame.

    ``forward`` and ``up`` are (3,) or (n, 3) world directions of the character
    per frame; the result is unwrapped, so an arm passing overhead stays continuous.
    """
    d = np.asarray(hand, dtype=float) - np.asarray(shoulder, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        u = np.broadcast_to(np.asarray(up, dtype=float), d.shape)
        f = np.broadcast_to(np.asarray(forward, dtype=float), d.shape)
        u = u / np.linalg.norm(u, axis=-1, keepdims=True)
        f = f - np.sum(f * u, axis=-1, keepdims=True) * u
        f = f / np.linalg.norm(f, axis=-1, keepdims=True)
        th = np.arctan2(np.sum(d * f, axis=-1), -np.sum(d * u, axis=-1))
    if th.ndim != 1 or not np.all(np.isfinite(th)):
        raise InvalidTrajectoryError("arm samples give no elevation (NaN, zero forward/up, or not (n, 3)); "
                                     "sample finite shoulder and hand positions and a forward axis not along up")
    return np.unwrap(th)


@dataclass(frozen=True)
class DetectedSwing:
    """A swing found in samples: upswing start and peak [s], their elevations [rad], the smoothed curve."""

    upswing_start_s: float
    peak_s: float
    start_rad: float
    peak_rad: float
    times: np.ndarray
    smoothed: np.ndarray

    def elevation(self, t):
        """Smoothed elevation [rad] at ``t`` [s] (linear between samples)."""
        return np.interp(t, self.times, self.smoothed)


def _smooth(v):
    # Savitzky-Golay 5-point quadratic (Savitzky & Golay 1964): keeps a quadratic exactly,
    # so it cuts +-0.5 deg jitter without sliding a swing's extremes as a moving mean does.
    padded = np.concatenate([[v[0]] * 2, v, [v[-1]] * 2])
    return np.convolve(padded, np.array([-3, 12, 17, 12, -3]) / 35.0, mode="valid")


def detect_swing(times, elevation, search=None, min_rise_deg=5.0):
    """The upswing start and elevation peak in a sampled elevation curve.

    Parameters
    ----------
    times : (n,) array  sample times [s], increasing
    elevation : (n,) array  arm elevation [rad] (see :func:`elevation_angles`)
    search : (float, float), optional  time span [s] to look in (e.g. dip start to touchdown)
    min_rise_deg : float  smallest rise that counts as a swing [deg]

    Returns
    -------
    DetectedSwing
        Peak: highest smoothed sample, refined by a parabola through the raw samples.
        Start: the lowest point of the last low stretch before the peak (the
        backswing extreme), or, when that stretch is long and flat (no backswing),
        the moment the arm leaves it.
    """
    t, v = checked_samples(times, elevation, "arm elevation", 1)
    s = _smooth(v)
    lo, hi = 0, len(t) - 1
    if search is not None:
        a, b = (require_finite("search bound", x, unit=" s") for x in search)
        idx = np.flatnonzero((t >= a) & (t <= b))
        if len(idx) < 3:
            raise InvalidGoalError(f"search span {a:g}..{b:g} s holds {len(idx)} samples; widen it "
                                   f"(samples cover {t[0]:g}..{t[-1]:g} s)")
        lo, hi = int(idx[0]), int(idx[-1])
    ip = lo + int(np.argmax(s[lo:hi + 1]))
    peak_t, peak_v = sampled_extremum(t, v, ip)
    floor = float(np.min(s[lo:ip + 1]))
    rise = s[ip] - floor
    if not rise >= math.radians(require_finite("min_rise_deg", min_rise_deg, positive=True)):
        raise InvalidTrajectoryError(
            f"no swing: the arm rises only {math.degrees(rise):.2f} deg before its peak at {peak_t:.3f} s "
            f"(less than {min_rise_deg:g} deg); check the arm bones chosen, or widen the search span")
    noise = 1.4826 * float(np.median(np.abs(v - s)))
    band = s[lo:ip + 1] <= floor + max(0.01 * rise, 4.0 * noise)
    r0, r1 = [(a + lo, b + lo) for a, b in true_runs(band)][-1]
    if t[r1] - t[r0] > 0.25 * (peak_t - t[r1]):
        j = min(r1, ip - 1)
        start_t = t[j] + (t[j + 1] - t[j]) * 0.5 * (r1 > r0)
        start_v = float(np.interp(start_t, t, s))
    else:
        i = r0 + int(np.argmin(s[r0:r1 + 1]))
        start_t, start_v = sampled_extremum(t, v, i, maximum=False)
    if not peak_t > start_t:
        raise InvalidTrajectoryError(f"the swing's upswing has zero length (start {start_t:.4f} s, "
                                     f"peak {peak_t:.4f} s); sample more densely or widen the search span")
    return DetectedSwing(float(start_t), float(peak_t), float(start_v), float(peak_v), t, s)


@dataclass(frozen=True)
class TimeWarp:
    """A monotone cubic Hermite map of time, old knots -> new knots [s]; identity outside."""

    old: np.ndarray
    new: np.ndarray
    slopes: np.ndarray

    def _span(self, t):
        t = np.asarray(t, dtype=float)
        i = np.clip(np.searchsorted(self.old, t, side="right") - 1, 0, len(self.old) - 2)
        h = self.old[i + 1] - self.old[i]
        return t, i, h, np.clip((t - self.old[i]) / h, 0.0, 1.0)

    def __call__(self, t):
        t, i, h, u = self._span(t)
        y0, y1, m0, m1 = self.new[i], self.new[i + 1], self.slopes[i] * h, self.slopes[i + 1] * h
        w = ((2 * u**3 - 3 * u**2 + 1) * y0 + (u**3 - 2 * u**2 + u) * m0 + (-2 * u**3 + 3 * u**2) * y1
             + (u**3 - u**2) * m1)
        return np.where((t <= self.old[0]) | (t >= self.old[-1]), t, w)

    def slope(self, t):
        """dw/dt [-] at ``t``."""
        t, i, h, u = self._span(t)
        y0, y1, m0, m1 = self.new[i], self.new[i + 1], self.slopes[i] * h, self.slopes[i + 1] * h
        d = ((6 * u**2 - 6 * u) * (y0 - y1) + (3 * u**2 - 4 * u + 1) * m0 + (3 * u**2 - 2 * u) * m1) / h
        return np.where((t <= self.old[0]) | (t >= self.old[-1]), 1.0, d)


def monotone_warp(old, new, end_slopes=1.0):
    """Monotone cubic through knots (Fritsch & Carlson 1980; the weighted harmonic mean of
    Fritsch & Butland 1984 inside, as scipy's PchipInterpolator). End slopes
    ``end_slopes`` (1 joins the identity smoothly), capped at 3 secants to stay monotone;
    ``None`` uses PCHIP's own end rule."""
    x, y = np.asarray(old, dtype=float), np.asarray(new, dtype=float)
    if len(x) < 2 or np.any(np.diff(x) <= 0) or np.any(np.diff(y) <= 0):
        raise InvalidGoalError(f"warp knots must increase strictly (old {x.tolist()}, new {y.tolist()}); "
                               "give swing and contact windows of positive length")
    if x[0] != y[0] or x[-1] != y[-1]:
        raise InvalidGoalError(f"warp end knots must map to themselves (old {x[0]:g}, {x[-1]:g} -> new "
                               f"{y[0]:g}, {y[-1]:g}) so it joins the identity outside; give the same end times")
    h, d = np.diff(x), np.diff(y) / np.diff(x)
    m = np.zeros_like(x)
    w1, w2 = 2 * h[1:] + h[:-1], h[1:] + 2 * h[:-1]
    m[1:-1] = (w1 + w2) / (w1 / d[:-1] + w2 / d[1:])
    for end, k, k2 in ((0, 0, 1), (-1, -1, -2)):
        if end_slopes is None and len(x) > 2:
            hk, hk2 = h[k], h[k2]
            e = ((2 * hk + hk2) * d[k] - hk * d[k2]) / (hk + hk2)
            e = 0.0 if e * d[k] <= 0 else (3 * d[k] if d[k] * d[k2] <= 0 and abs(e) > 3 * abs(d[k]) else e)
            m[end] = e
        else:
            m[end] = min(1.0 if end_slopes is None else end_slopes, 3 * d[k])
    return TimeWarp(x, y, m)


def swing_warp(swing, window, pad_s=None):
    """The warp taking the upswing [start, peak] onto [push start, take-off].

    It blends back to the identity ``pad_s`` [s] (default: one swing length)
    beyond both windows, so keys far from the swing keep their times exactly.
    """
    a, b = swing.upswing_start_s, swing.peak_s
    A, B = window.push_start_s, window.takeoff_s
    if not b > a:
        raise InvalidGoalError(f"the swing window {a:g}..{b:g} s has no length; detect the swing again "
                               "over a span that includes its rise")
    pad = max(b - a, B - A) if pad_s is None else require_finite("warp pad", pad_s, positive=True, unit=" s")
    lo, hi = min(a, A) - pad, max(b, B) + pad
    return monotone_warp([lo, a, b, hi], [lo, A, B, hi])


def warp_keys(keys, warp):
    """Keys with warped times: values kept exactly, handle time offsets scaled by the warp's slope
    at the key (so both handles stay aligned), then shortened where they would overlap the next key's."""
    t = np.asarray(keys.times, dtype=float)
    left, right = np.array(keys.left_handles, dtype=float), np.array(keys.right_handles, dtype=float)
    T, k = warp(t), warp.slope(t)
    lo, hi = warp.old[0], warp.old[-1]
    moved = ((left[:, 0] < hi) & (right[:, 0] > lo)) | ((t > lo) & (t < hi))
    new_left, new_right = left.copy(), right.copy()
    new_left[:, 0] = np.where(moved, T - (t - left[:, 0]) * k, left[:, 0])
    new_right[:, 0] = np.where(moved, T + (right[:, 0] - t) * k, right[:, 0])
    T = np.where(moved, T, t)
    for i in range(len(t) - 1):
        r, l = new_right[i, 0] - T[i], T[i + 1] - new_left[i + 1, 0]
        gap = T[i + 1] - T[i]
        if r + l > gap and r + l > 0 and (moved[i] or moved[i + 1]):
            f = gap / (r + l)  # as Blender keeps a Bezier span a function of time
            new_right[i] = [T[i] + f * r, keys.values[i] + f * (right[i, 1] - keys.values[i])]
            new_left[i + 1] = [T[i + 1] - f * l, keys.values[i + 1] + f * (left[i + 1, 1] - keys.values[i + 1])]
    return BezierKeys(T, np.array(keys.values, dtype=float), new_left, new_right)


@dataclass(frozen=True)
class RetimeReport:
    """What a re-timing did, in frames at ``fps``.

    frames_moved : tuple of (k,) arrays  per curve, new minus old key frame
    max_frames_moved : float  largest |shift| of any key [frames]
    keys_moved : int  keys shifted by more than 0.001 frame
    peak_shift_frames, start_shift_frames : float  where the peak and the upswing start went [frames]
    warnings_before : tuple of str  :func:`swing_warnings` of the swing as it was
    """

    fps: float
    frames_moved: tuple
    max_frames_moved: float
    keys_moved: int
    peak_shift_frames: float
    start_shift_frames: float
    warnings_before: tuple


def retime_swing(curves, swing, window, fps, pad_s=None):
    """Warp every arm F-curve so the upswing fills the push and peaks at take-off.

    Parameters
    ----------
    curves : sequence of BezierKeys  all the arm bones' F-curves (times [s])
    swing : DetectedSwing  from the arm's evaluated motion before the change
    window : ContactWindow
    fps : float  [frames/s], for the report
    pad_s : float, optional  see :func:`swing_warp`

    Returns
    -------
    (tuple of BezierKeys, RetimeReport)
    """
    fps = require_finite("fps", fps, positive=True)
    warp = swing_warp(swing, window, pad_s)
    out = tuple(warp_keys(c, warp) for c in curves)
    moved = tuple((o.times - np.asarray(c.times, dtype=float)) * fps for o, c in zip(out, curves))
    flat = np.concatenate([np.abs(m) for m in moved]) if moved else np.zeros(0)
    report = RetimeReport(fps, moved, float(flat.max()) if len(flat) else 0.0, int(np.sum(flat > 1e-3)),
                          (window.takeoff_s - swing.peak_s) * fps, (window.push_start_s - swing.upswing_start_s) * fps,
                          swing_warnings(swing, window, fps))
    return out, report


def torso_drop(swing, window, mass_fraction=None, com_distance=None):
    """COM drop of the rest of the body [m] (<= 0) while the arms rise after take-off.

    In flight the whole-body COM keeps its parabola, so an arm COM rising
    ``dz`` relative to the body moves the rest by ``-(m_arms / M) dz``; with the
    arm straight ``dz = r (cos theta_takeoff - cos theta_peak)``.
    """
    if swing.peak_s <= window.takeoff_s:
        return 0.0
    mu = arm_mass_fraction() if mass_fraction is None else mass_fraction
    r = arm_com_distance() if com_distance is None else com_distance
    dz = r * (math.cos(float(swing.elevation(window.takeoff_s))) - math.cos(swing.peak_rad))
    return -mu * max(0.0, dz)


def swing_warnings(swing, window, fps, mass_fraction=None, com_distance=None, tolerance_frames=1.0):
    """Plain-text warnings for a swing against a contact window (for the panel and the CLI).

    A peak more than ``tolerance_frames`` after take-off (with the torso drop it
    implies), or before it, an upswing starting before the push, or a swing
    outside contact altogether.
    """
    fps = require_finite("fps", fps, positive=True)
    out = []
    late = (swing.peak_s - window.takeoff_s) * fps
    early_start = (window.push_start_s - swing.upswing_start_s) * fps
    if swing.upswing_start_s >= window.takeoff_s:
        out.append(f"arm swing outside contact: the upswing starts {-early_start:.1f} frames after the push "
                   "starts, with the feet already off the ground; it cannot help the jump - re-time the swing")
    elif window.touchdown_s is not None and swing.peak_s >= window.touchdown_s:
        out.append(f"arm swing outside contact: it peaks {late:.1f} frames after take-off, after touchdown; "
                   "re-time the swing")
    elif late > tolerance_frames:
        drop = torso_drop(swing, window, mass_fraction, com_distance)
        out.append(f"arm swing peaks {late:.1f} frames after take-off: the arms still rise in the air, which "
                   f"drops the torso by {-drop * 100:.1f} cm (-(m_arms/M) dz_arms) and adds no height; "
                   "re-time the swing")
    elif late < -tolerance_frames:
        where = "before the push starts" if swing.peak_s < window.push_start_s else "before take-off"
        out.append(f"arm swing peaks {-late:.1f} frames {where}: the arms slow down while the feet still push, "
                   "which unloads them; re-time the swing")
    if early_start > tolerance_frames and swing.upswing_start_s < window.takeoff_s:
        out.append(f"arm upswing starts {early_start:.1f} frames before the push (in the dip); "
                   "it reads best inside propulsion")
    return tuple(out)


def plan_swing_report(plan, amplitudes, fps, hop=1):
    """Lines the CLI prints for ``plan --arm-swing``: the placed swing, its gain, and any warnings."""
    fps = require_finite("fps", fps, positive=True)
    placed = place_swing(plan, amplitudes)
    t = np.arange(int(math.floor(plan.duration_s * fps + 1e-9)) + 1) / fps
    window = window_from_plan(plan, hop)
    found = detect_swing(t, placed.elevation(t), search=(0.0, window.touchdown_s))
    gain = swing_gain(plan.hops[hop - 1].takeoff_speed_m_s, placed.amplitudes, gravity=plan.gravity,
                      standing_com_height=plan.resolved_goals.standing_com_height)
    a = placed.amplitudes
    dip = next((p.start_s for p in plan.phases if p.name == "unweighting"), 0.0) if hop == 1 else None
    share = ("" if dip is None else f"; starts at {(found.upswing_start_s - dip) / (window.takeoff_s - dip):.0%} "
             f"of the movement (Vaverka et al. 2016: {C.UPSWING_START_SHARE:.0%})")
    lines = [f"arm swing: back {a.backswing_deg:g} deg, up {a.upswing_deg:g} deg; upswing frames "
             f"{found.upswing_start_s * fps:.1f}-{found.peak_s * fps:.1f} (push {window.push_start_s * fps:.1f}-"
             f"{window.takeoff_s * fps:.1f}){share}",
             f"with this swing the same push gives {gain.takeoff_speed_m_s:.2f} m/s (not "
             f"{gain.takeoff_speed_no_arms_m_s:.2f}) and {gain.total_gain_m * 100:.1f} cm more height "
             f"({gain.position_share:.0%} higher take-off, {gain.speed_share:.0%} faster; model after "
             "Lees et al. 2004, Feltner et al. 1999)"]
    return tuple(lines) + swing_warnings(found, window, fps)
