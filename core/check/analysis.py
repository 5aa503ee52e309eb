"""Check a jump made by hand: flights, implied gravity, apparent weight, phases, findings.

Input is any sampled trajectory of the centre of mass (or the root, as a stand-in) in
metres, z up, one sample per frame, plus optional foot tracks. Nothing here knows
Blender; frames are only labels for the samples, ``fps`` turns them into seconds.

The scale law
-------------
A free-fall arc keyed over fixed frames has ``z = v t - g t^2 / 2``: for the same
frame timing every length is proportional to ``g``. An animation whose flight implies
``g_implied`` therefore becomes real under ``g_true`` when all of its lengths are
multiplied by ``character_scale = g_true / g_implied`` (a flight that hangs twice too
long implies g/4 and is right for a character 4 times the size), or, keeping the
size, when its flight is retimed by ``sqrt(g_implied / g_true)`` (half as long).

Findings
--------
Each finding's ``kind`` is one of :data:`core.check.findings.FINDING_KINDS` (not_ballistic,
floaty_gravity, heavy_gravity, stylised_fall_gravity, apex_hang,
dip_faster_than_free_fall, forward_speed_changes_in_flight, foot_slides_in_contact,
leg_overstretched, push_beyond_human, landing_too_hard, landing_too_soft); the two
stylisations are reported with their physical equivalent but are not problems.

References
----------
McMahon, Suchomel, Lake & Comfort 2018, Strength Cond J 40(4):96-106: force-plate
phase names (weighing, unweighting, braking, propulsion, flight, landing) and their
boundaries (force back at body weight = fastest descent; zero speed = lowest point).
"""

from dataclasses import dataclass, field

import numpy as np

from ..base.constants import BLENDER_DEFAULT_GRAVITY, STANDARD_GRAVITY
from ..base.errors import InvalidTrajectoryError, require_finite
from .findings import frame_text, gravity_findings
from . import capture_flights, flight_fit
from . import physics_checks as contact_checks
from .jump_phases import PhaseSpan, phase_spans  # noqa: F401  (PhaseSpan is part of the API)

#: Fewest samples a trajectory needs: a parabola's three parameters and two to test it.
MIN_SAMPLES = 5
#: Largest coordinate accepted [m]; beyond it the units are surely not metres.
MAX_COORDINATE_M = 1.0e5


@dataclass(frozen=True)
class FootTrack:
    """One foot's path and the leg that carries it.

    Attributes
    ----------
    name : str  as the animator knows it ("foot.L")
    positions : ndarray, shape (n, 3)  ball or ankle of the foot [m], same frames as the body
    rest_length_m : float or None  hip-to-foot length of the straight leg [m]; None skips the check
    hip_positions : ndarray, shape (n, 3) or None  hip joint [m]; None measures from the trajectory
    """

    name: str
    positions: np.ndarray
    rest_length_m: float = None
    hip_positions: np.ndarray = None


