"""Reading a vertical force-plate trace: phases, take-off speed, jump height, apparent weight.

The body's centre of mass (COM) obeys m a = Fz - m g. Starting from rest on the
plate, integrating the net force gives the COM's vertical speed and, once more,
its height (impulse-momentum); nothing about the body's shape is needed. The
phases follow McMahon et al. (2018): weighing (quiet standing), unweighting
(from the first drop of the force below body weight to the fastest downward
speed), braking (to the lowest COM, speed 0), propulsion (to take-off),
flight, and landing (touchdown until the downward speed is stopped).

References
----------
McMahon J J, Suchomel T J, Lake J P, Comfort P (2018). Understanding the key
phases of the countermovement jump force-time curve. Strength Cond J 40(4):96-106.
"""

from dataclasses import dataclass

import numpy as np

from ..base.constants import STANDARD_GRAVITY
from ..base.errors import InvalidTrajectoryError

#: Quiet standing used to weigh the jumper when none is given [s] (the trace starts standing still).
DEFAULT_WEIGHING_S = 0.25
#: Movement starts when the force stays this many standard deviations of the quiet
#: stretch below body weight (McMahon et al. 2018 recommend 5 SD).
ONSET_SD = 5.0
_ONSET_HOLD_S = 0.175  # the drop must last this long, so one noisy sample is not a start
_SMOOTHING_S = 0.02  # moving-average window for finding the start of movement
#: The feet are off the plate below this fraction of body weight (plate noise is a few newtons).
UNLOADED_BW = 0.03


class ForceTraceError(InvalidTrajectoryError):
    """A force trace that cannot be read as one countermovement jump."""


@dataclass(frozen=True)
class ForcePhase:
    """One phase of the jump: a McMahon et al. 2018 name and its times [s]."""

    name: str
    start_s: float
    end_s: float

    @property
    def duration_s(self):
        return self.end_s - self.start_s


@dataclass(frozen=True)
class ForceTraceReading:
    """What a force trace says about the jump (SI units, forces also in body weights).

    Attributes
    ----------
    times, force_n : ndarray
        The trace as given [s], [N].
    velocity, height : ndarray
        COM vertical speed [m/s] and height relative to quiet standing [m], from rest.
    body_weight_n, mass_kg, gravity : float
    phases : tuple of ForcePhase
    takeoff_time_s, takeoff_speed_m_s, jump_height_m : float
        Jump height from the take-off speed, v^2 / 2g [m].
    touchdown_time_s : float or None
    """

    times: np.ndarray
    force_n: np.ndarray
    velocity: np.ndarray
    height: np.ndarray
    body_weight_n: float
    mass_kg: float
    gravity: float
    phases: tuple
    takeoff_time_s: float
    takeoff_speed_m_s: float
    jump_height_m: float
    touchdown_time_s: float | None = None

    @property
    def apparent_weight_bw(self):
        """Apparent weight m (g + a) in body weights: the plate force over body weight [-]."""
        return self.force_n / self.body_weight_n

    def phase(self, name):
        """The phase called ``name``, or ``None`` if the trace does not show it."""
        return next((p for p in self.phases if p.name == name), None)

    def _window(self, name):
        p = self.phase(name)
        if p is None:
            return None
        return (self.times >= p.start_s) & (self.times <= p.end_s)

    @property
    def depth_m(self):
        """Countermovement depth: how far the COM sinks below standing [m]."""
        w = self._window("braking")
        return float(-self.height[w].min())

    @property
    def takeoff_rise_m(self):
        """COM height at take-off above quiet standing [m]."""
        return float(np.interp(self.takeoff_time_s, self.times, self.height))

    @property
    def lowest_unweighting_bw(self):
        """Lowest force while unweighting [BW]."""
        return float(self.apparent_weight_bw[self._window("unweighting")].min())

    @property
    def peak_push_bw(self):
        """Largest force while braking or pushing [BW]."""
        w = self._window("braking") | self._window("propulsion")
        return float(self.apparent_weight_bw[w].max())

    @property
    def peak_landing_bw(self):
        """Largest force in the landing [BW]; NaN when the trace ends before touchdown."""
        w = self._window("landing")
        return float("nan") if w is None else float(self.apparent_weight_bw[w].max())

    def peak_speed_before_takeoff(self):
        """``(time before take-off [s], fraction of the peak speed lost by take-off [-])``.

        The COM is fastest just before take-off, when the force has fallen back to
        body weight; it then slows while the force is below body weight.
        """
        w = self._window("propulsion")
        k = int(np.argmax(np.where(w, self.velocity, -np.inf)))
        peak = self.velocity[k]
        return self.takeoff_time_s - self.times[k], 1.0 - self.takeoff_speed_m_s / peak


