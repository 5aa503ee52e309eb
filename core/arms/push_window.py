"""When the feet push: the contact window an arm swing must fall inside.

From a plan's phases, from the centre of mass's ballistic stretch, or from foot heights.
"""

from dataclasses import dataclass
import numpy as np
from ..base import constants as C
from ..base.errors import InvalidGoalError, InvalidTrajectoryError, require_finite

MIN_SAMPLES = 5  # fewest samples an analysis of a sampled curve accepts



@dataclass(frozen=True)
class ContactWindow:
    """Where the push is: propulsion start and take-off [s], touchdown [s] if known."""

    push_start_s: float
    takeoff_s: float
    touchdown_s: float = None
    source: str = "phase times"

    def __post_init__(self):
        a = require_finite("push start", self.push_start_s, unit=" s")
        b = require_finite("take-off", self.takeoff_s, unit=" s")
        if not b > a:
            raise InvalidGoalError(
                f"push start {a:g} s is not before take-off {b:g} s (a push of {b - a:g} s); "
                "give the propulsion start before take-off (check the lw: markers' order)")
        if self.touchdown_s is not None and not require_finite("touchdown", self.touchdown_s, unit=" s") > b:
            raise InvalidGoalError(f"touchdown {self.touchdown_s:g} s is not after take-off {b:g} s; "
                                   "give the landing after the take-off")


def window_from_plan(plan, hop=1):
    """The contact window of hop ``hop`` (from 1) of a JumpPlan."""
    if not 1 <= hop <= len(plan.hops):
        raise InvalidGoalError(f"hop {hop} is not in the plan (it has {len(plan.hops)}); give 1..{len(plan.hops)}")
    push = next(p for p in plan.phases if p.name == "propulsion" and p.hop == hop)
    h = plan.hops[hop - 1]
    return ContactWindow(push.start_s, h.takeoff_time_s, h.touchdown_time_s, "plan")


def sampled_extremum(t, v, i, maximum=True):
    """Sub-sample extremum near index ``i`` as ``(time, value)``.

    A swing's extremes are kinked: a slow backswing meets a fast upswing, a fast
    upswing a slow flight, each side near-quadratic with its own curvature (a
    Hermite key with zero slope). So two half-parabolas sharing the vertex are
    fitted to samples i-2..i+2, scanning the vertex time over +-1 sample; one
    parabola would lean towards the flatter side by about half a frame.
    """
    lo, hi = max(0, i - 2), min(len(t), i + 3)
    if hi - lo < 3:
        return float(t[i]), float(v[i])
    tt, vv = t[lo:hi], v[lo:hi] if maximum else -v[lo:hi]
    left, right = t[max(lo, i - 1)], t[min(hi - 1, i + 1)]
    cand = np.linspace(left, right, 201)
    x = tt[None, :] - cand[:, None]
    A = np.stack([np.ones_like(x), np.where(x < 0, x * x, 0.0), np.where(x >= 0, x * x, 0.0)], axis=-1)
    coef = np.einsum("mij,mj->mi", np.linalg.pinv(A), np.broadcast_to(vv, x.shape))
    resid = np.sum((np.einsum("mij,mj->mi", A, coef) - vv) ** 2, axis=1)
    best = int(np.argmin(resid))
    value = coef[best, 0] if maximum else -coef[best, 0]
    return float(cand[best]), float(value)


def checked_samples(times, values, name, width=None):
    t = np.asarray(times, dtype=float)
    v = np.asarray(values, dtype=float)
    if t.ndim != 1 or len(t) < MIN_SAMPLES or v.shape[:1] != t.shape or (width == 1 and v.ndim != 1):
        raise InvalidTrajectoryError(
            f"{name} needs one value per time and at least {MIN_SAMPLES} samples "
            f"(got times {t.shape}, values {v.shape}); sample one value per frame")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(v))):
        raise InvalidTrajectoryError(f"{name} holds NaN or infinite samples; sample the evaluated rig again")
    if np.any(np.diff(t) <= 0):
        raise InvalidTrajectoryError(f"{name} times must increase strictly; sample each frame once, in order")
    return t, v


