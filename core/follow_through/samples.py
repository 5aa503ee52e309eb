"""Checking a rig's sampled motion and turning it into the drive a chain feels."""

import numpy as np

from ..base.blocks import blocks_along
from ..base.errors import InvalidGoalError, InvalidTrajectoryError
from ..base.rotation_vectors import (matrix_to_quaternion, nearest_rotations, quaternion_conjugate,
    quaternion_multiply, quaternion_to_rotvec)
from .apparent_weight import apparent_gravity

#: Largest head acceleration accepted [m/s^2], about 1,000 g: far past any landing
#: (a few to tens of g) or a smear frame; beyond it the samples hold a teleport or a
#: unit mix-up.
MAX_HEAD_ACCELERATION = 1.0e4
#: Largest bone angular acceleration accepted [rad/s^2] (a half turn reversed within a
#: millisecond is ~6e6); beyond it a rotation has flipped between samples.
MAX_ANGULAR_ACCELERATION = 1.0e9
#: Largest departure from orthogonality [relative to the squared scale] corrected by the
#: polar iteration; beyond it (shear, stretch) the SVD's polar factor is taken.
NEAR_ORTHOGONAL = 1.0e-3
#: Largest scene gravity accepted [m/s^2], a thousand times Earth's.
MAX_GRAVITY = 1.0e4


def _finite_array(name, value, shape_text, ndim_tail):
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise InvalidTrajectoryError(f"{name} must be a numeric array {shape_text}, got {type(value).__name__}") from None
    if arr.ndim != len(ndim_tail) or any(t is not None and s != t for s, t in zip(arr.shape, ndim_tail)):
        raise InvalidTrajectoryError(f"{name} must have shape {shape_text}, got {arr.shape}; sample every bone on every frame")
    if not np.all(np.isfinite(arr)):
        where = tuple(int(i) for i in np.argwhere(~np.isfinite(arr))[0])
        raise InvalidTrajectoryError(f"{name}{list(where)} is {arr[where]}; every sample must be a finite number")
    return arr


def check_parents(parents, bones):
    """Parent indices as an int array, checked to form chains (no loops, in range)."""
    try:
        raw = list(parents)
        par = np.array([int(p) for p in raw], dtype=int)
        if any(float(p) != int(p) for p in raw):
            raise ValueError
    except (TypeError, ValueError):
        raise InvalidGoalError(f"parents must be whole numbers (index or -1), got {parents!r}") from None
    if len(par) != bones:
        raise InvalidGoalError(f"got {len(par)} parents for {bones} bones; give one parent index (or -1) per bone")
    bad = np.nonzero((par < -1) | (par >= bones) | (par == np.arange(bones)))[0]
    if len(bad):
        i = int(bad[0])
        raise InvalidGoalError(f"parents[{i}] = {par[i]} is not another bone's index; give -1 or 0..{bones - 1} other than {i}")
    node = par.copy()
    for _ in range(bones):
        node = np.where(node >= 0, par[np.maximum(node, 0)], -1)
    if np.any(node >= 0):
        i = int(np.nonzero(node >= 0)[0][0])
        raise InvalidGoalError(f"parents {list(par)} loop back on themselves (bone {i}); each chain must start at a bone with parent -1")
    return par


def check_samples(times, heads, rotations, parents, gravity):
    """Validated ``(times, heads, rotations, parents, gravity)`` as arrays.

    Raises
    ------
    InvalidTrajectoryError
        Wrong shapes, non-finite values, non-increasing times, mirrored matrices.
    InvalidGoalError
        No bones, bad parent indices, non-finite gravity.
    """
    t = _finite_array("times", times, "(F,)", (None,))
    if len(t) < 2:
        raise InvalidTrajectoryError(f"times has {len(t)} sample(s); give at least 2 frames to bake")
    steps = np.diff(t)
    if np.any(steps <= 0.0):
        i = int(np.nonzero(steps <= 0.0)[0][0])
        raise InvalidTrajectoryError(
            f"times must increase: times[{i}] = {t[i]:g} s, times[{i + 1}] = {t[i + 1]:g} s; sample frames in order"
        )
    frames = len(t)
    h = _finite_array("heads", heads, f"({frames}, B, 3)", (frames, None, 3))
    bones = h.shape[1]
    if bones == 0:
        raise InvalidGoalError("no bones to bake; choose at least one bone")
    r = _finite_array("rotations", rotations, f"({frames}, {bones}, 3, 3)", (frames, bones, 3, 3))
    r = _rotation_parts(r)
    par = check_parents(parents, bones)
    try:
        g = np.asarray(gravity, dtype=float).reshape(3)
    except (TypeError, ValueError):
        raise InvalidGoalError(f"gravity must be a 3-vector [m/s^2], got {gravity!r}; e.g. (0, 0, -9.80665)") from None
    if not np.all(np.isfinite(g)) or np.linalg.norm(g) > MAX_GRAVITY:
        raise InvalidGoalError(
            f"gravity must be finite and at most {MAX_GRAVITY:g} m/s^2, got {tuple(g)}; e.g. (0, 0, -9.80665)"
        )
    return t, h, r, par, g


