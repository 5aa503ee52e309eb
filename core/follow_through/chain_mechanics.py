"""A chain as a multi-link pendulum: its mass, spring and damper matrices, its
modes, and the forces its links put on each other.

Every bone ``j`` is a point mass ``m_j`` (its bob) on a rigid, massless link at
its swing length ``l_j = 1/gain_j`` from its head; a child's head rides on its
parent at the animated offset ``e`` between the two heads, turned with the
parent, so a child's weight and inertia pull on every joint above it and a
parent's swing carries its children's heads (a true multi-link pendulum). The
coordinates are the bones' world offsets ``psi``; the joint springs and dampers
act on the offset of a bone relative to its parent's.

The equations of motion (Lagrange's equations of the chain, e.g. Goldstein,
Poole & Safko 2002, sec. 1.4) are split as

    M0 psi'' + C psi' + K psi = Q(psi, psi', t) + (M0 - M(psi)) psi''

with ``M0`` the mass matrix of the animated pose at the start of the range, taken
the same for the three axes (per tree, n x n): bob ``j``'s velocity is
``sum_a psi_a' x r_aj`` over the links ``a`` on its path (``r_aj`` the lever from
joint ``a`` towards bob ``j``), so ``M0_ab = sum_j m_j r_aj . r_bj``. ``K`` and ``C``
are the joint springs and dampers (stiffness per joint scaled by the load it
carries, :func:`chain_loads`). ``Q`` is every other generalized force (apparent
weight, the animated turning, the chain's bending), evaluated along a path; the
last term is the rest of the inertia, which the sweeps carry.

Per tree, the modes of ``(K, M0)`` turn the linear part into independent scalar
oscillators, which the integrator steps exactly. Sums over a tree run one depth
level at a time over all trees, so every force costs in proportion to the bones.

References
----------
Goldstein, H., Poole, C. & Safko, J. 2002, "Classical Mechanics", 3rd ed.,
Addison-Wesley, sec. 1.4 and ch. 6 (Lagrange's equations, small oscillations and
normal modes of ``K q = omega^2 M q``).
Featherstone, R. 2008, "Rigid Body Dynamics Algorithms", Springer, ch. 5
(recursive sums over a kinematic tree, linear in the number of bodies).
"""

import numpy as np

__all__ = ["ChainMatrices", "bob_inertia", "chain_loads", "chain_matrices", "generalized_forces", "per_tree_product", "turned"]


def turned(px, py, pz, v):
    """Change ``R(p) v - v`` of vectors ``v`` (3, ...) turned by rotation vectors ``p``
    (Rodrigues), exactly zero for a zero rotation."""
    theta = np.sqrt(px * px + py * py + pz * pz)
    # sin(t)/t = sin(t/2) cos(t/2) / (t/2) and (1 - cos t)/t^2 = (sin(t/2)/(t/2))^2 / 2,
    # written with the half angle so that neither loses digits near t = 0
    half = 0.5 * theta
    sinc_half = np.sin(half) / np.where(half > 0.0, half, 1.0)
    sinc_half[half == 0.0] = 1.0
    a = sinc_half * np.cos(half)
    b = 0.5 * sinc_half * sinc_half
    dx, dy, dz = v
    c1x, c1y, c1z = py * dz - pz * dy, pz * dx - px * dz, px * dy - py * dx
    c2x, c2y, c2z = py * c1z - pz * c1y, pz * c1x - px * c1z, px * c1y - py * c1x
    return np.stack([a * c1x + b * c2x, a * c1y + b * c2y, a * c1z + b * c2z])


def cross(a, b):
    """Cross product of component-first vectors (3, ...)."""
    return np.stack([a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]])


def bob_inertia(gain, mass):
    """Swing length ``l`` [m], inertia about the head and weight share of every bob.

    A weightless bone (``gain`` 0, sag 0) keeps the unit inertia of the one-bone model
    and neither weighs on nor pulls its parent.
    """
    weighted = (gain > 0.0) & (mass > 0.0)
    ell = np.where(weighted, 1.0 / np.where(weighted, gain, 1.0), 0.0)
    inertia = np.where(weighted, mass * ell * ell, 1.0)
    return ell, inertia, np.where(weighted, mass, 0.0)


def up_the_tree(own, slots):
    """Each slot's ``own`` (..., slots) plus all its descendants' (a subtree sum)."""
    total = np.array(own, dtype=float, copy=True)
    for level in slots.levels[::-1]:
        np.add.at(total, (Ellipsis, slots.parent_slot[level]), total[..., level])
    return total


