"""What the animator asks for: the goals of a jump, validated, in SI units."""

from dataclasses import dataclass, fields, replace
import math

from ..base import constants as C
from ..base.errors import InvalidGoalError, require_finite

#: Largest value any length goal may take [m]; keeps typos (1e9) out of the solver.
MAX_LENGTH = 1_000.0
#: Largest duration [s] and number of hops accepted.
MAX_DURATION = 600.0
MAX_HOPS = 50
#: Smallest length [m] and duration [s] a positive goal may take: below them the
#: numbers say more about a typo than about a jump, and the solver would underflow.
MIN_LENGTH = 1e-5
MIN_DURATION = 1e-4
_OPTIONAL = ("height", "flight_time", "takeoff_speed", "depth", "dip_duration", "push_duration",
             "takeoff_extension", "landing_depth", "landing_duration", "recovery_duration", "mass")


@dataclass(frozen=True)
class JumpGoals:
    """Goals of a jump or hop sequence. Give exactly one of the first three.

    Parameters
    ----------
    height : float, optional
        Apex rise of the centre of mass (COM) above its take-off height [m].
    flight_time : float, optional
        Time from take-off to touchdown [s].
    takeoff_speed : float, optional
        Vertical COM speed at take-off [m/s].
    standing_com_height : float
        COM height above the ground when standing [m]; the default durations
        and depths scale with it (dynamic similarity, see :func:`similarity`).
    distance : float
        Forward COM travel of each hop, take-off foot spot to landing foot spot [m].
    landing_height : float
        Ground at landing relative to the take-off ground [m] (+ a ledge up).
    depth : float, optional
        Countermovement depth: COM drop from standing to the bottom [m].
    dip_duration, push_duration : float, optional
        Start of unweighting to the bottom, and bottom to take-off [s]. A
        missing push duration is chosen so the peak force is as low as possible.
    takeoff_extension : float, optional
        COM rise from standing to take-off, toes extended [m]; also used at touchdown.
    landing_depth : float, optional
        COM stopping distance after touchdown [m].
    landing_duration : float, optional
        Touchdown to the bottom of the landing [s]; chosen when missing.
    recovery_duration : float, optional
        Bottom of the landing back to standing still [s].
    weighing_duration : float
        Standing still before the dip [s].
    gravity : float
        Magnitude of gravity [m/s^2].
    mass : float, optional
        Body mass [kg]; forces are also reported in newtons.
    hops : int
        Number of hops; each landing flows into the next push without a stop.
    friction : float
        Friction coefficient the push may use before a warning [-].
    fall_gravity_scale : float
        Stylisation: the fall after the apex uses this multiple of ``gravity`` [-]
        (1 is physical; games often fall faster than they rise).
    apex_hang : float
        Stylisation: time held at the apex [s] (0 is physical).
    """

    height: float = None
    flight_time: float = None
    takeoff_speed: float = None
    standing_com_height: float = C.STANDING_COM_HEIGHT
    distance: float = 0.0
    landing_height: float = 0.0
    depth: float = None
    dip_duration: float = None
    push_duration: float = None
    takeoff_extension: float = None
    landing_depth: float = None
    landing_duration: float = None
    recovery_duration: float = None
    weighing_duration: float = 0.25
    gravity: float = C.STANDARD_GRAVITY
    mass: float = None
    hops: int = 1
    friction: float = C.SHOE_FRICTION_COEFFICIENT
    fall_gravity_scale: float = 1.0
    apex_hang: float = 0.0

    def __post_init__(self):
        given = [n for n in ("height", "flight_time", "takeoff_speed") if getattr(self, n) is not None]
        if len(given) != 1:
            shown = ", ".join(f"{n}={getattr(self, n)!r}" for n in given) or "none"
            raise InvalidGoalError(
                f"give exactly one of height, flight time or take-off speed (got {shown}); "
                "e.g. --height 0.4")
        for f in fields(self):
            value = getattr(self, f.name)
            if value is None and f.name not in _OPTIONAL:
                raise InvalidGoalError(f"{f.name} needs a value (got None); leave it out to use the default")
            if value is None or f.name == "hops":
                continue
            x = require_finite(f.name, value)
            if f.name in ("distance", "landing_height"):
                if abs(x) > MAX_LENGTH:
                    raise InvalidGoalError(f"{f.name} {x:g} m is beyond {MAX_LENGTH:g} m; check the units")
                continue
            if f.name in ("weighing_duration", "apex_hang"):
                require_finite(f.name, x, non_negative=True, unit=" s")
            else:
                require_finite(f.name, x, positive=True)
            limit = MAX_DURATION if f.name.endswith(("duration", "time")) else MAX_LENGTH
            if f.name in ("gravity", "mass", "takeoff_speed", "friction", "fall_gravity_scale"):
                limit = {"gravity": 1_000.0, "mass": 1e6, "takeoff_speed": 1_000.0, "friction": 100.0,
                         "fall_gravity_scale": 100.0}[f.name]
            if x > limit:
                raise InvalidGoalError(f"{f.name} {x:g} is above the limit {limit:g}; check the units")
            floor = {"gravity": 0.01, "mass": 1e-3, "friction": 1e-3, "fall_gravity_scale": 0.01}.get(
                f.name, MIN_DURATION if f.name.endswith(("duration", "time", "hang")) else MIN_LENGTH)
            if f.name == "takeoff_speed":
                floor = 1e-3
            if 0 < x < floor:
                raise InvalidGoalError(f"{f.name} {x:g} is below the smallest accepted value {floor:g}; "
                                       "check the units")
        if isinstance(self.hops, bool) or not isinstance(self.hops, int) or not 1 <= self.hops <= MAX_HOPS:
            raise InvalidGoalError(f"hops must be a whole number from 1 to {MAX_HOPS}, got {self.hops!r}")


