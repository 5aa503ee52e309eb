"""Exact-step integration of chains of damped rotational springs under apparent weight.

Each bone ``i`` is a point mass on a rigid link of swing length ``l_i`` from its
head, held by a damped rotational spring. Its state is the world-frame offset
``psi_i`` [rad] (a rotation vector: simulated world rotation = ``R(psi_i) W_i``,
``W_i`` the animated one) and its rate ``psi_i'`` [rad/s]. Per unit of the bone's
inertia (Newton's second law about the moving head, point mass):

    psi_i'' = -k_i (psi_i - psi_p) - c_i (psi_i' - mu_i psi_p')
              + (1/l_i) [d_i x g_eff_i - d0_i x g_ref] - alpha_i,perp

with ``k_i = omega_n^2`` [1/s^2], ``c_i = 2 zeta omega_n`` [1/s], ``p`` the chain
parent (``psi_p = 0`` for a chain's first bone), ``mu_i`` the *transmission* (the
share of the damping that acts across the joint, against the parent's swing rate;
the rest acts against the world, as still air would), ``d_i`` the
simulated bone direction, ``d0_i`` the animated one, ``g_eff = g - a_head`` and
``alpha_i,perp`` the animated world angular acceleration across the bone (a point
mass has no inertia about its own link). The constant ``d0 x g_ref`` term makes the
animated pose the loaded shape at the reference gravity, so a still rig stays put.

Each step freezes the coefficients at the step's start and solves the linear part
exactly: springs, dampers, the chain coupling and the gravity stiffness
``(d . g_eff)/l`` (its stabilising part) go through one matrix exponential per
chain, and the rest of the gravity torque plus the drive enter as a force that
follows a parabola in time across the step through its values at the step's start,
middle and end; those are taken first at the starting offsets, then once more
along the predicted path (an exponential predictor-corrector: second order). Every eigenvalue of
the stepped matrix has a non-positive real part, so no stiffness or frame rate can
make the step blow up; the angle limit bounds what true buckling can do.

References
----------
Hochbruck, M., Ostermann, A. & Schweitzer, J. 2009, "Exponential Rosenbrock-type
methods", SIAM J. Numer. Anal. 47(1):786-803.
Van Loan, C. F. 1978, "Computing integrals involving the matrix exponential",
IEEE Trans. Automatic Control 23(3):395-404 (the augmented matrix for the held force).
Higham, N. J. 2005, "The scaling and squaring method for the matrix exponential
revisited", SIAM J. Matrix Anal. Appl. 26(4):1179-1193.
"""

from dataclasses import dataclass

import numpy as np

from .rotation_vectors import cross, rotate

# Taylor terms after scaling to norm <= 1/2: the remainder 0.5^15/15! is ~2e-17,
# below double precision, so the exponential is exact to rounding.
_TAYLOR_TERMS = 14


def expm_batched(matrices):
    """Matrix exponentials of a stack (..., m, m) by scaling, Taylor and squaring.

    One scaling exponent serves the whole stack (the largest needed), which only
    costs a few extra squarings for the smaller matrices.
    """
    a = np.asarray(matrices, dtype=float)
    norm = float(np.max(np.abs(a).sum(axis=-1))) if a.size else 0.0
    squarings = max(0, int(np.ceil(np.log2(norm / 0.5)))) if norm > 0.5 else 0
    x = a / 2.0**squarings
    eye = np.broadcast_to(np.eye(a.shape[-1]), a.shape)
    result = eye + x / _TAYLOR_TERMS
    for k in range(_TAYLOR_TERMS - 1, 0, -1):
        result = eye + (x @ result) / k
    for _ in range(squarings):
        result = result @ result
    return result


