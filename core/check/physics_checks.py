"""Checks of the ground part of a jump and of the air's horizontal travel.

Each function takes the sampled arrays and the flights' sample spans ``(i0, i1)``
(inclusive sample indices) and returns Findings.

References
----------
Work-energy landing law: mean force over the stopping distance ``dh`` after a fall of
``h`` is ``BW (1 + h / dh)`` (textbook mechanics).
"""

from dataclasses import dataclass

import numpy as np

from ..base.constants import LANDING_FORCE_GRADES, PUSH_FORCE_GRADES, TAKEOFF_SPEED_GRADES
from ..base.constants import UNWEIGHTING_FORCE_FLOOR_GRADES
from ..base.errors import InvalidTrajectoryError
from .findings import Finding, frame_text, grade
from .capture_flights import MEASURED_NOISE_M
from .contact_heights import dip_depth, lowest_height, median_step
from .parabola import fit_parabola

#: An arc is a run of downward acceleration stronger than this fraction of g.
ARC_ACCELERATION_FRACTION = 0.1
#: An arc rises and falls by at least this much on both sides of its top [m].
ARC_MIN_RISE_M = 5e-3
#: Fewest of an arc's samples a flight must explain for the arc to be ballistic;
#: a sine crest fits a parabola over about 40% of its arc, a real flight over 75%+.
ARC_BALLISTIC_COVERAGE = 0.6
#: Apparent weight below this [BW] in contact means the ground pulls the body down.
DIP_FORCE_FLOOR_BW = -0.1
#: Change of horizontal speed over a flight still read as constant [m/s].
FORWARD_SPEED_CHANGE_TOLERANCE = 0.1
#: A foot within this height of its lowest point in a ground stretch is planted [m].
FOOT_CONTACT_HEIGHT_M = 0.02
#: Travel of a planted foot still read as planted [m].
FOOT_SLIDE_TOLERANCE_M = 5e-3
#: Leg length over rest length still read as straight (1%: rounding of IK chains).
LEG_STRETCH_TOLERANCE = 0.01
#: A landing whose mean force is below this [BW] after a fall of at least
#: SOFT_LANDING_MIN_FALL_M gives more than four times the fall's height.
SOFT_LANDING_MEAN_FORCE_BW = 1.25
SOFT_LANDING_MIN_FALL_M = 0.05


@dataclass(frozen=True)
class HopForces:
    """Peak forces and their grades around one flight (None where not measurable).

    Attributes
    ----------
    hop : int
    min_unweighting_bw, peak_push_bw, peak_landing_bw : float or None  [BW]
    takeoff_speed_m_s : float  [m/s]
    fall_height_m, stopping_distance_m : float or None  [m]
    mean_landing_bw : float or None  1 + fall / stopping distance [BW]
    unweighting_grade, push_grade, landing_grade, takeoff_speed_grade : str or None
    push_frames, landing_frames : (float, float) or None
    stopping_distance_sd_m : float or None  standard error of the stopping distance [m]
        (0 for keyed paths); a landing is too hard or too soft only beyond twice it
    dip_depth_m, dip_depth_sd_m : float or None  the countermovement: from the height where
        the contact began (its first 0.1 s) down to the lowest point before take-off [m],
        and its standard error [m] (0 for keyed paths)
    unweighting_sd_bw : float or None  standard error of ``min_unweighting_bw`` [BW]: the
        sample noise through the acceleration's smoothing window (0 for keyed paths)
    """

    hop: int
    min_unweighting_bw: object
    peak_push_bw: object
    peak_landing_bw: object
    takeoff_speed_m_s: float
    fall_height_m: object
    stopping_distance_m: object
    mean_landing_bw: object
    unweighting_grade: object
    push_grade: object
    landing_grade: object
    takeoff_speed_grade: str
    push_frames: object
    landing_frames: object
    stopping_distance_sd_m: object = None
    dip_depth_m: object = None
    dip_depth_sd_m: object = None
    unweighting_sd_bw: object = None


