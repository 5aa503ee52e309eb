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

from . import constants as C
from .errors import InvalidGoalError, require_finite
from .keys import HermiteKeys, evaluate_hermite
from .rotation_vectors import matrix_to_quaternion, quaternion_conjugate, quaternion_multiply

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

def _unit(name, vector):
    x = np.asarray(vector, dtype=float).reshape(-1)
    if x.shape != (3,) or not np.all(np.isfinite(x)):
        raise InvalidGoalError(f"{name} must be 3 finite numbers, got {vector!r}")
    n = float(np.linalg.norm(x))
    if n < 1e-12:
        raise InvalidGoalError(f"{name} {x.tolist()} has no direction; give a non-zero vector")
    return x / n


@dataclass(frozen=True)
class SwingPlane:
    """The character's sagittal plane through a shoulder, in rig (armature) space.

    forward, up : (3,) unit vectors, orthonormal
    axis : (3,) unit vector, forward x up; a right-hand turn about it lifts a hanging arm forward
    shoulder : (3,) shoulder rest position [m]
    rest_arm : (3,) unit shoulder-to-hand direction at rest
    rest_elevation : float  elevation of the rest arm's in-plane part [rad]
    rest_out_of_plane : float  angle of the rest arm out of the plane [rad] (pi/2 for a T-pose)
    arm_length : float  shoulder-to-hand rest distance [m]
    """

    forward: np.ndarray
    up: np.ndarray
    axis: np.ndarray
    shoulder: np.ndarray
    rest_arm: np.ndarray
    rest_elevation: float
    rest_out_of_plane: float
    arm_length: float


def swing_plane(rest_forward, rest_up, shoulder, hand):
    """The swing plane from the rig's rest forward and up axes and the arm's rest positions.

    ``rest_forward`` is made orthogonal to ``rest_up`` (Gram-Schmidt), so a rig
    whose forward axis tilts still gets a vertical plane.
    """
    up = _unit("rest up axis", rest_up)
    f = _unit("rest forward axis", rest_forward)
    f = f - np.dot(f, up) * up
    if np.linalg.norm(f) < 1e-6:
        raise InvalidGoalError(f"rest forward {list(rest_forward)} is parallel to rest up {list(rest_up)}; "
                               "give the direction the character faces")
    f = f / np.linalg.norm(f)
    s = np.asarray(shoulder, dtype=float).reshape(-1)
    if s.shape != (3,) or not np.all(np.isfinite(s)):
        raise InvalidGoalError(f"shoulder position must be 3 finite numbers [m], got {shoulder!r}")
    arm = np.asarray(hand, dtype=float).reshape(-1) - s
    length = float(np.linalg.norm(arm))
    rest = _unit("shoulder-to-hand rest vector", arm)
    axis = np.cross(f, up)
    in_plane = math.hypot(float(rest @ f), float(rest @ up))
    elevation = math.atan2(float(rest @ f), float(-(rest @ up))) if in_plane > 1e-9 else 0.0
    return SwingPlane(f, up, axis, s, rest, elevation, math.atan2(abs(float(rest @ axis)), in_plane), length)


def arm_directions(plane, angles):
    """Unit shoulder-to-hand directions (n, 3) for elevations ``angles`` (n,) [rad]."""
    th = np.asarray(angles, dtype=float)[..., None]
    return np.cos(th) * (-plane.up) + np.sin(th) * plane.forward


def _drop_rotation(plane):
    """Quaternion (w, x, y, z) turning the rest arm onto hanging straight down (shortest arc)."""
    down = -plane.up
    c = float(plane.rest_arm @ down)
    if c < -1.0 + 1e-9:  # arm rests straight up: turn back down over the front, about the swing axis
        return np.concatenate([[0.0], -plane.axis])
    q = np.concatenate([[1.0 + c], np.cross(plane.rest_arm, down)])
    return q / np.linalg.norm(q)


