"""Rotation vectors, quaternions and rotation matrices, batched over leading axes.

A rotation vector ``v`` [rad] turns by ``|v|`` about ``v / |v|`` (right hand).
Quaternions are ``(w, x, y, z)`` with ``w >= 0`` on output. Every function takes
arrays of any leading shape and works on the last one or two axes, so a whole
rig's frames go through in one call.

References
----------
Shepperd, S. W. 1978, "Quaternion from rotation matrix", J. Guidance and Control
1(3):223-224 (the largest-diagonal branch choice used in :func:`matrix_to_quaternion`).
"""

import numpy as np

from .errors import InvalidTrajectoryError

# Below this angle [rad] the series forms replace sin(t)/t and (1-cos t)/t^2,
# whose direct evaluation loses all digits near 0.
_SMALL_ANGLE = 1e-4


def _rodrigues_factors(angle):
    """``sin(t)/t`` and ``(1 - cos t)/t^2`` without cancellation near ``t = 0``."""
    small = angle < _SMALL_ANGLE
    safe = np.where(small, 1.0, angle)
    a = np.where(small, 1.0 - angle**2 / 6.0, np.sin(safe) / safe)
    b = np.where(small, 0.5 - angle**2 / 24.0, (1.0 - np.cos(safe)) / safe**2)
    return a, b


def cross(a, b):
    """Cross products of (..., 3) arrays (``numpy.cross`` without its per-call overhead)."""
    ax, ay, az = a[..., 0], a[..., 1], a[..., 2]
    bx, by, bz = b[..., 0], b[..., 1], b[..., 2]
    return np.stack([ay * bz - az * by, az * bx - ax * bz, ax * by - ay * bx], axis=-1)


def rotate(rotvec, vectors):
    """Turn ``vectors`` (..., 3) by ``rotvec`` (..., 3) [rad] (Rodrigues' formula)."""
    angle = np.linalg.norm(rotvec, axis=-1)
    a, b = _rodrigues_factors(angle)
    c1 = cross(rotvec, vectors)
    c2 = cross(rotvec, c1)
    return vectors + a[..., None] * c1 + b[..., None] * c2


def rotvec_to_matrix(rotvec):
    """Rotation matrices (..., 3, 3) of rotation vectors (..., 3) [rad]."""
    rotvec = np.asarray(rotvec, dtype=float)
    angle = np.linalg.norm(rotvec, axis=-1)
    a, b = _rodrigues_factors(angle)
    x, y, z = rotvec[..., 0], rotvec[..., 1], rotvec[..., 2]
    zero = np.zeros_like(x)
    skew = np.stack([zero, -z, y, z, zero, -x, -y, x, zero], axis=-1).reshape(rotvec.shape + (3,))
    eye = np.broadcast_to(np.eye(3), skew.shape)
    return eye + a[..., None, None] * skew + b[..., None, None] * (skew @ skew)


def rotvec_to_quaternion(rotvec):
    """Unit quaternions (..., 4) ``(w, x, y, z)`` of rotation vectors (..., 3) [rad]."""
    rotvec = np.asarray(rotvec, dtype=float)
    angle = np.sqrt(np.add.reduce(rotvec * rotvec, axis=-1))  # numpy.linalg.norm's own sum, without its checks
    small = angle < _SMALL_ANGLE
    # written into one output, the series only where an angle is small (a baked rig's every
    # frame passes here twice: the plain form costs about twice as much)
    quat = np.empty(rotvec.shape[:-1] + (4,))
    np.cos(0.5 * angle, out=quat[..., 0])
    if np.any(small):
        safe = np.where(small, 1.0, angle)
        half_sinc = np.where(small, 0.5 - angle**2 / 48.0, np.sin(0.5 * safe) / safe)
    else:
        half_sinc = np.sin(0.5 * angle)
        half_sinc /= angle
    np.multiply(half_sinc[..., None], rotvec, out=quat[..., 1:])
    return canonical_quaternion(quat, in_place=True)


def canonical_quaternion(quat, in_place=False):
    """The same rotations with ``w >= 0`` (``q`` and ``-q`` are one rotation); ``in_place`` turns
    ``quat`` itself (a float array) instead of a copy. Only the quaternions that need it are
    negated (a whole-array select cost 25 times as much on a baked rig's 7,500)."""
    out = quat if in_place else np.array(quat, dtype=float)
    flip = out[..., 0] < 0.0
    if np.any(flip):
        out[flip] = -out[flip]
    return out


