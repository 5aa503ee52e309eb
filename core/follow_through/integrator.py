"""Chains as multi-link pendulums under apparent weight, stepped exactly mode by mode.

Every bone is a point mass on a rigid link at its swing length from its head; a
child's head rides on its parent, and each joint holds its child with a damped
rotational spring (:mod:`.chain_mechanics`). The state of bone ``i`` is its
world-frame offset ``psi_i`` [rad] (a rotation vector: simulated world rotation =
``R(psi_i) W_i``, ``W_i`` the animated one) and its rate ``psi_i'`` [rad/s]. The
equations of motion of every chain,

    M0 psi'' + C psi' + K psi = Q(psi, psi', psi'', t),

have the mass matrix ``M0`` of the chain's first animated pose (the same for the
three axes), the joint springs ``K`` and dampers ``C`` (a spring's reaction pulls
the parent as much as it holds the child), and every other generalized force in
``Q``: apparent weight relative to the loaded pose (the animated pose is the
loaded shape at the reference gravity, so a still rig stays put), the animated
turning, the chain bending away from ``M0``'s pose, the centripetal pulls.

How it is stepped (a whole bake is a handful of array passes, no per-bone loop):

* Per tree, the modes of ``(K, M0)`` turn the linear part into independent scalar
  oscillators. Per frame interval and mode, the mode's spring, its share of the
  damping and its share of the apparent weight's stiffness (evaluated halfway
  through the interval) are stepped exactly in closed form (:mod:`.steps`); every
  other force enters as the parabola through its values at the interval's start,
  middle and end. An exact step of a damped oscillator never grows, so no
  stiffness or frame rate can make a bake blow up; a buckling (negative)
  stiffness beyond the spring's own stays in the force, and the angle limit
  bounds the pose. The modes' steps are affine maps composed in pairs three
  times over (an eighth of the frames in the sequential part).
* ``Q`` is nonlinear in the path. The whole range is swept: each sweep evaluates
  ``Q`` along the previous sweep's path (joints held within their limits) and
  solves the modes' recurrences, until no offset changes by more than
  :data:`SWEEP_TOLERANCE`, or the distance left, estimated from the rate of
  convergence, is below :data:`ERROR_TOLERANCE` (waveform relaxation). The inertia
  the linear part already holds (``M0 psi''``) is added back to ``Q`` with the
  previous path's accelerations, as is the stiffness the exact step applies, so
  at convergence the full equations hold. ``Q`` has no part about a bone's own
  animated axis (a point mass has no inertia there), so the twist follows the
  parent through the springs. A cyclic bake solves each sweep's periodic state
  directly (the product of the step maps is the monodromy matrix). At
  convergence this is a collocation scheme: exact for the linear part, at least
  second order for the rest.
* The angle limit is a hold on the path (joint rotations scaled back to the
  limit), not an impact: the rate is not stopped there.
* Stability: every sweep is a stable linear map of its force (exact steps of
  damped oscillators), whatever the stiffness and frame rate. The sweeps are a
  fixed-point iteration; past :data:`MAX_SWEEPS`, or at a path that is not
  finite, the path that changed least is kept, and the output is always finite.

References
----------
Goldstein, H., Poole, C. & Safko, J. 2002, "Classical Mechanics", 3rd ed., ch. 6
(normal modes of small oscillations, ``K q = omega^2 M q``).
Hochbruck, M. & Ostermann, A. 2010, "Exponential integrators", Acta Numerica
19:209-286 (exponential integrators with a polynomial force, their stability).
Van Loan, C. F. 1978, "Computing integrals involving the matrix exponential",
IEEE Trans. Automatic Control 23(3):395-404.
Lelarasmee, E., Ruehli, A. E. & Sangiovanni-Vincentelli, A. L. 1982, "The waveform
relaxation method for time-domain analysis of large scale integrated circuits",
IEEE Trans. CAD 1(3):131-145 (sweeping a whole time range per iteration).
Kogge, P. M. & Stone, H. S. 1973, "A parallel algorithm for the efficient solution
of a general class of recurrence equations", IEEE Trans. Computers C-22(8):786-793
(composing the affine steps in pairs).
"""

import numpy as np

