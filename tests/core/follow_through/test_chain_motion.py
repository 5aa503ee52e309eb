"""The drive made once (chain_motion) and baked again with other settings (bake_motion).

Tuning re-bakes the same motion with other chain settings; the drive made once must
give each of those bakes exactly what a bake from the samples gives (so every
accuracy test of ``bake_chains`` covers it), and must refuse options it was not made for.
"""

import math

import numpy as np
import pytest

from leapwright.core.base.constants import STANDARD_GRAVITY
from leapwright.core.base.errors import InvalidGoalError
from leapwright.core.follow_through.chains import (BakeOptions, ChainParameters, Colliders, bake_chains, bake_motion,
                                                   chain_motion, drive_options)
from leapwright.core.follow_through.presets import chain_preset

FPS = 24.0


def hopping_strands(seconds=3.0):
    """Two strands (4 and 2 bones) hanging down and back from a head that hops twice
    (ballistic arcs, g = 9.80665 m/s^2, CODATA/CGPM standard gravity) and turns."""
    t = np.arange(0.0, seconds + 1e-9, 1.0 / FPS)
    hop = 0.5 * (np.sin(2 * math.pi * t / 1.5) + 1.0)
    lift = 0.25 * hop**2
    yaw = 0.3 * np.sin(1.7 * t)
    direction = np.array([0.0, 0.6, -0.8])
    heads, rots, parents = [], [], []
    for strand, (count, side) in enumerate(((4, 0.05), (2, -0.05))):
        first = len(parents)
        for i in range(count):
            base = np.array([side, 0.05, 1.7]) + 0.05 * i * direction
            c, s = np.cos(yaw), np.sin(yaw)
            head = np.stack([c * base[0] - s * base[1], s * base[0] + c * base[1], base[2] + lift], -1)
            y = np.stack([c * direction[0] - s * direction[1], s * direction[0] + c * direction[1],
                          np.full_like(t, direction[2])], -1)
            x = np.stack([c, s, np.zeros_like(t)], -1)
            rots.append(np.stack([x, y, np.cross(x, y)], -1))
            heads.append(head)
            parents.append(-1 if i == 0 else first + i - 1)
    return t, np.stack(heads, 1), np.stack(rots, 1), parents


@pytest.mark.parametrize("options", [BakeOptions(), BakeOptions(cyclic=True), BakeOptions(resets=(30,)),
                                     BakeOptions(substeps=2), BakeOptions(multi_link=True)])
def test_one_drive_baked_with_each_preset_is_the_bake_from_the_samples(options):
    t, heads, rots, parents = hopping_strands()
    motion = chain_motion(t, heads, rots, parents, (0.0, 0.0, -STANDARD_GRAVITY), options)
    for name in ("hair", "cloth", "tail", "hair"):  # the drive is not changed by a bake
        fresh = bake_chains(t, heads, rots, parents, chain_preset(name), options=options)
        kept = bake_motion(motion, chain_preset(name))
        for field in ("rotvecs", "quaternions", "world_offsets", "key_mask", "peak_offsets"):
            assert np.array_equal(getattr(fresh, field), getattr(kept, field)), (name, field)
        assert kept.passes == fresh.passes


def test_a_kept_drive_takes_other_keying_and_colliders():
    t, heads, rots, parents = hopping_strands()
    motion = chain_motion(t, heads, rots, parents)
    params = ChainParameters(1.2, 0.3, math.radians(25.0))
    ground = Colliders(ground=1.62, lengths=[0.05] * 6)  # tips hang down to about 1.55 m: the ground pushes them
    thinned = BakeOptions(key_tolerance=math.radians(0.2), on_twos=True)
    for options, colliders in ((thinned, None), (None, ground)):
        fresh = bake_chains(t, heads, rots, parents, params, options=options or BakeOptions(), colliders=colliders)
        kept = bake_motion(motion, params, colliders, options)
        assert np.array_equal(fresh.key_mask, kept.key_mask) and fresh.stepped == kept.stepped
        assert np.array_equal(fresh.quaternions, kept.quaternions)
    assert not np.all(fresh.world_offsets == bake_motion(motion, params).world_offsets)  # the ground acted


@pytest.mark.parametrize("options", [BakeOptions(cyclic=True), BakeOptions(resets=(12,)), BakeOptions(substeps=3),
                                     BakeOptions(multi_link=True)])
def test_a_drive_refuses_options_it_was_not_made_for(options):
    t, heads, rots, parents = hopping_strands(1.0)
    motion = chain_motion(t, heads, rots, parents)
    with pytest.raises(InvalidGoalError, match="prepare the motion again with these options") as err:
        bake_motion(motion, chain_preset("hair"), options=options)
    # the message repeats both sets of options
    assert str(drive_options(options)) in str(err.value) and str(drive_options(BakeOptions())) in str(err.value)


def test_bake_motion_needs_a_motion():
    with pytest.raises(InvalidGoalError, match="prepare it from the times, heads, rotations and parents"):
        bake_motion({"times": [0.0, 1.0]}, chain_preset("hair"))