@dataclass(frozen=True)
class Flight:
    """One ballistic stretch.

    Attributes
    ----------
    first_frame, last_frame : float  first and last airborne sample, inclusive
    gravity_m_s2 : float  implied gravity of the rise [m/s^2] (of the whole flight when plain)
    rise_gravity_m_s2, fall_gravity_m_s2 : float  fitted separately [m/s^2]; equal when plain
    apex_frame : float  frame of the top (of the rise parabola) [frame]
    apex_height_m : float  top height [m]
    rise_m, fall_m : float  top above the first / last airborne sample [m]
    hang_time_s : float  first to last airborne sample [s]
    expected_hang_time_s : float  the same rise and fall under the scene's gravity [s]
    apex_hang_s : float  time held at the top beyond free fall [s]
    hang_frames_at_apex : int  the same in frames
    takeoff_speed_m_s, touchdown_speed_m_s : float  vertical speed at take-off / touchdown,
        estimated half a sample outside the airborne samples [m/s]
    forward_speed_m_s : float  mean horizontal speed [m/s]
    residual_m, max_residual_m : float  RMS and largest distance of the samples from the fit [m]
    gravity_low_m_s2, gravity_high_m_s2 : float  95 % confidence interval of the implied
        gravity [m/s^2] (of the rise); a gravity finding needs it to exclude the scene's
    takeoff_frame, touchdown_frame : float  sub-frame estimates of leaving and meeting the
        ground [frame]: half-way between samples for keyed paths, where the path leaves and
        rejoins its parabola for measured ones
    """

    first_frame: float
    last_frame: float
    gravity_m_s2: float
    rise_gravity_m_s2: float
    fall_gravity_m_s2: float
    apex_frame: float
    apex_height_m: float
    rise_m: float
    fall_m: float
    hang_time_s: float
    expected_hang_time_s: float
    apex_hang_s: float
    hang_frames_at_apex: int
    takeoff_speed_m_s: float
    touchdown_speed_m_s: float
    forward_speed_m_s: float
    residual_m: float
    max_residual_m: float
    gravity_low_m_s2: float = None
    gravity_high_m_s2: float = None
    takeoff_frame: float = None
    touchdown_frame: float = None


@dataclass(frozen=True)
class GravityComparison:
    """The implied gravity against one reference.

    Attributes
    ----------
    name : str  "scene", "blender default", "standard"
    reference_m_s2 : float
    ratio : float  implied / reference
    character_scale : float  reference / implied: size at which the timing is real
    retime_factor : float  sqrt(implied / reference): flight duration multiplier that makes it real
    """

    name: str
    reference_m_s2: float
    ratio: float
    character_scale: float
    retime_factor: float


@dataclass(frozen=True)
class TrajectoryAnalysis:
    """Everything the checker found.

    Attributes
    ----------
    frames : ndarray  frame numbers of the samples
    fps : float  [frames/s]
    scene_gravity_m_s2 : float
    height_m : ndarray  z of the samples [m]
    vertical_speed_m_s : ndarray  [m/s]
    force_bw : ndarray  apparent weight 1 + a_z/g [body weights]
    noise_m : float  estimated sample noise sd [m]
    fit_tolerance_m : float  largest residual read as noise [m]
    measured : bool  the path jitters like a capture (noise above
        ``capture_flights.MEASURED_NOISE_M``): flights were found from free fall through a
        noise model of jitter plus soft-tissue wobble, and the acceleration is smoothed
    stepped_keys : bool  held frames were read as stepped keys
    flights : tuple of Flight
    implied_gravity_m_s2 : float or None  of the longest flight; None when nothing is ballistic
    gravity_comparisons : tuple of GravityComparison
    character_scale : float or None  scene gravity / implied gravity
    phases : tuple of PhaseSpan
    hops : tuple of contact_checks.HopForces
    findings : tuple of Finding
    """

    frames: np.ndarray
    fps: float
    scene_gravity_m_s2: float
    height_m: np.ndarray
    vertical_speed_m_s: np.ndarray
    force_bw: np.ndarray
    noise_m: float
    fit_tolerance_m: float
    stepped_keys: bool
    flights: tuple
    implied_gravity_m_s2: object
    gravity_comparisons: tuple
    character_scale: object
    phases: tuple
    hops: tuple
    findings: tuple = field(default=())
    measured: bool = False

    @property
    def longest_flight(self):
        """The flight with the longest hang time, or None."""
        if not self.flights:
            return None
        return max(self.flights, key=lambda f: (f.hang_time_s, -f.first_frame))

    @property
    def has_problems(self):
        """True when a finding is a problem rather than a stylisation."""
        return any(f.severity == "problem" for f in self.findings)