def _check_trace(times, force):
    t = np.asarray(times, dtype=float)
    f = np.asarray(force, dtype=float)
    if t.ndim != 1 or f.shape != t.shape or t.size < 100:
        raise ForceTraceError(f"a force trace needs matching time and force columns of at least 100 samples "
                              f"(got {t.size} times and {f.size} forces)")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(f))):
        raise ForceTraceError("the force trace has empty or non-numeric values; remove those rows")
    if np.any(np.diff(t) <= 0):
        k = int(np.argmax(np.diff(t) <= 0))
        raise ForceTraceError(f"time must increase from sample to sample (row {k + 2}: {t[k + 1]:g} s after "
                              f"{t[k]:g} s)")
    return t, f


def _weigh(t, f, quiet, mass_kg, g):
    """Body weight [N] and the quiet stretch's force SD [N]."""
    if mass_kg is not None and not (np.isfinite(mass_kg) and mass_kg > 0):
        raise ForceTraceError(f"body mass must be a positive number of kilograms, got {mass_kg!r}")
    start, end = quiet if quiet is not None else (t[0], t[0] + DEFAULT_WEIGHING_S)
    w = (t >= start) & (t <= end)
    if np.count_nonzero(w) < 10:
        raise ForceTraceError(f"the quiet-standing stretch {start:g}-{end:g} s holds fewer than 10 samples; "
                              "give a longer stretch where the jumper stands still")
    mean, sd = float(f[w].mean()), float(f[w].std())
    weight = mass_kg * g if mass_kg is not None else mean
    if weight <= 0 or mean < 0.5 * weight:
        raise ForceTraceError(f"nobody stands on the plate from {start:g} to {end:g} s (mean force {mean:.4g} N); "
                              "give the stretch where the jumper stands still before the jump")
    return weight, sd, end


def _onset_index(t, f, weight, sd, quiet_end):
    """First sample where the smoothed force stays below weight - 5 SD for 0.1 s."""
    dt = float(np.median(np.diff(t)))
    width = max(1, int(round(_SMOOTHING_S / dt)))
    smooth = np.convolve(f, np.ones(width) / width, mode="same")
    below = (smooth < weight - ONSET_SD * max(sd, 1e-3 * weight)) & (t > quiet_end)
    hold = max(1, int(round(_ONSET_HOLD_S / dt)))
    run = np.convolve(below.astype(float), np.ones(hold), mode="full")[hold - 1:]  # run[i]: below in i..i+hold-1
    starts = np.flatnonzero(run >= hold - 0.5)
    if not starts.size:
        raise ForceTraceError("the force never drops below body weight for long: no countermovement found "
                              "(the trace must start with quiet standing and hold one jump)")
    return int(starts[0])


def _integrate(t, y):
    """Cumulative trapezoid integral of y over t, starting at 0."""
    out = np.zeros_like(y)
    out[1:] = np.cumsum(0.5 * (y[1:] + y[:-1]) * np.diff(t))
    return out


def _first(mask, start):
    """Index of the first True at or after ``start``, or None."""
    hits = np.flatnonzero(mask[start:])
    return int(start + hits[0]) if hits.size else None


