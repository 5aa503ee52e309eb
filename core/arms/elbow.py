"""An elbow bend that follows the arm swing: bent in the backswing, straight at take-off.

The arms go back with the elbows a little bent and straighten as they whip up to
take-off (common practice in jump animation; no measured elbow angles are used
here). The bend is keyed on the swing's own keys: 0 at the dip start, the
amplitude at each upswing start (the bottom of the backswing), 0 at each take-off
and after, every slope 0, so each key is the bend's extreme and the amplitude is
met exactly at the bottom of the backswing.

The swing plans the elevation of the shoulder-to-hand line. With a forearm both
pieces are laid in the swing plane, whatever bend the rest pose has (so 0 is a
straight arm): the forearm ``beta`` forward of the upper arm (elbow flexion), which
lifts the hand line forward of the upper arm by

    ``phi = atan2(b sin beta, a + b cos beta)``

(plane geometry of a two-link arm: upper arm ``a``, forearm ``b`` to the hand end),
so the upper arm turns ``phi`` less and the hand line keeps the planned elevation.
Angles [rad], times [s].
"""

from dataclasses import dataclass
import math

import numpy as np

from ..base.errors import InvalidGoalError, require_finite
from ..base.keys import HermiteKeys, evaluate_hermite, hermite_slope
from ..base.rotation_vectors import quaternion_conjugate, quaternion_multiply
from .plane import swing_rotations

#: Largest bend [deg] (a quarter turn: past it the "slight bend" is a different pose).
MAX_BEND_DEG = 90.0


def elbow_bend_keys(placed, amplitude_deg):
    """Bend keys [rad] on the times of ``placed`` (a :class:`core.arms.swing.PlacedSwing`).

    ``amplitude_deg`` at each upswing start, 0 on every other key; slopes 0.
    """
    amp = require_finite("elbow bend", amplitude_deg, non_negative=True, unit=" deg")
    if amp > MAX_BEND_DEG:
        raise InvalidGoalError(f"elbow bend {amp:g} deg is more than {MAX_BEND_DEG:g} deg; give a slight bend "
                               "(e.g. 15 deg), or 0 for a straight arm")
    t = np.asarray(placed.keys.times, dtype=float)
    bottom = np.zeros(len(t), dtype=bool)
    for start in placed.upswing_starts_s:
        bottom |= np.isclose(t, start, rtol=0.0, atol=1e-9)
    return HermiteKeys(t, np.where(bottom, math.radians(amp), 0.0), np.zeros(len(t)))


def hand_line_lift(bend, upper_length, forearm_length):
    """Angle [rad] between the upper arm and the shoulder-to-hand line for an elbow ``bend`` [rad]."""
    b = np.asarray(bend, dtype=float)
    return np.arctan2(forearm_length * np.sin(b), upper_length + forearm_length * np.cos(b))


def hand_line_lift_per_bend(bend, upper_length, forearm_length):
    """d(lift)/d(bend) [-] of :func:`hand_line_lift`."""
    a, f, c = upper_length, forearm_length, np.cos(np.asarray(bend, dtype=float))
    return (a * f * c + f * f) / (a * a + 2.0 * a * f * c + f * f)


@dataclass(frozen=True, eq=False)
class BentArmSwing:
    """The upper arm's elevation when the elbow bends, so the hand line keeps the planned one.

    placed : core.arms.swing.PlacedSwing  the hand line's elevation
    bend : HermiteKeys  elbow bend [rad]
    upper_length, forearm_length : float  [any one unit]
    """

    placed: object
    bend: HermiteKeys
    upper_length: float
    forearm_length: float

    def __post_init__(self):
        for name in ("upper_length", "forearm_length"):
            require_finite(name, getattr(self, name), positive=True)

    @property
    def keys(self):
        return self.placed.keys

    def bend_at(self, t):
        return evaluate_hermite(self.bend, t)

    def elevation(self, t):
        return self.placed.elevation(t) - hand_line_lift(self.bend_at(t), self.upper_length, self.forearm_length)

    def angular_speed(self, t):
        per = hand_line_lift_per_bend(self.bend_at(t), self.upper_length, self.forearm_length)
        return self.placed.angular_speed(t) - per * hermite_slope(self.bend, t)


def elbow_rotations(upper_plane, forearm_plane, bend):
    """Rig-space rotations (n, 4) (w, x, y, z) of the forearm relative to the upper arm's turn.

    ``upper_plane`` and ``forearm_plane`` (:func:`core.arms.plane.swing_plane` of the
    shoulder-to-elbow and elbow-to-hand rest lines) share the swing axis. The upper
    arm turns by ``turn(axis, e) drop_u`` and the forearm should by ``turn(axis, e +
    bend) drop_f`` (``drop`` the rest-to-hanging turn of
    :func:`core.arms.plane.swing_rotations`); turns about one axis commute, so the
    forearm's part is ``drop_u* turn(axis, bend) drop_f`` whatever the elevation ``e``.
    """
    if np.linalg.norm(upper_plane.axis - forearm_plane.axis) > 1e-9:
        raise InvalidGoalError("the upper arm's and the forearm's swing planes must share their axis; build both "
                               "from the same rest forward and up")
    drop_u = swing_rotations(upper_plane, np.zeros(1))[0]
    drop_f = swing_rotations(forearm_plane, np.zeros(1))[0]
    half = 0.5 * np.asarray(bend, dtype=float)[..., None]
    turn = np.concatenate([np.cos(half), np.sin(half) * upper_plane.axis], axis=-1)
    return quaternion_multiply(quaternion_multiply(quaternion_conjugate(drop_u), turn), drop_f)
