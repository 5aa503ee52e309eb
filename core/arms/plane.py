"""The arm's swing plane from rest-pose data, and swing angles as rotations.

The plane is the character's sagittal plane, found from the rig's rest forward and up
axes; no axis is hard-coded. Angles are elevations [rad] from hanging (0) through level
forward (pi/2); rotations are quaternions (w, x, y, z).
"""

from dataclasses import dataclass
import math
import numpy as np
from ..base.errors import InvalidGoalError, require_finite
from ..base.keys import HermiteKeys, bezier_from_hermite
from ..base.rotation_vectors import matrix_to_quaternion, quaternion_conjugate, quaternion_multiply

_DEG = math.pi / 180.0

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


def _shortest_arc(a, b):
    """Quaternion (w, x, y, z) turning unit ``a`` onto unit ``b`` the shortest way (not for a = -b)."""
    q = np.concatenate([[1.0 + float(a @ b)], np.cross(a, b)])
    return q / np.linalg.norm(q)


def _drop_rotation(plane):
    """Quaternion (w, x, y, z) turning the rest arm onto hanging straight down (shortest arc)."""
    down = -plane.up
    if float(plane.rest_arm @ down) < -1.0 + 1e-9:
        # The arm rests (nearly) straight up, where the shortest arc has no axis: turn back down over
        # the front, a half turn about the swing axis, then the small arc left from there to down
        # (the half turn alone misses down by the arm's tilt, up to ~4e-5 rad inside this branch).
        half = np.concatenate([[0.0], -plane.axis])
        u = -plane.axis
        turned = 2.0 * float(u @ plane.rest_arm) * u - plane.rest_arm  # a half turn about u
        return quaternion_multiply(_shortest_arc(turned / np.linalg.norm(turned), down), half)
    return _shortest_arc(plane.rest_arm, down)


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