def swing_rotations(plane, angles, rates=None):
    """Rig-space quaternions (n, 4) (w, x, y, z) taking the rest arm to elevation ``angles`` [rad].

    ``q(theta) = turn(axis, theta) * drop``: first the fixed shortest turn from the
    rest arm to hanging, then the swing about the plane's axis, so q is smooth in
    theta even overhead. With ``rates`` [rad/s] also returns dq/dt (n, 4).
    """
    th = np.asarray(angles, dtype=float)
    half = 0.5 * th[..., None]
    turn = np.concatenate([np.cos(half), np.sin(half) * plane.axis], axis=-1)
    drop = _drop_rotation(plane)
    q = quaternion_multiply(turn, drop)
    if rates is None:
        return q
    dturn = 0.5 * np.concatenate([-np.sin(half), np.cos(half) * plane.axis], axis=-1)
    return q, quaternion_multiply(dturn, drop) * np.asarray(rates, dtype=float)[..., None]


def bone_local_rotations(quats, bone_rest_rotation):
    """Rig-space rotations (n, 4) of a bone's rest pose as the bone's own pose quaternions.

    ``bone_rest_rotation`` (3, 3) is the bone's rest orientation in rig space
    (the rotation part of Blender's ``Bone.matrix_local``). Local = b* q b: linear
    in q, so it may be applied to key values and handle values alike.
    """
    m = np.asarray(bone_rest_rotation, dtype=float)
    if m.shape != (3, 3) or not np.all(np.isfinite(m)) or abs(np.linalg.det(m) - 1.0) > 1e-3:
        raise InvalidGoalError("bone rest rotation must be a finite 3x3 rotation matrix (det 1); "
                               "pass the 3x3 part of the bone's rest matrix")
    b = matrix_to_quaternion(m)
    bc = quaternion_conjugate(b)
    return quaternion_multiply(quaternion_multiply(bc, np.asarray(quats, dtype=float)), b)


def quaternion_keys(swing, plane, bone_rest_rotation=None, max_step_deg=15.0):
    """Four Bezier F-curves (w, x, y, z) that carry the swing on a bone's quaternion.

    Keys sit at the swing's keys plus even subdivisions so no span turns more than
    ``max_step_deg``; values are the exact rotations, handles their exact time
    derivatives at thirds, so the component-wise Bezier stays within a fraction of a
    degree of the exact swing. Without ``bone_rest_rotation`` the values are rig-space.
    """
    step = require_finite("max_step_deg", max_step_deg, positive=True, unit=" deg") * _DEG
    k = swing.keys
    times = [k.times[:1]]
    for t0, t1, v0, v1 in zip(k.times[:-1], k.times[1:], k.values[:-1], k.values[1:]):
        n = max(1, int(math.ceil(abs(v1 - v0) / step)))
        times.append(np.linspace(t0, t1, n + 1)[1:])
    t = np.concatenate(times)
    q, dq = swing_rotations(plane, swing.elevation(t), swing.angular_speed(t))
    if bone_rest_rotation is not None:
        q, dq = bone_local_rotations(q, bone_rest_rotation), bone_local_rotations(dq, bone_rest_rotation)
    return tuple(bezier_from_hermite(HermiteKeys(t, q[:, c], dq[:, c])) for c in range(4))


# --- What the swing adds to the jump ----------------------------------------------------

def _arm_segments(table_key):
    """((mass fraction, COM fraction from proximal), ...) for upper arm, forearm, hand."""
    try:
        from .segment_tables import get_table
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

    from .planner import plan_jump

    plain = plan_jump(goals)  # the push without arms, as the goals ask
    G = plain.resolved_goals
    v0 = plain.hops[0].takeoff_speed_m_s
    gain = swing_gain(v0, amplitudes, gravity=G.gravity, standing_com_height=G.standing_com_height)
    return replace(goals, height=None, flight_time=None, takeoff_speed=gain.takeoff_speed_m_s,
                   takeoff_extension=G.takeoff_extension + gain.takeoff_height_gain_m)
