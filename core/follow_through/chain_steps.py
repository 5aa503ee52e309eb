"""Multi-link chains stepped frame by frame, every bone of every chain at once.

The equations of motion of each chain (:mod:`.chain_mechanics`),

    M(psi) psi'' + C psi' + K psi = Q(psi, psi', t),

are split per tree into the modes of ``(K, M0)`` (``M0`` the mass matrix of the
chain's first animated pose): ``q'' + D q' + (Lambda + s) q = u`` per mode, with
``D`` the mode's share of the damping and ``s`` its share of the apparent weight's
stiffness halfway through the interval (on the animated pose). That linear part is
stepped exactly in closed form over each frame interval (:mod:`.steps`), so no
stiffness and no frame rate can make it grow. Everything else -- the apparent
weight beyond its stiffness, the animated turning, the centripetal pulls, the
damping's coupling of modes, and the inertia of the bent chain beyond ``M0`` --
is the force ``u``, taken as a parabola over the interval: predicted from the last
three frames, evaluated at the predicted end, then corrected through the frame
before, this one and the new end (an exponential predictor-corrector, PECE: two
evaluations of ``Q`` per frame, each a fixed handful of array operations on all
bones). The cost is (frames) x (a fixed number of numpy calls on arrays of all
bones): linear in bones x frames, no sweeps, nothing to converge.

The angle limit and body contact are holds on the path at every frame (the pose
is moved back, the rate is kept), as before. A cyclic bake runs the range again
from a start corrected by the linear part's monodromy (Newton's method on the
periodic state with the exact steps' Jacobian) until the run returns to its start.

References
----------
Hochbruck, M. & Ostermann, A. 2010, "Exponential integrators", Acta Numerica
19:209-286 (exponential multistep and predictor-corrector methods).
Goldstein, H., Poole, C. & Safko, J. 2002, "Classical Mechanics", 3rd ed., ch. 6
(normal modes of ``K q = omega^2 M q``).
"""

import numpy as np

from .chain_mechanics import ChainTree, chain_matrices, gravity_stiffness, loaded_forces, node_forces, turned_pose
from .contacts import contact_part, hold_outside
from .samples import refine_drive
from .steps import oscillator_steps

__all__ = ["integrate_chains", "hold_joints", "PERIODIC_TOLERANCE", "MAX_PERIODIC_RUNS"]

#: A cyclic bake stops running the range again once its end is this close to its start [rad].
PERIODIC_TOLERANCE = 1e-5
#: Evaluate the force again at the corrected state (PECE); False keeps the predicted
#: state's force for the next frames (PEC: one evaluation per frame).
REEVALUATE = True
#: Largest ``h sqrt(Lambda)`` (step times a chain mode's angular frequency) stepped
#: without finer steps on chains of several bones.
STEP_REACH = 2.0
#: Most steps per frame interval taken for a fast chain.
MAX_SUBSTEPS = 8
#: Modal states beyond this size are a runaway and are bounded (far past any swing).
_RUNAWAY = 1e6
#: Runs of the range allowed for a cyclic bake.
MAX_PERIODIC_RUNS = 8


def hold_joints(psi, tree, limit):
    """Offsets (..., t, n, 3) with every joint's bend (relative to its parent) held within
    ``limit`` (t, n) [rad]; a joint pulled back moves everything below it alike."""
    rel = psi - tree.of_parents(psi)
    angle2 = np.sum(rel * rel, axis=-1)
    over = angle2 > limit * limit
    if not np.any(over):
        return psi
    shrink = np.where(over, limit / np.sqrt(np.where(over, angle2, 1.0)) - 1.0, 0.0)
    return psi + tree.path @ (rel * shrink[..., None])


