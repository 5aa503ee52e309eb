"""Chain dynamics against oscillator and pendulum laws and against scipy's integrators."""

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.linalg import expm
from scipy.optimize import brentq
from scipy.spatial.transform import Rotation

from leapwright.core.follow_through.chains import BakeOptions, ChainParameters, LinkCoefficients, bake_chains
from leapwright.core.base.constants import MOON_GRAVITY, STANDARD_GRAVITY
from leapwright.core.base.rotation_vectors import matrix_to_rotvec, rotvec_to_matrix, rotvec_to_quaternion
from leapwright.core.follow_through.integrator import expm_batched

G0 = STANDARD_GRAVITY


def frame_with_direction(direction):
    """A right-handed rotation whose +Y column is ``direction`` and whose +X is world +Y
    (or world +X when the direction is along Y)."""
    d = np.asarray(direction, float) / np.linalg.norm(direction)
    side = np.array([0.0, 1.0, 0.0]) if abs(d[1]) < 0.9 else np.array([1.0, 0.0, 0.0])
    side = side - side.dot(d) * d
    side /= np.linalg.norm(side)
    return np.column_stack([side, d, np.cross(side, d)])


def still_rotations(frames, direction):
    return np.broadcast_to(frame_with_direction(direction), (frames, 1, 3, 3)).copy()


def simulated_directions(bake, rotations):
    """World directions of the baked bones: animated world rotation times the local delta."""
    return (rotations @ rotvec_to_matrix(bake.rotvecs))[..., :, 1]


def step_response(t, zeta, omega):
    """Unit step response of x'' + 2 zeta omega x' + omega^2 x = omega^2 from rest."""
    wd = omega * math.sqrt(1.0 - zeta**2)
    return 1.0 - np.exp(-zeta * omega * t) * (np.cos(wd * t) + zeta / math.sqrt(1.0 - zeta**2) * np.sin(wd * t))


def test_batched_exponential_matches_scipy():
    # scipy.linalg.expm as the reference implementation, on stiff damped-oscillator blocks
    rng = np.random.default_rng(3)
    mats = rng.normal(size=(5, 6, 6)) * np.array([0.1, 1.0, 5.0, 30.0, 200.0])[:, None, None]
    for got, m in zip(expm_batched(mats), mats):
        ref = expm(m)
        assert np.allclose(got, ref, rtol=1e-9, atol=1e-9 * np.abs(ref).max())


def test_rotation_conversions_match_scipy():
    # scipy.spatial.transform.Rotation as the reference for Rodrigues' formula and quaternions
    rng = np.random.default_rng(4)
    rv = rng.normal(size=(200, 3)) * rng.uniform(0, 1.0, size=(200, 1))
    rv = np.concatenate([rv, [[0, 0, 0], [1e-9, 0, 0], [0, math.pi - 1e-7, 0]]])
    ref = Rotation.from_rotvec(rv)
    assert np.allclose(rotvec_to_matrix(rv), ref.as_matrix(), atol=1e-12)
    q = ref.as_quat()[:, [3, 0, 1, 2]]
    q = np.where(q[:, :1] < 0, -q, q)
    assert np.allclose(rotvec_to_quaternion(rv), q, atol=1e-12)
    assert np.allclose(rotvec_to_matrix(matrix_to_rotvec(ref.as_matrix())), ref.as_matrix(), atol=1e-9)