def validate_foot(foot, n):
    """Check a FootTrack's arrays against ``n`` samples; returns it unchanged."""
    for label, arr in (("positions", foot.positions), ("hip_positions", foot.hip_positions)):
        if arr is None and label == "hip_positions":
            continue
        a = np.asarray(arr, dtype=float)
        if a.shape != (n, 3):
            raise InvalidTrajectoryError(
                f"foot {foot.name!r} {label} has shape {a.shape}; give ({n}, 3), one row per frame")
        if not np.all(np.isfinite(a)):
            raise InvalidTrajectoryError(f"foot {foot.name!r} {label} has a non-finite value; fill it in")
    if foot.rest_length_m is not None:
        r = float(foot.rest_length_m)
        if not (np.isfinite(r) and r > 0):
            raise InvalidTrajectoryError(
                f"foot {foot.name!r} rest length {foot.rest_length_m!r} m must be positive; give the straight leg's length")
    return foot


def _runs(mask):
    """Inclusive (first, last) index pairs of the True runs of a boolean array."""
    idx = np.flatnonzero(np.diff(np.concatenate([[0], mask.astype(np.int8), [0]])))
    return [(int(a), int(b) - 1) for a, b in zip(idx[::2], idx[1::2])]


def _in_flight(n, spans, margin=0):
    mask = np.zeros(n, bool)
    for i0, i1 in spans:
        mask[max(i0 - margin, 0):i1 + margin + 1] = True
    return mask


def non_ballistic_arcs(z, accel, spans, scene_g):
    """Arcs that no flight explains, as (first, last) sample indices.

    An arc is a run of samples accelerating downward by more than a tenth of g whose
    top lies inside it, rising and falling at least 5 mm on each side; it is ballistic
    when flights cover at least 60% of it.
    """
    out = []
    airborne = _in_flight(len(z), spans)
    for a, b in _runs(accel < -ARC_ACCELERATION_FRACTION * scene_g):
        if b - a < 2:
            continue
        top = a + int(np.argmax(z[a:b + 1]))
        if top in (a, b) or z[top] - z[a] < ARC_MIN_RISE_M or z[top] - z[b] < ARC_MIN_RISE_M:
            continue
        if float(np.mean(airborne[a:b + 1])) < ARC_BALLISTIC_COVERAGE:
            out.append((a, b))
    return out


def arc_findings(frames, times, z, accel, arcs, scene_g, fps):
    """``not_ballistic`` for each arc of :func:`non_ballistic_arcs`, with the closest parabola."""
    out = []
    step_cm = 100.0 * scene_g / fps ** 2
    for a, b in arcs:
        seg = accel[a:b + 1]
        hard, soft = a + int(np.argmin(seg)), a + int(np.argmax(seg))
        fit = fit_parabola(times[a:b + 1], z[a:b + 1])
        closest = ""
        if fit.gravity > 0:
            closest = (f"; the closest free-fall arc has g = {fit.gravity:.2f} m/s^2 "
                       f"({fit.gravity / scene_g:.2f} g) and misses by up to {fit.max_abs * 1000:.0f} mm")
        out.append(Finding(
            "not_ballistic", frames[a], frames[b],
            f"frames {frame_text(frames[a])}-{frame_text(frames[b])} rise and fall, but the downward "
            f"acceleration varies from {-accel[soft]:.2f} m/s^2 (frame {frame_text(frames[soft])}) to "
            f"{-accel[hard]:.2f} m/s^2 (frame {frame_text(frames[hard])}); free fall keeps it constant"
            + closest,
            f"give the arc the same curvature everywhere: frame-to-frame drops growing by "
            f"{step_cm:.2f} cm each frame at {fps:g} fps (g/fps^2), e.g. from the planner's arc; "
            "an apex rounder than the sides reads as a float, a sharper one as a bounce"))
    return out