def chain_loads(gain, mass, lengths, slots):
    """How much more each joint carries than its own bob, chain held straight and level.

    Returns ``sum_j m_j rho_ij / (m_i l_i)`` per slot (``rho_ij`` the distance from
    joint ``i`` to bob ``j`` along the straight chain; 1 for a chain's last bone). The
    springs and dampers are scaled by it so that every joint bends by ``sag`` under
    the bones it carries (statics), and the frequency and damping ratio keep their
    one-bone meaning at the tip.
    """
    ell, _, weight = bob_inertia(gain, mass)
    reach = slots.down_the_tree(lengths)  # distance of each head from its chain's root
    moment = up_the_tree(weight * (reach + ell), slots)
    subtree = up_the_tree(weight, slots)
    own = weight * ell
    return np.where(own > 0.0, (moment - reach * subtree) / np.where(own > 0.0, own, 1.0), 1.0)


class ChainMatrices:
    """Per-tree mass, spring and damper matrices (trees, n, n) and their modes.

    Attributes
    ----------
    mass, spring, damping : numpy.ndarray, shape (trees, n, n)
        ``M0`` [relative kg m^2], ``K`` and ``C`` in the same units per s^2 and per s.
    modes : numpy.ndarray, shape (trees, n, n)
        Columns are the mass-normalised modes (``modes^T M0 modes = I``).
    rates : numpy.ndarray, shape (trees * n,)
        Squared angular frequency of every mode [1/s^2] (slot order).
    modal_damping : numpy.ndarray, shape (trees, n, n)
        ``modes^T C modes``; its diagonal is stepped exactly, the rest is a force.
    """

    def __init__(self, mass, spring, damping):
        self.mass, self.spring, self.damping = mass, spring, damping
        lower = np.linalg.cholesky(mass)
        inv = np.linalg.inv(lower)
        whitened = inv @ spring @ np.swapaxes(inv, -1, -2)
        values, vectors = np.linalg.eigh(0.5 * (whitened + np.swapaxes(whitened, -1, -2)))
        self.modes = np.swapaxes(inv, -1, -2) @ vectors
        self.rates = np.maximum(values, 0.0).reshape(-1)
        self.modal_damping = np.swapaxes(self.modes, -1, -2) @ damping @ self.modes

    def to_modes(self, values):
        """Physical (..., trees * n) generalized forces to modal ones (``modes^T f``)."""
        return per_tree_product(np.swapaxes(self.modes, -1, -2), values)

    def from_modes(self, values):
        """Modal coordinates (..., trees * n) to offsets (``modes q``)."""
        return per_tree_product(self.modes, values)


def per_tree_product(matrices, values):
    """``matrices`` (trees, n, n) times per-slot values (..., trees * n), tree by tree:
    one matrix product per tree over every node and component at once."""
    trees, n = matrices.shape[:2]
    stacked = values.reshape(-1, trees, n).transpose(1, 2, 0)  # (trees, n, rest)
    return (matrices @ stacked).transpose(2, 0, 1).reshape(values.shape)


