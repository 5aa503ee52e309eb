"""Reading layered rigs, keeping legs in reach, and comparing what plays with the plan (pure core).

Checks against geometry and physics laws (named beside each), not against the code's own output.
"""

import math

import numpy as np
import pytest

from leapwright.core.rig.landmarks import RigData, RigLayoutError, map_by_topology
from leapwright.core.rig.playback import foot_slide, implied_gravity, leg_stretch, path_gap
from leapwright.core.rig.reach import largest_rise, toe_pivot_angles
from leapwright.core.rig.skeleton import deform_tree


def test_deform_tree_joins_a_deform_bone_to_the_twin_of_its_mechanism_parent():
    # A layered rig: ORG-spine (mechanism) with a deform twin DEF-spine at the same place,
    # and DEF-thigh hanging from ORG-spine. Layers copy each other (common practice).
    names = ["root", "ORG-spine", "DEF-spine", "DEF-thigh", "DEF-shin", "MCH-x", "DEF-face"]
    parents = [-1, 0, -1, 1, 3, 1, 5]
    heads = [(0, 0, 0), (0, 0, 1), (0, 0, 1), (0.1, 0, 1), (0.1, 0, 0.5), (0, 0, 1.5), (0, -0.1, 1.6)]
    tails = [(0, 0.2, 0), (0, 0, 1.2), (0, 0, 1.2), (0.1, 0, 0.5), (0.1, 0, 0.1), (0, 0, 1.6), (0, -0.1, 1.7)]
    deform = [False, False, True, True, True, False, True]
    keep, tree = deform_tree(parents, heads, tails, deform)
    assert [names[i] for i in keep] == ["DEF-spine", "DEF-thigh", "DEF-shin", "DEF-face"]
    # DEF-thigh joins DEF-spine (the twin of ORG-spine); DEF-shin keeps its deform parent;
    # DEF-face's mechanism parent has no twin, but its grandparent ORG-spine has
    assert tree.tolist() == [-1, 0, 1, 0]


def test_unreadable_tree_keeps_the_reason_apart_from_how_to_map_by_hand():
    snake = RigData(["a", "b", "c"], [-1, 0, 1], [(0, 0, 0), (0, 0, 1), (0, 0, 2)],
                    [(0, 0, 1), (0, 0, 2), (0, 0, 3)])
    with pytest.raises(RigLayoutError) as err:
        map_by_topology(snake)
    # the whole message says how to map by hand, in the panel's words (no Python API names:
    # the command line prints it); the reason alone is what the panel shows beside its bone map
    assert "map the bones by hand: in Body in the Air, Edit Bone Map" in str(err.value)
    assert "map_by_hand" not in str(err.value)
    assert "map the bones" not in err.value.reason and "no two hands" in err.value.reason


def test_toe_pivot_keeps_the_hip_within_reach_of_the_turned_ankle():
    # Foot: ankle 0.1 m behind and 0.07 m above the ball; leg 0.9 m; hip 0.92 m above the ankle.
    ball, ankle = np.array([0.0, 0.0, 0.0]), np.array([0.0, 0.1, 0.07])
    hip = ankle + np.array([0.0, 0.0, 0.92])
    angles, axis, short = toe_pivot_angles([hip], [ankle], [ball], (1.0, 0.0, 0.0), 0.9)
    assert short[0] == 0.0 and 0.0 < angles[0] < math.radians(60.0)
    # Rodrigues' rotation by hand: the turned ankle sits exactly one leg length from the hip
    v, th = ankle - ball, angles[0]
    turned = ball + v * math.cos(th) + np.cross(axis, v) * math.sin(th) + axis * (axis @ v) * (1 - math.cos(th))
    assert np.linalg.norm(hip - turned) == pytest.approx(0.9, abs=1e-6)
    assert turned[2] > ankle[2]  # the heel lifts


def test_toe_pivot_is_zero_within_reach_and_says_how_short_beyond_it():
    ball, ankle = np.zeros(3), np.array([0.0, 0.1, 0.07])
    near = ankle + np.array([0.0, 0.0, 0.8])
    far = ankle + np.array([0.0, 0.0, 1.5])
    angles, _axis, short = toe_pivot_angles([near, far], [ankle, ankle], [ball, ball], (1, 0, 0), 0.9)
    assert angles[0] == 0.0 and short[0] == 0.0
    assert angles[1] == pytest.approx(math.radians(60.0)) and short[1] > 0.4


def test_largest_rise_is_the_highest_hip_any_allowed_heel_lift_reaches():
    ball, ankle = np.zeros(3), np.array([0.0, 0.1, 0.07])
    hip = ankle + np.array([0.0, 0.0, 0.9])
    rise = largest_rise(hip, ankle, ball, (1, 0, 0), 0.9, max_angle=math.radians(60.0))
    # by brute force: the ankle turned about the ball (heel up) by every angle up to 60 deg,
    # the hip straight above its rest place at one leg length from the turned ankle
    best = -1.0
    for th in np.radians(np.linspace(0.0, 60.0, 60001)):
        y = ankle[1] * math.cos(th) - ankle[2] * math.sin(th)
        z = ankle[1] * math.sin(th) + ankle[2] * math.cos(th)
        if z < ankle[2] - 1e-12:
            y, z = ankle[1] * math.cos(th) + ankle[2] * math.sin(th), -ankle[1] * math.sin(th) + ankle[2] * math.cos(th)
        best = max(best, z + math.sqrt(0.9 ** 2 - (y - hip[1]) ** 2) - hip[2])
    assert rise == pytest.approx(best, abs=2e-4)


def test_implied_gravity_of_a_free_fall_is_g():
    # z = z0 + v0 t - g t^2 / 2 (free fall), sampled at 24 fps
    fps, g = 24.0, 9.80665
    t = np.arange(15) / fps
    assert implied_gravity(0.5 + 2.0 * t - 0.5 * g * t ** 2, fps) == pytest.approx(g, rel=1e-9)


def test_leg_stretch_slide_and_path_gap_measure_plain_geometry():
    hips = np.array([[0, 0, 1.0], [0, 0, 1.1]])
    knees = np.array([[0, 0, 0.5], [0, 0, 0.55]])
    ankles = np.zeros((2, 3))
    assert leg_stretch(hips, knees, ankles, 1.0) == pytest.approx([0.0, 0.1])
    assert foot_slide(np.array([[0, 0, 0], [0.03, 0.04, 0.5]])) == pytest.approx(0.05)
    gap = path_gap(np.array([[0, 0, 1.0], [0, 0, 1.3]]), np.array([[5, 0, 0.0], [5, 0, 0.2]]))
    assert gap.largest == pytest.approx(0.1) and gap.index == 1
    assert gap.played_rise == pytest.approx(0.3) and gap.planned_rise == pytest.approx(0.2)
