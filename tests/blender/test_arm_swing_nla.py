"""Re-timing arm keys that play from the animator's own NLA strip, in real Blender.

The late swing of test_arm_swing_retime.py is keyed into an action of its own and
moved into an NLA strip that starts elsewhere and plays at another speed, so the
action's frames are not scene frames: Blender plays action frame ``a`` at scene frame
``frame_start + k L scale + scale (a - action_frame_start)`` in its ``k``-th play
(``L`` the action clip's length; Blender manual, NLA strip properties: Action Clip
frame start/end, Playback Scale, Repeat). The swing is measured in
scene time from the evaluated pose, as in test_arm_swing.py, against the plan's
take-off (Lees, Vanrenterghem & De Clercq 2004, J Biomech 37: the elevation peaks at
take-off). Strips Blender maps otherwise are refused with nothing changed.
"""

import bpy
import numpy as np
import pytest

from scene_probe import addon, file_state, first_difference, peak_frame
from test_arm_swing import ARMS, LATE, _elevation, _events, _facing, _jump, _late_swing
from test_arm_swing_retime import rerun_changes_nothing_and_removal_restores

ACTION_START = 100.0  # the arm action's own first frame (its manual frame range)


def _arms_in_a_strip(rig, scene, start, scale, repeat=1.0):
    """The late swing keyed into 'my arms', played by an NLA strip from scene frame ``start`` at
    ``scale``; with ``repeat`` plays the swing falls in the last one, where it was keyed."""
    compat = addon().blender.compat
    ad = rig.animation_data
    blocking, handle = ad.action, compat.active_slot_handle(rig)
    arms = bpy.data.actions.new("my arms")
    compat.assign_action(rig, arms)
    _late_swing(rig, scene)  # keyed at scene frames, as if the strip played them in place
    arm_slot = compat.active_slot_handle(rig)
    play = (scene.frame_end + 20 - start) / repeat  # one play [scene frames]
    earlier = (repeat - 1.0) * play
    for fc in compat.fcurves(arms, rig):
        for k in fc.keyframe_points:
            for attr in ("co", "handle_left", "handle_right"):
                v = getattr(k, attr)
                v.x = ACTION_START + (v.x - start - earlier) / scale
        fc.update()
    arms.use_frame_range = True
    arms.frame_start, arms.frame_end = ACTION_START, ACTION_START + play / scale
    compat.assign_action(rig, blocking, handle)
    track = ad.nla_tracks.new()
    track.name = "my arm layer"
    strip = compat.new_nla_strip(rig, track, "my arms", start, arms, arm_slot)
    strip.scale = scale
    strip.repeat = repeat
    assert strip.frame_start == start and strip.frame_end == pytest.approx(start + repeat * play, abs=1e-3)
    scene.frame_set(1)
    return arms, strip


def _keys(action, rig):
    return {(fc.data_path, fc.array_index): addon().blender.key_writer.read_keys(fc)
            for fc in addon().blender.compat.fcurves(action, rig)}


def _choose_arms(rig, scene):
    s = scene.leapwright_arms
    s.upper_arm_left, s.upper_arm_right = ARMS
    bpy.context.view_layer.objects.active = rig


@pytest.mark.parametrize("start, scale, repeat", [(-50, 1.0, 1.0), (-40, 1.5, 1.0), (-150, 1.25, 2.0)],
                         ids=["offset", "offset and scale", "second of two plays"])
def test_a_late_swing_in_an_offset_strip_is_retimed_in_scene_time(start, scale, repeat):
    rig, scene = _jump()
    arms, strip = _arms_in_a_strip(rig, scene, start, scale, repeat)
    _, takeoff, _ = _events(scene)
    forward, up = _facing(rig, 0.0)
    frames = np.arange(takeoff - 14.0, takeoff + 14.0, 0.25)
    # The setup plays the swing where it was keyed: LATE frames after take-off, in scene time.
    assert peak_frame(frames, _elevation(rig, frames, forward, up)) - takeoff == pytest.approx(LATE, abs=0.6)
    _choose_arms(rig, scene)
    scene.frame_set(1)
    before, keys_before = file_state(), _keys(arms, rig)
    placed = (strip.frame_start, strip.frame_end, strip.scale, strip.action_frame_start, strip.action_frame_end)

    assert bpy.ops.leapwright.retime_arm_swing() == {"FINISHED"}
    for side in "LR":
        assert abs(peak_frame(frames, _elevation(rig, frames, forward, up, side)) - takeoff) <= 1.0
    keys_after = _keys(arms, rig)
    assert keys_after.keys() == keys_before.keys()
    for k, old in keys_before.items():
        assert keys_after[k]["co"][1::2].tobytes() == old["co"][1::2].tobytes()  # values kept, bit for bit
        assert np.all(np.diff(keys_after[k]["co"][0::2]) > 0)
    peak_key = (f'pose.bones["{ARMS[0]}"].rotation_quaternion', 0)
    shift = keys_after[peak_key]["co"][4] - keys_before[peak_key]["co"][4]  # the third key: the peak
    # In the action's own frames a scene-frame shift is divided by the strip's scale.
    assert shift == pytest.approx(-LATE / scale, abs=1.0 / scale)
    assert (strip.frame_start, strip.frame_end, strip.scale, strip.action_frame_start,
            strip.action_frame_end) == placed
    rerun_changes_nothing_and_removal_restores(scene, before)


@pytest.mark.parametrize("case", ["reversed", "animated strip time", "keys in two places"])
def test_strips_that_do_not_map_by_one_line_are_refused_and_nothing_changes(case):
    rig, scene = _jump()
    arms, strip = _arms_in_a_strip(rig, scene, -50, 1.0)
    if case == "reversed":
        strip.use_reverse, match = True, "in reverse"
    elif case == "animated strip time":
        strip.use_animated_time, match = True, "animated strip time"
    else:
        _late_swing(rig, scene)  # the same swing keyed into the active action as well
        match = "play from 2 places"
    _choose_arms(rig, scene)
    scene.frame_set(1)
    before = file_state()
    with pytest.raises(RuntimeError, match=match):
        bpy.ops.leapwright.retime_arm_swing()
    assert file_state() == before, first_difference(file_state(), before)
    assert not any(a.name.startswith("lw:before ") for a in bpy.data.actions)


@pytest.mark.parametrize("how", ["strip muted", "track muted"])
def test_arm_keys_in_a_strip_that_does_not_play_are_left_alone(how):
    # A muted strip or track plays nothing (Blender manual, NLA: Mute), so only the active action's
    # late swing is seen and re-timed; the silent strip's keys stay as they were, bit for bit.
    rig, scene = _jump()
    arms, strip = _arms_in_a_strip(rig, scene, -50, 1.0)
    if how == "strip muted":
        strip.mute = True
    else:
        rig.animation_data.nla_tracks["my arm layer"].mute = True
    _late_swing(rig, scene)  # the animator's own swing, in the active action
    silent = _keys(arms, rig)
    _choose_arms(rig, scene)
    assert bpy.ops.leapwright.retime_arm_swing() == {"FINISHED"}
    _, takeoff, _ = _events(scene)
    forward, up = _facing(rig, 0.0)
    frames = np.arange(takeoff - 14.0, takeoff + 14.0, 0.25)
    assert abs(peak_frame(frames, _elevation(rig, frames, forward, up)) - takeoff) <= 1.0
    after = _keys(arms, rig)
    assert after.keys() == silent.keys()
    assert all(after[k][f].tobytes() == silent[k][f].tobytes() for k in silent for f in silent[k])