from .affine_runs import compose_pairs, periodic_start, run_affine
from .contacts import hold_outside
from .chain_mechanics import bob_inertia, chain_loads, chain_matrices, generalized_forces, per_tree_product, turned
from .samples import refine_drive
from .slots import ChainSlots, limit_joints
from .steps import expm_batched, oscillator_steps

__all__ = ["ChainSlots", "expm_batched", "integrate", "SWEEP_TOLERANCE", "ERROR_TOLERANCE", "MAX_SWEEPS"]

#: A sweep that changes no offset by more than this [rad] (0.017 deg) ends the iteration.
SWEEP_TOLERANCE = 3e-4
#: The sweeps converge linearly (several times a sweep on a violent drive, hair tips swinging
#: past 90 deg), so the distance left to the converged path is about
#: ``change * rate / (1 - rate)``, with ``rate`` the slower of the last two ratios of
#: successive changes (the a-posteriori bound of a contraction). The iteration also
#: ends once that estimate is below this [rad] (0.057 deg, far below what shows).
ERROR_TOLERANCE = 1e-3
#: Sweeps allowed before the last path is taken as it is.
MAX_SWEEPS = 40
#: Sweeps that set the exact step's gravity stiffness along the latest path; after
#: them it stays (the first sweep's path is the animated pose: no offset).
STIFFNESS_SWEEPS = 1
#: Pair levels composed before the frame-by-frame part.
_PAIR_LEVELS = 3


def _error_left(changes):
    """Distance to the converged path estimated from the sweeps' changes [rad] (inf if unknown).

    Needs three sweeps past the first: the first change is the whole offset, and
    the slower of the last two ratios guards against one lucky sweep.
    """
    if len(changes) < 4 or min(changes[-3:]) <= 0.0:
        return np.inf
    rate = max(changes[-1] / changes[-2], changes[-2] / changes[-3])
    return changes[-1] * rate / (1.0 - rate) if rate < 1.0 else np.inf


def integrate(slots, coefficients, times, drive, g_ref, cyclic=False, substeps=1, contact=None):
    """Offsets of every chain over the sampled drive, starting from rest (or periodic).

    Parameters
    ----------
    slots : ChainSlots
    coefficients : dict of numpy.ndarray
        Per-slot ``spring`` k [1/s^2], ``damping`` c [1/s] (per unit of the bone's
        own inertia), ``gain`` 1/l [1/m], ``transmission`` mu [-], ``mass`` [relative]
        and ``limit`` [rad], each shape (trees * size,).
    times : numpy.ndarray, shape (F,)
        Sample times [s], increasing.
    drive : dict of numpy.ndarray
        ``directions`` (animated unit bone directions), ``g_eff`` (apparent gravity
        at the heads [m/s^2]), ``alpha`` (animated world angular acceleration
        [rad/s^2]) and ``levers`` (animated offset of each head from its parent's
        [m]), each (F, trees * size, 3) at the samples, and the same with ``_mid``
        appended, (F - 1, trees * size, 3), halfway between samples.
    g_ref : numpy.ndarray, shape (3,)
        Gravity under which the animated pose is the loaded shape [m/s^2].
    cyclic : bool
        Start in the periodic state (the last sample is the first one's moment).
    substeps : int
        Exact steps per frame interval.
    contact : dict, optional
        Colliders at the nodes, for :func:`.contacts.hold_outside` (needs ``heads``
        in the drive).

    Returns
    -------
    offsets : numpy.ndarray, shape (F, trees * size, 3)
        World offsets ``psi`` at every sample [rad], joints within their limits.
    sweeps : int
        Sweeps run.
    change : float
        Largest change of an offset in the last sweep [rad].
    """
    if substeps > 1:
        times, drive = refine_drive(times, drive, substeps)
    frames = len(times)
    h = np.diff(times)
    forcing, coeffs, mats = _chain_setup(slots, coefficients, drive, g_ref)
    d0 = forcing["d0"]
    modal_c = np.diagonal(mats.modal_damping, axis1=-2, axis2=-1).reshape(-1)
    off_c = mats.modal_damping * (1.0 - np.eye(slots.size))
    psi = np.zeros((3, 2 * frames - 1, slots.trees * slots.size))
    rates, accel = np.zeros_like(psi), np.zeros_like(psi)
    best, change, sweeps = None, np.inf, 0
    history = []  # changes of the sweeps so far [rad]
    for sweeps in range(1, MAX_SWEEPS + 1):
        d = d0 + turned(psi[0], psi[1], psi[2], d0)
        if sweeps <= STIFFNESS_SWEEPS:
            stiff = _modal_weight_stiffness(d[:, frames:], forcing, coeffs, mats, slots)
            stiff = np.maximum(stiff, -mats.rates)
            phi, beta = oscillator_steps(mats.rates + stiff, modal_c, h[:, None])
            maps = compose_pairs(phi, _PAIR_LEVELS)
        nodal = _nodal_forces({"psi": psi, "rates": rates, "accel": accel, "d": d}, forcing, coeffs, mats, slots, stiff, off_c)
        forces = sum(beta[..., j, :, None] * nodal[j].transpose(1, 2, 0)[:, :, None, :] for j in range(3))
        shape = (psi.shape[-1], 2, 3)
        start = periodic_start(maps, forces, shape) if cyclic else np.zeros(shape)
        states = run_affine(maps, forces, start)
        new, new_rates, new_accel = _path_of(states, nodal, stiff + mats.rates, modal_c, h, mats)
        if not np.all(np.isfinite(new)):
            break
        # the next sweep's force sees joints held within their limits
        new = limit_joints(new, slots, coeffs["limit"])
        if contact is not None:  # and every tip outside the body and above the ground
            new = hold_outside(new, slots, forcing, contact)
        change = float(np.max(np.abs(new[:, :frames] - psi[:, :frames]))) if new.size else 0.0
        psi, rates, accel = new, new_rates, new_accel
        if best is None or change <= best[0]:
            best = (change, psi)
        history.append(change)
        if change <= SWEEP_TOLERANCE or _error_left(history) <= ERROR_TOLERANCE:
            break
    if best is None:  # the very first sweep was not finite: nothing moved
        best = (np.inf, np.zeros_like(psi))
    change, psi = best
    return psi[:, :frames:substeps].transpose(1, 2, 0), sweeps, change