def quaternion_to_rotvec(quat):
    """Rotation vectors (..., 3) [rad], angle in [0, pi], of quaternions (..., 4)."""
    quat = canonical_quaternion(quat)
    w = quat[..., 0]
    xyz = quat[..., 1:]
    s = np.linalg.norm(xyz, axis=-1)
    angle = 2.0 * np.arctan2(s, w)
    small = s < 0.5 * _SMALL_ANGLE
    # near the identity angle/s -> 2/w (w ~ 1), which avoids 0/0
    scale = np.where(small, 2.0 / np.where(w > 0.0, w, 1.0), angle / np.where(small, 1.0, s))
    return scale[..., None] * xyz


def quaternion_multiply(p, q):
    """Hamilton products ``p * q`` (..., 4): the rotation ``q`` followed by ``p``."""
    pw, px, py, pz = np.moveaxis(p, -1, 0)
    qw, qx, qy, qz = np.moveaxis(q, -1, 0)
    return np.stack(
        [
            pw * qw - px * qx - py * qy - pz * qz,
            pw * qx + px * qw + py * qz - pz * qy,
            pw * qy - px * qz + py * qw + pz * qx,
            pw * qz + px * qy - py * qx + pz * qw,
        ],
        axis=-1,
    )


def quaternion_conjugate(q):
    """Inverse rotations of unit quaternions (..., 4)."""
    return q * np.array([1.0, -1.0, -1.0, -1.0])


def matrix_to_quaternion(matrix):
    """Unit quaternions (..., 4) of rotation matrices (..., 3, 3), Shepperd's branches."""
    m = np.asarray(matrix, dtype=float)
    m00, m11, m22 = m[..., 0, 0], m[..., 1, 1], m[..., 2, 2]
    trace = m00 + m11 + m22
    candidates = np.stack(
        [
            np.stack([1.0 + trace, m[..., 2, 1] - m[..., 1, 2], m[..., 0, 2] - m[..., 2, 0], m[..., 1, 0] - m[..., 0, 1]], -1),
            np.stack([m[..., 2, 1] - m[..., 1, 2], 1.0 + m00 - m11 - m22, m[..., 0, 1] + m[..., 1, 0], m[..., 0, 2] + m[..., 2, 0]], -1),
            np.stack([m[..., 0, 2] - m[..., 2, 0], m[..., 0, 1] + m[..., 1, 0], 1.0 - m00 + m11 - m22, m[..., 1, 2] + m[..., 2, 1]], -1),
            np.stack([m[..., 1, 0] - m[..., 0, 1], m[..., 0, 2] + m[..., 2, 0], m[..., 1, 2] + m[..., 2, 1], 1.0 - m00 - m11 + m22], -1),
        ],
        axis=-2,
    )
    # the branch with the largest diagonal term divides by the largest number
    branch = np.argmax(np.stack([trace, m00, m11, m22], axis=-1), axis=-1)
    quat = np.take_along_axis(candidates, branch[..., None, None], axis=-2)[..., 0, :]
    quat = quat / np.linalg.norm(quat, axis=-1, keepdims=True)
    return canonical_quaternion(quat)


def matrix_to_rotvec(matrix):
    """Rotation vectors (..., 3) [rad] of rotation matrices (..., 3, 3)."""
    return quaternion_to_rotvec(matrix_to_quaternion(matrix))


def nearest_rotations(matrices, name="rotations"):
    """Closest proper rotations (..., 3, 3) to ``matrices``: scale and shear removed.

    The polar factor ``U V^T`` of the singular value decomposition is the nearest
    orthogonal matrix in the Frobenius norm, so a scaled or slightly sheared world
    matrix gives back the rotation the rig shows.

    Raises
    ------
    InvalidTrajectoryError
        For a mirrored (negative determinant) or degenerate (zero scale) matrix.
    """
    m = np.asarray(matrices, dtype=float)
    u, s, vt = np.linalg.svd(m)
    if np.any(s[..., -1] <= 1e-12 * np.maximum(s[..., 0], 1e-300)):
        raise InvalidTrajectoryError(f"{name} contain a matrix with zero scale on an axis; give bones with non-zero scale")
    rot = u @ vt
    det = np.linalg.det(rot)
    if np.any(det < 0.0):
        where = tuple(int(i) for i in np.argwhere(det < 0.0)[0])
        raise InvalidTrajectoryError(
            f"{name}{list(where)} is mirrored (negative scale, determinant {det[where]:.3g}); "
            "apply or remove the negative scale before baking"
        )
    return rot