def read_force_trace(times, force_n, mass_kg=None, quiet=None, gravity=STANDARD_GRAVITY):
    """Read one countermovement jump from a vertical force-plate trace.

    Parameters
    ----------
    times : array_like
        Sample times [s], increasing.
    force_n : array_like
        Vertical ground force [N] (both plates summed).
    mass_kg : float, optional
        Body mass [kg]; without it the quiet stretch weighs the jumper.
    quiet : (float, float), optional
        Start and end [s] of quiet standing before the jump; default the first 0.25 s.
    gravity : float
        [m/s^2]

    Returns
    -------
    ForceTraceReading

    Raises
    ------
    ForceTraceError
        When the trace is malformed, nobody stands on the plate, or no jump shows.

    References
    ----------
    McMahon et al. 2018 (phases, 5 SD onset threshold); impulse-momentum (textbook mechanics).
    """
    t, f = _check_trace(times, force_n)
    weight, sd, quiet_end = _weigh(t, f, quiet, mass_kg, gravity)
    mass = weight / gravity
    onset = _onset_index(t, f, weight, sd, quiet_end)
    unloaded = f < UNLOADED_BW * weight
    takeoff = _first(unloaded, onset)
    if takeoff is None:
        raise ForceTraceError("the force never falls to zero after the countermovement: the trace shows no "
                              "take-off (does it end before the feet leave the plate?)")
    velocity = _integrate(t, (f - weight) / mass)
    # In the air the plate reads ~0 and noise only; the COM falls freely.
    air = np.zeros_like(f, dtype=bool)
    touchdown = _first(~unloaded, takeoff)
    air[takeoff:touchdown if touchdown is not None else len(f)] = True
    velocity[air] = velocity[takeoff] - gravity * (t[air] - t[takeoff])
    if touchdown is not None:
        velocity[touchdown:] = velocity[touchdown - 1] + _integrate(t[touchdown - 1:], (f[touchdown - 1:] - weight)
                                                                    / mass)[1:]
    height = _integrate(t, velocity)
    fastest_down = onset + int(np.argmin(velocity[onset:takeoff + 1]))
    lowest = _first(velocity >= 0.0, fastest_down)
    if lowest is None or lowest >= takeoff:
        raise ForceTraceError("the COM never stops sinking before take-off: no push found")
    phases = [ForcePhase("weighing", float(t[0]), float(t[onset])),
              ForcePhase("unweighting", float(t[onset]), float(t[fastest_down])),
              ForcePhase("braking", float(t[fastest_down]), float(t[lowest])),
              ForcePhase("propulsion", float(t[lowest]), float(t[takeoff]))]
    touchdown_time = None
    if touchdown is not None:
        touchdown_time = float(t[touchdown])
        phases.append(ForcePhase("flight", float(t[takeoff]), touchdown_time))
        stopped = _first(velocity >= 0.0, touchdown)
        end = stopped if stopped is not None else len(t) - 1
        phases.append(ForcePhase("landing", touchdown_time, float(t[end])))
    v0 = float(velocity[takeoff])
    return ForceTraceReading(t, f, velocity, height, weight, mass, gravity, tuple(phases), float(t[takeoff]), v0,
                             v0 * v0 / (2.0 * gravity), touchdown_time)


def read_force_csv(path):
    """``(times [s], force [N])`` from a two-column text file (time, vertical force), header optional.

    Commas, tabs or spaces separate the columns; lines that are not two numbers
    (a header) are skipped.
    """
    times, forces = [], []
    with open(path, encoding="utf-8") as handle:
        for line in handle:
            parts = line.replace(",", " ").replace("\t", " ").split()
            try:
                a, b = float(parts[0]), float(parts[1])
            except (IndexError, ValueError):
                continue
            times.append(a)
            forces.append(b)
    if not times:
        raise ForceTraceError(f"{path}: no rows of two numbers (time in s, vertical force in N) found")
    return np.array(times), np.array(forces)
