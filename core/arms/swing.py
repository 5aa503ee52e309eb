"""Placing an arm swing on a plan, the plane it swings in, and what it adds to the jump.

Elevation angle ``theta`` [rad]: the angle of the shoulder-to-hand line in the
character's sagittal plane, measured from hanging straight down, positive
forward and up (0 hanging, pi/2 level forward, pi overhead, negative behind).

The placed swing, per hop: a backswing over the dip (unweighting and braking)
to ``-backswing`` at the start of the upswing, the forward-and-up swing over
propulsion to its peak ``upswing`` exactly at take-off (zero slope there, so
the angular speed peaks earlier, mid-upswing), an optional apex pose, a
forward reach at touchdown and, after the last landing, back to hanging.

References
----------
Lees A., Vanrenterghem J., De Clercq D. (2004) Understanding how an arm swing
enhances performance in the vertical jump. J Biomech 37:1929-1940.
Vaverka F. et al. (2016) J Hum Kinet 53:41-50.
Feltner M.E., Fraschetti D.J., Crisp R.J. (1999) J Sports Sci 17:449-466.
de Leva P. (1996) J Biomech 29(9):1223-1230.
"""

from dataclasses import dataclass
import math

import numpy as np

from ..base import constants as C
from ..base.errors import InvalidGoalError, require_finite
from ..base.keys import BezierKeys, HermiteKeys, bezier_from_hermite, evaluate_hermite, hermite_slope  # noqa: F401
from .plane import SwingPlane, arm_directions, bone_local_rotations, quaternion_keys, swing_plane, swing_rotations

_DEG = math.pi / 180.0


@dataclass(frozen=True)
class SwingAmplitudes:
    """Swing amplitudes [deg] (elevation from hanging, + forward/up).

    backswing_deg : float  how far behind hanging the arm goes before the upswing [deg]
    upswing_deg : float  elevation at take-off, the peak [deg]; 90 = level forward
    landing_reach_deg : float  elevation at touchdown, the forward reach [deg]
    flight_deg : float or None  elevation at the apex [deg]; None eases straight to the reach
    upswing_start_share : float  where in propulsion the upswing starts, 0 = at its start [-]
    """

    backswing_deg: float = 45.0  # from memory (shoulder hyperextension ~40-60 deg in a CMJ)
    upswing_deg: float = 90.0  # level forward: reproduces the Lees et al. 2004 split, see swing_gain
    landing_reach_deg: float = 45.0  # common practice
    flight_deg: float = None
    upswing_start_share: float = 0.0

    def __post_init__(self):
        for name in ("backswing_deg", "upswing_deg", "landing_reach_deg", "flight_deg"):
            value = getattr(self, name)
            if value is None:
                continue
            x = require_finite(name, value, unit=" deg")
            if abs(x) > 360.0:
                raise InvalidGoalError(f"{name} {x:g} deg is more than a full turn; give -360..360 deg")
        if not 0.0 <= self.backswing_deg <= 180.0:
            raise InvalidGoalError(f"backswing_deg {self.backswing_deg:g} deg must be 0..180 deg (behind hanging); "
                                   "give e.g. 45")
        if not self.upswing_deg >= -self.backswing_deg:
            raise InvalidGoalError(
                f"upswing_deg {self.upswing_deg:g} deg is below the backswing (-{self.backswing_deg:g} deg): "
                "the arm must rise in the upswing; give a larger upswing or a smaller backswing")
        if self.flight_deg is not None and self.flight_deg > self.upswing_deg:
            raise InvalidGoalError(
                f"flight_deg {self.flight_deg:g} deg is above the take-off elevation {self.upswing_deg:g} deg: "
                "arms still rising after the feet leave cannot help the jump; give at most "
                f"{self.upswing_deg:g} deg or raise upswing_deg")
        share = require_finite("upswing_start_share", self.upswing_start_share, non_negative=True)
        if share > 0.9:
            raise InvalidGoalError(f"upswing_start_share {share:g} leaves no time to swing; give 0..0.9")


@dataclass(frozen=True)
class PlacedSwing:
    """An elevation curve: ``keys`` (times [s], values [rad], slopes [rad/s]) and its landmarks [s]."""

    keys: HermiteKeys
    upswing_starts_s: tuple
    takeoffs_s: tuple
    amplitudes: SwingAmplitudes

    def elevation(self, t):
        """Elevation [rad] at times ``t`` [s]."""
        return evaluate_hermite(self.keys, t)

    def angular_speed(self, t):
        """Elevation rate [rad/s] at times ``t`` [s]."""
        return hermite_slope(self.keys, t)

    def sample(self, fps, duration_s):
        """``(times [s], elevation [rad])`` on frames 0, 1/fps, ... through ``duration_s``."""
        fps = require_finite("fps", fps, positive=True)
        n = int(math.floor(require_finite("duration", duration_s, non_negative=True, unit=" s") * fps + 1e-9)) + 1
        t = np.arange(n) / fps
        return t, self.elevation(t)


