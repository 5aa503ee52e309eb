"""Bad input in real Blender, the goals: zero, negative, NaN and huge values are refused or clamped.

Every refusal is checked two ways: the operator says what is wrong (a
RuntimeError from ``bpy.ops`` carrying the ERROR report, or a WARNING report
printed by background Blender), and :func:`scene_probe.file_state` (every
action's every channelbag, key attributes as raw bytes, NLA strips, markers,
poses and custom properties) is equal before and after.
"""

import pytest

from rig_builder import build_rig, configure
from scene_probe import file_state, first_difference, refused


@pytest.mark.parametrize("prop,value,match", [
    ("height", 0.0, "height"),
    ("flight_time", 0.0, "flight"),
    ("takeoff_speed", 0.0, "speed"),
])
def test_zero_goals(prop, value, match):
    goal = {"height": "HEIGHT", "flight_time": "FLIGHT_TIME", "takeoff_speed": "TAKEOFF_SPEED"}[prop]
    configure(build_rig(), goal=goal, **{prop: value})
    refused(match)


@pytest.mark.parametrize("prop", ["height", "flight_time", "takeoff_speed", "depth", "dip_duration"])
def test_negative_goals_are_clamped_by_the_property(prop):
    s = configure(build_rig())
    before = file_state()
    setattr(s, prop, -1.0)
    assert getattr(s, prop) == 0.0  # min=0.0: the panel cannot hold a negative value
    assert file_state() == before, first_difference(file_state(), before)


def test_negative_height_clamped_to_zero_thenrefused():
    s = configure(build_rig())
    s.height = -0.4
    assert s.height == 0.0
    refused("height")


# The refusal names the setting as the panel labels it ("Height", "Standing COM height"), so the
# match ignores case; it must still name the setting and say it is not a number.
@pytest.mark.parametrize("prop,match", [("height", "(?i)height"), ("distance", "(?i)distance"),
                                        ("landing_height", "(?i)landing"),
                                        ("standing_com_height", "(?i)standing|com")])
def test_nan_goals(prop, match):
    s = configure(build_rig())
    setattr(s, prop, float("nan"))
    refused(match)


@pytest.mark.parametrize("prop,value,match", [("height", 1e30, "height"), ("height", 1e6, "height"),
                                              ("distance", 1e12, "distance"), ("gravity", 1e30, "gravity")])
def test_huge_values(prop, value, match):
    configure(build_rig(), **{prop: value})
    refused(match)


def test_hops_out_of_range_are_clamped():
    s = configure(build_rig())
    s.hops = 0
    assert s.hops == 1
    s.hops = 1000
    assert s.hops == 50


def test_custom_timing_with_zero_durations():
    configure(build_rig(), custom_timing=True, dip_duration=0.0, push_duration=0.0)
    refused("duration|push|dip")


def test_ledge_above_the_apex():
    configure(build_rig(), height=0.2, landing_height=0.5)
    refused("apex")
