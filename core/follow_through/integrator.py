"""Chains of damped rotational springs under apparent weight, stepped exactly.

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

How it is stepped (a whole bake is a handful of array passes, no per-bone loop):

* Per frame interval and bone, the spring, its damper and the gravity stiffness
  ``s = (d . g_eff)/l`` (evaluated halfway through the interval, on the animated
  pose) form a scalar oscillator, the same for the three axes, stepped exactly in
  closed form (:mod:`.chain_steps`). Every other force enters as the parabola
  through its values at the interval's start, middle and end. An exact step of a
  damped oscillator never grows, so no stiffness or frame rate can make a bake
  blow up; a buckling (negative) stiffness beyond the spring's own stays in the
  force, and the angle limit bounds the pose.
* The pull of the parent (``k psi_p + mu c psi_p'``, its middle value from the
  cubic Hermite interpolant of the parent's states) is linear in the parent's
  states at the interval's ends, so a chain's step is the affine map
  ``X_{f+1} = M_f X_f + Q_f U_f`` with ``M_f = (I - E1)^-1 (Phi + E0)``: ``E1``
  only links children to parents, so forward substitution, one chain level at a
  time, gives ``M_f`` and ``Q_f`` exactly.
  The maps of all intervals are built at once; only their composition runs frame
  by frame, after composing them in pairs three times over (an eighth of the
  frames in the sequential part).
* Gravity's torque is nonlinear in the offsets. The whole range is swept: each
  sweep evaluates the force along the previous sweep's path (joints held within
  their limits) and solves the affine recurrence, until no offset changes by
  more than :data:`SWEEP_TOLERANCE`, or the distance left, estimated from the rate of
  convergence, is below :data:`ERROR_TOLERANCE` (waveform relaxation). The stiffness ``s``
  the exact step applies is given back in the force on the swing only, and the
  force has no part about the bone's own animated axis (a point mass has no
  inertia there), so the twist is stepped in the linear part alone: it follows
  the parent through the spring, held by ``k + s``. A cyclic bake solves each
  sweep's periodic state directly (the product of the step maps is the monodromy
  matrix). At convergence this is a collocation scheme: exact for the linear
  part, at least second order for the rest.
* The angle limit is a hold on the path (joint rotations scaled back to the
  limit), not an impact: the rate is not stopped there.
* Stability: every sweep is a stable linear map of its force (exact steps of
  damped oscillators), whatever the stiffness and frame rate. The sweeps are a
  fixed-point iteration; past :data:`MAX_SWEEPS`, or at a path that is not
  finite, the path that changed least is kept, and the output is always finite.

References
----------
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

from ..base.blocks import blocks_along
from .bone_forces import gravity_and_turn, loaded_pose_load, swing_part, turned
from .contacts import contact_part, hold_outside
from .samples import refine_drive
from .slots import ChainSlots, limit_joints  # noqa: F401  (ChainSlots is part of the API)
from .affine_runs import compose_pairs, periodic_start, run_affine
from .steps import expm_batched, oscillator_steps

__all__ = ["ChainSlots", "drive_nodes", "expm_batched", "integrate", "SWEEP_TOLERANCE", "ERROR_TOLERANCE", "MAX_SWEEPS"]

#: A sweep that changes no offset by more than this [rad] (0.017 deg) ends the iteration.
SWEEP_TOLERANCE = 3e-4
#: The sweeps converge linearly (4-7x a sweep on a violent drive, hair tips swinging
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
#: Fewest nodes or intervals in a block of a sweep's work (a demo-sized bake is one block).
_LEAST_BLOCK = 8


def _in_node_blocks(node_wise, first, *rest):
    """``node_wise(first, *rest)`` evaluated a block of nodes at a time (axis 1 of the
    component-first (3, nodes, slots) arrays; other arguments passed whole).

    Every such step is node by node, so the result is the same to the bit; on a long take the
    whole-range temporaries (tens of MB each) no longer stream through memory once per operation.
    """
    nodes = first.shape[1]
    cuts = blocks_along(nodes, first.shape[0] * first.shape[2], least=_LEAST_BLOCK)
    if len(cuts) == 1:
        return node_wise(first, *rest)
    out = np.empty_like(first)
    per_node = [isinstance(x, np.ndarray) and x.ndim == 3 and x.shape[1] == nodes for x in rest]
    for cut in cuts:
        out[:, cut] = node_wise(first[:, cut], *(x[:, cut] if sliced else x for x, sliced in zip(rest, per_node)))
    return out


def _chain_maps(phi, beta, k, c, mu, h, slots):
    """Per-interval affine maps of whole trees and the transfer of the nodal forces.

    ``phi`` (S-1, N, 2, 2) and ``beta`` (S-1, N, 3, 2) per interval and slot.
    Returns ``M`` (S-1, trees, 2n, 2n) and ``Q`` (S-1, trees, 2n, 3n): the state after
    an interval is ``M X + Q U`` with ``U`` the force at the start, middle and end
    (n rows each). State rows are ``2 i + {0: psi, 1: rate}``. Both are views of one
    array ``[M | Q]``, filled where it lies (fresh memory costs a page fault per 4 kB
    touched, so the maps are not built in a scratch array and copied), a block of
    intervals at a time (each interval's maps are its own, so the blocks give the same
    bits; a block's scratch stays in cache on a long take).
    """
    steps, n, trees = phi.shape[0], slots.size, slots.trees
    layout = slots.map_layout
    x = np.zeros((steps, trees, n, 2, 5 * n))
    for cut in blocks_along(steps, trees * 10 * n * n, least=_LEAST_BLOCK):
        _fill_chain_maps(x[cut], phi[cut], beta[cut], k, c, mu, h[cut], layout)
    x = x.reshape(steps, trees, 2 * n, 5 * n)
    return x[..., :2 * n], x[..., 2 * n:]


def _parent_links(beta, k, c, mu, h):
    """How a bone's state after an interval takes its parent's states at the interval's start
    (``g0``) and end (``g1``), each (S-1, N, 2, 2): the pull ``k psi_p + mu c psi_p'`` at the
    start, the end and the middle (the cubic Hermite interpolant's), carried by ``beta``.

    Component by component over (S-1, N) lanes (a trailing axis of two would make every
    array pass step two numbers at a time).
    """
    hh = h[:, None]
    kk, kd = k[None, :] + 0.0 * hh, (mu * c)[None, :] + 0.0 * hh
    # the parent's pull in the middle per unit of its start (end) angle and rate
    mid_start = (0.5 * kk - 1.5 * kd / hh, kk * hh / 8.0 - 0.25 * kd)
    mid_end = (0.5 * kk + 1.5 * kd / hh, -kk * hh / 8.0 - 0.25 * kd)
    g0, g1 = np.empty(beta.shape[:2] + (2, 2)), np.empty(beta.shape[:2] + (2, 2))
    for r in range(2):
        b0, bm, b1 = beta[..., 0, r], beta[..., 1, r], beta[..., 2, r]
        for s, pull in enumerate((kk, kd)):
            g0[..., r, s] = b0 * pull + bm * mid_start[s]
            g1[..., r, s] = b1 * pull + bm * mid_end[s]
    return g0, g1


def _fill_chain_maps(x, phi, beta, k, c, mu, h, layout):
    """:func:`_chain_maps` for one block of intervals, into its zeroed part ``x`` (S, trees, n, 2, 5n),
    ``layout`` from :attr:`.slots.ChainSlots.map_layout`."""
    steps, trees, n = x.shape[:3]
    g0, g1 = _parent_links(beta, k, c, mu, h)
    # [Phi + E0 | push] for every step, by one scatter of flat entries (a bone's own
    # block, its link to its parent, the force nodes' columns)
    where, source, parent_pos, has_parent = layout
    entries = np.concatenate([phi.reshape(steps, -1), g0.reshape(steps, -1), beta.reshape(steps, -1)], axis=1)
    flat = x.reshape(steps, -1)  # a view: each step's block is contiguous
    flat[:, where] = entries[:, source]
    # (I - E1) X = [Phi + E0 | push]: E1 links a bone to its parent's end state, and
    # parents come first within a tree, so each bone adds its finished parent's rows
    g1 = g1.reshape(steps, trees, n, 2, 2)
    for i in range(1, n):
        t = np.nonzero(has_parent[:, i])[0]
        if t.size == 0:
            continue
        if t.size == trees and np.all(parent_pos[:, i] == parent_pos[0, i]):
            t = slice(None)  # every tree alike here (chains): plain slices, no gather and scatter
            rows = x[:, :, parent_pos[0, i]]
        else:
            rows = x[:, t, parent_pos[t, i]]
        link = g1[:, t, i]  # a 2x2 times two rows, spelled out
        x[:, t, i] += link[..., :, 0, None] * rows[..., None, 0, :] + link[..., :, 1, None] * rows[..., None, 1, :]


def _error_left(changes):
    """Distance to the converged path estimated from the sweeps' changes [rad] (inf if unknown).

    Needs three sweeps past the first: the first change is the whole offset, and
    the slower of the last two ratios guards against one lucky sweep.
    """
    if len(changes) < 4 or min(changes[-3:]) <= 0.0:
        return np.inf
    rate = max(changes[-1] / changes[-2], changes[-2] / changes[-3])
    return changes[-1] * rate / (1.0 - rate) if rate < 1.0 else np.inf


def drive_nodes(drive):
    """The drive at the frame nodes then the middles, component-first (3, nodes, slots): unit
    bone directions, apparent gravity [m/s^2] and angular acceleration [rad/s^2]. It depends on
    the motion alone, so :func:`.chains.chain_motion` keeps it with the drive (key ``nodes``)."""
    frames, slots = drive["directions"].shape[:2]

    def first(name, unit=False):
        """Component-first copy of one quantity, a block of frames at a time (a transpose of the
        whole take streams through memory with a stride of 3; a block's stays in the cache)."""
        out = np.empty((3, 2 * frames - 1, slots))
        for cut in blocks_along(frames, 6 * slots):
            out[:, cut] = drive[name][cut].transpose(2, 0, 1)
            if cut.start < frames - 1:
                mid = drive[name + "_mid"][cut.start:min(cut.stop, frames - 1)]
                if unit:
                    mid = mid / np.linalg.norm(mid, axis=-1, keepdims=True)
                out[:, frames + cut.start:frames + cut.start + len(mid)] = mid.transpose(2, 0, 1)
        return out

    return first("directions", unit=True), first("g_eff"), first("alpha")


def _pushed_forces(push, psi, d0, force, stiff, frames, trees, n):
    """``Q U`` of every interval: its forces at its start, middle and end carried into the state,
    (steps, trees, 2n, 3), a block of intervals at a time (the same bits as all at once).

    The stiffness the exact step applies is given back on the swing only: the twist keeps it
    (it follows the parent a little less, and converges in one sweep).
    """
    steps = frames - 1
    out = np.empty((steps, trees, 2 * n, 3))
    for cut in blocks_along(steps, 9 * trees * n, least=_LEAST_BLOCK):
        a, b = cut.start, cut.stop
        st = stiff[a:b]
        swing = swing_part(psi[:, a:b + 1], d0[:, a:b + 1])  # the frames the block's intervals start and end at
        middle = slice(frames + a, frames + b)
        nodal = np.concatenate([force[:, a:b] + st * swing[:, :-1], force[:, middle] + st * swing_part(psi[:, middle], d0[:, middle]),
                                force[:, a + 1:b + 1] + st * swing[:, 1:]], axis=-1)  # (3, block, 3N): start, middle, end
        nodal = nodal.reshape(3, b - a, 3, trees, n).transpose(1, 3, 2, 4, 0).reshape(b - a, trees, 3 * n, 3)
        np.matmul(push[a:b], nodal, out=out[a:b])
    return out


def _held_path(states, hm, joints, limit, contact):
    """A sweep's offsets (3, nodes, slots) at the frames then halfway between (the cubic
    Hermite midpoints of ``states`` (F, slots, 2, 3), ``hm`` the steps [s]), held so the
    next sweep's force sees joints within their limits and tips outside the colliders;
    None where the path is not finite."""
    p = states[:, :, 0].transpose(2, 0, 1)
    v = states[:, :, 1].transpose(2, 0, 1)
    new = np.concatenate([p, 0.5 * (p[:, :-1] + p[:, 1:]) + hm * (v[:, :-1] - v[:, 1:]) / 8.0], axis=1)
    if not np.all(np.isfinite(new)):
        return None
    new = _in_node_blocks(limit_joints, new, joints, limit)
    return new if contact is None else hold_outside(new, contact)


def integrate(slots, coefficients, times, drive, g_ref, cyclic=False, substeps=1, contact=None):
    """Offsets of every chain over the sampled drive, starting from rest (or periodic).

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
    cyclic : bool
        Start in the periodic state (the last sample is the first one's moment).
    substeps : int
        Exact steps per frame interval.
    contact : dict, optional
        Colliders at the nodes (:func:`.contacts.contact_nodes`; substeps 1).

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
    trees, n = slots.trees, slots.size
    frames = len(times)
    nodes = drive["nodes"] if "nodes" in drive else drive_nodes(drive)
    state = np.zeros((trees, 2 * n, 3))
    span = frames - 1 if cyclic else _window(trees * n)
    out = np.empty((3, frames, trees * n))
    sweeps = change = 0
    for a in range(0, max(frames - 1, 1), span):
        b = min(a + span, frames - 1)  # the window's frames a..b; the next one starts at b
        here = [_window_nodes(x, a, b, frames, 1) for x in nodes]
        near = None if contact is None else contact_part(contact, lambda x: _window_nodes(x, a, b, frames, 0))
        psi, done, moved, state = _sweep_window(slots, coefficients, times[a:b + 1], here, g_ref, cyclic, state, near)
        out[:, a:b + 1] = psi[:, :b - a + 1]
        sweeps, change = max(sweeps, done), max(change, moved)
    return out[:, ::substeps].transpose(1, 2, 0), sweeps, change


#: Bone-frames in one window of a long take (about 0.6 MB per component-first array): each
#: window is swept to convergence from the last one's end state, so its arrays stay in the
#: processor's cache. The converged path is the same (a step depends only on earlier ones).
_WINDOW_VALUES = 2 ** 15
#: Fewest frame intervals in a window (Python's fixed cost per sweep stays small beside its work).
_MIN_WINDOW = 32


def _window(slots_count):
    """Frame intervals per window of a take with ``slots_count`` slots."""
    return max(_MIN_WINDOW, _WINDOW_VALUES // max(1, slots_count))


def _window_nodes(x, a, b, frames, axis):
    """The frame nodes a..b, then the middles a..b-1, of ``x``'s node axis (frames, then middles)."""
    if a == 0 and b == frames - 1:
        return x
    first = np.take(x, np.arange(a, b + 1), axis=axis)
    return np.concatenate([first, np.take(x, np.arange(frames + a, frames + b), axis=axis)], axis=axis)


def _sweep_window(slots, coefficients, times, nodes, g_ref, cyclic, start, contact):
    """One window swept to convergence from ``start``: the path's offsets (3, nodes, slots),
    the sweeps, the last change [rad] and the state at the window's end."""
    trees, n = slots.trees, slots.size
    k, c, gain, mu, limit = (coefficients[name] for name in ("spring", "damping", "gain", "transmission", "limit"))
    frames = len(times)
    h = np.diff(times)
    used = np.zeros(trees * n, dtype=bool)
    used[slots.slot] = True
    d0, ge, al = nodes
    loaded = loaded_pose_load(d0, g_ref, gain)
    psi = np.zeros((3, 2 * frames - 1, trees * n))
    state_shape = (trees, 2 * n, 3)
    best, change, sweeps, history = None, np.inf, 0, []  # history: changes of the sweeps so far [rad]
    hm = h[None, :, None]
    joints = slots.joints
    for sweeps in range(1, MAX_SWEEPS + 1):
        if sweeps <= STIFFNESS_SWEEPS:
            dx, dy, dz = turned(psi[0, frames:], psi[1, frames:], psi[2, frames:], d0[:, frames:])
            stiff = np.maximum(gain * (dx * ge[0, frames:] + dy * ge[1, frames:] + dz * ge[2, frames:]), -k)
            # unused slots get any stiffness whose exact step is cheap; their force is 0
            k_net = np.where(used, k + stiff, 1.0 / h[:, None] ** 2)
            phi, beta = oscillator_steps(k_net, c, h[:, None])
            m, push = _chain_maps(phi, beta, k, c, mu, h, slots)
            maps = compose_pairs(m, _PAIR_LEVELS)
        force = _in_node_blocks(gravity_and_turn, psi, d0, ge, al, gain, loaded)
        forces = _pushed_forces(push, psi, d0, force, stiff, frames, trees, n)
        if cyclic:
            start = periodic_start(maps, forces, state_shape)
        states = run_affine(maps, forces, start)
        new = _held_path(states.reshape(frames, trees * n, 2, 3), hm, joints, limit, contact)
        if new is None:
            break
        change = float(np.max(np.abs(new[:, :frames] - psi[:, :frames]))) if new.size else 0.0
        psi = new
        if best is None or change <= best[0]:
            best = (change, psi, states[-1])
        history.append(change)
        if change <= SWEEP_TOLERANCE or _error_left(history) <= ERROR_TOLERANCE:
            break
    if best is None:  # the very first sweep was not finite: nothing moved
        best = (np.inf, np.zeros_like(psi), np.zeros(state_shape))
    change, psi, end = best
    if contact is not None:  # tips the sweeps left in a corner between two surfaces
        psi = hold_outside(psi, contact, clear_corners=True)
    return psi, sweeps, change, end