@dataclass(frozen=True)
class ChainSlots:
    """Where each bone sits in the padded per-chain arrays the integrator steps.

    Parameters
    ----------
    parents : numpy.ndarray of int, shape (B,)
        Chain parent of each bone (index into the bones, -1 for a chain's first bone).
    slot : numpy.ndarray of int, shape (B,)
        Flat slot ``tree * size + position`` of each bone.
    trees, size : int
        Number of independent chains (trees) and bones per padded tree.
    parent_matrix : numpy.ndarray, shape (trees, size, size)
        ``P[t, i, j] = 1`` when slot ``j`` is the parent of slot ``i``.
    path_matrix : numpy.ndarray, shape (trees, size, size)
        ``(I - P)^-1``: sums a bone's own and its ancestors' joint rotations.
    """

    parents: np.ndarray
    slot: np.ndarray
    trees: int
    size: int
    parent_matrix: np.ndarray
    path_matrix: np.ndarray

    @classmethod
    def from_parents(cls, parents):
        """Group bones into trees, parents before children (parents already checked acyclic)."""
        parents = np.asarray(parents, dtype=int)
        count = len(parents)
        root = np.arange(count)
        for _ in range(count):  # pointer jumping: at most depth rounds
            up = np.where(parents[root] >= 0, parents[root], root)
            if np.array_equal(up, root):
                break
            root = up
        depth = np.zeros(count, dtype=int)
        node = parents.copy()
        while np.any(node >= 0):
            depth += node >= 0
            node = np.where(node >= 0, parents[np.maximum(node, 0)], -1)
        roots, tree_of = np.unique(root, return_inverse=True)
        trees = len(roots)
        order = np.lexsort((np.arange(count), depth, tree_of))
        position = np.empty(count, dtype=int)
        sizes = np.bincount(tree_of, minlength=trees)
        size = int(sizes.max()) if count else 0
        start = np.concatenate([[0], np.cumsum(sizes)[:-1]])
        position[order] = np.arange(count) - start[tree_of[order]]
        slot = tree_of * size + position
        pm = np.zeros((trees, size, size))
        child = np.nonzero(parents >= 0)[0]
        pm[tree_of[child], position[child], position[parents[child]]] = 1.0
        path = np.linalg.inv(np.eye(size) - pm)
        return cls(parents, slot, trees, size, pm, np.rint(path))

    def to_slots(self, per_bone, fill=0.0):
        """Scatter (..., B, k) per-bone values into (..., trees * size, k) slots."""
        per_bone = np.asarray(per_bone, dtype=float)
        shape = per_bone.shape[:-2] + (self.trees * self.size,) + per_bone.shape[-1:]
        out = np.empty(shape)
        out[...] = fill
        out[..., self.slot, :] = per_bone
        return out


def _limit_joints(psi, vel, slots, limit):
    """Hold every joint rotation within its angle limit; stop the outward rate there.

    ``psi`` and ``vel`` are (trees, size, 3); ``limit`` (trees, size, 1) [rad].
    """
    eye = np.eye(slots.size)
    rel = (eye - slots.parent_matrix) @ psi
    angle = np.linalg.norm(rel, axis=-1, keepdims=True)
    over = angle > limit
    if not np.any(over):
        return psi, vel
    unit = rel / np.where(angle > 0.0, angle, 1.0)
    rel = np.where(over, unit * limit, rel)
    rel_vel = (eye - slots.parent_matrix) @ vel
    outward = np.sum(rel_vel * unit, axis=-1, keepdims=True)
    rel_vel = np.where(over & (outward > 0.0), rel_vel - outward * unit, rel_vel)
    return slots.path_matrix @ rel, slots.path_matrix @ rel_vel


def _quadratic(start, mid, end, w):
    """Value at ``w`` in [0, 1] of the parabola through ``start``, ``mid``, ``end`` at 0, 1/2, 1."""
    # in differences from the start, so three equal values give that value exactly
    dm, de = mid - start, end - start
    return start + w * (4.0 * dm - de) + w * w * (2.0 * de - 4.0 * dm)


def _remainder(psi, d0, ge, al, gain, g_ref, stiff_in):
    """Force on each bone [rad/s^2] beyond the linear part stepped exactly.

    Gravity's torque relative to the loaded pose, minus the animated angular
    acceleration across the bone, plus back the gravity stiffness the linear part
    already applies.
    """
    d = rotate(psi, d0)
    torque = gain[:, None] * (cross(d, ge) - cross(d0, g_ref))
    across = al - np.sum(al * d, axis=-1, keepdims=True) * d
    return torque - across + stiff_in[:, None] * psi


