"""Chain values from a physical description, set from the follow-through panel in real Blender.

The values are checked against the textbook hanging chain, not against the add-on's own
code: a uniform chain of length L hanging from a moving point swings in its first mode at
omega = (j0,1 / 2) sqrt(g / L), j0,1 = 2.404825557695773 the first zero of the Bessel
function J0 (Abramowitz & Stegun 1964, table 9.5; Bernoulli's hanging chain, e.g.
Fetter & Walecka, "Theoretical Mechanics of Particles and Continua", sec. 42). A bone
of the bake hanging in the first mode swings at omega_n sqrt(1 + sag) (its swing length
is g / (sag omega_n^2)), so the springiness set is omega / sqrt(1 + sag) / (2 pi). The
mode does not depend on the chain's mass (the same textbook result), so a skirt's
fabric weight must leave the springiness alone.
"""

import math

import bpy
import numpy as np
import pytest

from scene_probe import addon
from test_follow_through import PONY, _bake, _jumping_rig, _key_values, _lag_curves

J01 = 2.404825557695773  # first zero of J0 (Abramowitz & Stegun, table 9.5)
G0 = 9.80665  # standard gravity [m/s^2] (CGPM 1901)


def _hanging_springiness(length_m, sag):
    return (J01 / 2.0) * math.sqrt(G0 / length_m) / math.sqrt(1.0 + sag) / (2.0 * math.pi)


def _describe(kind, length, **values):
    s = bpy.context.scene.leapwright_follow_through
    s.describe_as, s.hanging_length = kind, length
    for name, value in values.items():
        setattr(s, name, value)
    assert bpy.ops.leapwright.describe_chain() == {"FINISHED"}
    return s


@pytest.mark.parametrize("length", [0.12, 0.3, 0.8])
def test_hair_swings_at_the_hanging_chains_first_mode(length):
    s = _describe("hair", length)
    assert s.preset == "custom"
    assert s.frequency == pytest.approx(_hanging_springiness(length, s.sag), rel=1e-6)  # float32 settings
    assert math.degrees(s.sag) == pytest.approx(20.0, abs=1e-4)


def test_a_skirts_fabric_weight_damps_it_but_leaves_its_swing_and_a_scene_in_centimetres_reads_metres():
    light = _describe("skirt", 0.5, fabric_weight=100.0)
    f_light, zeta_light, mu_light = light.frequency, light.damping_ratio, light.transmission
    heavy = _describe("skirt", 0.5, fabric_weight=400.0)
    assert heavy.frequency == pytest.approx(f_light, rel=1e-7)  # the hanging chain's mode has no mass in it
    assert heavy.frequency == pytest.approx(_hanging_springiness(0.5, heavy.sag), rel=1e-6)
    # air drag per area is the fabric's own, so damping goes as 1 / areal density (drag over mass): 4x lighter
    assert zeta_light == pytest.approx(4.0 * heavy.damping_ratio, rel=1e-6)
    assert mu_light < heavy.transmission  # the lighter fabric trails in the air more
    scene = bpy.context.scene
    scene.unit_settings.scale_length = 0.01  # one unit is a centimetre: 50 units hang 0.5 m
    try:
        again = _describe("skirt", 50.0, fabric_weight=400.0)
        assert again.frequency == pytest.approx(f_light, rel=1e-6)
    finally:
        scene.unit_settings.scale_length = 1.0


def test_a_tail_that_tapers_swings_faster_than_an_even_one():
    even = _describe("tail", 0.6, tip_weight=1.0).frequency
    assert even == pytest.approx(_hanging_springiness(0.6, math.radians(10.0)), rel=1e-5)
    tapered = _describe("tail", 0.6, tip_weight=0.2).frequency
    assert tapered > 1.05 * even  # less mass to carry at the tip: a faster first mode


def test_with_rebake_as_you_tune_the_description_rebakes_once_with_its_values():
    rig, _ = _jumping_rig()
    s = bpy.context.scene.leapwright_follow_through
    s.preset = "hair"
    assert _bake(rig, bones=",".join(PONY), preset="hair") == {"FINISHED"}
    before = {(fc.data_path, fc.array_index): _key_values(fc) for fc in _lag_curves(rig)}
    live, job = addon().follow_through.live_tuning, addon().follow_through.bake_job.BakeJob
    writes = []
    original = job.write
    job.write = lambda self: writes.append(1) or original(self)
    s.live_rebake = True
    try:
        _describe("hair", 0.6)
    finally:
        job.write = original
        s.live_rebake = False
    assert len(writes) == 1  # one re-bake with all the values, none for each of the five it set
    assert live.status(bpy.context.scene)[1] is not None  # it re-baked
    after = {(fc.data_path, fc.array_index): _key_values(fc) for fc in _lag_curves(rig)}
    assert after.keys() == before.keys()
    assert max(float(np.abs(after[k] - before[k]).max()) for k in after) > 0.01
