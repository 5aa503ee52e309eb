"""Capture-like centre-of-mass paths for the checker's tests, from outside the project.

Sources:
- real countermovement jumps on force plates, shipped in the PyPI package jumpmetrics 0.2.0
  (MIT; tests/data/jumpmetrics, 2000 Hz), integrated to a COM path by impulse-momentum
  from rest: a = F/m - g, with m from quiet standing (McMahon et al. 2018, Strength Cond
  J 40(4):96-106, the usual force-plate method);
- jumps simulated here from independent physics with scipy: a smooth push profile, free
  flight, and a spring-damper landing back to quiet standing (textbook mechanics);
- capture noise: white marker jitter plus a slow soft-tissue wobble, sized so a flight sits
  0.5-2.6 mm RMS off its parabola as real ones do at 120 fps (reference-values.md).
"""

from pathlib import Path

import numpy as np
from scipy.integrate import cumulative_trapezoid, solve_ivp

G = 9.81
PLATE_HZ = 2000.0
DATA = Path(__file__).resolve().parents[2] / "data" / "jumpmetrics"
PLATE_FILES = ("cmj_example", "F02_CTRL2", "F04_CTRL2", "M06_CTRL3", "M07_CTRL1", "M15_CTRL1")


#: cmj_example.csv starts at sample 12000 of the recording; the paths here start at 13000
#: (0.5 s later, still quiet standing) and end at 20109, after the landing has settled.
CMJ_EXAMPLE_ROWS = slice(1000, 8110)


def plate_force(name):
    """Vertical ground force [N] of one jumpmetrics recording (2000 Hz; see tests/data/jumpmetrics/LICENSE)."""
    f = np.loadtxt(DATA / f"{name}.csv", delimiter=",", skiprows=1)[:, 1]
    return f[CMJ_EXAMPLE_ROWS] if name == "cmj_example" else f


def _landing(t0, z0, v0, z_rest, g, t_end, static_m=0.05, zeta=0.6):
    """Spring-damper legs from touchdown at ``z_rest`` to quiet standing (per unit mass)."""
    k = g / static_m
    c = 2 * zeta * np.sqrt(k)

    def rhs(t, y):
        f = max(k * (z_rest - y[0]) - c * y[1], 0.0) if y[0] < z_rest else 0.0
        return [y[1], f - g]

    return solve_ivp(rhs, (t0, t_end), [z0, v0], max_step=2e-4, rtol=1e-10, atol=1e-12, dense_output=True)


def plate_com_path(name, g=G, standing_m=1.0, after_s=1.2):
    """COM height path [m] of a recorded jump: ``(t [s], z [m], truth dict)``.

    Integrated from the plate force up to touchdown (or take-off for the recordings that
    end there, whose flight is then continued under ``g`` and landed on spring-damper legs).
    """
    f = plate_force(name)
    mass = float(np.mean(f[:800])) / g  # the first 0.4 s are quiet standing
    t = np.arange(len(f)) / PLATE_HZ
    acc = np.where(f > 20.0, f / mass - g, -g)  # below 20 N the plate reads the air
    vel = cumulative_trapezoid(acc, t, initial=0.0)
    z = standing_m + cumulative_trapezoid(vel, t, initial=0.0)
    air = np.flatnonzero(f <= 20.0)
    off = int(air[0])
    z_rest = float(z[off])
    back = np.flatnonzero(f[off:] > 20.0)
    if len(back):  # the recording lands on the plate
        td = off + int(back[0])
        truth = dict(t_off=t[off], t_td=t[td], z_rest=z_rest)
        keep = t <= t[-1]
        return t[keep], z[keep], truth
    v_off = float(vel[off])
    t_flight = 2 * v_off / g
    t_td = t[off] + t_flight
    land = _landing(t_td, z_rest, -v_off, z_rest, g, t_td + after_s)
    tf = np.arange(t[off] + 1 / PLATE_HZ, t_td, 1 / PLATE_HZ)
    zf = z_rest + v_off * (tf - t[off]) - 0.5 * g * (tf - t[off]) ** 2
    tl = np.arange(t_td, t_td + after_s, 1 / PLATE_HZ)
    tt = np.concatenate([t[:off + 1], tf, tl])
    zz = np.concatenate([z[:off + 1], zf, land.sol(tl)[0]])
    return tt, zz, dict(t_off=t[off], t_td=t_td, z_rest=z_rest)