def _rotation_parts(matrices):
    """Proper rotations of world matrices.

    A rig's matrices are rotations times a uniform scale, to float32 rounding;
    those are divided by their scale (orthogonal to ~1e-7, Blender's own
    precision); a departure up to :data:`NEAR_ORTHOGONAL` is removed by the
    Bjorck-Bowie iteration, which converges quadratically to the polar factor.
    Anything else (shear, stretch) goes through
    :func:`nearest_rotations` (the SVD polar factor), which also refuses mirrored
    and degenerate matrices.
    """
    flat = matrices.reshape((-1, 3, 3))
    rows = blocks_along(len(flat), 16)  # each matrix's own (a demo-sized take is one block)
    scale2, off, det = (np.empty(len(flat)) for _ in range(3))
    for cut in rows:
        scale2[cut], off[cut], det[cut] = _scale_and_skew(flat[cut])
    if not np.all(det > 0.0) or not np.all(off <= NEAR_ORTHOGONAL * scale2):
        return nearest_rotations(matrices, "rotations")
    rot = flat / np.sqrt(scale2)[:, None, None]
    if np.all(off <= 1e-6 * scale2):
        return rot.reshape(matrices.shape)
    # float32 rounding through a deep hierarchy leaves ~1e-6: two Bjorck-Bowie steps
    # X (3 I - X^T X) / 2 reach the polar factor (the SVD's U V^T) to ~1e-12, at a
    # fraction of a batched SVD's cost
    for cut in rows:
        part = rot[cut]
        for _ in range(2):
            part = part @ (1.5 * np.eye(3) - 0.5 * np.swapaxes(part, -1, -2) @ part)
        rot[cut] = part
    return rot.reshape(matrices.shape)


def _scale_and_skew(matrices):
    """Squared mean column length, largest departure from orthogonality (same units) and
    determinant of each matrix (..., 3, 3)."""
    c0, c1, c2 = matrices[..., 0], matrices[..., 1], matrices[..., 2]

    def dot(a, b):
        return a[..., 0] * b[..., 0] + a[..., 1] * b[..., 1] + a[..., 2] * b[..., 2]

    n0, n1, n2 = dot(c0, c0), dot(c1, c1), dot(c2, c2)
    scale2 = (n0 + n1 + n2) / 3.0
    off = np.maximum.reduce([np.abs(n0 - scale2), np.abs(n1 - scale2), np.abs(n2 - scale2),
                             np.abs(dot(c0, c1)), np.abs(dot(c0, c2)), np.abs(dot(c1, c2))])
    det = (c0[..., 0] * (c1[..., 1] * c2[..., 2] - c1[..., 2] * c2[..., 1])
           + c0[..., 1] * (c1[..., 2] * c2[..., 0] - c1[..., 0] * c2[..., 2])
           + c0[..., 2] * (c1[..., 0] * c2[..., 1] - c1[..., 1] * c2[..., 0]))
    return scale2, off, det


def check_drive(accel, alpha, times, first=0):
    """Refuse motion no rig could mean: a teleport or a flipped rotation needs a reset.

    Raises
    ------
    InvalidTrajectoryError
        Naming the sample and bone, and suggesting a reset there.
    """
    for name, value, cap, unit in (("head acceleration", accel, MAX_HEAD_ACCELERATION, "m/s^2"),
                                   ("angular acceleration", alpha, MAX_ANGULAR_ACCELERATION, "rad/s^2")):
        size = np.linalg.norm(value, axis=-1)
        if np.any(size > cap):
            f, b = (int(i) for i in np.argwhere(size > cap)[0])
            raise InvalidTrajectoryError(
                f"{name} of bone {b} at sample {f + first} (t = {times[f]:g} s) is {size[f, b]:.3g} {unit}, above {cap:g}: "
                "the rig jumps there; put a reset at that sample or fix the jump"
            )


