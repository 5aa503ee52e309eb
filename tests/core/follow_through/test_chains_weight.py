"""Apparent weight: standing, falling and landing; cyclic bakes, resets and key thinning."""

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from leapwright.core.follow_through.presets import CHAIN_PRESETS, chain_preset
from leapwright.core.follow_through.chains import BakeOptions, ChainParameters, bake_chains
from leapwright.core.base.constants import STANDARD_GRAVITY
from leapwright.core.base.rotation_vectors import rotvec_to_matrix

G0 = STANDARD_GRAVITY


def frame_with_direction(direction):
    d = np.asarray(direction, float) / np.linalg.norm(direction)
    side = np.array([0.0, 1.0, 0.0]) if abs(d[1]) < 0.9 else np.array([1.0, 0.0, 0.0])
    side = side - side.dot(d) * d
    side /= np.linalg.norm(side)
    return np.column_stack([side, d, np.cross(side, d)])


def chain_rig(frames, bones=3, direction=(0, 1, 0)):
    """A straight chain along ``direction``, 0.1 m bones, standing still."""
    d = np.asarray(direction, float) / np.linalg.norm(direction)
    heads = np.zeros((frames, bones, 3)) + 0.1 * np.arange(bones)[None, :, None] * d
    rot = np.broadcast_to(frame_with_direction(d), (frames, bones, 3, 3)).copy()
    return heads, rot, [-1] + list(range(bones - 1))


def lift(bake, bone):
    """Upward bend of a +Y bone's joint [rad] (its local rotation about +X)."""
    return bake.rotvecs[:, bone, 0]


def test_standing_still_gives_zero_offset():
    # A still rig is in its loaded shape at 1 g by definition: zero offset, exactly,
    # in any pose and under any scene gravity (statics: nothing moves, nothing changes).
    t = np.arange(48) / 24.0
    rng = np.random.default_rng(7)
    rot = np.broadcast_to(rotvec_to_matrix(rng.normal(size=(1, 4, 3))), (48, 4, 3, 3))
    heads = np.broadcast_to(rng.normal(size=(1, 4, 3)), (48, 4, 3))
    for gravity in [(0, 0, -G0), (0, 0, -1.62), (0.3, -2.0, -9.0)]:
        bake = bake_chains(t, heads, rot, [-1, 0, 1, -1], chain_preset("hair"), gravity=gravity)
        assert np.abs(bake.rotvecs).max() == 0.0


@pytest.mark.parametrize("preset", sorted(CHAIN_PRESETS))
def test_free_fall_settles_at_minus_sag(preset):
    # In free fall g_eff = 0 (|g_eff| = W/m, Newton's second law): every joint floats up
    # to its unloaded shape, -sag for horizontal bones, within 1%.
    params = chain_preset(preset)
    fps = 24.0
    t = np.arange(0, 0.5 + 8.0 / (params.damping_ratio * params.frequency), 1 / fps)
    heads, rot, parents = chain_rig(len(t))
    fall = np.clip(t - 0.5, 0, None)
    heads[:, :, 2] -= 0.5 * G0 * fall[:, None] ** 2
    bake = bake_chains(t, heads, rot, parents, params)
    assert np.abs(lift(bake, slice(None))[0]).max() == 0.0
    for bone in range(3):
        assert lift(bake, bone)[-1] == pytest.approx(params.sag, rel=0.01)


def landing_heads(t, impact_speed, stop_time, land_at=0.6):
    """Falling at ``impact_speed`` until ``land_at``, then stopped by a sin^2 force pulse
    over ``stop_time`` (peak apparent weight 2 (v + g T) / (g T) g), then still."""
    s = np.clip(t - land_at, 0.0, stop_time)
    pulse = 2.0 * (impact_speed + G0 * stop_time) / stop_time
    # integral of -g + pulse sin^2(pi s / T) twice, from speed -v at s = 0
    z = -impact_speed * s - 0.5 * G0 * s**2 + pulse * (s**2 / 4 + stop_time**2 / (8 * math.pi**2) * (np.cos(2 * math.pi * s / stop_time) - 1))
    z = np.where(t < land_at, -impact_speed * (t - land_at), z)
    return z, pulse / G0