def chain_matrices(coeffs, levers, slots):
    """The :class:`ChainMatrices` of every tree from the first sample's animated pose.

    ``coeffs`` per slot: ``spring`` k and ``damping`` c (per unit of the bone's own
    inertia, already scaled by the load), ``transmission`` mu, ``gain``, ``mass``;
    ``levers`` (3, N) head offsets from the parents' heads and ``directions`` (3, N).
    """
    trees, n = slots.trees, slots.size
    count = trees * n
    ell, inertia, weight = bob_inertia(coeffs["gain"], coeffs["mass"])
    own = np.asarray(levers["directions"]) * ell  # lever from a bone's head to its own bob
    tree, pos = np.divmod(np.arange(count), n)
    mass = np.zeros((trees, n, n))
    mass[tree, pos, pos] = inertia
    # bob j's lever from every joint a on its path: its own link, then the levers above it
    path, arm = np.arange(count), [own]
    node, parent = np.arange(count), slots.parent_slot.copy()
    chain = [node.copy()]
    while np.any(parent >= 0):
        arm.append(np.where(parent >= 0, levers["levers"][:, np.where(parent >= 0, node, 0)], 0.0))
        node = np.where(parent >= 0, parent, -1)
        chain.append(node.copy())
        parent = np.where(node >= 0, slots.parent_slot[np.maximum(node, 0)], -1)
    for s in range(len(chain)):
        for t in range(len(chain)):
            if s == 0 and t == 0:
                continue  # the bob's own inertia is set above
            ok = (chain[s] >= 0) & (chain[t] >= 0)
            a, b = chain[s][ok], chain[t][ok]
            value = weight[path[ok]] * np.sum(arm[s][:, ok] * arm[t][:, ok], axis=0)
            np.add.at(mass, (tree[a], pos[a], pos[b]), value)
    k_joint = coeffs["spring"] * inertia
    c_joint = coeffs["damping"] * inertia
    mu = coeffs["transmission"]
    spring, damping = np.zeros((trees, n, n)), np.zeros((trees, n, n))
    spring[tree, pos, pos] += k_joint
    damping[tree, pos, pos] += c_joint  # the across part's own term plus the world part
    child = np.nonzero(slots.parent_slot >= 0)[0]
    par = slots.parent_slot[child]
    for matrix, value in ((spring, k_joint[child]), (damping, mu[child] * c_joint[child])):
        np.add.at(matrix, (tree[child], pos[par], pos[par]), value)
        np.add.at(matrix, (tree[child], pos[child], pos[par]), -value)
        np.add.at(matrix, (tree[child], pos[par], pos[child]), -value)
    return ChainMatrices(mass, spring, damping)


def generalized_forces(state, drive, coeffs, slots):
    """Generalized forces ``Q`` on every bone's offset [relative N m], (3, nodes, N).

    ``state``: ``psi``, ``rates``, ``accel`` (3, nodes, N) along a path; ``d`` its bone
    directions. ``drive``: ``d0``, ``ge`` (apparent gravity at the heads), ``al`` (the
    animated angular acceleration), ``levers``, and ``g_ref``. Includes the inertia of
    the path's own accelerations (``-M(psi) psi''``) and its centripetal pulls; exactly
    zero for a rig standing still in its loaded pose.
    """
    psi, rates, accel, d = state["psi"], state["rates"], state["accel"], state["d"]
    d0, ge, al, levers = drive["d0"], drive["ge"], drive["al"], drive["levers"]
    g = np.asarray(drive["g_ref"], dtype=float).reshape(3, 1, 1)
    ell, inertia, weight = bob_inertia(coeffs["gain"], coeffs["mass"])
    gain = coeffs["gain"]
    lever = levers + turned(*slots.of_parents(psi), levers)  # turned with the parent
    head = np.zeros_like(psi)  # heads' extra acceleration from the swing above them
    for level in slots.levels:
        p = slots.parent_slot[level]
        w, e = rates[:, :, p], lever[:, :, level]
        head[:, :, level] = head[:, :, p] + cross(accel[:, :, p], e) + cross(w, cross(w, e))
    bob = d * ell
    extra = head + cross(accel, bob) + cross(rates, cross(rates, bob))  # each bob's
    # the one-bone force per unit inertia (apparent weight against the loaded pose,
    # the animated turning), times the inertia, less the extra acceleration's torque
    along = al[0] * d[0] + al[1] * d[1] + al[2] * d[2]
    loaded = gain * cross(d0, np.broadcast_to(g, d0.shape))
    own = inertia * (gain * cross(d, ge) - loaded - al + along * d) - weight * cross(bob, extra)
    own -= np.where(weight > 0.0, 0.0, inertia) * accel  # a weightless bone's unit inertia
    if not slots.levels:
        return own
    # what each bob pushes on its head with, beyond its weight at rest: m (g_eff - g
    # - l alpha x d - extra), summed down each subtree and passed up through the levers
    push = weight * ((ge - g) - cross(al, bob) - extra)
    total = own.copy()
    pushed = push.copy()
    subtree_mass = up_the_tree(weight, slots)
    for level in slots.levels[::-1]:  # leaves first: a bone's children are finished
        p = slots.parent_slot[level]
        e, e0 = lever[:, :, level], levers[:, :, level]
        # absolute offsets: only the link's own lever carries its children's forces
        back = cross(e, pushed[:, :, level]) + cross(e - e0, subtree_mass[level] * g)
        np.add.at(total, (slice(None), slice(None), p), back)
        np.add.at(pushed, (slice(None), slice(None), p), pushed[:, :, level])
    return total
