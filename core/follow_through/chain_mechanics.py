"""A chain as a multi-link pendulum: its tree matrices, mass, spring and damper
matrices, modes, and the generalized forces on every bone.

Every bone ``j`` is a point mass ``m_j`` (its bob) on a rigid, massless link at its
swing length ``l_j = 1/gain_j`` from its head; a child's head rides on its parent
at the animated lever ``e`` between the two heads, turned with the parent, so a
child's weight and inertia pull on every joint above it and a parent's swing
carries its children (a true multi-link pendulum). The coordinates are the bones'
world offsets ``psi`` (absolute, one rotation per bone), so bob ``j`` moves by
``sum_a dpsi_a x u_aj`` over the bones ``a`` on its path, ``u_aj`` being bone
``a``'s own link towards it: the lever to the next head on the way, or ``l_j d_j``
for ``a = j``. Lagrange's equations then read

    M(psi) psi'' + C psi' + K psi = Q(psi, psi', t)

with ``M_ab = sum_j m_j u_aj . u_bj`` (the same for the three axes: exact for a
swing in one plane), ``K`` and ``C`` the joint springs and dampers (a joint's
reaction pulls the parent as much as it holds the child), and ``Q`` the apparent
weight against the loaded pose, the animated turning and the centripetal pulls.

Each joint's spring and damper are scaled by the load it carries (chain held
straight and level), so every joint sags by ``sag`` under the bones below it and the
last bone keeps the one-bone frequency and damping ratio.

Arrays are tree-first: ``(..., trees, n, 3)``, the flat slot ``tree * n + position``.

References
----------
Goldstein, H., Poole, C. & Safko, J. 2002, "Classical Mechanics", 3rd ed.,
Addison-Wesley, sec. 1.4 and ch. 6 (Lagrange's equations; small oscillations and
normal modes of ``K q = omega^2 M q``).
"""

from dataclasses import dataclass

import numpy as np

#: Below this gravity gain [1/m] (a swing length beyond 1,000 km) a bone counts as
#: weightless: its weight's pull is far below rounding, its inertia would overflow.
MIN_GAIN = 1e-6

_NEXT, _AFTER = np.array([1, 2, 0]), np.array([2, 0, 1])


def cross(a, b):
    """Cross products of (..., 3) arrays, by two index permutations (fewer calls than
    stacking three components; the arrays' own ``take``, since on a chain's few bones the
    calls' overhead is most of the cost)."""
    return a.take(_NEXT, axis=-1) * b.take(_AFTER, axis=-1) - a.take(_AFTER, axis=-1) * b.take(_NEXT, axis=-1)

__all__ = ["ChainTree", "ChainMatrices", "bob_inertia", "chain_matrices", "gravity_stiffness", "loaded_forces",
           "node_forces", "turned_pose"]


@dataclass(frozen=True)
class ChainTree:
    """Constant index and indicator matrices of padded trees, (trees, n, n) each.

    ``parent[t, i, p] = 1`` when ``p`` is ``i``'s parent; ``path = (I - parent)^-1``
    (``path[t, j, a] = 1`` for ``a`` on ``j``'s path, itself included); ``below`` its
    transpose (``below[t, a, j] = 1`` for ``j`` in ``a``'s subtree); ``step[t, a, j]``
    the position of the child of ``a`` on the way to ``j`` (``a`` itself for ``j = a``).
    """

    parent: np.ndarray
    path: np.ndarray
    below: np.ndarray
    step: np.ndarray
    parent_position: np.ndarray
    has_parent: np.ndarray
    parent_flat: np.ndarray
    step_flat: np.ndarray

    @classmethod
    def from_slots(cls, slots):
        trees, n = slots.trees, slots.size
        parent = np.asarray(slots.parent_matrix, dtype=float)
        path = np.rint(np.asarray(slots.path_matrix, dtype=float))
        below = np.ascontiguousarray(np.swapaxes(path, -1, -2))
        # the child of a on the way to j: the bone on j's path whose parent is a
        step = np.broadcast_to(np.arange(n)[None, :, None], (trees, n, n)).copy()
        for t in range(trees):
            for j in range(n):
                for c in np.nonzero(path[t, j])[0]:
                    p = np.nonzero(parent[t, c])[0]
                    if p.size:
                        step[t, p[0], j] = c
        parent_position = parent.argmax(axis=-1)
        has_parent = parent.sum(axis=-1) > 0
        # each slot's parent as a flat slot; a chain's first bone points at a zero row
        step_flat = (np.arange(trees)[:, None, None] * n + step)
        parent_flat = np.where(has_parent, np.arange(trees)[:, None] * n + parent_position, trees * n).ravel()
        return cls(parent, path, below, step, parent_position, has_parent, parent_flat, step_flat)

    def of_parents(self, values):
        """``values`` (t, n, 3) at each slot's parent, zero for a chain's first bone."""
        flat = values.reshape(-1, 3)
        return np.concatenate([flat, np.zeros((1, 3))])[self.parent_flat].reshape(values.shape)