def test_landing_droops_more_for_a_bigger_spike():
    # Touchdown after 0.32 / 0.62 / 1.03 m drops, 2.5 / 3.5 / 4.5 m/s (Zhang, Bates &
    # Dufek 2000), each stopped in 0.1 s: the bigger the force spike, the further the
    # chain droops past its standing angle, and it does so within 0.1 s of contact.
    fps, stop = 60.0, 0.1
    t = np.arange(0, 2.0, 1 / fps)
    peaks, spikes = [], []
    for speed in (2.5, 3.5, 4.5):
        z, spike = landing_heads(t, speed, stop)
        heads, rot, parents = chain_rig(len(t))
        heads[:, :, 2] += z[:, None]
        # the fall before touchdown is at constant speed (g_eff = g), so only the landing drives
        bake = bake_chains(t, heads, rot, parents, chain_preset("hair"))
        droop = -lift(bake, 2)
        # the drive between samples is a cubic through four of them, so the sample
        # before contact sees a trace of it
        assert np.abs(droop[t < 0.6 - 1e-9]).max() < 1e-6
        soon = (t > 0.6) & (t <= 0.7 + 1e-9)
        assert droop[soon].max() > 0.0
        peaks.append(droop.max())
        spikes.append(spike)
    assert spikes[0] < spikes[1] < spikes[2]
    assert peaks[0] < peaks[1] < peaks[2]


@pytest.mark.parametrize("weight", [1.5, 2.0, 3.0])
def test_held_extra_weight_gives_the_static_bend(weight):
    # Riding a lift that accelerates up at (n - 1) g: apparent weight n g. The settled
    # bend solves the torque balance delta = sag (n cos delta - 1) (statics, textbook
    # mechanics), so the droop grows with the load (scipy brentq as the root finder).
    params = ChainParameters(frequency=2.0, damping_ratio=0.8, sag=math.radians(12.0))
    t = np.arange(0, 4.0, 1 / 24.0)
    heads, rot, parents = chain_rig(len(t), bones=1)
    up = np.clip(t - 0.5, 0, None)
    heads[:, 0, 2] = 0.5 * (weight - 1.0) * G0 * up**2
    bake = bake_chains(t, heads, rot, parents, params)
    expected = brentq(lambda d: d - params.sag * (weight * math.cos(d) - 1.0), 0.0, math.pi / 2)
    assert -lift(bake, 0)[-1] == pytest.approx(expected, rel=0.01)


def loop_samples(frames=49, bones=3):
    """One cycle of a bounce-and-sway loop, last sample = first moment again."""
    period = 1.2
    t = np.linspace(0.0, period, frames)
    heads, rot, parents = chain_rig(frames, bones)
    heads[:, :, 2] += 0.15 * (1 - np.cos(2 * np.pi * t / period))[:, None]
    sway = 0.4 * np.sin(2 * np.pi * t / period)
    spin = rotvec_to_matrix(np.stack([0 * sway, 0 * sway, sway], -1))
    rot = spin[:, None] @ rot
    return t, heads, rot, parents


def test_cyclic_bake_first_and_last_frames_agree():
    # A loop must join: first and last frames within 0.1 deg (common practice for
    # cycles); the same samples baked from rest do not join, so the check can fail.
    t, heads, rot, parents = loop_samples()
    params = ChainParameters(frequency=1.3, damping_ratio=0.1, sag=math.radians(20.0))
    loop = bake_chains(t, heads, rot, parents, params, options=BakeOptions(cyclic=True))
    gap = np.degrees(np.linalg.norm(loop.rotvecs[-1] - loop.rotvecs[0], axis=-1)).max()
    assert gap < 0.1
    assert loop.cyclic_mismatch < math.radians(0.1)
    plain = bake_chains(t, heads, rot, parents, params)
    assert np.degrees(np.linalg.norm(plain.rotvecs[-1] - plain.rotvecs[0], axis=-1)).max() > 1.0
    # two cycles baked one after the other from the periodic start repeat themselves
    assert np.degrees(loop.peak_offsets).max() > 1.0