def _validate(frames, positions, fps, gravity):
    fps = require_finite("fps", fps, positive=True, unit=" frames/s")
    gravity = abs(require_finite("gravity", gravity, unit=" m/s^2"))
    if gravity == 0:
        raise InvalidTrajectoryError("gravity must not be 0; give the scene's gravity, e.g. 9.81 m/s^2")
    try:
        frames = np.asarray(frames, dtype=float).reshape(-1)
        positions = np.asarray(positions, dtype=float)
    except (TypeError, ValueError):
        raise InvalidTrajectoryError("frames and positions must be numbers") from None
    if positions.ndim != 2 or positions.shape[1] != 3:
        raise InvalidTrajectoryError(
            f"positions must have shape (n, 3) for x, y, z, got {positions.shape}")
    if len(frames) != len(positions):
        raise InvalidTrajectoryError(
            f"{len(frames)} frames but {len(positions)} positions; give one position per frame")
    if len(frames) < MIN_SAMPLES:
        raise InvalidTrajectoryError(
            f"only {len(frames)} sample{'' if len(frames) == 1 else 's'}; "
            f"give at least {MIN_SAMPLES} frames to fit a flight")
    bad = np.flatnonzero(~np.isfinite(frames) | ~np.all(np.isfinite(positions), axis=1))
    if len(bad):
        raise InvalidTrajectoryError(
            f"sample {bad[0] + 1} (frame {frames[bad[0]]!r}) has a missing or non-finite value; "
            "fill it in or drop the row")
    if np.any(np.diff(frames) <= 0):
        i = int(np.flatnonzero(np.diff(frames) <= 0)[0])
        raise InvalidTrajectoryError(
            f"frames must increase: frame {frame_text(frames[i + 1])} follows {frame_text(frames[i])}; sort the rows")
    if np.max(np.abs(positions)) > MAX_COORDINATE_M:
        raise InvalidTrajectoryError(
            f"a coordinate reaches {np.max(np.abs(positions)):.3g} m; give positions in metres")
    if (frames[-1] - frames[0]) / fps > 1.0e5:
        raise InvalidTrajectoryError(
            f"frames {frame_text(frames[0])}-{frame_text(frames[-1])} at {fps:g} fps span over a day; check --fps")
    return frames, positions, fps, gravity


def _flight_record(s, keep, n, stepped, times, frames, pos, scene_g, fps, noise=0.0, measured=None):
    """A Flight from a fitted stretch of key samples (``measured``: its MeasuredFlight)."""
    i0 = int(keep[s.first])
    if s.last + 1 < len(keep):
        i1 = int(keep[s.last + 1]) - 1 if stepped else int(keep[s.last])
    else:
        i1 = n - 1 if stepped else int(keep[s.last])
    # Take-off and touchdown lie between the last ground sample and the first airborne
    # one (and back): half-way is the estimate that is never off by more than half.
    t_off = 0.5 * (times[i0 - 1] + times[i0]) if i0 > 0 else times[i0]
    t_down = 0.5 * (times[i1] + times[i1 + 1]) if i1 + 1 < n else times[i1]
    if measured is not None:
        t_off, t_down = measured.takeoff_time_s, measured.touchdown_time_s
        g_low, g_high = measured.gravity_low, measured.gravity_high
    else:
        k_rise = keep[s.first:s.last + 1]
        g_low, g_high = capture_flights.gravity_interval(times[k_rise], pos[k_rise, 2], s.rise, noise) \
            if s.rise is s.fall else (s.rise.gravity, s.rise.gravity)
    rise, fall = s.rise, s.fall
    top = max(rise.apex_height, fall.apex_height)
    z0, z1 = pos[keep[s.first], 2], pos[keep[s.last], 2]
    rise_m, fall_m = max(top - z0, 0.0), max(top - z1, 0.0)
    hang = float(times[i1] - times[i0])
    expected = float(np.sqrt(2 * rise_m / scene_g) + np.sqrt(2 * fall_m / scene_g))
    apex_hang = max(fall.apex_time - rise.apex_time, 0.0) if s.rise is not s.fall else 0.0
    k = keep[s.first:s.last + 1]
    tk = times[k]
    horizontal = 0.0
    if len(k) >= 2:
        vx = np.polyfit(tk - tk.mean(), pos[k, 0], 1)[0]
        vy = np.polyfit(tk - tk.mean(), pos[k, 1], 1)[0]
        horizontal = float(np.hypot(vx, vy))
    return Flight(
        first_frame=float(frames[i0]), last_frame=float(frames[i1]),
        gravity_m_s2=rise.gravity, rise_gravity_m_s2=rise.gravity, fall_gravity_m_s2=fall.gravity,
        apex_frame=float(frames[0] + rise.apex_time * fps), apex_height_m=float(top),
        rise_m=float(rise_m), fall_m=float(fall_m), hang_time_s=hang, expected_hang_time_s=expected,
        apex_hang_s=float(apex_hang), hang_frames_at_apex=int(round(apex_hang * fps)),
        takeoff_speed_m_s=float(rise.speed(t_off)), touchdown_speed_m_s=float(fall.speed(t_down)),
        forward_speed_m_s=horizontal, residual_m=s.rms, max_residual_m=s.max_abs,
        gravity_low_m_s2=float(g_low), gravity_high_m_s2=float(g_high),
        takeoff_frame=float(frames[0] + t_off * fps), touchdown_frame=float(frames[0] + t_down * fps),
    ), (i0, i1)