def bob_inertia(gain, mass):
    """Swing length ``l`` [m], own inertia ``m l^2`` and weight share of every bob.

    A weightless bone (``gain`` 0 or below :data:`MIN_GAIN`, i.e. sag 0, or mass 0) keeps a unit inertia of its
    own and neither weighs on nor pulls its parent beyond its spring.
    """
    weighted = (gain > MIN_GAIN) & (mass > 0.0)
    ell = np.where(weighted, 1.0 / np.where(weighted, gain, 1.0), 0.0)
    inertia = np.where(weighted, mass * ell * ell, 1.0)
    return ell, inertia, np.where(weighted, mass, 0.0)


def turned_pose(psi, d0, e0, tree):
    """Bone directions ``d``, levers ``e`` (turned with the parent), heads ``h`` relative
    to the root's and the links ``u`` (trees, n, n, 3) of a pose, all (..., trees, n, 3)."""
    both = rotate_many(np.stack([psi, tree.of_parents(psi)]), np.stack([d0, e0]))
    return both[0], both[1]


def rotate_many(rotvec, vectors):
    """Turn ``vectors`` (..., 3) by ``rotvec`` (..., 3) (Rodrigues, half-angle form that
    keeps its digits near zero)."""
    theta = np.sqrt(np.sum(rotvec * rotvec, axis=-1, keepdims=True))
    half = 0.5 * theta
    sinc_half = np.sin(half) / np.where(half > 0.0, half, 1.0)
    sinc_half = np.where(half > 0.0, sinc_half, 1.0)
    c1 = cross(rotvec, vectors)
    return vectors + (sinc_half * np.cos(half)) * c1 + (0.5 * sinc_half * sinc_half) * cross(rotvec, c1)


def links(d, e, ell, tree):
    """Heads ``h`` (relative to the root's head), bobs ``p`` and the links ``u[t, a, j]``
    (bone ``a``'s own link towards bob ``j``, zero where ``j`` is not below ``a``)."""
    h = tree.path @ e
    bob = ell[..., None] * d
    # a's link towards j: the lever of the child of a on the way (its head less a's)
    h_step = np.take_along_axis(h[..., None, :, :], tree.step[..., None], axis=-2) if h.ndim > 3 else \
        h.reshape(-1, 3)[tree.step_flat]  # (..., t, a, j, 3)
    u = (h_step - h[..., :, None, :]) * tree.below[..., None]
    n = d.shape[-2]
    idx = np.arange(n)
    u[..., idx, idx, :] = bob
    return h, h + bob, u


def mass_matrix(u, weight, unit):
    """``M_ab = sum_j m_j u_aj . u_bj`` plus the weightless bones' unit inertia, (..., t, n, n)."""
    m = np.einsum("...ajc,...bjc->...ab", u * weight[..., None, :, None], u)
    n = m.shape[-1]
    idx = np.arange(n)
    m[..., idx, idx] += unit
    return m


def gravity_stiffness(d, e, ge, ell, weight, tree):
    """How much the apparent weight stiffens each bone's offset, ``sum_j m_j ge_j . u_aj``
    [relative N m / rad]: the diagonal Hessian of the potential in absolute angles."""
    carried = tree.below @ (weight[..., None] * ge)  # each subtree's weight
    through = np.sum(e * carried, axis=-1)  # a child's lever against what hangs from it
    own = weight * ell * np.sum(ge * d, axis=-1)
    return own + np.einsum("...ia,...i->...a", tree.parent, through)


def generalized(d, e, bob_force, ell, tree):
    """``Q_a = sum_j u_aj x F_j`` from per-bob forces ``F`` (..., t, n, 3): a bone's own
    link against its bob, plus each child's lever against all that hangs from it."""
    carried = tree.below @ bob_force
    through = cross(e, carried)
    return cross(ell[..., None] * d, bob_force) + np.swapaxes(tree.parent, -1, -2) @ through


def loaded_forces(d0, e0, g_ref, ell, weight, tree):
    """Generalized forces of the animated pose under the reference gravity (the springs'
    rest balances them, so a rig standing still stays put)."""
    force = weight[..., None] * np.asarray(g_ref, dtype=float)
    return generalized(d0, e0, np.broadcast_to(force, d0.shape), ell, tree)