def _lagrange(nodes, at):
    """Weights (..., 3) of the parabola through three ``nodes`` (..., 3) at ``at`` (...)."""
    w = np.ones(nodes.shape)
    # the first intervals repeat a frame (their weights are set by the caller)
    nodes = nodes + np.where(np.diff(nodes, axis=-1, prepend=-np.inf) <= 0.0, np.arange(3) * 1e3, 0.0)
    for j in range(3):
        for i in range(3):
            if i != j:
                w[..., j] *= (at - nodes[..., i]) / (nodes[..., j] - nodes[..., i])
    return w


def _weights(times):
    """Per interval k: predictor weights on frames k-2, k-1, k at its middle and end, and
    corrector weights on frames k-1, k, k+1 at its middle (fewer frames at the start)."""
    f = len(times)
    k = np.arange(f - 1)
    h = np.diff(times)
    mid, end = times[:-1] + 0.5 * h, times[1:]
    back = np.stack([np.maximum(k - 2, 0), np.maximum(k - 1, 0), k], -1)
    pred_mid, pred_end = _lagrange(times[back], mid), _lagrange(times[back], end)
    corr = np.stack([np.maximum(k - 1, 0), k, k + 1], -1)
    corr_mid = _lagrange(times[corr], mid)
    # the first intervals have fewer frames behind them: constant, then straight lines
    pred_mid[0], pred_end[0] = (0.0, 0.0, 1.0), (0.0, 0.0, 1.0)
    corr_mid[0] = (0.0, 0.5, 0.5)
    if f > 2:
        lin = (mid[1] - times[0]) / (times[1] - times[0]), (end[1] - times[0]) / (times[1] - times[0])
        pred_mid[1], pred_end[1] = (0.0, 1.0 - lin[0], lin[0]), (0.0, 1.0 - lin[1], lin[1])
    return pred_mid, pred_end, corr_mid


class _Run:
    """What every step of a segment shares: the drive at the frames, the modes, the exact
    steps' coefficients and the force's weights."""

    def __init__(self, slots, coefficients, times, drive, g_ref, contact):
        t, n = slots.trees, slots.size
        self.shape = (t, n, 3)
        frames = len(times)
        self.frames = frames
        h = np.diff(times)
        tree = self.tree = ChainTree.from_slots(slots)

        def tf(x):
            return np.ascontiguousarray(np.asarray(x, dtype=float).reshape(x.shape[:-2] + (t, n, 3)))

        def unit(x):
            return x / np.linalg.norm(x, axis=-1, keepdims=True)

        coeffs = {name: np.asarray(value, dtype=float).reshape(t, n) for name, value in coefficients.items()}
        used = np.zeros(t * n, dtype=bool)
        used[slots.slot] = True
        padding_rate = np.where(used.reshape(t, n), 0.0, 1.0 / float(np.min(h)) ** 2)
        d0, e0 = tf(unit(drive["directions"])), tf(drive["levers"])
        self.mats, consts = chain_matrices(coeffs, d0[0], e0[0], tree, padding_rate)
        self.consts = consts
        ell, weight = consts["ell"], consts["weight"]
        self.nodes = dict(d0=d0, e0=e0, ge=tf(drive["g_eff"]), al=tf(drive["alpha"]),
                          loaded=loaded_forces(d0, e0, g_ref, ell, weight, tree))
        # each mode's share of the apparent weight's stiffness halfway through each interval
        stiff = gravity_stiffness(tf(unit(drive["directions_mid"])), tf(drive["levers_mid"]), tf(drive["g_eff_mid"]),
                                  ell, weight, tree)
        modes = self.mats.modes
        modal = np.einsum("fta,tam->ftm", stiff, modes * modes)
        self.given = np.maximum(modal, -self.mats.rates)  # the stiffness the exact step applies
        phi, beta = oscillator_steps(self.mats.rates + self.given, self.mats.damping_modal, h[:, None, None])
        self.phi, self.beta = phi[..., None], beta[..., None]  # (F-1, t, n, 2, 2, 1), (F-1, t, n, 3, 2, 1)
        self.pred_mid, self.pred_end, self.corr_mid = _weights(np.asarray(times, dtype=float))
        self.limit = coeffs["limit"]
        # modes of trees with more than one bone (padding modes excluded)
        self.chained = (used.reshape(t, n).sum(axis=-1) > 1)[:, None] & (padding_rate == 0.0)
        self.contact = contact

    def physical(self, q):
        return self.mats.modes @ q

    def raw_force(self, f, q, v):
        """Modal force at frame ``f`` without the given-back stiffness: the modes'
        acceleration ``modes^T M0 M(psi)^-1 (Q - C psi' - K psi)`` less their exact part."""
        psi, rate = self.physical(q), self.physical(v)
        node = {name: value[f] for name, value in self.nodes.items()}
        q_force, mass = node_forces(psi, rate, node, self.consts, self.tree)
        accel = np.linalg.solve(mass, q_force - self.mats.damping @ rate - self.mats.spring @ psi)
        return self.mats.to_modes @ accel + self.mats.damping_modal[..., None] * v + self.mats.rates[..., None] * q

    def step(self, k, q, v, u0, um, u1):
        """Exact step of interval ``k`` from ``(q, v)`` with the force's parabola through
        ``u0``, ``um``, ``u1`` (its values at the start, middle and end)."""
        phi, beta = self.phi[k], self.beta[k]
        q1 = phi[..., 0, 0, :] * q + phi[..., 0, 1, :] * v + beta[..., 0, 0, :] * u0 + beta[..., 1, 0, :] * um + beta[..., 2, 0, :] * u1
        v1 = phi[..., 1, 0, :] * q + phi[..., 1, 1, :] * v + beta[..., 0, 1, :] * u0 + beta[..., 1, 1, :] * um + beta[..., 2, 1, :] * u1
        return q1, v1

    def held(self, f, q):
        """The pose at frame ``f`` held within the joints' limits and outside the colliders;
        its modal coordinates (the same array when nothing was held)."""
        psi = self.physical(q)
        out = hold_joints(psi, self.tree, self.limit)
        if self.contact is not None:
            flat = out.reshape(1, -1, 3).transpose(2, 0, 1)
            node = contact_part(self.contact, lambda value: value[f:f + 1])
            touched = hold_outside(flat, node).transpose(1, 2, 0).reshape(psi.shape)
            out = out if np.array_equal(touched, out) else touched
        if out is psi:
            return q, psi
        return self.mats.to_modes @ out, out


