"""Multi-link chains against independent multi-link pendulums integrated by scipy.

The reference is a planar chain of point masses written from Lagrange's equations in
absolute link angles (textbook mechanics: Goldstein, Poole & Safko 2002, "Classical
Mechanics", sec. 1.4), with a spring and damper at each joint, its pivot carried along
the planner's centre-of-mass path, integrated by scipy.integrate.solve_ivp (DOP853) to
1e-10. It shares no code with the bake: only the physical description of the chain
(masses, swing lengths, bone lengths, joint springs and dampers) is the same.
"""

import functools
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from leapwright.core.base.constants import STANDARD_GRAVITY
from leapwright.core.follow_through.chains import BakeOptions, ChainParameters, bake_chains
from leapwright.core.follow_through.presets import chain_preset
from leapwright.core.plan.goals import JumpGoals
from leapwright.core.plan.planner import plan_jump

G0 = STANDARD_GRAVITY


def chain_description(params, lengths, masses):
    """Swing lengths l = g0 / (sag omega^2), joint springs K_i = g0 sum_j m_j rho_ij / sag
    (each joint bends by sag under what it carries, chain held level: statics) and
    dampers C_i = 2 zeta K_i / omega (the damping ratio of the spring alone)."""
    omega = 2 * math.pi * params.frequency
    ell = G0 / (params.sag * omega**2)
    n = len(masses)
    springs = np.zeros(n)
    for i in range(n):
        for j in range(i, n):
            springs[i] += masses[j] * (sum(lengths[i:j]) + ell) * G0 / params.sag
    return ell, springs, 2 * params.damping_ratio * springs / omega


def pendulum_reference(t_eval, path, angles, params, lengths, masses):
    """Absolute link angles from straight down (toward +x) of the pendulum chain whose
    pivot follows ``path(t) -> (position, acceleration)`` (each (2,): x, z), starting at
    rest in ``angles``, which is its loaded shape at standard gravity."""
    ell, springs, dampers = chain_description(params, lengths, masses)
    n = len(masses)
    lam = np.array([[lengths[a] if a < j else (ell if a == j else 0.0) for j in range(n)] for a in range(n)])
    big_n = np.einsum("j,aj,bj->ab", masses, lam, lam)
    arm = lam @ masses  # sum_j m_j lambda_aj

    def joint_torques(phi, rate):
        rel = np.diff(np.concatenate([[0.0], phi]))
        rel_rate = np.diff(np.concatenate([[0.0], rate]))
        return springs * rel + dampers * rel_rate

    def weight_torques(phi, geff):
        # dV/dphi_a of the weight under g_eff = (gx, gz): -sum_j m_j lambda_aj (u'(phi_a) . g_eff)
        return arm * (np.cos(phi) * geff[0] + np.sin(phi) * geff[1])

    # the spring's rest angles make the starting pose balanced at standard gravity
    phi0 = np.asarray(angles, float)
    balance = weight_torques(phi0, (0.0, -G0))
    # joint torques tau_i with tau_i - tau_{i+1} = weight torque on link i
    tau = np.cumsum(balance[::-1])[::-1]
    rest = np.diff(np.concatenate([[0.0], phi0])) - tau / springs

    def rhs(time, y):
        phi, rate = y[:n], y[n:]
        _, acc = path(time)
        geff = np.array([-acc[0], -G0 - acc[1]])
        rel = np.diff(np.concatenate([[0.0], phi])) - rest
        rel_rate = np.diff(np.concatenate([[0.0], rate]))
        tq = springs * rel + dampers * rel_rate
        spring_force = -tq + np.concatenate([tq[1:], [0.0]])
        diff = phi[:, None] - phi[None, :]
        mass = big_n * np.cos(diff)
        force = weight_torques(phi, geff) + spring_force - (big_n * np.sin(diff)) @ (rate**2)
        return np.concatenate([rate, np.linalg.solve(mass, force)])

    y0 = np.concatenate([phi0, np.zeros(n)])
    sol = solve_ivp(rhs, (t_eval[0], t_eval[-1]), y0, t_eval=t_eval, method="DOP853", rtol=1e-10, atol=1e-12, max_step=0.005)
    return sol.y[:n].T


@functools.lru_cache(maxsize=1)
def planned_jump():
    """The planner's jump and its COM path: position and acceleration (x, z) [m, m/s^2]."""
    plan = plan_jump(JumpGoals(height=0.4, distance=0.3))

    def path(time):
        pos = np.array([float(plan.x_path.evaluate(time)), float(plan.z_path.evaluate(time))])
        acc = np.array([float(plan.x_path.evaluate(time, 2)), float(plan.z_path.evaluate(time, 2))])
        return pos, acc

    return plan, path


def bake_pendulum(fps, params, lengths, masses, angles, path, duration):
    t = np.arange(0.0, duration, 1.0 / fps)
    pivot = np.array([path(x)[0] for x in t])
    n = len(masses)
    d = np.stack([np.sin(angles), np.zeros(n), -np.cos(angles)], -1)  # bone directions
    joints = np.concatenate([[np.zeros(3)], np.cumsum(np.asarray(lengths)[:, None] * d[:-1], axis=0)])
    heads = np.zeros((len(t), n, 3))
    heads[:, :, 0] = pivot[:, None, 0] + joints[None, :, 0]
    heads[:, :, 2] = pivot[:, None, 1] + joints[None, :, 2]
    # bone frames: +Y along the bone, +X along world +Y (the swing axis)
    rot = np.stack([np.broadcast_to([0.0, 1.0, 0.0], (n, 3)), d, np.cross(np.array([0.0, 1.0, 0.0]), d)], -1)
    rot = np.broadcast_to(rot, (len(t), n, 3, 3)).copy()
    sets = [ChainParameters(params.frequency, params.damping_ratio, params.sag, angle_limit=math.pi, mass=m) for m in masses]
    bake = bake_chains(t, heads, rot, [-1] + list(range(n - 1)), sets, options=BakeOptions(multi_link=True))
    from leapwright.core.base.rotation_vectors import rotvec_to_matrix
    world = rotvec_to_matrix(bake.world_offsets) @ rot
    dirs = world[..., :, 1]
    return t, np.arctan2(dirs[..., 0], -dirs[..., 2]), bake


@pytest.mark.parametrize("links", [2, 3])
@pytest.mark.parametrize("fps", [24, 60])
# hair hanging 30 deg: swings of 45-83 deg; 45 deg is the demo-style ponytail of the Blender
# tests (three 0.08 m bones): its tip floats about 104 deg in this jump
@pytest.mark.parametrize("hang", [30.0, 45.0])
def test_chain_swings_like_the_multi_link_pendulum(links, fps, hang):
    plan, path = planned_jump()
    params = chain_preset("hair")
    lengths = [0.08] * (links - 1)
    masses = np.ones(links)
    angles = np.full(links, math.radians(hang))
    t, ours, bake = bake_pendulum(fps, params, lengths, masses, angles, path, plan.duration_s)
    ref = pendulum_reference(t, path, angles, params, lengths, masses)
    swing = np.degrees(np.abs(ref - angles).max())
    err = np.degrees(np.abs(ours - ref).max())
    assert swing > 40.0  # a large swing, where the links' coupling shows
    assert err < 2.0