def _keyed_flights(keep, stepped, times, frames, pos, noise, scene_g, fps):
    """Flights of a keyed path: stretches one parabola fits within the (tiny) noise."""
    n = len(frames)
    tk, zk = times[keep], pos[keep, 2]
    tol = flight_fit.fit_tolerance(noise)
    speed_k, accel_k = flight_fit.local_derivatives(tk, zk)
    speed = np.interp(times, tk, speed_k)
    accel = np.interp(times, tk, accel_k)
    min_g = flight_fit.MIN_FLIGHT_GRAVITY_FRACTION * scene_g
    # First pass: ends judged by each flight's own scatter, which measures the noise.
    stretches = flight_fit.find_ballistic_stretches(tk, zk, tol, min_g, 0.0)
    refined = flight_fit.noise_from_stretches(stretches, samples=(tk, zk))
    if refined is not None and refined < noise:
        # The longest flights measure the noise better than the quiet windows did.
        noise, tol = refined, flight_fit.fit_tolerance(refined)
        stretches = flight_fit.find_ballistic_stretches(tk, zk, tol, min_g, noise)
    flights, spans = [], []
    for s in stretches:
        flight, span = _flight_record(s, keep, n, stepped, times, frames, pos, scene_g, fps, noise)
        flights.append(flight)
        spans.append(span)
    arcs = contact_checks.non_ballistic_arcs(pos[:, 2], accel, spans, scene_g)
    # A parabola that fits only the crest of an arc is the crest's curvature, not a flight.
    kept = [i for i, (i0, i1) in enumerate(spans) if not any(i0 <= b and a <= i1 for a, b in arcs)]
    return [flights[i] for i in kept], [spans[i] for i in kept], tol, speed, accel, arcs, noise


def _measured_flights(times, frames, pos, noise, scene_g, fps):
    """Flights of a measured path (:mod:`.capture_flights`), with the smoothed speed and acceleration.

    No arc is reported as not ballistic: a captured body that rises and falls on the
    ground (a step, a squat) is real motion, not a mistake.
    """
    n = len(frames)
    keep = np.arange(n)
    speed, accel = capture_flights.measured_acceleration(times, pos[:, 2])
    tol = 3.0 * float(np.hypot(noise, capture_flights.SOFT_TISSUE_WOBBLE_M))
    flights, spans = [], []
    found = capture_flights.find_measured_flights(times, pos[:, 2], scene_g, noise)
    for m in found:
        flight, span = _flight_record(m.stretch, keep, n, False, times, frames, pos, scene_g, fps, noise, m)
        flights.append(flight)
        spans.append(span)
    # Long flights measure the jitter better than the quiet windows did (as for keyed paths).
    refined = flight_fit.noise_from_stretches([m.stretch for m in found])
    return flights, spans, tol, speed, accel, min(noise, refined) if refined is not None else noise