@pytest.mark.parametrize("zeta, overshoot", [(0.3, 0.3723), (0.5, 0.1630), (0.7, 0.0460)])
def test_free_fall_step_matches_the_damped_oscillator(zeta, overshoot):
    # Step into free fall of a horizontal bone: g_eff drops to 0, so the offset obeys the
    # spring alone with the step -sag. Analytic step response and its overshoot
    # exp(-pi zeta / sqrt(1 - zeta^2)): 37.23% / 16.30% / 4.60% (control-engineering textbooks).
    fps, f_n, sag = 24.0, 10.0, math.radians(5.0)  # f_n past fps/4: the step is exact at any stiffness
    t = np.arange(73) / fps
    heads = np.zeros((len(t), 1, 3))
    heads[:, 0, 2] = -0.5 * G0 * t**2  # falling from the first sample on: g_eff = 0 throughout
    rot = still_rotations(len(t), (0, 1, 0))
    bake = bake_chains(t, heads, rot, [-1], ChainParameters(f_n, zeta, sag))
    lift = bake.rotvecs[:, 0, 0] / sag  # rotation about +X lifts a +Y bone
    assert np.allclose(lift, step_response(t, zeta, 2 * math.pi * f_n), atol=1e-9)
    fine = np.linspace(0, 2.0, 200001)
    peak = step_response(fine, zeta, 2 * math.pi * f_n).max() - 1.0
    assert peak == pytest.approx(overshoot, abs=5e-5)


def pivot_drive(t, amplitude, duration):
    """Quintic smooth step of the pivot along +X from t = 0.2 s: position [m], acceleration [m/s^2]."""
    t = t - 0.2
    tau = np.clip(t / duration, 0.0, 1.0)
    x = amplitude * (10 * tau**3 - 15 * tau**4 + 6 * tau**5)
    a = np.where((t > 0) & (t < duration), amplitude / duration**2 * (60 * tau - 180 * tau**2 + 120 * tau**3), 0.0)
    return x, a


def test_large_swing_matches_solve_ivp():
    # A bone hanging 60 deg from straight down, its pivot shoved sideways at ~3 g, swings
    # through tens of degrees. Reference: the spring pendulum with a moving pivot from
    # Newton's law (textbook mechanics), theta'' = -(g sin th + a_x cos th)/l
    # - w^2 (th - th_u) - 2 z w th', th_u = th_a + (g / (l w^2)) sin th_a, solved by
    # scipy.integrate.solve_ivp to 1e-10.
    fps, f_n, zeta, sag = 60.0, 1.0, 0.15, math.radians(30.0)
    omega = 2 * math.pi * f_n
    length = G0 / (sag * omega**2)
    th_a = math.radians(60.0)
    th_u = th_a + sag * math.sin(th_a)
    t = np.arange(0, 3.0 + 1e-9, 1 / fps)
    x, _ = pivot_drive(t, 0.8, 0.4)
    heads = np.zeros((len(t), 1, 3))
    heads[:, 0, 0] = x
    rot = still_rotations(len(t), (math.sin(th_a), 0, -math.cos(th_a)))
    bake = bake_chains(t, heads, rot, [-1], ChainParameters(f_n, zeta, sag, angle_limit=math.pi))
    d = simulated_directions(bake, rot)[:, 0]
    theta = np.arctan2(d[:, 0], -d[:, 2])

    def rhs(time, y):
        a = pivot_drive(np.array([time]), 0.8, 0.4)[1][0]
        th, w = y
        return [w, -(G0 * math.sin(th) + a * math.cos(th)) / length - omega**2 * (th - th_u) - 2 * zeta * omega * w]

    ref = solve_ivp(rhs, (0, t[-1]), [th_a, 0.0], t_eval=t, rtol=1e-10, atol=1e-12, max_step=0.01).y[0]
    swing = np.abs(ref - th_a).max()
    assert swing > math.radians(40.0)  # really a large-angle case
    assert np.abs(theta - ref).max() < 0.01 * swing
    assert np.abs(d[:, 1]).max() < 1e-9  # stays in its plane


def swing_period(gravity, length, fps=60.0, seconds=12.0):
    """Period [s] of a hanging spring-less bone after a small sideways nudge of its pivot."""
    t = np.arange(0, seconds, 1 / fps)
    x, _ = pivot_drive(t, 0.01, 0.2)
    heads = np.zeros((len(t), 1, 3))
    heads[:, 0, 0] = x
    rot = still_rotations(len(t), (0, 0, -1))
    pendulum = LinkCoefficients(spring_rate=0.0, damping_rate=0.0, gravity_gain=1.0 / length)
    bake = bake_chains(t, heads, rot, [-1], pendulum, gravity=(0, 0, -gravity))
    swing = simulated_directions(bake, rot)[:, 0, 0]
    after = t > 0.3
    s, ts = swing[after], t[after]
    cross = np.nonzero((s[:-1] < 0) & (s[1:] >= 0))[0]
    times = ts[cross] - s[cross] * (ts[cross + 1] - ts[cross]) / (s[cross + 1] - s[cross])
    assert len(times) >= 3
    assert np.abs(swing).max() < math.radians(3.0)  # small-angle regime
    return float(np.mean(np.diff(times)))


