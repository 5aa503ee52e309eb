"""Presets from a physical description, against the hanging chain's first mode."""

import math

import numpy as np
import pytest
from scipy.special import jn_zeros

from leapwright.core.base.constants import STANDARD_GRAVITY
from leapwright.core.base.errors import InvalidGoalError
from leapwright.core.follow_through.chains import bake_chains
from leapwright.core.follow_through.presets import (CHAIN_PRESETS, chain_preset, hair_parameters, hanging_frequency,
                                                     skirt_parameters, tail_parameters)


def test_hanging_chain_frequency_uses_the_first_zero_of_j0():
    # omega_1 = (j_0,1 / 2) sqrt(g / L) for a uniform hanging chain (textbook result);
    # scipy.special.jn_zeros gives j_0,1 independently
    j01 = jn_zeros(0, 1)[0]
    for length in (0.1, 0.3, 1.0):
        assert hanging_frequency(length) == pytest.approx(0.5 * j01 * math.sqrt(STANDARD_GRAVITY / length) / (2 * math.pi), rel=1e-12)


@pytest.mark.parametrize("length", [0.15, 0.4])
def test_hair_bone_hanging_swings_at_the_chains_first_mode(length):
    # A lone hanging bone with the parameters for hair of this length, nudged sideways,
    # swings at the hanging chain's first-mode frequency (within 2%): spring and weight
    # together give omega_n^2 (1 + sag) (pendulum plus spring, textbook mechanics).
    params = hair_parameters(length, damping_ratio=0.02)
    fps, seconds = 120.0, 6.0
    t = np.arange(0.0, seconds, 1.0 / fps)
    heads = np.zeros((len(t), 1, 3))
    heads[:, 0, 0] = 0.01 * np.clip((t - 0.1) / 0.1, 0, 1) ** 2 * (3 - 2 * np.clip((t - 0.1) / 0.1, 0, 1))
    down = np.array([[1.0, 0.0, 0.0], [0.0, 0.0, 1.0], [0.0, -1.0, 0.0]])  # columns x, y, z: +Y points down
    rot = np.broadcast_to(down, (len(t), 1, 3, 3)).copy()
    bake = bake_chains(t, heads, rot, [-1], params)
    swing = bake.world_offsets[:, 0, 1]  # about world +Y: the sideways swing
    after = t > 0.3
    s, ts = swing[after], t[after]
    cross = np.nonzero((s[:-1] < 0) & (s[1:] >= 0))[0]
    times = ts[cross] - s[cross] * (ts[cross + 1] - ts[cross]) / (s[cross + 1] - s[cross])
    assert len(times) >= 3
    assert 1.0 / np.mean(np.diff(times)) == pytest.approx(hanging_frequency(length), rel=0.02)


def test_tail_tapers_by_the_cone_and_skirts_damp_by_weight():
    bones = tail_parameters(0.6, 6, tip_mass_ratio=0.2)
    masses = np.array([b.mass for b in bones])
    assert np.all(np.diff(masses) < 0)  # lighter toward the tip
    # radius linear along a cone, mass as radius squared (solid geometry): the ratio of
    # the end bones' masses brackets the asked tip ratio
    assert masses[-1] / masses[0] == pytest.approx(((1 - (1 - math.sqrt(0.2)) * 5.5 / 6) / (1 - (1 - math.sqrt(0.2)) * 0.5 / 6)) ** 2)
    light, mid, heavy = (skirt_parameters(0.5, rho) for rho in (0.1, 0.2, 0.4))
    assert light.damping_ratio > mid.damping_ratio > heavy.damping_ratio
    assert mid.damping_ratio == pytest.approx(chain_preset("cloth").damping_ratio)
    assert light.frequency == pytest.approx(heavy.frequency)  # a hanging chain's mode ignores its weight


def test_named_presets_still_work_and_bad_lengths_are_refused():
    assert set(CHAIN_PRESETS) >= {"hair", "cloth", "tail", "heavy prop"}
    assert chain_preset("Heavy_Prop") is CHAIN_PRESETS["heavy prop"]
    with pytest.raises(InvalidGoalError, match="length"):
        hair_parameters(-0.2)
    with pytest.raises(InvalidGoalError, match="fabric_density"):
        skirt_parameters(0.5, 0.0)