def gravity_comparisons(implied, scene_gravity):
    """The implied gravity against the scene's, Blender's default and standard gravity."""
    refs = [("scene", scene_gravity), ("blender default", BLENDER_DEFAULT_GRAVITY),
            ("standard", STANDARD_GRAVITY)]
    out = []
    for name, g in refs:
        if name != "scene" and abs(g - scene_gravity) < 1e-12:
            continue
        out.append(GravityComparison(name, g, implied / g, g / implied, float(np.sqrt(implied / g))))
    return tuple(out)


def analyse_trajectory(frames, positions, fps, *, gravity=BLENDER_DEFAULT_GRAVITY, feet=()):
    """Analyse a sampled jump.

    Parameters
    ----------
    frames : array_like, shape (n,)  increasing frame numbers
    positions : array_like, shape (n, 3)  centre of mass (or root) x, y, z [m], z up
    fps : float  frame rate [frames/s]
    gravity : float  the scene's gravity magnitude [m/s^2] (Blender's default 9.81)
    feet : sequence of FootTrack

    Returns
    -------
    TrajectoryAnalysis

    Raises
    ------
    InvalidTrajectoryError, InvalidGoalError
        For too few samples, non-finite values, unsorted frames, bad fps or gravity.
    """
    frames, pos, fps, scene_g = _validate(frames, positions, fps, gravity)
    feet = tuple(contact_checks.validate_foot(f, len(frames)) for f in feet)
    n = len(frames)
    times = (frames - frames[0]) / fps
    keep, stepped = flight_fit.key_samples(pos)
    tk, zk = times[keep], pos[keep, 2]
    noise = flight_fit.noise_level(tk, zk)
    measured = bool(not stepped and capture_flights.looks_measured(tk, zk, noise))
    if measured:
        flights, spans, tol, speed, accel, noise = _measured_flights(times, frames, pos, noise, scene_g, fps)
        arcs = []
    else:
        flights, spans, tol, speed, accel, arcs, noise = _keyed_flights(
            keep, stepped, times, frames, pos, noise, scene_g, fps)
    force = 1.0 + accel / scene_g

    findings = []
    findings += contact_checks.arc_findings(frames, times, pos[:, 2], accel, arcs, scene_g, fps)
    longest = None
    if flights:
        longest = max(range(len(flights)), key=lambda i: (flights[i].hang_time_s, -i))
        for f in flights:
            findings += gravity_findings(f, scene_g)
    for flight, span in zip(flights, spans):
        findings += contact_checks.forward_findings(frames, times, pos, keep, span, tol, noise)
    force_sd = capture_flights.force_noise_bw(times, noise, scene_g) if measured else 0.0
    findings += contact_checks.dip_findings(frames, force, spans, keep, arcs, force_sd)
    hops = contact_checks.hop_forces(frames, pos[:, 2], force, flights, spans, fps, noise, force_sd)
    findings += contact_checks.force_findings(hops)
    for foot in feet:
        findings += contact_checks.foot_findings(frames, pos, foot, spans, noise)

    implied = flights[longest].rise_gravity_m_s2 if longest is not None else None
    comparisons = gravity_comparisons(implied, scene_g) if implied else ()
    findings.sort(key=lambda f: (f.first_frame, f.kind))
    return TrajectoryAnalysis(
        frames=frames, fps=fps, scene_gravity_m_s2=scene_g, height_m=pos[:, 2].copy(),
        vertical_speed_m_s=speed, force_bw=force, noise_m=noise, fit_tolerance_m=tol, measured=measured,
        stepped_keys=stepped, flights=tuple(flights), implied_gravity_m_s2=implied,
        gravity_comparisons=comparisons,
        character_scale=(scene_g / implied) if implied else None,
        phases=tuple(phase_spans(frames, pos[:, 2], speed, spans, noise)),
        hops=tuple(hops), findings=tuple(findings))