def forward_findings(frames, times, pos, keep, span, tol, noise=0.0):
    """``forward_speed_changes_in_flight`` when horizontal travel is not linear in the air.

    The change is read from a quadratic fitted to all airborne samples (not from the end
    samples, which jitter), and reported only when it exceeds
    :data:`FORWARD_SPEED_CHANGE_TOLERANCE` by more than its 95 % uncertainty.
    """
    i0, i1 = span
    # keep is sorted: the flight's samples are one slice of it.
    k = keep[np.searchsorted(keep, i0, side="left"):np.searchsorted(keep, i1, side="right")]
    if len(k) < 4:
        return []
    t = times[k] - times[k].mean()
    xy = pos[k, :2]
    lin = np.polyfit(t, xy, 1)
    resid = xy - (np.outer(t, lin[0]) + lin[1])
    quad = np.polyfit(t, xy, 2)
    v_start = 2 * quad[0] * t[0] + quad[1]
    v_end = 2 * quad[0] * t[-1] + quad[1]
    change = float(np.hypot(*(v_end - v_start)))
    if np.max(np.abs(resid)) <= tol or change <= FORWARD_SPEED_CHANGE_TOLERANCE:
        return []
    spread = _speed_change_spread(t, xy, quad, noise)
    if change - 1.96 * spread <= FORWARD_SPEED_CHANGE_TOLERANCE:
        return []
    s0, s1 = float(np.hypot(*v_start)), float(np.hypot(*v_end))
    return [Finding(
        "forward_speed_changes_in_flight", frames[i0], frames[i1],
        f"horizontal speed goes from {s0:.2f} to {s1:.2f} m/s between frames "
        f"{frame_text(frames[i0])} and {frame_text(frames[i1])} (fitted over the flight, "
        f"+-{1.96 * spread:.2f} m/s); in the air nothing can push it",
        f"space the horizontal travel evenly across the flight ({float(np.hypot(*lin[0])):.2f} m/s "
        "on average), with linear interpolation on the forward channel")]


def _speed_change_spread(t, xy, quad, noise):
    """Standard error [m/s] of the fitted change of horizontal speed over the samples ``t``.

    The change is ``2 a (t_end - t_start)`` for the quadratic coefficient ``a``; its error
    comes from the fit's residual scale (never below the sample noise).
    """
    n = len(t)
    if n <= 3:
        return 0.0
    design = np.stack([t * t, t, np.ones_like(t)], axis=1)
    resid = xy - design @ quad
    sigma = max(float(np.sqrt(np.sum(resid * resid) / (2 * (n - 3)))), noise)
    var_a = float(np.linalg.pinv(design.T @ design)[0, 0]) * sigma ** 2
    return 2.0 * float(t[-1] - t[0]) * float(np.sqrt(max(var_a, 0.0)))


def dip_findings(frames, force, spans, keep, arcs=(), force_sd_bw=0.0):
    """``dip_faster_than_free_fall`` where, in contact, apparent weight is below zero.

    Flights (with the two key samples the local fit reaches into them) and arcs that
    are already reported as not ballistic are left out: neither is a dip. On a measured
    path the force must lie below the floor by more than its 95 % uncertainty
    (``force_sd_bw``, the noise through the smoothing), so jitter alone never reads as a pull.
    """
    n = len(force)
    spacing = int(np.median(np.diff(keep))) if len(keep) > 1 else 1
    floor = DIP_FORCE_FLOOR_BW - 1.96 * force_sd_bw
    mask = (force < floor) & ~_in_flight(n, spans, margin=2 * spacing)
    mask &= ~_in_flight(n, arcs)
    out = []
    for a, b in _runs(mask):
        worst = a + int(np.argmin(force[a:b + 1]))
        out.append(Finding(
            "dip_faster_than_free_fall", frames[a], frames[b],
            f"frames {frame_text(frames[a])}-{frame_text(frames[b])} accelerate downward at "
            f"{1 - force[worst]:.2f} g (apparent weight {force[worst]:.2f} BW at frame "
            f"{frame_text(frames[worst])}); feet on the ground cannot pull the body down faster than falling",
            "spread the drop over more frames or ease into it; at most free fall: drops growing "
            "by g/fps^2 per frame"))
    return out