def test_reset_starts_over_from_the_animated_pose():
    # At a camera cut the chain starts again at rest: the bake after the cut equals a
    # fresh bake of the samples after it (no motion differenced across the cut).
    t, heads, rot, parents = loop_samples(frames=73)
    heads[40:] += np.array([3.0, 0.0, 0.0])  # the character jumps across the cut
    params = chain_preset("cloth")
    cut = bake_chains(t, heads, rot, parents, params, options=BakeOptions(resets=(40,)))
    fresh = bake_chains(t[40:], heads[40:], rot[40:], parents, params)
    assert np.abs(cut.rotvecs[40]).max() == 0.0
    assert np.allclose(cut.rotvecs[40:], fresh.rotvecs, atol=1e-12)
    before = bake_chains(t[:40], heads[:40], rot[:40], parents, params)
    assert np.allclose(cut.rotvecs[:40], before.rotvecs, atol=1e-12)


def reconstruct(quats, mask, stepped):
    """Per-channel interpolation of the kept keys, the way F-curves would play them."""
    frames, bones = mask.shape
    out = np.empty_like(quats)
    for b in range(bones):
        keys = np.nonzero(mask[:, b])[0]
        for c in range(4):
            if stepped:
                out[:, b, c] = quats[keys[np.searchsorted(keys, np.arange(frames), side="right") - 1], b, c]
            else:
                out[:, b, c] = np.interp(np.arange(frames), keys, quats[keys, b, c])
    return out / np.linalg.norm(out, axis=-1, keepdims=True)


@pytest.mark.parametrize("on_twos", [False, True])
def test_key_reduction_stays_within_tolerance(on_twos):
    # Keys dropped within 0.2 deg: replaying the kept keys (numpy.interp per channel, or
    # held on twos) stays within the tolerance at every sample, with fewer keys.
    t, heads, rot, parents = loop_samples(frames=97)
    full = bake_chains(t, heads, rot, parents, chain_preset("tail"), options=BakeOptions(on_twos=on_twos))
    tol = math.radians(0.2)
    thin = bake_chains(t, heads, rot, parents, chain_preset("tail"), options=BakeOptions(key_tolerance=tol, on_twos=on_twos))
    assert thin.key_mask.sum() < (1.0 if on_twos else 0.7) * full.key_mask.sum()
    played = reconstruct(thin.quaternions, thin.key_mask, on_twos)
    dot = np.clip(np.abs(np.sum(played * full.quaternions, axis=-1)), 0, 1)
    assert (2 * np.arccos(dot)).max() <= tol * (1 + 1e-9)
    if on_twos:
        assert np.array_equal(full.quaternions[1::2], full.quaternions[0:-1:2])
        assert not full.key_mask[1::2].any() and thin.stepped


def test_follow_through_grows_toward_the_tip():
    # Follow-through: a turn of the root leaves the chain's tip trailing furthest
    # (common practice; here each joint adds its own lag to its parent's).
    t = np.arange(0, 2.0, 1 / 30.0)
    heads, rot, parents = chain_rig(len(t), bones=4)
    turn = 0.8 * (1 + np.tanh((t - 0.6) / 0.1)) / 2
    rot = rotvec_to_matrix(np.stack([0 * turn, 0 * turn, turn], -1))[:, None] @ rot
    bake = bake_chains(t, heads, rot, parents, chain_preset("tail"))
    world = np.linalg.norm(bake.world_offsets, axis=-1).max(axis=0)
    assert np.all(np.diff(world) > 0)