def test_small_angle_pendulum_period():
    # 2 pi sqrt(L/g) for a simple pendulum (textbook mechanics), within 1%
    length = 0.5
    assert swing_period(G0, length) == pytest.approx(2 * math.pi * math.sqrt(length / G0), rel=0.01)


def test_moon_gravity_slows_the_swing():
    # Moon surface gravity 1.62 m/s^2 (NASA Moon fact sheet): a gravity-driven swing's
    # frequency scales by sqrt(1.62 / 9.80665) (pendulum law, textbook mechanics)
    length = 0.3
    ratio = swing_period(G0, length, fps=30.0) / swing_period(MOON_GRAVITY, length, fps=30.0, seconds=20.0)
    assert ratio == pytest.approx(math.sqrt(MOON_GRAVITY / G0), rel=0.01)


def jump_drive(t):
    """A smooth (analytic, C-infinity) hop: the head rises 0.3 m and comes back down as a
    Gaussian bump, while the bones turn 0.6 rad about the vertical."""
    z = 0.3 * np.exp(-(((t - 1.0) / 0.3) ** 2))
    turn = 0.3 * (1.0 + np.tanh((t - 1.0) / 0.25))
    return z, turn


def bake_hop(fps, f_n, seconds=2.5):
    t = np.arange(0, seconds + 1e-9, 1 / fps)
    z, turn = jump_drive(t)
    bones = 3
    heads = np.zeros((len(t), bones, 3))
    heads[:, :, 2] = z[:, None]
    heads[:, :, 1] = -0.1 * np.arange(bones)
    base = frame_with_direction((0, -1, -0.3))
    spin = rotvec_to_matrix(np.stack([np.zeros_like(turn), np.zeros_like(turn), turn], -1))
    rot = np.broadcast_to((spin @ base)[:, None], (len(t), bones, 3, 3))
    bake = bake_chains(t, heads, rot, [-1, 0, 1], ChainParameters(f_n, 0.3, math.radians(15.0)))
    return t, bake.rotvecs


@pytest.mark.parametrize("f_n", [1.5, 6.0])
def test_frame_rates_agree(f_n):
    # The same analytic drive sampled at 24, 30 and 60 fps (f_n <= fps/4) must give the
    # same motion: within 2% of the peak offset at the common times k/6 s (convergence
    # of a consistent discretisation; 60 fps as the reference).
    runs = {fps: bake_hop(fps, f_n) for fps in (24, 30, 60)}
    ref_t, ref = runs[60]
    peak = np.linalg.norm(ref, axis=-1).max()
    assert peak > math.radians(2.0)
    common = np.arange(0, 16) / 6.0
    for fps in (24, 30):
        t, rv = runs[fps]
        i = np.rint(common * fps).astype(int)
        j = np.rint(common * 60).astype(int)
        assert np.allclose(t[i], common) and np.allclose(ref_t[j], common)
        assert np.linalg.norm(rv[i] - ref[j], axis=-1).max() < 0.02 * peak