def _touchdown_height(flight, frames, i1, fps):
    """Fall parabola's height at touchdown [m]: at the flight's touchdown estimate, else
    half a sample after the last airborne sample."""
    if flight.touchdown_frame is not None:
        t_td = (flight.touchdown_frame - flight.apex_frame) / fps - flight.apex_hang_s
    else:
        step = (frames[i1 + 1] - frames[i1]) / fps if i1 + 1 < len(frames) else 0.0
        t_td = (flight.last_frame - flight.apex_frame) / fps - flight.apex_hang_s + 0.5 * step
    return flight.apex_height_m - 0.5 * flight.fall_gravity_m_s2 * t_td * t_td


def hop_forces(frames, z, force, flights, spans, fps, noise=0.0, force_sd_bw=0.0):
    """Peak forces, landing work and grades for each flight's push and landing.

    The landing's fall height and stopping distance are split at the touchdown
    height, taken on the fall parabola half a sample after the last airborne one.
    ``force_sd_bw`` [BW]: the apparent weight's noise, reported with the dip's lowest force.
    """
    out = []
    n = len(z)
    sample_step = median_step(frames, fps) if flights else 1.0
    for hop, (flight, (i0, i1)) in enumerate(zip(flights, spans)):
        s = spans[hop - 1][1] + 1 if hop else 0
        e = i0 - 1
        min_unw = peak_push = depth = depth_sd = None
        push_frames = None
        if e - s >= 1:
            lowest = s + int(np.argmin(z[s:e + 1]))
            min_unw = float(np.min(force[s:lowest + 1]))
            depth, depth_sd = dip_depth(frames, z, s, lowest, fps, noise, sample_step)
            peak_push = float(np.max(force[lowest:e + 1]))
            push_frames = (frames[lowest], frames[e])
        nxt = spans[hop + 1][0] - 1 if hop + 1 < len(spans) else n - 1
        peak_land = fall = stop = mean_land = stop_sd = None
        land_frames = None
        if nxt - (i1 + 1) >= 1:
            low_l = i1 + 1 + int(np.argmin(z[i1 + 1:nxt + 1]))
            end = min(max(low_l, i1 + 3), nxt)
            peak_land = float(np.max(force[i1 + 1:end + 1]))
            z_td = _touchdown_height(flight, frames, i1, fps)
            if flight.touchdown_frame is None or noise <= MEASURED_NOISE_M:
                z_td = min(z_td, float(z[i1]))
            z_low, low_sd = lowest_height(frames, z, low_l, i1 + 1, nxt, fps, noise, sample_step)
            fall = float(max(flight.apex_height_m - z_td, 0.0))
            stop = float(max(z_td - z_low, 0.0))
            # Touchdown height: the parabola's spread plus where on it touchdown falls
            # (a quarter sample at the touchdown speed).
            step = (frames[min(i1 + 1, n - 1)] - frames[i1]) / fps
            stop_sd = float(np.hypot(low_sd, np.hypot(noise, 0.25 * abs(flight.touchdown_speed_m_s) * step))) \
                if noise > MEASURED_NOISE_M else 0.0
            mean_land = 1.0 + fall / max(stop, 1e-4)
            land_frames = (frames[i1 + 1], frames[end])
        out.append(HopForces(
            hop=hop, min_unweighting_bw=min_unw, peak_push_bw=peak_push, peak_landing_bw=peak_land,
            takeoff_speed_m_s=flight.takeoff_speed_m_s, fall_height_m=fall, stopping_distance_m=stop,
            mean_landing_bw=mean_land,
            unweighting_grade=None if min_unw is None else grade(
                min_unw, UNWEIGHTING_FORCE_FLOOR_GRADES, lower_is_harder=True),
            push_grade=None if peak_push is None else grade(peak_push, PUSH_FORCE_GRADES),
            landing_grade=None if peak_land is None else grade(max(peak_land, mean_land), LANDING_FORCE_GRADES),
            takeoff_speed_grade=grade(abs(flight.takeoff_speed_m_s), TAKEOFF_SPEED_GRADES),
            push_frames=push_frames, landing_frames=land_frames,
            stopping_distance_sd_m=stop_sd if peak_land is not None else None,
            dip_depth_m=depth, dip_depth_sd_m=depth_sd,
            unweighting_sd_bw=None if min_unw is None else (force_sd_bw if noise > MEASURED_NOISE_M else 0.0)))
    return out


