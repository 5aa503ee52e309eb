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

from leapwright.core.base.errors import InvalidGoalError
from leapwright.core.export.game_checks import (ISSUE_KINDS, WHOLE_FRAME_TOLERANCE, export_issues,
    snap_to_whole_frames)


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


# Non-finite numbers. IEEE 754: NaN compares false with every number, so a NaN key would pass
# every tolerance unseen; numpy.rint(inf) is inf, which no whole frame is. Each must be refused
# with the core's InvalidGoalError, its message repeating the value.

@pytest.mark.parametrize("bad", [float("inf"), float("-inf"), float("nan")])
def test_snap_refuses_a_key_time_that_is_not_a_finite_number(bad):
    with pytest.raises(InvalidGoalError, match=rf"value {bad!r} \(number 2 of 3\).*delete that key"):
        snap_to_whole_frames([1.0, bad, 3.0])


@pytest.mark.parametrize("tolerance", [float("nan"), float("inf"), -0.1])
def test_snap_refuses_a_tolerance_that_is_not_a_frame_count(tolerance):
    with pytest.raises(InvalidGoalError, match=f"snap tolerance .*{tolerance:g}"):
        snap_to_whole_frames([1.0, 2.4], tolerance=tolerance)


@pytest.mark.parametrize("bad", [float("inf"), float("nan")])
def test_export_issues_refuse_non_finite_key_times_and_scale_keys(bad):
    with pytest.raises(InvalidGoalError, match=rf"key times of hips: value {bad!r}"):
        export_issues(1.0, (1, 1, 1), {"hips": [1.0, 2.0, bad]})
    with pytest.raises(InvalidGoalError, match=rf"scale keys of bone 'tail': value {bad!r}"):
        export_issues(1.0, (1, 1, 1), scale_keys={"tail": [1.0, bad]})


def test_export_issues_refuse_non_finite_root_axes_and_an_up_axis_without_length():
    m = np.eye(3)
    m[2, 2] = float("nan")
    with pytest.raises(InvalidGoalError, match=r"root bone 'root' axes: value nan \(number 9 of 9\)"):
        export_issues(1.0, (1, 1, 1), root_axes=m)
    with pytest.raises(InvalidGoalError, match=r"up axis has no length, got \(0, 0, 0\)"):
        export_issues(1.0, (1, 1, 1), root_axes=np.eye(3), up_axis=(0, 0, 0))
    with pytest.raises(InvalidGoalError, match="up axis: value inf"):
        export_issues(1.0, (1, 1, 1), root_axes=np.eye(3), up_axis=(0, 0, float("inf")))
    with pytest.raises(InvalidGoalError, match="3 x 3 matrix, got 4"):
        export_issues(1.0, (1, 1, 1), root_axes=np.eye(2))


def test_a_rig_scaled_to_zero_is_reported_not_passed():
    # The root's Z axis has no length left: reported as a root_axes issue (it was skipped before).
    found = export_issues(1.0, (0, 0, 0), root_axes=np.zeros((3, 3)))
    assert kinds(found) == ["object_scale", "root_axes"]
    assert "(0, 0, 0) is 0 along an axis" in found[0].message and "has no Z axis" in found[1].message


@pytest.mark.parametrize("size", [1e300, 1e-300, 1e-310])
def test_huge_and_tiny_root_axes_give_the_angle_scipy_gives(size):
    # A uniform scale does not change which way the axes point; 1e-310 is subnormal (IEEE 754).
    m = Rotation.from_euler("x", 20.0, degrees=True).as_matrix()
    (issue,) = export_issues(1.0, (1, 1, 1), root_axes=m * size)
    assert issue.kind == "root_axes" and "20.0°" in issue.message