@pytest.mark.parametrize("f_n", [12.0, 20.0, 60.0, 300.0, 1000.0])
def test_stiff_springs_stay_bounded_and_track_the_static_bend(f_n):
    # Springs at and far beyond the Nyquist rate of 24 fps: the exact step keeps them
    # bounded, and a spring that stiff must sit at its static torque balance each frame:
    # omega^2 psi = (omega^2 sag / g0) (g0 - n g0 cos psi) (statics, textbook mechanics).
    fps, sag = 24.0, math.radians(10.0)
    t = np.arange(0, 2.0, 1 / fps)
    n = 1.0 + 1.5 * np.sin(np.pi * np.clip(t - 0.5, 0, 1)) ** 2  # apparent weight up to 2.5 g
    accel = (n - 1.0) * G0
    velocity = np.concatenate([[0], np.cumsum(0.5 * (accel[1:] + accel[:-1]) * np.diff(t))])
    z = np.concatenate([[0], np.cumsum(0.5 * (velocity[1:] + velocity[:-1]) * np.diff(t))])
    heads = np.zeros((len(t), 1, 3))
    heads[:, 0, 2] = z
    bake = bake_chains(t, heads, still_rotations(len(t), (0, 1, 0)), [-1], ChainParameters(f_n, 0.7, sag))
    droop = -bake.rotvecs[:, 0, 0]
    assert np.all(np.isfinite(bake.rotvecs))
    # the sampled drive: second differences of the trapezoid-integrated path
    n_seen = 1.0 + np.concatenate([[0], np.diff(z, 2) / (1 / fps) ** 2, [0]]) / G0
    n_seen[0], n_seen[-1] = n_seen[1], n_seen[-2]
    static = np.array([_balance(sag, k) for k in n_seen])
    if f_n >= 60.0:
        assert np.abs(droop[2:-2] - static[2:-2]).max() < 0.02 * static.max()
    assert np.abs(droop).max() < 1.5 * static.max()


def _balance(sag, n):
    """Droop delta solving delta = sag (n cos delta - 1) (torque balance), scipy's brentq."""
    return brentq(lambda d: d - sag * (n * math.cos(d) - 1.0), -math.pi / 2, math.pi / 2, xtol=1e-14)


def bouncing_strand(fps=24.0, seconds=6.0, links=5):
    """A strand hanging down and back from a head that bounces hard (a kink at every ground
    contact), its parameters (hair-like, 80 deg limit) and parents: (times, heads, rotations,
    parents, parameters)."""
    t = np.arange(0.0, seconds + 1e-9, 1.0 / fps)
    pivot = np.zeros((len(t), 3))
    pivot[:, 1] = 0.05 * np.sin(2.1 * t)
    pivot[:, 2] = 1.7 + 0.3 * np.abs(np.sin(3.0 * t))
    direction = np.array([0.0, 0.7, -0.7]) / math.sqrt(0.98)
    heads = pivot[:, None, :] + 0.064 * np.arange(links)[None, :, None] * direction
    rot = np.broadcast_to(frame_with_direction(direction), (len(t), links, 3, 3)).copy()
    params = ChainParameters(1.5, 0.25, math.radians(20.0), angle_limit=math.radians(80.0))
    return t, heads, rot, list(range(-1, links - 1)), params


def test_sweeps_stop_within_their_error_estimate(monkeypatch):
    # A five-bone strand hanging down and back from a head that bounces hard (kinks at
    # every ground contact) swings its tip past the 80 deg limit, the case that needs the
    # most sweeps. The stop uses the a-posteriori bound of a linearly converging
    # fixed-point iteration, error <= change * q / (1 - q) (Banach fixed-point theorem;
    # e.g. Kreyszig 1978, "Introductory Functional Analysis", sec. 5.1): the path it
    # keeps must be within ERROR_TOLERANCE of the path iterated to 1e-10 rad.
    import leapwright.core.follow_through.integrator as integrator

    t, heads, rot, parents, params = bouncing_strand()
    kept = bake_chains(t, heads, rot, parents, params)
    tolerance = integrator.ERROR_TOLERANCE
    monkeypatch.setattr(integrator, "SWEEP_TOLERANCE", 1e-10)
    monkeypatch.setattr(integrator, "ERROR_TOLERANCE", 1e-10)
    converged = bake_chains(t, heads, rot, parents, params)
    assert np.degrees(np.abs(converged.world_offsets).max()) > 60.0  # a violent swing
    assert converged.passes > kept.passes  # the estimate did stop it early
    assert np.abs(kept.world_offsets - converged.world_offsets).max() <= tolerance