def _chain_setup(slots, coefficients, drive, g_ref):
    """The forcing at the nodes (component-first, frames then middles), the coefficients
    with the joints scaled by their loads, and the chains' matrices and modes."""
    mids = drive["directions_mid"] / np.linalg.norm(drive["directions_mid"], axis=-1, keepdims=True)

    def first(*parts):  # frame nodes, then the middles, component-first (3, nodes, slots)
        return np.ascontiguousarray(np.concatenate(parts).transpose(2, 0, 1))

    d0 = first(drive["directions"], mids)
    forcing = {"d0": d0, "ge": first(drive["g_eff"], drive["g_eff_mid"]), "al": first(drive["alpha"], drive["alpha_mid"]),
               "levers": first(drive["levers"], drive["levers_mid"]), "g_ref": g_ref}
    if "heads" in drive:
        forcing["heads"] = first(drive["heads"], drive["heads_mid"])
    coeffs = dict(coefficients)
    used = np.zeros(slots.trees * slots.size, dtype=bool)
    used[slots.slot] = True
    coeffs["spring"] = np.where(used, coeffs["spring"], 1.0)  # padding: any distinct, cheap mode; no force moves it
    load = chain_loads(coeffs["gain"], coeffs["mass"], np.linalg.norm(drive["levers"][0], axis=-1), slots)
    coeffs["spring"], coeffs["damping"] = coeffs["spring"] * load, coeffs["damping"] * load
    mats = chain_matrices(coeffs, {"levers": forcing["levers"][:, 0], "directions": d0[:, 0]}, slots)
    return forcing, coeffs, mats


