"""Presets from a physical description, against the hanging chain's first mode."""

import math

import numpy as np
import pytest
from scipy.special import jn_zeros

from leapwright.core.base.constants import STANDARD_GRAVITY
from leapwright.core.base.errors import InvalidGoalError
from leapwright.core.follow_through.chains import ChainParameters, bake_chains
from leapwright.core.follow_through.hanging_chains import tapered_hanging_frequency
from leapwright.core.follow_through.presets import (CHAIN_PRESETS, chain_preset, hair_parameters, hanging_frequency,
                                                     skirt_parameters, tail_parameters)

G0 = STANDARD_GRAVITY


def test_hanging_chain_frequency_uses_the_first_zero_of_j0():
    # omega_1 = (j_0,1 / 2) sqrt(g / L) for a uniform hanging chain (textbook result);
    # scipy.special.jn_zeros gives j_0,1 independently
    j01 = jn_zeros(0, 1)[0]
    for length in (0.1, 0.3, 1.0):
        assert hanging_frequency(length) == pytest.approx(0.5 * j01 * math.sqrt(G0 / length) / (2 * math.pi), rel=1e-12)


def test_tapered_chain_matches_the_uniform_and_the_linear_closed_forms():
    # Uniform: the J0 result above. Mass per length proportional to the distance from the
    # free end: the swing equation x^2 y'' + 2 x y' + (2 w^2 / g) x y = 0 has the solution
    # y = J1(2 sqrt(2 w^2 x / g)) / sqrt(x), so w = (j_1,1 / (2 sqrt 2)) sqrt(g / L)
    # (derived here from the hanging-chain equation; j_1,1 from scipy.special.jn_zeros).
    for length in (0.2, 0.7):
        uniform = tapered_hanging_frequency(length, lambda s: np.ones_like(s))
        assert uniform == pytest.approx(hanging_frequency(length), rel=1e-4)
        linear = tapered_hanging_frequency(length, lambda s: 3.0 * (1.0 - s))  # the scale does not matter
        expected = jn_zeros(1, 1)[0] / (2 * math.sqrt(2)) * math.sqrt(G0 / length) / (2 * math.pi)
        assert linear == pytest.approx(expected, rel=1e-4)


def _swing_frequency(params, fps=120.0, seconds=6.0):
    """Frequency [Hz] of a lone hanging bone nudged sideways, from its zero crossings."""
    t = np.arange(0.0, seconds, 1.0 / fps)
    heads = np.zeros((len(t), 1, 3))
    ramp = np.clip((t - 0.1) / 0.1, 0, 1)
    heads[:, 0, 0] = 0.01 * ramp**2 * (3 - 2 * ramp)
    down = np.array([[1.0, 0.0, 0.0], [0.0, 0.0, 1.0], [0.0, -1.0, 0.0]])  # columns x, y, z: +Y points down
    rot = np.broadcast_to(down, (len(t), 1, 3, 3)).copy()
    swing = bake_chains(t, heads, rot, [-1], params).world_offsets[:, 0, 1]  # about world +Y: sideways
    after = t > 0.3
    s, ts = swing[after], t[after]
    cross = np.nonzero((s[:-1] < 0) & (s[1:] >= 0))[0]
    times = ts[cross] - s[cross] * (ts[cross + 1] - ts[cross]) / (s[cross + 1] - s[cross])
    assert len(times) >= 3
    return 1.0 / np.mean(np.diff(times))


@pytest.mark.parametrize("length", [0.15, 0.4])
def test_hair_bone_hanging_swings_at_the_chains_first_mode(length):
    # A lone hanging bone with the parameters for hair of this length swings at the
    # hanging chain's first-mode frequency (within 2 %): spring and weight together give
    # omega_n^2 (1 + sag) (pendulum plus spring, textbook mechanics).
    params = hair_parameters(length, damping_ratio=0.02)
    assert _swing_frequency(params) == pytest.approx(hanging_frequency(length), rel=0.02)


def test_tail_swings_at_its_tapered_mode_and_skirts_damp_by_weight():
    bones = tail_parameters(0.6, 6, tip_mass_ratio=0.2, damping_ratio=0.02)
    assert len(bones) == 6 and all(isinstance(b, ChainParameters) for b in bones)
    cone = tapered_hanging_frequency(0.6, lambda s: (1 - (1 - math.sqrt(0.2)) * s) ** 2)
    assert cone > hanging_frequency(0.6)  # a lighter tip swings faster (closed forms above bracket it)
    assert _swing_frequency(bones[0]) == pytest.approx(cone, rel=0.02)
    untapered = tail_parameters(0.6, 3, tip_mass_ratio=1.0, sag=0.3)[0]
    assert untapered.frequency * math.sqrt(1.3) == pytest.approx(hanging_frequency(0.6), rel=1e-4)
    light, mid, heavy = (skirt_parameters(0.5, rho) for rho in (0.1, 0.2, 0.4))
    assert light.damping_ratio > mid.damping_ratio > heavy.damping_ratio
    assert mid.damping_ratio == pytest.approx(chain_preset("cloth").damping_ratio)
    assert mid.transmission == pytest.approx(chain_preset("cloth").transmission, abs=0.01)
    assert light.frequency == pytest.approx(heavy.frequency)  # a hanging chain's mode ignores its weight


def test_named_presets_still_work_and_bad_descriptions_are_refused():
    assert set(CHAIN_PRESETS) >= {"hair", "cloth", "tail", "heavy prop"}
    assert chain_preset("Heavy_Prop") is CHAIN_PRESETS["heavy prop"]
    with pytest.raises(InvalidGoalError, match="length must be a positive number of metres, got -0.2"):
        hair_parameters(-0.2)
    with pytest.raises(InvalidGoalError, match="fabric_density"):
        skirt_parameters(0.5, 0.0)
    with pytest.raises(InvalidGoalError, match="bones must be a whole number, got 2.5"):
        tail_parameters(0.6, 2.5)
    with pytest.raises(InvalidGoalError, match="sag must be below"):
        hair_parameters(0.3, sag=2.0)