def _run(run, q, v):
    """One pass over the range from modal state ``(q, v)``; offsets at every frame and the
    final modal state (before any hold)."""
    frames = run.frames
    out = np.zeros((frames,) + run.shape)
    q, out[0] = run.held(0, q)
    hist_r = [run.raw_force(0, q, v)] * 3
    hist_q = [q] * 3
    for k in range(frames - 1):
        s = run.given[k][..., None]
        u_back = [r + s * qq for r, qq in zip(hist_r, hist_q)]
        wm, we, wc = run.pred_mid[k], run.pred_end[k], run.corr_mid[k]
        um = wm[0] * u_back[0] + wm[1] * u_back[1] + wm[2] * u_back[2]
        ue = we[0] * u_back[0] + we[1] * u_back[1] + we[2] * u_back[2]
        qp, vp = run.step(k, q, v, u_back[2], um, ue)
        r1 = run.raw_force(k + 1, qp, vp)
        u1 = r1 + s * qp
        q1, v1 = run.step(k, q, v, u_back[2], wc[0] * u_back[1] + wc[1] * u_back[2] + wc[2] * u1, u1)
        if REEVALUATE:
            r1 = run.raw_force(k + 1, q1, v1)
        if not (np.all(np.abs(q1) < _RUNAWAY) and np.all(np.abs(v1) < _RUNAWAY) and np.all(np.isfinite(r1))):
            # a runaway (the explicit part of the force unstable for this chain and frame
            # rate): the state is bounded so the holds and the output stay finite
            q1, v1, r1 = (np.clip(np.nan_to_num(x, nan=0.0, posinf=0.0, neginf=0.0), -_RUNAWAY, _RUNAWAY) for x in (q1, v1, r1))
        end = (q1, v1)
        q, out[k + 1] = run.held(k + 1, q1)
        v = v1
        hist_r = [hist_r[1], hist_r[2], r1]
        hist_q = [hist_q[1], hist_q[2], q]
    return out, end


