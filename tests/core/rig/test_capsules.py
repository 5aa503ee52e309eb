"""The body's capsules: radii from skin points, inset ends, and the radii a hanging chain collides with.

Checks against plain geometry: points on a cylinder of radius R lie exactly R from its axis;
distances to a segment compared with a dense sampling of the segment (brute force).
"""

import numpy as np
import pytest

from leapwright.core.rig.capsules import (BODY_PARTS, CHAIN_MARGIN, capsule_segments, chain_radii,
                                          proportional_radius, skin_radius)


def test_skin_on_a_cylinder_gives_its_radius():
    # 200 points on a cylinder of radius 0.06 m around z from 0 to 0.3 m: every one is 0.06 m from the axis
    rng = np.random.default_rng(1)
    angle, z = rng.uniform(0, 2 * np.pi, 200), rng.uniform(0.0, 0.3, 200)
    pts = np.column_stack([0.06 * np.cos(angle), 0.06 * np.sin(angle), z])
    assert skin_radius(pts, (0, 0, 0), (0, 0, 0.3)) == pytest.approx(0.06, abs=1e-12)
    assert skin_radius(pts[:5], (0, 0, 0), (0, 0, 0.3)) is None  # too few to measure


def test_inset_ends_end_the_capsule_at_its_landmarks():
    starts, ends = np.array([[[0, 0, 0.0]]]), np.array([[[0, 0, 0.5]]])
    s, e = capsule_segments(starts, ends, [0.1], [(True, True)])
    # the capsule's extent along its axis is the segment plus a radius at each end: 0..0.5, as the landmarks
    assert s[0, 0, 2] - 0.1 == pytest.approx(0.0) and e[0, 0, 2] + 0.1 == pytest.approx(0.5)
    s, e = capsule_segments(starts, ends, [0.4], [(True, True)])  # too short: a sphere at the middle
    assert np.allclose(s, e) and s[0, 0, 2] == pytest.approx(0.25)
    s, e = capsule_segments(starts, ends, [0.1], [(False, False)])
    assert np.array_equal(s, starts) and np.array_equal(e, ends)


def test_a_chain_attached_inside_a_part_makes_it_smaller_or_leaves_it_out():
    starts, ends, radii = np.array([[0, 0, 0.0], [0, 0, 1.0]]), np.array([[0, 0, 0.2], [0, 0, 1.2]]), np.array([0.1, 0.1])
    # attached 0.08 m from the first axis (inside it), hanging away from it; far from the second
    att = np.array([[0.08, 0.0, 0.1], [0.15, 0.0, 0.05]])
    out = chain_radii(att, starts, ends, radii)
    # brute force: the nearest of 10,001 points along the segment
    line = starts[0] + np.linspace(0, 1, 10001)[:, None] * (ends[0] - starts[0])
    clear = min(np.min(np.linalg.norm(line - p, axis=1)) for p in att)
    assert out[0] == pytest.approx(clear - CHAIN_MARGIN, abs=1e-6) and out[1] == 0.1
    deep = chain_radii(np.array([[0.02, 0.0, 0.1]]), starts, ends, radii)  # would lose more than half: left out
    assert deep[0] == 0.0 and deep[1] == 0.1


def test_proportional_radii_are_a_human_size():
    # a 1.75 m adult's head is about 0.09 m in radius (0.57 m around, from memory), a neck about 0.06 m
    parts = {p.name: p for p in BODY_PARTS}
    assert proportional_radius(parts["head"], 1.75) == pytest.approx(0.57 / (2 * np.pi), rel=0.05)
    assert proportional_radius(parts["neck"], 1.75) == pytest.approx(0.38 / (2 * np.pi), rel=0.05)