def simulated_jump(v0=2.6, g=G, standing_m=1.0, static_m=0.05, t0=0.6, dip=0.5, push=0.45, depth=0.6,
                   after_s=1.2):
    """A countermovement jump from quiet standing, simulated: ``(t [s], z [m], truth dict)``.

    Ground force over body weight: ``1 - depth sin(2 pi s)`` in the unweighting, then
    ``(1 - p)(1 + B sin(pi p))`` to take-off (falling to zero there), B set for ``v0``;
    flight under ``g``; spring-damper landing with ``static_m`` of sag under body weight.
    """
    dt = 1 / 8000.0
    tt = np.arange(0, t0 + 0.5 * dip + push + dt / 2, dt)

    def accel(b):
        s = (tt - t0) / dip
        a = np.zeros_like(tt)
        un = (s >= 0) & (s < 0.5)
        a[un] = -depth * np.sin(2 * np.pi * s[un]) * g
        p = (tt - t0 - 0.5 * dip) / push
        pu = (p >= 0) & (p <= 1)
        a[pu] = ((1 - p[pu]) * (1 + b * np.sin(np.pi * p[pu])) - 1) * g
        return a

    lo, hi = 0.0, 20.0
    for _ in range(50):  # bisection on the take-off speed
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if cumulative_trapezoid(accel(mid), tt)[-1] < v0 else (lo, mid)
    vel = cumulative_trapezoid(accel(0.5 * (lo + hi)), tt, initial=0.0)
    z_rest = standing_m + static_m
    z = cumulative_trapezoid(vel, tt, initial=0.0)
    z += z_rest - z[-1]
    v_off = float(vel[-1])
    t_off, t_td = float(tt[-1]), float(tt[-1] + 2 * v_off / g)
    land = _landing(t_td, z_rest, -v_off, z_rest, g, t_td + after_s, static_m)
    tf = np.arange(t_off + dt, t_td, dt)
    tl = np.arange(t_td, t_td + after_s, dt)
    fine = np.linspace(t_td, t_td + after_s, 40001)
    low = float(land.sol(fine)[0].min())
    h = v_off ** 2 / (2 * g)
    truth = dict(t_off=t_off, t_td=t_td, z_rest=z_rest, stop_m=z_rest - low, mean_bw=1 + h / (z_rest - low))
    return (np.concatenate([tt, tf, tl]),
            np.concatenate([z, z_rest + v_off * (tf - t_off) - 0.5 * g * (tf - t_off) ** 2, land.sol(tl)[0]]),
            truth)


def sampled(t, z, fps, phase=0.0):
    """The path at ``fps`` from ``phase`` of a frame on (linear between fine samples)."""
    ts = (np.arange(int((t[-1] - t[0]) * fps) - 1) + phase) / fps + t[0]
    return ts, np.interp(ts, t, z)


def wobble(t, rng, rms_m, band=(1.5, 6.0), k=4):
    """Soft-tissue-like wobble: a few random slow sines, scaled to ``rms_m`` [m]."""
    w = np.zeros_like(t)
    for _ in range(k):
        w += rng.normal() * np.sin(2 * np.pi * rng.uniform(*band) * t + rng.uniform(0, 2 * np.pi))
    return w * rms_m / max(float(np.std(w)), 1e-15)


def captured(t, z, rng, forward_m_s=0.0):
    """Positions (n, 3) [m] as a capture gives them: x travel, jitter 0.2-1 mm, wobble 0.5-2.6 mm."""
    white, wob = rng.uniform(2e-4, 1e-3), rng.uniform(5e-4, 2.6e-3)
    pos = np.stack([forward_m_s * (t - t[0]), np.zeros_like(t), z], axis=1)
    for axis in range(3):
        pos[:, axis] += rng.normal(0, white, len(t)) + wobble(t, rng, wob)
    return pos


def walking(fps, rng, seconds=6.0):
    """COM of a walk: 1-3 cm vertical bob at 1.6-2.2 steps/s, 1.3 m/s forward (common practice)."""
    t = np.arange(int(seconds * fps)) / fps
    f = rng.uniform(1.6, 2.2)
    z = 1.0 + rng.uniform(0.01, 0.03) * np.cos(2 * np.pi * f * t)
    return t, np.stack([1.3 * t, 0.02 * np.sin(np.pi * f * t), z], axis=1)


def standing(fps, seconds=6.0):
    """Quiet standing with a slow sway of millimetres."""
    t = np.arange(int(seconds * fps)) / fps
    return t, np.stack([0.005 * np.sin(0.4 * t), 0.004 * np.sin(0.3 * t + 1), 1.0 + 0.002 * np.sin(0.5 * t)], axis=1)


def shifting_weight(fps, seconds=6.0):
    """Weight shifted from foot to foot: sideways 8 cm, the COM dipping 1-2 cm."""
    t = np.arange(int(seconds * fps)) / fps
    s = np.sin(2 * np.pi * 0.5 * t)
    return t, np.stack([0 * t, 0.08 * s, 1.0 - 0.012 * np.abs(s) + 0.008 * np.sin(2 * np.pi * 1.3 * t)], axis=1)
