"""Reading BVH motion capture: forward kinematics, units and up axis.

Sources named beside each check:
- Euler rotations composed by scipy.spatial.transform.Rotation (a reference library),
  intrinsic in the channels' order as the BVH format lists them (common practice);
- adult standing height 1.0-2.3 m (common practice) and the inch as 25.4 mm (exact, 1959);
- the Y-up BVH convention turned to Z up as Blender's bundled importer does it (x, -z, y).
"""

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from leapwright.core.base.errors import InvalidTrajectoryError
from leapwright.core.rig import bvh

CHAIN = """HIERARCHY
ROOT root
{
  OFFSET 0 0 0
  CHANNELS 6 Xposition Yposition Zposition %s
  JOINT mid
  {
    OFFSET 0 10 0
    CHANNELS 3 %s
    JOINT tip
    {
      OFFSET 5 0 2
      CHANNELS 3 %s
      End Site
      {
        OFFSET 0 3 0
      }
    }
  }
}
MOTION
Frames: %d
Frame Time: 0.0333333
"""


def _chain(order, frames):
    ch = " ".join(f"{a}rotation" for a in order)
    lines = [" ".join(f"{v:.9f}" for v in row) for row in frames]
    return CHAIN % (ch, ch, ch, len(frames)) + "\n".join(lines) + "\n"


@pytest.mark.parametrize("order", ["ZXY", "XYZ", "YZX", "ZYX"])
def test_forward_kinematics_matches_scipy_euler_rotations(order):
    rng = np.random.default_rng(len(order) + ord(order[0]))
    rows = np.concatenate([rng.uniform(-50, 50, (7, 3)), rng.uniform(-180, 180, (7, 9))], axis=1)
    motion = bvh.read_bvh(_chain(order, rows))
    assert motion.channels[0][3:] == tuple(f"{a}rotation" for a in order)
    assert motion.fps == pytest.approx(30.0, rel=1e-5)
    rot, pos = bvh.forward_kinematics(motion)
    for f, row in enumerate(rows):
        # Upper-case sequences are intrinsic in scipy: R = R_a R_b R_c for "abc".
        r = [Rotation.from_euler(order, row[3 + 3 * k:6 + 3 * k], degrees=True).as_matrix() for k in range(3)]
        w_root, w_mid = r[0], r[0] @ r[1]
        root = row[:3]
        mid = root + w_root @ np.array([0, 10, 0.0])
        tip = mid + w_mid @ np.array([5, 0, 2.0])
        np.testing.assert_allclose(pos[f], [root, mid, tip], atol=1e-9)
        np.testing.assert_allclose(rot[f, 2], w_mid @ r[2], atol=1e-12)


def test_rest_points_end_at_end_sites_and_children():
    motion = bvh.read_bvh(_chain("ZXY", np.zeros((1, 12))))
    heads, tails = bvh.rest_points(motion)
    np.testing.assert_allclose(heads, [[0, 0, 0], [0, 10, 0], [5, 10, 2]])
    np.testing.assert_allclose(tails, [[0, 10, 0], [5, 10, 2], [5, 13, 2]])


@pytest.mark.parametrize("unit, per_m", [("m", 1.0), ("cm", 100.0), ("in", 1 / 0.0254), ("mm", 1000.0)])
@pytest.mark.parametrize("height_m", [1.1, 1.75, 2.05])
def test_units_are_found_from_a_persons_height(unit, per_m, height_m):
    assert bvh.detect_units(height_m * per_m) == unit


def test_no_unit_makes_a_person_of_a_mouse_or_a_tower():
    assert bvh.detect_units(0.3) is None  # 30 cm, 30 mm, 7.6 mm, 0.3 mm: none is a person
    assert bvh.detect_units(50000.0) is None


def test_up_axis_is_the_taller_of_y_and_z_even_in_a_t_pose():
    # A T pose: 1.7 m arms across x, 1.7 m tall, 0.25 m deep.
    heads = np.array([[0, 1.0, 0], [0, 1.7, 0], [-0.85, 1.4, 0], [0.85, 1.4, 0], [0, 0, 0.25], [0, 0, 0]])
    assert bvh.up_axis(heads, heads) == "y"
    turned = heads @ bvh.Y_UP_TO_Z_UP.T
    assert bvh.up_axis(turned, turned) == "z"
    # Turning Y up to Z up keeps handedness (a proper rotation).
    assert np.linalg.det(bvh.Y_UP_TO_Z_UP) == pytest.approx(1.0)


@pytest.mark.parametrize("text, words", [
    ("", "HIERARCHY"),
    ("HIERARCHY ROOT a { OFFSET 0 0 0 CHANNELS 3 Xposition Yposition Zposition }", "MOTION"),
    ("HIERARCHY ROOT a { OFFSET 0 0 0 CHANNELS 1 Xwobble } MOTION\nFrames: 1\nFrame Time: 0.1\n0\n", "CHANNELS"),
    ("HIERARCHY ROOT a { OFFSET 0 0 0 CHANNELS 1 Xposition } MOTION\nFrames: 2\nFrame Time: 0.1\n0\n", "2 lines"),
    ("HIERARCHY ROOT a { OFFSET 0 0 0 CHANNELS 1 Xposition } MOTION\nFrames: 1\nFrame Time: 0\n0\n", "Frame Time"),
    ("HIERARCHY ROOT a { OFFSET 0 0 0 CHANNELS 1 Xposition } MOTION\nFrames: 1\nFrame Time: 0.1\nnan\n", "non-finite"),
    ("HIERARCHY ROOT a { OFFSET 0 0 0 CHANNELS 1 Xposition MOTION\nFrames: 1\nFrame Time: 0.1\n1\n", "braces"),
])
def test_broken_files_are_refused_with_what_is_wrong(text, words):
    with pytest.raises(InvalidTrajectoryError, match=words):
        bvh.read_bvh(text, "jump.bvh")


from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

_WORDS = st.sampled_from(["HIERARCHY", "ROOT", "JOINT", "End", "Site", "{", "}", "OFFSET", "CHANNELS",
                          "3", "6", "0", "1.5", "-2", "nan", "Xposition", "Zrotation", "Yrotation",
                          "MOTION", "Frames:", "Frame", "Time:", "0.01", "\n", "a", "b"])


@settings(max_examples=300, deadline=None)
@given(st.lists(_WORDS, max_size=60), st.booleans())
def test_any_text_is_read_or_refused_with_the_readers_own_error(words, valid_head):
    # Property (common practice for readers of user files): garbage never crashes the reader
    # with anything but its own error, whose message names the file.
    head = "HIERARCHY ROOT a { OFFSET 0 0 0 CHANNELS 3 Xposition Yposition Zposition }\n" if valid_head else ""
    text = head + " ".join(words)
    try:
        motion = bvh.read_bvh(text, "take.bvh")
    except InvalidTrajectoryError as exc:
        assert str(exc).startswith("take.bvh: ")
        return
    rot, pos = bvh.forward_kinematics(motion)
    assert pos.shape == (len(motion.values), len(motion.names), 3) and np.isfinite(pos).all()
