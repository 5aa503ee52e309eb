"""Keys from a plan: phase poses for blocking, and minimal cubic Hermite keys.

A cubic Hermite span between keys (t0, v0, s0) and (t1, v1, s1) is a Bezier
curve with handles at t0 + dt/3 (value v0 + s0 dt/3) and t1 - dt/3 (value
v1 - s1 dt/3); with handles at thirds the time parameter is linear, so a
flight parabola (a quadratic) is reproduced exactly.
"""

from dataclasses import dataclass

import numpy as np

from .errors import InvalidGoalError, require_finite

_CHECK_POINTS = 96  # error samples inside a span
_SAFETY = 0.98  # fit a little inside the tolerance so dense re-checks pass
_CANDIDATES = 32  # span ends tried at once: each round narrows the search 32-fold
_ROUNDS = 6  # 32^6 = 2^30: the next key is found to 2^-30 of a span, far below a frame
#: Finest key tolerance [m]: a nanometre, 1e-4 of the smallest goal accepted
#: (10 µm) and below float32 key values; finer ones only make the search run for ever.
FINEST_TOLERANCE = 1e-9


@dataclass(frozen=True)
class HermiteKeys:
    """Key times [s], values [m] and slopes [m/s] of a cubic Hermite curve."""

    times: np.ndarray
    values: np.ndarray
    slopes: np.ndarray

    def __len__(self):
        return len(self.times)


def _channel(plan, channel):
    if channel == "height":
        return plan.height, plan.vertical_speed
    if channel == "forward":
        return plan.forward, plan.forward_speed
    raise InvalidGoalError(f"channel {channel!r} is not one of 'height', 'forward'")


def evaluate_hermite(keys, t):
    """Value of the key curve at times ``t`` [s]; constant beyond the end keys."""
    t = np.asarray(t, dtype=float)
    k, v, s = keys.times, keys.values, keys.slopes
    if len(k) == 1:
        return np.full_like(t, v[0])
    i = np.clip(np.searchsorted(k, t, side="right") - 1, 0, len(k) - 2)
    dt = k[i + 1] - k[i]
    u = np.clip((t - k[i]) / dt, 0.0, 1.0)
    h00 = 2 * u**3 - 3 * u**2 + 1
    h10 = u**3 - 2 * u**2 + u
    h01 = -2 * u**3 + 3 * u**2
    h11 = u**3 - u**2
    out = h00 * v[i] + h10 * dt * s[i] + h01 * v[i + 1] + h11 * dt * s[i + 1]
    out = np.where(t < k[0], v[0], out)
    return np.where(t > k[-1], v[-1], out)


def _span_errors(f, df, t0, ends):
    """Largest gap between the curve and one Hermite span from ``t0`` to each of ``ends`` [s].

    All spans are checked in one evaluation of the plan (the costly part), each
    at ``_CHECK_POINTS`` inner times and its ends.
    """
    ends = np.asarray(ends, dtype=float)
    u = np.linspace(0.0, 1.0, _CHECK_POINTS + 2)[None, :]
    dt = (ends - t0)[:, None]
    v0, s0 = f(np.array([t0])), df(np.array([t0]))
    v1, s1 = f(ends)[:, None], df(ends)[:, None]
    curve = ((2 * u**3 - 3 * u**2 + 1) * v0 + (u**3 - 2 * u**2 + u) * dt * s0
             + (-2 * u**3 + 3 * u**2) * v1 + (u**3 - u**2) * dt * s1)
    return np.max(np.abs(curve - f(t0 + dt * u)), axis=1)


def _farthest_key(f, df, t, end, tol):
    """The farthest time in ``(t, end]`` whose span from ``t`` stays within ``tol`` [s].

    A multi-section search: each round tries ``_CANDIDATES`` evenly spaced ends
    and keeps the bracket between the last passing one before the first
    failure and that failure, so the result always passes.
    """
    if _span_errors(f, df, t, [end])[0] <= tol:
        return end
    lo, hi = t, end
    for _ in range(_ROUNDS):
        ends = lo + (hi - lo) * np.arange(1, _CANDIDATES) / _CANDIDATES
        fails = np.flatnonzero(_span_errors(f, df, t, ends) > tol)
        first = fails[0] if len(fails) else len(ends)
        lo, hi = (ends[first - 1] if first else lo), (ends[first] if first < len(ends) else hi)
    if lo - t < 1e-9:
        lo = hi  # tolerance below float resolution of the curve: step on
    return lo


def _breakpoints(plan):
    """Times that must be keys: the ends, every take-off and touchdown, and the joins inside a flight."""
    points = {0.0, plan.duration_s}
    for hop in plan.hops:
        points.update((hop.takeoff_time_s, hop.touchdown_time_s))
        # A stylised flight is several exact pieces (rise, apex hang, fall): key each join.
        points.update(s for s in plan.z_path.starts if hop.takeoff_time_s < s < hop.touchdown_time_s)
    return sorted(points)