def split_segments(frames, resets):
    """``(start, stop)`` sample ranges between resets (a reset starts a range)."""
    try:
        idx = sorted({int(r) for r in resets})
        if any(float(r) != int(r) for r in resets):
            raise ValueError
    except (TypeError, ValueError):
        raise InvalidGoalError(f"resets must be sample indices (whole numbers), got {resets!r}") from None
    bad = [r for r in idx if not 0 <= r < frames]
    if bad:
        raise InvalidGoalError(f"reset index {bad[0]} is outside the {frames} samples; give indices 0..{frames - 1}")
    bounds = [0] + [r for r in idx if r > 0] + [frames]
    return list(zip(bounds[:-1], bounds[1:]))


def _second_difference(rates, steps, cyclic):
    """Per-sample derivative of half-step ``rates`` (F-1, ...) over ``steps`` (F-1,).

    Interior samples use the centred difference; the end samples repeat their
    neighbour, or for a cyclic range (last sample = first moment again) wrap round.
    """
    frames = len(steps) + 1
    out = np.zeros((frames,) + rates.shape[1:])
    if frames < 3:
        return out
    span = 0.5 * (steps[1:] + steps[:-1])
    out[1:-1] = (rates[1:] - rates[:-1]) / span.reshape((-1,) + (1,) * (rates.ndim - 1))
    if cyclic:
        out[0] = (rates[0] - rates[-1]) / (0.5 * (steps[0] + steps[-1]))
        out[-1] = out[0]
    else:
        out[0], out[-1] = out[1], out[-2]
    return out


def frame_accelerations(times, heads, rotations, cyclic=False):
    """World accelerations of the heads and angular accelerations of the bones.

    Parameters
    ----------
    times : numpy.ndarray, shape (F,)
        [s]
    heads : numpy.ndarray, shape (F, B, 3)
        [m]
    rotations : numpy.ndarray, shape (F, B, 3, 3)
        Proper rotation matrices.
    cyclic : bool
        The last sample is the first one's moment again.

    Returns
    -------
    accel : numpy.ndarray, shape (F, B, 3)
        [m/s^2], second differences (exact for a parabola).
    alpha : numpy.ndarray, shape (F, B, 3)
        [rad/s^2] in world axes, from the turn between neighbouring samples.
    """
    accel, alpha = np.empty(heads.shape), np.empty(heads.shape)
    for bones in blocks_along(heads.shape[1], 12 * len(times)):  # each bone's own
        accel[:, bones], alpha[:, bones] = _bone_accelerations(times, heads[:, bones], rotations[:, bones], cyclic)
    return accel, alpha


def _bone_accelerations(times, heads, rotations, cyclic):
    """:func:`frame_accelerations` of a block of bones."""
    steps = np.diff(times)
    velocity = np.diff(heads, axis=0) / steps[:, None, None]
    quats = matrix_to_quaternion(rotations)
    turn = quaternion_to_rotvec(quaternion_multiply(quats[1:], quaternion_conjugate(quats[:-1])))
    # a bone held still gets exactly zero spin, not the product's rounding
    turn[np.all(rotations[1:] == rotations[:-1], axis=(-2, -1))] = 0.0
    spin = turn / steps[:, None, None]
    return _second_difference(velocity, steps, cyclic), _second_difference(spin, steps, cyclic)


def _lagrange_weights(nodes, at):
    """Weights (..., m) of the polynomial through ``nodes`` (..., m) evaluated at ``at`` (...)."""
    m = nodes.shape[-1]
    w = np.ones(nodes.shape)
    for j in range(m):
        for i in range(m):
            if i != j:
                w[..., j] *= (at - nodes[..., i]) / (nodes[..., j] - nodes[..., i])
    return w


def midpoint_values(times, values, cyclic=False):
    """Values halfway between samples, from the cubic through the four nearest samples.

    Parameters
    ----------
    times : numpy.ndarray, shape (F,)
        [s]
    values : numpy.ndarray, shape (F, ...)
    cyclic : bool
        The last sample is the first one's moment again (neighbours wrap round);
        otherwise the end intervals use the parabola through the three nearest.

    Returns
    -------
    numpy.ndarray, shape (F - 1, ...)
        Fourth-order accurate for a smooth signal, so a drive that changes within a
        few frames is not flattened the way straight lines between samples would.
    """
    values = np.asarray(values)
    if values.ndim < 2:
        return _midpoints(times, values, cyclic)
    out = np.empty((len(times) - 1,) + values.shape[1:])
    for cut in blocks_along(values.shape[1], 5 * values[:, :1].size):  # each column's own
        out[:, cut] = _midpoints(times, values[:, cut], cyclic)
    return out