def _phase(plan, name, hop):
    for p in plan.phases:
        if p.name == name and p.hop == hop:
            return p
    return None


def _monotone_slopes(t, v, pinned):
    """Slopes that keep every span monotone (harmonic mean of secants, Fritsch & Carlson 1980)."""
    s = np.zeros_like(v)
    for i in range(1, len(v) - 1):
        if pinned[i]:
            continue
        d0 = (v[i] - v[i - 1]) / (t[i] - t[i - 1])
        d1 = (v[i + 1] - v[i]) / (t[i + 1] - t[i])
        if d0 * d1 > 0:
            s[i] = 2.0 / (1.0 / d0 + 1.0 / d1)
    return s


def place_swing(plan, amplitudes=None):
    """Elevation keys for an arm swing timed to ``plan``'s phases.

    Parameters
    ----------
    plan : JumpPlan
    amplitudes : SwingAmplitudes, optional

    Returns
    -------
    PlacedSwing
        Keys at: the dip start (0), each upswing start (-backswing, slope 0), each
        take-off (upswing, slope 0: the peak), each apex (flight_deg, if given), each
        touchdown (reach), the end of the last landing (0).
    """
    a = amplitudes or SwingAmplitudes()
    points = []  # (time [s], value [rad], pinned slope 0)
    starts, takeoffs = [], []
    for h, hop in enumerate(plan.hops, start=1):
        push = _phase(plan, "propulsion", h)
        if h == 1:
            dip = _phase(plan, "unweighting", 1)
            points.append((dip.start_s if dip else max(0.0, push.start_s - 0.5), 0.0, True))
        t_up = push.start_s + a.upswing_start_share * (push.end_s - push.start_s)
        starts.append(t_up)
        takeoffs.append(hop.takeoff_time_s)
        points.append((t_up, -a.backswing_deg * _DEG, True))
        points.append((hop.takeoff_time_s, a.upswing_deg * _DEG, True))
        t_apex = hop.takeoff_time_s + hop.takeoff_speed_m_s / plan.gravity
        if a.flight_deg is not None and t_apex < hop.touchdown_time_s - 1e-3:
            points.append((t_apex, a.flight_deg * _DEG, False))
        points.append((hop.touchdown_time_s, a.landing_reach_deg * _DEG, h == len(plan.hops)))
    points.append((plan.duration_s, 0.0, True))
    t = np.array([p[0] for p in points])
    v = np.array([p[1] for p in points])
    if np.any(np.diff(t) <= 0):
        raise InvalidGoalError(f"the plan's phases give swing key times that do not increase ({t.round(4)} s); "
                               "lengthen the push or lower upswing_start_share")
    s = _monotone_slopes(t, v, [p[2] for p in points])
    return PlacedSwing(HermiteKeys(t, v, s), tuple(starts), tuple(takeoffs), a)


# --- The swing plane from rest-pose data ----------------------------------------------

def _arm_segments(table_key):
    """((mass fraction, COM fraction from proximal), ...) for upper arm, forearm, hand."""
    try:
        from ..body.segment_tables import get_table
    except ImportError:  # segment tables not installed: de Leva 1996 male, as in constants
        return C.DE_LEVA_MALE_ARM_SEGMENTS
    table = get_table(table_key)
    return tuple((table.entry(n).mass_fraction, table.entry(n).com_fraction)
                 for n in ("upper_arm", "forearm", "hand"))


def arm_mass_fraction(table_key="de_leva_male"):
    """Mass of both arms over body mass [-] (upper arm + forearm + hand, twice)."""
    return 2.0 * sum(m for m, _ in _arm_segments(table_key))


def arm_com_distance(standing_com_height=C.STANDING_COM_HEIGHT, table_key="de_leva_male"):
    """Shoulder to the straight arm's COM [m] for a body of this standing COM height.

    Segment lengths are stature fractions (Drillis & Contini, from memory, see
    constants); stature = standing COM height / 0.56 (from memory).
    """
    stature = require_finite("standing COM height", standing_com_height, positive=True, unit=" m") \
        / C.STANDING_COM_STATURE_FRACTION
    lengths = np.array([C.UPPER_ARM_LENGTH_FRACTION, C.FOREARM_LENGTH_FRACTION, C.HAND_LENGTH_FRACTION]) * stature
    starts = np.concatenate([[0.0], np.cumsum(lengths)[:-1]])
    seg = np.array(_arm_segments(table_key))
    return float(np.sum(seg[:, 0] * (starts + seg[:, 1] * lengths)) / np.sum(seg[:, 0]))