def node_forces(psi, rate, node, consts, tree):
    """Generalized forces on every bone at one node (all but the joints' springs and
    dampers and the inertia of the swing), and the mass matrix of the pose (t, n, n).

    ``node``: the drive there, ``d0``, ``e0``, ``ge``, ``al`` and ``loaded``, each
    (t, n, 3). ``consts``: ``ell``, ``weight``, ``unit`` (t, n), ``m0`` (t, n, n).
    """
    d, e = turned_pose(psi, node["d0"], node["e0"], tree)
    ell, weight = consts["ell"], consts["weight"]
    _, _, u = links(d, e, ell, tree)
    # centripetal acceleration of every bob from the swings on its path
    wu = np.einsum("tac,tajc->taj", rate, u)
    spin2 = np.sum(rate * rate, axis=-1)
    central = np.einsum("taj,tac->tjc", wu, rate) - np.einsum("tajc,ta->tjc", u, spin2)
    al = node["al"]
    bob_force = weight[..., None] * (node["ge"] - cross(al, ell[..., None] * d) - central)
    q = generalized(d, e, bob_force, ell, tree) - node["loaded"]
    # a weightless bone keeps the one-bone model's turning term on its unit inertia
    unit = consts["unit"][..., None]
    return q - unit * (al - np.sum(al * d, axis=-1, keepdims=True) * d), mass_matrix(u, weight, consts["unit"])


@dataclass(frozen=True)
class ChainMatrices:
    """Per-tree mass, spring and damper matrices (trees, n, n) and their modes.

    ``modes`` are mass-normalised (``modes^T M0 modes = I``), ``rates`` the squared
    angular frequencies [1/s^2] (trees, n), ``to_modes = modes^T M0``, ``damping_modal``
    the diagonal of ``modes^T C modes`` and ``damping_coupling`` the rest.
    """

    mass: np.ndarray
    spring: np.ndarray
    damping: np.ndarray
    modes: np.ndarray
    rates: np.ndarray
    to_modes: np.ndarray
    damping_modal: np.ndarray
    damping_coupling: np.ndarray


def joint_matrices(coeffs, inertia, load, tree):
    """Spring and damper matrices (trees, n, n) of the joints: each joint's spring holds
    its bone against its parent, and pulls the parent back as much."""
    k_joint = coeffs["spring"] * inertia * load
    c_joint = coeffs["damping"] * inertia * load
    c_across = coeffs["transmission"] * c_joint
    out = []
    for own, across in ((k_joint, k_joint), (c_joint, c_across)):
        par = tree.parent
        # diag: own + children's across parts; off-diagonal: -across between child and parent
        mat = own[..., :, None] * np.eye(own.shape[-1]) + np.einsum("tia,ti,tib->tab", par, across, par)
        link = par * across[..., :, None]
        out.append(mat - link - np.swapaxes(link, -1, -2))
    return out


def chain_matrices(coeffs, d0, e0, tree, padding_rate):
    """The :class:`ChainMatrices` of every tree from an animated pose (t, n, 3)."""
    ell, inertia, weight = bob_inertia(coeffs["gain"], coeffs["mass"])
    unit = np.where(weight > 0.0, 0.0, 1.0)
    _, _, u = links(d0, e0, ell, tree)
    mass = mass_matrix(u, weight, unit)
    # load: sum_j m_j rho_ij / (m_i l_i), rho the distance from joint i to bob j along the straight chain
    reach = tree.path @ np.linalg.norm(e0, axis=-1)[..., None]
    rho = (reach[..., None, :, 0] - reach[..., :, None, 0] + ell[..., None, :]) * tree.below
    own = weight * ell
    load = np.where(own > 0.0, np.einsum("taj,tj->ta", rho, weight) / np.where(own > 0.0, own, 1.0), 1.0)
    spring, damping = joint_matrices(coeffs, inertia, load, tree)
    spring[..., np.arange(spring.shape[-1]), np.arange(spring.shape[-1])] += padding_rate
    lower = np.linalg.cholesky(mass)
    inv = np.linalg.inv(lower)
    whitened = inv @ spring @ np.swapaxes(inv, -1, -2)
    values, vectors = np.linalg.eigh(0.5 * (whitened + np.swapaxes(whitened, -1, -2)))
    modes = np.swapaxes(inv, -1, -2) @ vectors
    modal = np.swapaxes(modes, -1, -2) @ damping @ modes
    diag = np.diagonal(modal, axis1=-2, axis2=-1).copy()
    coupling = modal - diag[..., :, None] * np.eye(modal.shape[-1])
    return ChainMatrices(mass, spring, damping, modes, np.maximum(values, 0.0), np.swapaxes(modes, -1, -2) @ mass,
                         np.maximum(diag, 0.0), coupling), dict(ell=ell, weight=weight, unit=unit, m0=mass, inertia=inertia)