def _midpoints(times, values, cyclic):
    """:func:`midpoint_values` of one block: each interval's weights times shifted runs of samples."""
    frames = len(times)
    if frames == 2 or (cyclic and frames == 3):
        return 0.5 * (values[1:] + values[:-1])
    k = np.arange(frames - 1)
    mid = 0.5 * (times[:-1] + times[1:])
    if cyclic:
        # index F-1 is index 0 again, so neighbours come from the F-1 distinct samples
        idx = k[:, None] + np.arange(-1, 3)
        nodes = times[np.mod(idx, frames - 1)] + np.floor_divide(idx, frames - 1) * (times[-1] - times[0])
        wrapped = np.concatenate([values[frames - 2:frames - 1], values[:frames - 1], values[:2]])
        return _weighted_runs(_lagrange_weights(nodes, mid), wrapped, frames - 1)
    out = np.empty((frames - 1,) + values.shape[1:])
    for end, lo in ((0, 0), (frames - 2, frames - 3)):  # the end intervals: the parabola through three
        w3 = _lagrange_weights(times[lo:lo + 3], mid[end])
        out[end] = w3[0] * values[lo] + w3[1] * values[lo + 1] + w3[2] * values[lo + 2]
    if frames > 3:  # the cubic through the four nearest
        inner = np.arange(1, frames - 2)
        out[1:frames - 2] = _weighted_runs(_lagrange_weights(times[inner[:, None] + np.arange(-1, 3)], mid[inner]),
                                           values, frames - 3)
    return out


def _weighted_runs(weights, values, count):
    """``sum_m weights[k, m] values[k + m]`` for ``k < count`` (slices, no gathered copies)."""
    shape = (count,) + (1,) * (values.ndim - 1)
    out = weights[:, 0].reshape(shape) * values[:count]
    for m in range(1, weights.shape[1]):
        out += weights[:, m].reshape(shape) * values[m:m + count]
    return out


def refine_drive(times, drive, substeps):
    """Times and drive on a grid ``substeps`` times finer, from each interval's parabola
    through its start, middle and end (the drive dict of :func:`.spring_integrator.integrate`)."""
    w = np.arange(substeps) / substeps
    wm = (np.arange(substeps) + 0.5) / substeps

    def at(start, mid, end, where):
        dm, de = mid - start, end - start
        where = where.reshape((1, -1) + (1,) * (start.ndim - 1))
        return start[:, None] + where * (4.0 * dm - de)[:, None] + where**2 * (2.0 * de - 4.0 * dm)[:, None]

    h = np.diff(times)
    fine_t = np.concatenate([(times[:-1, None] + w[None, :] * h[:, None]).ravel(), times[-1:]])
    out = {}
    for name in ("directions", "g_eff", "alpha", "levers"):
        if name not in drive:
            continue
        s, m, e = drive[name][:-1], drive[name + "_mid"], drive[name][1:]
        nodes = at(s, m, e, w).reshape((-1,) + s.shape[1:])
        out[name] = np.concatenate([nodes, drive[name][-1:]])
        out[name + "_mid"] = at(s, m, e, wm).reshape((-1,) + s.shape[1:])
    return fine_t, out


def chain_drive(slots, times, directions, accel, alpha, g_ref, cyclic, padding, levers=None):
    """The integrator's drive on the slots, at the samples and halfway between (``_mid``):
    animated bone directions, apparent gravity at the heads [m/s^2], angular
    accelerations [rad/s^2] and, for the multi-link model, each head's offset from its
    parent's head [m]."""
    drive = {}
    parts = [("directions", directions), ("head_acceleration", accel), ("alpha", alpha)]
    if levers is not None:
        parts.append(("levers", levers))
    for name, value in parts:
        drive[name] = slots.to_slots(value)
        drive[name + "_mid"] = slots.to_slots(midpoint_values(times, value, cyclic))
    for suffix in ("", "_mid"):
        # from the accelerations, so a still rig feels g_ref exactly (zero offset)
        drive["g_eff" + suffix] = apparent_gravity(g_ref, drive.pop("head_acceleration" + suffix))
        drive["directions" + suffix][:, padding, 1] = 1.0  # unused slots get any unit direction
    return drive