@dataclass(frozen=True)
class SwingGain:
    """What a swing adds: speeds [m/s], heights [m], shares of the total gain [-].

    takeoff_speed_m_s : float  with the swing [m/s]
    takeoff_height_gain_m : float  whole-body COM higher at take-off (arms up) [m]
    flight_rise_gain_m : float  extra apex rise from the faster take-off [m]
    total_gain_m : float  the two together: apex height gain [m]
    position_share, speed_share : float  of ``total_gain_m`` [-]
    arm_lift_m : float  mass-weighted arm COM rise over the upswing, mu r (cos back - cos up) [m]
    """

    takeoff_speed_no_arms_m_s: float
    takeoff_speed_m_s: float
    takeoff_height_gain_m: float
    flight_rise_gain_m: float
    total_gain_m: float
    position_share: float
    speed_share: float
    arm_lift_m: float


def swing_gain(takeoff_speed_no_arms, amplitudes=None, *, gravity=C.STANDARD_GRAVITY,
               standing_com_height=C.STANDING_COM_HEIGHT, mass_fraction=None, com_distance=None):
    """Take-off speed and height with a swing, for the same push without one.

    Model (two parts, as Lees et al. 2004 split the gain):

    * take-off position, exact kinematics: arms raised from hanging to ``upswing``
      lift the whole-body COM by ``mu r (1 - cos upswing)`` (mu both arms' mass
      fraction, r the shoulder-to-arm-COM distance);
    * take-off speed: the shoulders lifting the arms press the body down on the
      legs, which then push harder; the extra push energy per unit body mass is
      ``k g mu r (cos backswing - cos upswing)`` with ``k = ARM_SWING_WORK_RATIO``,
      calibrated once so the default swing turns Feltner et al. 1999's 2.44 m/s
      into 2.75 m/s. So ``v^2 = v0^2 + 2 k g mu r (cos b - cos u)``.

    Predictions, not fitted: the default swing's position share is 29% (Lees et
    al. 2004: 28%) and its total gain at 2.44 m/s is +38% of the no-arm rise
    (Vaverka et al. 2016: +38%). Lees' absolute +0.086 m is not reproduced at
    Feltner's speeds (the model gives about +0.116 m there). Both parts scale with
    g L, so the model holds under dynamic similarity.

    Parameters
    ----------
    takeoff_speed_no_arms : float  [m/s]
    amplitudes : SwingAmplitudes, optional
    gravity : float  [m/s^2]
    standing_com_height : float  [m]
    mass_fraction : float, optional  both arms over body mass [-]; default de Leva 1996 male
    com_distance : float, optional  shoulder to arm COM [m]; default from :func:`arm_com_distance`

    Returns
    -------
    SwingGain

    References
    ----------
    Lees, Vanrenterghem & De Clercq 2004, J Biomech 37:1929-1940; Feltner et al.
    1999, J Sports Sci 17:449-466; Vaverka et al. 2016, J Hum Kinet 53:41-50.
    """
    a = amplitudes or SwingAmplitudes()
    v0 = require_finite("take-off speed without arms", takeoff_speed_no_arms, non_negative=True, unit=" m/s")
    g = require_finite("gravity", gravity, positive=True, unit=" m/s^2")
    mu = arm_mass_fraction() if mass_fraction is None else require_finite("arm mass fraction", mass_fraction,
                                                                         non_negative=True)
    if mu >= 1.0:
        raise InvalidGoalError(f"arm mass fraction {mu:g} must be below 1 (de Leva 1996: about 0.1)")
    r = arm_com_distance(standing_com_height) if com_distance is None else require_finite(
        "arm COM distance", com_distance, non_negative=True, unit=" m")
    up, back = a.upswing_deg * _DEG, a.backswing_deg * _DEG
    lift = max(0.0, mu * r * (math.cos(back) - math.cos(up)))
    position = mu * r * (1.0 - math.cos(up))
    v = math.sqrt(v0 * v0 + 2.0 * C.ARM_SWING_WORK_RATIO * g * lift)
    rise = (v * v - v0 * v0) / (2.0 * g)
    total = position + rise
    share = position / total if total > 0 else 0.0
    return SwingGain(v0, v, position, rise, total, share, 1.0 - share if total > 0 else 0.0, lift)


def goals_with_swing(goals, amplitudes=None):
    """The same push with a swing: goals whose take-off speed and extension include it.

    The take-off speed the goals imply (without arms) becomes the swing's
    :attr:`SwingGain.takeoff_speed_m_s`; the take-off extension grows by the
    arms-up COM lift. Plan the result with ``plan_jump`` for the higher jump.
    """
    from dataclasses import replace

    from ..plan.planner import plan_jump

    plain = plan_jump(goals)  # the push without arms, as the goals ask
    G = plain.resolved_goals
    v0 = plain.hops[0].takeoff_speed_m_s
    gain = swing_gain(v0, amplitudes, gravity=G.gravity, standing_com_height=G.standing_com_height)
    return replace(goals, height=None, flight_time=None, takeoff_speed=gain.takeoff_speed_m_s,
                   takeoff_extension=G.takeoff_extension + gain.takeoff_height_gain_m)