def hermite_keys(plan, channel="height", tolerance=5e-4):
    """The fewest cubic Hermite keys that follow a channel within ``tolerance``.

    Keys sit at take-off and touchdown (so each flight is one exact span) and,
    between them, as far apart as the tolerance allows: from each key the next
    is the farthest time whose span stays within tolerance (found by bisection).

    Parameters
    ----------
    plan : JumpPlan
    channel : {"height", "forward"}
    tolerance : float
        Largest distance between the key curve and the plan [m].

    Returns
    -------
    HermiteKeys
    """
    tol = require_finite("key tolerance", tolerance, positive=True, unit=" m")
    if tol < FINEST_TOLERANCE:
        raise InvalidGoalError(f"key tolerance {tol:g} m is finer than the keys can hold; "
                               f"give {FINEST_TOLERANCE:g} m or more (the default is 0.0005 m)")
    tol *= _SAFETY
    f, df = _channel(plan, channel)
    times = [0.0]
    marks = _breakpoints(plan)
    for start, end in zip(marks[:-1], marks[1:]):
        t = start
        while end - t > 1e-12:
            t = _farthest_key(f, df, t, end, tol)
            times.append(t)
    times = np.array(times)
    return _prune_held_ends(HermiteKeys(times, f(times), df(times)), f, tol)


def _subset(keys, sl):
    return HermiteKeys(keys.times[sl], keys.values[sl], keys.slopes[sl])


def _prune_held_ends(keys, f, tol):
    """Drop end keys that the curve's constant extrapolation already covers.

    Before its first key and after its last an F-curve holds the end value, so a
    standing-still stretch at either end needs no key of its own.
    """
    start, end = keys.times[0], keys.times[-1]
    while len(keys) > 2:
        # Everything from the plan's start to the new first key is then held.
        fewer = _subset(keys, slice(1, None))
        t = np.linspace(start, fewer.times[0], 4 * _CHECK_POINTS)
        if np.max(np.abs(evaluate_hermite(fewer, t) - f(t))) > tol:
            break
        keys = fewer
    while len(keys) > 2:
        fewer = _subset(keys, slice(None, -1))
        t = np.linspace(fewer.times[-1], end, 4 * _CHECK_POINTS)
        if np.max(np.abs(evaluate_hermite(fewer, t) - f(t))) > tol:
            break
        keys = fewer
    return keys


def phase_pose_keys(plan, channel="height"):
    """One key per phase start plus the end: the poses of a blocking pass (slopes 0)."""
    f, _ = _channel(plan, channel)
    times = np.array([p.start_s for p in plan.phases] + [plan.duration_s])
    times = np.unique(times)
    return HermiteKeys(times, f(times), np.zeros_like(times))


def frame_keys(plan, channel, fps):
    """A key on every frame at ``fps`` [frames/s], slopes from the plan."""
    f, df = _channel(plan, channel)
    t = plan.sample(fps).times
    return HermiteKeys(t, f(t), df(t))


def held_pose_keys(plan, channel, fps, step=2):
    """Held poses every ``step`` frames (on twos, threes) for constant interpolation.

    Frames count from time 0 at ``fps`` [frames/s]. The frames nearest each
    take-off and touchdown are always keys, so contact and take-off stay on
    their frames: where the grid misses one, the hold before it is shortened.

    Returns
    -------
    HermiteKeys
        Times on whole frames [s], values of the plan there, slopes 0.
    """
    step = int(step)
    if step < 1 or step > 12:
        raise InvalidGoalError(f"hold step must be 1 to 12 frames, got {step}")
    fps = require_finite("fps", fps, positive=True)
    f, _ = _channel(plan, channel)
    last = int(np.floor(plan.duration_s * fps + 1e-9))
    forced = sorted({int(round(t * fps)) for hop in plan.hops for t in (hop.takeoff_time_s, hop.touchdown_time_s)})
    frames, k = [], 0
    while k <= last:
        frames.append(k)
        nxt = k + step
        inside = [m for m in forced if k < m < nxt]
        k = inside[0] if inside else nxt
    if frames[-1] != last:
        frames.append(last)
    times = np.array(frames, dtype=float) / fps
    return HermiteKeys(times, f(times), np.zeros_like(times))


@dataclass(frozen=True)
class BezierKeys:
    """One F-curve's keys: times [s], values, and absolute handles ``(time [s], value)`` (k, 2)."""

    times: np.ndarray
    values: np.ndarray
    left_handles: np.ndarray
    right_handles: np.ndarray

    def __len__(self):
        return len(self.times)


def bezier_from_hermite(keys):
    """FREE Bezier handles for Hermite keys: at t -/+ dt/3, value v -/+ slope dt/3 (exact cubic)."""
    t, v, s = (np.asarray(a, dtype=float) for a in (keys.times, keys.values, keys.slopes))
    dt = np.diff(t)
    prev = np.concatenate([[dt[0] if len(dt) else 1.0], dt]) / 3.0
    nxt = np.concatenate([dt, [dt[-1] if len(dt) else 1.0]]) / 3.0
    left = np.stack([t - prev, v - s * prev], axis=1)
    right = np.stack([t + nxt, v + s * nxt], axis=1)
    return BezierKeys(t, v, left, right)


def hermite_slope(keys, t):
    """Time derivative of the Hermite key curve at ``t`` [value/s]; 0 beyond the end keys."""
    t = np.asarray(t, dtype=float)
    k, v, s = keys.times, keys.values, keys.slopes
    if len(k) < 2:
        return np.zeros_like(t)
    i = np.clip(np.searchsorted(k, t, side="right") - 1, 0, len(k) - 2)
    dt = k[i + 1] - k[i]
    u = np.clip((t - k[i]) / dt, 0.0, 1.0)
    d = ((6 * u**2 - 6 * u) * (v[i] - v[i + 1]) / dt + (3 * u**2 - 4 * u + 1) * s[i]
         + (3 * u**2 - 2 * u) * s[i + 1])
    return np.where((t < k[0]) | (t > k[-1]), 0.0, d)