def true_runs(mask):
    """(start, end) index pairs, end inclusive, of the True runs of ``mask``."""
    m = np.concatenate([[False], mask, [False]]).astype(int)
    d = np.diff(m)
    return list(zip(np.flatnonzero(d == 1), np.flatnonzero(d == -1) - 1))


def _pick_run(runs, hop, name):
    if len(runs) < hop:
        raise InvalidTrajectoryError(f"found {len(runs)} flight stretch(es) in the {name}, asked for hop {hop}; "
                                     "check the samples cover the jump, or pass the phase times")
    return runs[hop - 1]


def _lowest_before(t, z, lo, hi):
    i = lo + int(np.argmin(z[lo:hi + 1]))
    return float(sampled_extremum(t, z, i, maximum=False)[0])


def window_from_com(times, com_height, gravity=C.STANDARD_GRAVITY, tolerance=0.05, hop=1):
    """The contact window from the COM's sampled height [m]: its ballistic stretch.

    A sample is ballistic when its second difference is within ``tolerance`` g of
    -g (ground force below ``tolerance`` BW); take-off is the first sample of the
    first ballistic stencil, touchdown the last; the push starts at the COM's
    lowest point before take-off (speed 0, the end of braking; McMahon et al. 2018).
    """
    t, z = checked_samples(times, com_height, "COM height", 1)
    g = require_finite("gravity", gravity, positive=True, unit=" m/s^2")
    h1, h2 = np.diff(t)[:-1], np.diff(t)[1:]
    acc = 2.0 * ((z[2:] - z[1:-1]) / h2 - (z[1:-1] - z[:-2]) / h1) / (h1 + h2)
    runs = [r for r in true_runs(np.abs(acc + g) <= tolerance * g) if r[1] - r[0] >= 1]
    i0, i1 = _pick_run(runs, hop, "COM height")
    takeoff, touchdown = t[i0], t[i1 + 2]  # stencil centre c covers samples c .. c+2 of t
    prev_end = 0 if hop == 1 else runs[hop - 2][1] + 2
    return ContactWindow(min(_lowest_before(t, z, prev_end, i0), takeoff - 1e-6), float(takeoff),
                         float(touchdown), "COM flight stretch")


def window_from_feet(times, foot_heights, push_start_s=None, com_height=None, clearance=0.02, ground=None,
                     hop=1):
    """The contact window from sampled foot heights [m] (n,) or (n, feet).

    Airborne while every foot is more than ``clearance`` [m] above ``ground``
    (default: the lowest foot sample); take-off and touchdown are interpolated
    between frames. The push start comes from ``push_start_s``, else the lowest
    COM sample before take-off, else take-off minus 0.25 s (middle of the
    0.20-0.30 s propulsion range, from memory).
    """
    t, h = checked_samples(times, foot_heights, "foot heights")
    low = h if h.ndim == 1 else np.min(h.reshape(len(t), -1), axis=1)
    base = float(np.min(low)) if ground is None else require_finite("ground", ground, unit=" m")
    gap = low - base - require_finite("clearance", clearance, positive=True, unit=" m")
    runs = [r for r in true_runs(gap > 0) if r[0] > 0 and r[1] < len(t) - 1]
    i0, i1 = _pick_run(runs, hop, "foot heights")
    takeoff = t[i0 - 1] + (t[i0] - t[i0 - 1]) * (-gap[i0 - 1]) / (gap[i0] - gap[i0 - 1])
    touchdown = t[i1] + (t[i1 + 1] - t[i1]) * gap[i1] / (gap[i1] - gap[i1 + 1])
    if push_start_s is not None:
        start = require_finite("push start", push_start_s, unit=" s")
    elif com_height is not None:
        _, z = checked_samples(t, com_height, "COM height", 1)
        prev_end = 0 if hop == 1 else runs[hop - 2][1]
        start = min(_lowest_before(t, z, prev_end, i0 - 1), takeoff - 1e-6)
    else:
        start = takeoff - float(np.mean(C.PROPULSION_DURATION_RANGE))
    return ContactWindow(float(start), float(takeoff), float(touchdown), "foot heights")
