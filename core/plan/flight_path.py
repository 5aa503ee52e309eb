"""The flight: an exact parabola, or a stylised one said out loud.

Physically the centre of mass (COM) rises and falls under one gravity g. Games
and stylised animation often fall faster than they rise (a fall gravity k g)
or hang at the apex; both are supported here as explicit deviations, so the
plan can name each with its physical equivalent.
"""

from dataclasses import dataclass
import math

from numpy.polynomial import Polynomial

from ..base.errors import InfeasibleJumpError


@dataclass(frozen=True)
class FlightPath:
    """One flight from take-off to touchdown.

    Attributes
    ----------
    takeoff_speed : float
        Vertical COM speed at take-off [m/s].
    gravity, fall_gravity : float
        Rise and fall gravities [m/s^2] (equal for a physical jump).
    hang : float
        Time held at the apex [s] (0 for a physical jump).
    rise : float
        Touchdown COM height above take-off COM height [m].
    """

    takeoff_speed: float
    gravity: float
    fall_gravity: float
    hang: float
    rise: float

    @property
    def apex_rise(self):
        """Apex above the take-off height [m]: v0^2 / 2 g."""
        return self.takeoff_speed ** 2 / (2.0 * self.gravity)

    @property
    def is_physical(self):
        return self.fall_gravity == self.gravity and self.hang == 0.0

    @property
    def rise_time(self):
        """Take-off to apex [s]: v0 / g."""
        return self.takeoff_speed / self.gravity

    @property
    def fall_time(self):
        """Apex (end of the hang) to touchdown [s]: sqrt(2 H / g_fall)."""
        return math.sqrt(2.0 * max(self.apex_rise - self.rise, 0.0) / self.fall_gravity)

    @property
    def duration(self):
        if self.is_physical:
            v0, g = self.takeoff_speed, self.gravity
            return (v0 + math.sqrt(max(v0 * v0 - 2.0 * g * self.rise, 0.0))) / g
        return self.rise_time + self.hang + self.fall_time

    @property
    def touchdown_speed(self):
        """Vertical speed at touchdown [m/s], negative (falling)."""
        if self.is_physical:
            return self.takeoff_speed - self.gravity * self.duration
        return -self.fall_gravity * self.fall_time

    def pieces(self, z0):
        """``[(duration, height polynomial of local time)]`` starting at height ``z0`` [m]."""
        v0, g = self.takeoff_speed, self.gravity
        if self.is_physical:
            return [(self.duration, Polynomial([z0, v0, -0.5 * g]))]
        apex = z0 + self.apex_rise
        out = [(self.rise_time, Polynomial([z0, v0, -0.5 * g]))]
        if self.hang > 0:
            out.append((self.hang, Polynomial([apex])))
        out.append((self.fall_time, Polynomial([apex, 0.0, -0.5 * self.fall_gravity])))
        return out


def _check_reaches(path, what):
    v0, g, rise = path.takeoff_speed, path.gravity, path.rise
    if not (v0 > 0 and v0 * v0 - 2.0 * g * rise > 1e-12 * max(1.0, v0 * v0)):
        raise InfeasibleJumpError(
            f"the landing ground (+{rise:.3g} m) is at or above the apex rise ({path.apex_rise:.3g} m) that "
            f"the {what} gives; ask for an apex above {rise:.3g} m or lower the ledge")
    return path


def flight_for_speed(v0, gravity, rise, fall_scale=1.0, hang=0.0, what=None):
    """The flight that leaves at ``v0`` [m/s] and lands ``rise`` [m] higher."""
    path = FlightPath(float(v0), gravity, gravity * fall_scale, float(hang), float(rise))
    return _check_reaches(path, what or f"take-off speed {v0:g} m/s")


def flight_for_time(flight_time, gravity, rise, fall_scale=1.0, hang=0.0):
    """The flight lasting ``flight_time`` [s] (the hang included) that lands ``rise`` [m] higher.

    For a physical flight rise = v0 T - g T^2 / 2, so v0 = rise / T + g T / 2;
    a stylised one is solved for v0 by bisection (its duration grows with v0).
    """
    what = f"flight time {flight_time:g} s"
    if fall_scale == 1.0 and hang == 0.0:
        v0 = rise / flight_time + 0.5 * gravity * flight_time
        return _check_reaches(FlightPath(v0, gravity, gravity, 0.0, float(rise)), what)
    airborne = flight_time - hang
    if airborne <= 0:
        raise InfeasibleJumpError(f"the apex hang {hang:g} s is not shorter than the {what}; "
                                  "shorten the hang or lengthen the flight")
    lo = math.sqrt(2.0 * gravity * max(rise, 0.0))
    hi = max(lo, 1.0) * 2.0
    while FlightPath(hi, gravity, gravity * fall_scale, hang, rise).duration < flight_time:
        hi *= 2.0
        if hi > 1e6:
            raise InfeasibleJumpError(f"no take-off speed gives the {what}; check the goals")
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if FlightPath(mid, gravity, gravity * fall_scale, hang, rise).duration < flight_time:
            lo = mid
        else:
            hi = mid
    return _check_reaches(FlightPath(0.5 * (lo + hi), gravity, gravity * fall_scale, hang, float(rise)), what)