def integrate(slots, coefficients, times, drive, g_ref, state, substeps=1, want_monodromy=False):
    """Step the chains through the sampled drive.

    Parameters
    ----------
    slots : ChainSlots
    coefficients : dict of numpy.ndarray
        Per-slot ``spring`` k [1/s^2], ``damping`` c [1/s], ``gain`` 1/l [1/m],
        ``transmission`` mu [-] and ``limit`` [rad], each shape (trees * size,).
    times : numpy.ndarray, shape (F,)
        Sample times [s], increasing.
    drive : dict of numpy.ndarray
        ``directions`` (animated unit bone directions), ``g_eff`` (apparent gravity
        at the heads [m/s^2]) and ``alpha`` (animated world angular acceleration
        [rad/s^2]), each (F, trees * size, 3) at the samples, and the same with
        ``_mid`` appended, (F - 1, trees * size, 3), halfway between samples. Within
        an interval the drive is the parabola through the three.
    g_ref : numpy.ndarray, shape (3,)
        Gravity under which the animated pose is the loaded shape [m/s^2].
    state : numpy.ndarray, shape (trees, 2 * size, 3)
        Offsets (rows ``:size``) [rad] and rates (rows ``size:``) [rad/s] at ``times[0]``.
    substeps : int
        Exact steps per frame interval.
    want_monodromy : bool
        Also return the product of the linear step matrices (for periodic solves).

    Returns
    -------
    offsets : numpy.ndarray, shape (F, trees * size, 3)
        World offsets ``psi`` at every sample [rad].
    state : numpy.ndarray, shape (trees, 2 * size, 3)
        State at ``times[-1]``.
    monodromy : numpy.ndarray or None, shape (trees, 2 * size, 2 * size)
    """
    trees, n = slots.trees, slots.size
    k = coefficients["spring"].reshape(trees, n)
    c = coefficients["damping"].reshape(trees, n)
    gain = coefficients["gain"]
    mu = coefficients["transmission"].reshape(trees, n)
    limit = coefficients["limit"].reshape(trees, n, 1)
    # state x, then the force as a quadratic in step time: value, slope, curvature
    # (Van Loan's augmented matrix gives the exact response to each)
    template = np.zeros((trees, 5 * n, 5 * n))
    idx = np.arange(n)
    template[:, idx, n + idx] = 1.0
    template[:, n + idx, 2 * n + idx] = 1.0
    template[:, n + idx, n + idx] = -c
    # the child's spring pulls toward the parent's swing, its damper toward mu times
    # the parent's swing rate (the rest of the damping works against still air)
    template[:, n:2 * n, :n] += k[:, :, None] * slots.parent_matrix
    template[:, n:2 * n, n:2 * n] += (mu * c)[:, :, None] * slots.parent_matrix
    frames = len(times)
    offsets = np.empty((frames, trees * n, 3))
    offsets[0] = state[:, :n].reshape(trees * n, 3)
    mono = np.broadcast_to(np.eye(2 * n), (trees, 2 * n, 2 * n)).copy() if want_monodromy else None
    x = state.copy()
    names = ("directions", "g_eff", "alpha")
    for f in range(frames - 1):
        h = (times[f + 1] - times[f]) / substeps
        nodes = [(drive[name][f], drive[name + "_mid"][f], drive[name][f + 1]) for name in names]
        for s in range(substeps):
            psi0 = x[:, :n].reshape(trees * n, 3)
            # the drive at the substep's start, middle and end, stacked on a first axis
            w = ((s + np.array([0.0, 0.5, 1.0])) / substeps)[:, None, None]
            d0, ge, al = (_quadratic(*node, w) for node in nodes)
            d0 = d0 / np.linalg.norm(d0, axis=-1, keepdims=True)
            d_mid = rotate(psi0, d0[1])
            # a buckling (negative) net stiffness stays in the held force, so the
            # exponential never grows; the angle limit then bounds the offset
            stiff_in = np.maximum(gain * np.sum(d_mid * ge[1], axis=-1), -k.ravel())
            m = template * h
            m[:, n + idx, idx] = -(k + stiff_in.reshape(trees, n)) * h
            m[:, 2 * n + idx, 3 * n + idx] = 1.0
            m[:, 3 * n + idx, 4 * n + idx] = 1.0
            e = expm_batched(m)
            phi = e[:, :2 * n, :2 * n]
            free = phi @ x
            # predictor with the remainder force at the starting offsets, then a
            # corrector with it along the predicted path (second order overall)
            path = np.broadcast_to(psi0, (3,) + psi0.shape)
            for _ in range(2):
                fs, fm, fe = _remainder(path, d0, ge, al, gain, g_ref, stiff_in)
                inputs = (fs, -3.0 * fs + 4.0 * fm - fe, 4.0 * fs - 8.0 * fm + 4.0 * fe)
                x = free.copy()
                for j, u in enumerate(inputs):
                    x += e[:, :2 * n, (2 + j) * n:(3 + j) * n] @ u.reshape(trees, n, 3)
                end = x[:, :n].reshape(trees * n, 3)
                path = np.stack([psi0, 0.5 * (psi0 + end), end])
            psi, vel = _limit_joints(x[:, :n], x[:, n:], slots, limit)
            x = np.concatenate([psi, vel], axis=1)
            if want_monodromy:
                mono = phi @ mono
        offsets[f + 1] = x[:, :n].reshape(trees * n, 3)
    return offsets, x, mono