def similarity(goals):
    """Scale factors ``(length, time)`` from a 1 m-COM human under standard gravity.

    Dynamic similarity (Froude scaling): lengths scale with the standing COM
    height L, times with sqrt(L / g), so a child, a giant or a moon-walker gets
    defaults that are as feasible as the human ones.
    """
    length = goals.standing_com_height / C.STANDING_COM_HEIGHT
    time = math.sqrt(length * C.STANDARD_GRAVITY / goals.gravity)
    return length, time


# Defaults for a 1 m standing COM under standard gravity; scaled by similarity().
DEFAULT_DEPTH = 0.36  # m, inside Balster, Lim & Kong 2016 (0.38 +- 0.08 m normal CMJ)
DEFAULT_TAKEOFF_EXTENSION = 0.10  # m, COM rise onto the toes, from memory
DEFAULT_DIP_DURATION = 0.60  # s, unweighting 0.30-0.45 + braking 0.10-0.25 (from memory)
# m, the COM's stopping distance after touchdown: 0.25 m lands the default 0.4 m jump at 3.6 BW,
# between the two recorded landings of reference-values.md (3.50 and 3.82 BW, jumpmetrics 0.2.0);
# 0.30 m (a soft landing, from memory) gave 3.2 BW, below both.
DEFAULT_LANDING_DEPTH = 0.25
DEFAULT_RECOVERY_DURATION = 0.60  # s, from memory


def resolved(goals):
    """The goals with every default filled in (scaled by :func:`similarity`)."""
    length, time = similarity(goals)
    values = {}
    for name, default, scale in (
        ("depth", DEFAULT_DEPTH, length),
        ("takeoff_extension", DEFAULT_TAKEOFF_EXTENSION, length),
        ("dip_duration", DEFAULT_DIP_DURATION, time),
        ("landing_depth", DEFAULT_LANDING_DEPTH, length),
        ("recovery_duration", DEFAULT_RECOVERY_DURATION, time),
    ):
        if getattr(goals, name) is None:
            values[name] = default * scale
    return replace(goals, **values)


def gravity_from(text):
    """Gravity [m/s^2] from a number or a preset name (earth, moon, mars)."""
    key = str(text).strip().lower()
    if key in C.GRAVITY_PRESETS:
        return C.GRAVITY_PRESETS[key]
    try:
        value = float(key)
    except ValueError:
        names = ", ".join(sorted(C.GRAVITY_PRESETS))
        raise InvalidGoalError(f"gravity {text!r} is neither a number nor a preset ({names})") from None
    return require_finite("gravity", value, positive=True, unit=" m/s^2")