def _nodal_forces(state, forcing, coeffs, mats, slots, stiff, off_c):
    """Modal forces at every interval's start, middle and end, each (3, S-1, N), along
    the path in ``state``: the generalized forces, the inertia and stiffness the linear
    part already holds given back, the damping the modes do not hold."""
    d0 = forcing["d0"]
    steps = stiff.shape[0]
    frames = steps + 1
    force = generalized_forces(state, forcing, coeffs, slots) + _times_mass(mats, state["accel"])
    # no torque about a bone's own (animated) axis: a point mass has no inertia there
    force -= (force[0] * d0[0] + force[1] * d0[1] + force[2] * d0[2]) * d0
    q, qdot = mats.to_modes(_times_mass(mats, state["psi"])), mats.to_modes(_times_mass(mats, state["rates"]))
    modal = mats.to_modes(force) - _per_tree(off_c, qdot)
    # the stiffness the exact step applies is given back in the force, on the swing only:
    # the twist keeps it (it follows the parent a little less, and converges in one sweep)
    return [modal[:, part] + _swing_give_back(mats, stiff * q[:, part], d0[:, part])
            for part in (slice(None, steps), slice(frames, None), slice(1, frames))]


def _per_tree(matrices, values):
    """``matrices`` (trees, n, n) times per-slot values (..., trees * n)."""
    return per_tree_product(matrices, values)


def _times_mass(mats, values):
    return _per_tree(mats.mass, values)


def _swing_give_back(mats, modal, d0):
    """Modal forces (3, nodes, N) ``modal`` as physical forces with their part about each
    bone's own animated axis ``d0`` taken out, back in modes."""
    force = _times_mass(mats, mats.from_modes(modal))  # the force whose modal part it is
    force -= (force[0] * d0[0] + force[1] * d0[1] + force[2] * d0[2]) * d0
    return mats.to_modes(force)


def _modal_weight_stiffness(d, forcing, coeffs, mats, slots):
    """Stiffness [1/s^2] the apparent weight gives each mode over every interval, (S-1, N):
    the diagonal of ``modes^T G modes``, ``G_a = sum_j m_j r_aj . g_eff`` (the weight's
    torque per radian about joint ``a``, textbook pendulum statics)."""
    frames = d.shape[1] + 1
    ge = forcing["ge"][:, frames:]
    ell, _, weight = bob_inertia(coeffs["gain"], coeffs["mass"])
    own = np.where(weight > 0.0, weight * ell, coeffs["gain"]) * (d[0] * ge[0] + d[1] * ge[1] + d[2] * ge[2])
    pulled = weight * ge  # weight of every subtree, summed up the tree
    total = own.copy()
    for level in slots.levels[::-1]:
        p = slots.parent_slot[level]
        e = forcing["levers"][:, frames:, level]
        w = pulled[:, :, level]
        np.add.at(total, (slice(None), p), e[0] * w[0] + e[1] * w[1] + e[2] * w[2])
        np.add.at(pulled, (slice(None), slice(None), p), pulled[:, :, level])
    squared = mats.modes * mats.modes  # (trees, a, m)
    return per_tree_product(np.swapaxes(squared, -1, -2), total)


def _path_of(states, nodal, k_net, c, h, mats):
    """Offsets, rates and accelerations (3, 2F-1, N) at the frames and the middles from
    the modal states (F, N, 2, 3), the force nodes and the step's stiffness."""
    p = states[:, :, 0].transpose(2, 0, 1)
    v = states[:, :, 1].transpose(2, 0, 1)
    hh = h[None, :, None]
    pm = 0.5 * (p[:, :-1] + p[:, 1:]) + hh * (v[:, :-1] - v[:, 1:]) / 8.0
    # rates at the middles: the derivative of the cubic Hermite through the ends
    vm = 1.5 * (p[:, 1:] - p[:, :-1]) / hh - 0.25 * (v[:, :-1] + v[:, 1:])
    # accelerations from each mode's own equation: a frame's from the interval that ends
    # there (the first frame's from the first interval), so no frame sees a later step
    a_start = nodal[0][:, :1] - c * v[:, :1] - k_net[:1] * p[:, :1]
    a_end = nodal[2] - c * v[:, 1:] - k_net * p[:, 1:]
    am = nodal[1] - c * vm - k_net * pm
    q = np.concatenate([p, pm], axis=1)
    qd = np.concatenate([v, vm], axis=1)
    qa = np.concatenate([a_start, a_end, am], axis=1)
    return mats.from_modes(q), mats.from_modes(qd), mats.from_modes(qa)
