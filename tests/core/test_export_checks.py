"""Export rules on plain numbers.

References: Khronos Group, glTF 2.0 Specification (2021), section 3.4: linear
distances are metres, +Y up, right-handed (why a unit scale other than 1 and a
mirrored object break an export); scipy.spatial.transform.Rotation as the
reference for axis angles; numpy.rint as the reference for the nearest whole
frame; IEEE 754 binary32 (key times are float32 in Blender): whole frames are
exact, and a frame near 10,000 is resolved to about 1e-3.
"""

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from core.errors import InvalidGoalError
from core.export_checks import ISSUE_KINDS, WHOLE_FRAME_TOLERANCE, export_issues, snap_to_whole_frames


def kinds(issues):
    return [i.kind for i in issues]


def test_a_clean_rig_has_no_issues():
    frames = {"location[0]": np.arange(1.0, 80.0)}
    assert export_issues(1.0, (2.0, 2.0, 2.0), frames, np.eye(3), scale_keys={"spine": [1.0, 1.0]}) == ()


@pytest.mark.parametrize("scale", [0.01, 0.1, 100.0])
def test_a_unit_other_than_the_metre_is_named_with_its_value(scale):
    (issue,) = export_issues(scale, (1, 1, 1))
    assert issue.kind == "unit_scale" and f"{scale:g}" in issue.message


def test_mirrored_and_stretched_objects():
    assert kinds(export_issues(1.0, (1, 1, -1))) == ["object_scale"]  # mirrored, magnitudes uniform
    assert kinds(export_issues(1.0, (1, 1.01, 1))) == ["object_scale"]
    assert kinds(export_issues(1.0, (-1, 2, 1))) == ["object_scale", "object_scale"]


def test_fractional_keys_are_found_as_numpy_rint_sees_them():
    rng = np.random.default_rng(3)
    frames = np.sort(rng.uniform(0, 500, 200))
    off = np.abs(frames - np.rint(frames)) > WHOLE_FRAME_TOLERANCE
    (issue,) = export_issues(1.0, (1, 1, 1), {"hips": frames})
    assert issue.kind == "fractional_keys" and f"has {off.sum()} key(s)" in issue.message
    # float32 whole frames come back exact; a frame near 10,000 is resolved to ~1e-3 (binary32)
    f32 = np.float32(np.arange(9990, 10010)).astype(float)
    assert export_issues(1.0, (1, 1, 1), {"hips": f32}) == ()


@pytest.mark.parametrize("deg,flagged", [(0.0, False), (0.05, False), (1.0, True), (90.0, True)])
def test_root_axes_tilted_from_up(deg, flagged):
    m = Rotation.from_euler("x", deg, degrees=True).as_matrix()
    found = export_issues(1.0, (1, 1, 1), root_axes=m)
    assert (kinds(found) == ["root_axes"]) == flagged
    if flagged:
        assert f"{deg:.1f}°" in found[0].message


def test_a_root_turned_about_up_is_fine():
    # Facing another way on the ground keeps Z up: nothing turns on export.
    m = Rotation.from_euler("z", 37.0, degrees=True).as_matrix()
    assert export_issues(1.0, (1, 1, 1), root_axes=m) == ()


def test_scale_keys_that_change_the_scale():
    found = export_issues(1.0, (1, 1, 1), scale_keys={"tail": [1.0, 1.2], "spine": [1.0, 1.0]})
    assert kinds(found) == ["bone_scale_keys"] and "'tail'" in found[0].message


def test_every_kind_is_described_and_bad_numbers_are_refused():
    assert set(ISSUE_KINDS) == {"unit_scale", "object_scale", "fractional_keys", "root_axes", "bone_scale_keys"}
    with pytest.raises(InvalidGoalError, match="nan"):
        export_issues(1.0, (1, float("nan"), 1))
    with pytest.raises(InvalidGoalError):
        export_issues(0.0, (1, 1, 1))


def test_snap_moves_each_key_at_most_half_a_frame_and_keeps_the_moved_one():
    frames = np.array([1.0, 2.0, 2.4, 3.0, 4.6, 5.0, 6.0, 7.5])
    new, keep = snap_to_whole_frames(frames)
    assert np.array_equal(new, np.rint(frames))
    assert np.all(np.abs(new - frames) <= 0.5)
    kept = new[keep]
    assert np.array_equal(kept, np.unique(np.rint(frames)))  # one key per whole frame, none lost
    # the moved (event) key wins over the whole-frame key it lands on
    assert keep[2] and not keep[1] and keep[4] and not keep[5]