def _monodromy(run):
    """Product over the range of every mode's exact 2x2 step, (t, n, 2, 2)."""
    total = np.broadcast_to(np.eye(2), run.phi.shape[1:-1]).copy()
    for k in range(run.frames - 1):
        total = run.phi[k, ..., 0] @ total
    return total


def _corners_cleared(out, contact):
    """The run's offsets (F, t, n, 3) with every tip still inside where two surfaces meet turned
    out of both (:func:`.contacts.hold_outside` with ``clear_corners``), at every frame at once."""
    frames = out.shape[0]
    flat = out.reshape(frames, -1, 3).transpose(2, 0, 1)
    nodes = contact_part(contact, lambda value: value[:frames])
    return hold_outside(flat, nodes, clear_corners=True).transpose(1, 2, 0).reshape(out.shape)


def _refined(times, drive, substeps):
    return refine_drive(times, drive, substeps) if substeps > 1 else (times, drive)


def integrate_chains(slots, coefficients, times, drive, g_ref, cyclic=False, substeps=1, contact=None):
    """Offsets of every chain over the sampled drive, starting from rest (or periodic).

    Parameters as :func:`.integrator.integrate`, plus per-slot ``mass`` in
    ``coefficients`` and the animated ``levers`` (each head's offset from its parent's
    head [m], zero for a chain's first bone) and ``levers_mid`` in ``drive``.

    Returns
    -------
    offsets : numpy.ndarray, shape (F, trees * size, 3)
        World offsets at every sample [rad].
    runs : int
        Passes over the range (1 unless cyclic).
    change : float
        A cyclic bake's last difference between the end and the start [rad] (0 otherwise).
    """
    run = _Run(slots, coefficients, *_refined(times, drive, substeps), g_ref, contact)
    if contact is None and slots.size > 1:
        # the bent chain's inertia is explicit; past h sqrt(Lambda) ~ STEP_REACH on a chain
        # of several bones it can run away, so fast chains take finer steps (capped)
        reach = float(np.max(np.diff(times))) / substeps * float(np.sqrt(np.max(run.mats.rates[run.chained])))
        finer = min(MAX_SUBSTEPS, max(substeps, int(np.ceil(substeps * reach / STEP_REACH))))
        if finer > substeps:
            substeps = finer
            run = _Run(slots, coefficients, *_refined(times, drive, substeps), g_ref, contact)
    q = np.zeros(run.shape)
    v = np.zeros(run.shape)
    out, end = _run(run, q, v)
    runs, change = 1, 0.0
    if cyclic:
        # damped modes make I - monodromy invertible; an undamped one in resonance takes
        # the least-squares step
        step = np.linalg.pinv(np.eye(2) - _monodromy(run))  # (t, n, 2, 2)
        best = None
        for runs in range(2, MAX_PERIODIC_RUNS + 2):
            gap = np.stack([end[0] - q, end[1] - v], -2)  # (t, n, 2, 3)
            change = float(np.max(np.abs(run.physical(end[0] - q)))) if gap.size else 0.0
            if not np.isfinite(change):
                break
            if best is None or change < best[0]:
                best = (change, out)
            if change <= PERIODIC_TOLERANCE or runs > MAX_PERIODIC_RUNS:
                break
            fix = step @ gap
            q, v = q + fix[..., 0, :], v + fix[..., 1, :]
            out, end = _run(run, q, v)
        change, out = best
    if contact is not None:  # tips the frame-by-frame holds left in a corner between two surfaces
        out = _corners_cleared(out, contact)
    offsets = out[::substeps].reshape(-1, slots.trees * slots.size, 3)
    return offsets, runs, change