def force_findings(hops):
    """``push_beyond_human``, ``landing_too_hard`` and ``landing_too_soft`` from HopForces."""
    out = []
    for h in hops:
        if h.peak_push_bw is not None and h.peak_push_bw > PUSH_FORCE_GRADES[1]:
            out.append(Finding(
                "push_beyond_human", *h.push_frames,
                f"the push needs {h.peak_push_bw:.1f} body weights, beyond the athletic "
                f"{PUSH_FORCE_GRADES[1]:g} BW",
                "lengthen the push (more frames from the lowest point to take-off) or deepen the crouch"))
        if h.peak_landing_bw is None:
            continue
        spread = 1.96 * (h.stopping_distance_sd_m or 0.0)
        # The mean force with the stop as long (short) as the uncertainty allows.
        least = 1.0 + h.fall_height_m / max(h.stopping_distance_m + spread, 1e-4)
        most = 1.0 + h.fall_height_m / max(h.stopping_distance_m - spread, 1e-4)
        hardest = max(h.peak_landing_bw, h.mean_landing_bw)
        if max(h.peak_landing_bw, least) > LANDING_FORCE_GRADES[1]:
            out.append(Finding(
                "landing_too_hard", *h.landing_frames,
                f"a {h.fall_height_m:.2f} m fall stopped within {h.stopping_distance_m * 100:.1f} cm "
                f"takes {hardest:.1f} body weights, beyond the athletic {LANDING_FORCE_GRADES[1]:g} BW",
                "let the body sink further after touchdown (bend the knees over more frames)"))
        elif h.fall_height_m >= SOFT_LANDING_MIN_FALL_M and most < SOFT_LANDING_MEAN_FORCE_BW:
            out.append(Finding(
                "landing_too_soft", *h.landing_frames,
                f"a {h.fall_height_m:.2f} m fall sinks {h.stopping_distance_m:.2f} m after touchdown: "
                f"a mean force of only {h.mean_landing_bw:.2f} body weights, it reads spongy",
                f"stop the body within about {h.fall_height_m:.2f} m or less after touchdown"))
    return out


def foot_findings(frames, pos, foot, spans, noise):
    """``foot_slides_in_contact`` and ``leg_overstretched`` for one foot."""
    n = len(frames)
    fp = np.asarray(foot.positions, dtype=float)
    ground = ~_in_flight(n, spans)
    planted = np.zeros(n, bool)
    for a, b in _runs(ground):
        planted[a:b + 1] = fp[a:b + 1, 2] <= np.min(fp[a:b + 1, 2]) + FOOT_CONTACT_HEIGHT_M
    out = []
    slide_tol = FOOT_SLIDE_TOLERANCE_M + 4 * noise
    for a, b in _runs(planted):
        if b == a:
            continue
        travel = np.hypot(*(fp[a:b + 1, :2] - fp[a, :2]).T)
        if np.max(travel) > slide_tol:
            out.append(Finding(
                "foot_slides_in_contact", frames[a], frames[b],
                f"{foot.name} is planted on frames {frame_text(frames[a])}-{frame_text(frames[b])} "
                f"but slides {np.max(travel) * 100:.1f} cm along the ground",
                f"pin {foot.name} at its frame {frame_text(frames[a])} position while planted "
                "(IK target or a copy of the first contact key)"))
    if foot.rest_length_m is None:
        return out
    hip = pos if foot.hip_positions is None else np.asarray(foot.hip_positions, dtype=float)
    stretch = np.linalg.norm(fp - hip, axis=1) / float(foot.rest_length_m) - 1.0
    for a, b in _runs(planted & (stretch > LEG_STRETCH_TOLERANCE)):
        worst = a + int(np.argmax(stretch[a:b + 1]))
        out.append(Finding(
            "leg_overstretched", frames[a], frames[b],
            f"the leg to {foot.name} is {stretch[worst]:.1%} longer than its rest length "
            f"{float(foot.rest_length_m):.3f} m at frame {frame_text(frames[worst])}",
            "lower the hips or move the foot closer so the leg stays at or below its rest length"))
    return out
