"""Re-timing the animator's own arm swing, in real Blender, on the demo mannequin.

A swing keyed by hand (``keyframe_insert``) that peaks too late is read from Blender's
evaluated pose and measured here as in test_arm_swing.py (the shoulder-to-wrist line's
elevation in the mannequin's side view). After *Re-time Arm Swing* it must peak at the
plan's take-off and rise during the push (Lees, Vanrenterghem & De Clercq 2004, J Biomech
37:1929-1940), with every key value kept bit for bit, and "remove what leapwright wrote"
must give the keys back byte for byte.
"""

import json
import math

import bpy
import numpy as np
import pytest

from scene_probe import addon, file_state, first_difference, peak_frame
from test_arm_swing import ARMS, LATE, _arm_curves, _elevation, _events, _facing, _jump, _late_swing, _place


def rerun_changes_nothing_and_removal_restores(scene, before):
    """A second re-timing finds the swing on time and moves nothing; removal gives back ``before``."""
    once = file_state()
    assert bpy.ops.leapwright.retime_arm_swing() == {"FINISHED"}
    assert file_state() == once, first_difference(file_state(), once)
    assert bpy.ops.leapwright.remove_arm_swing() == {"FINISHED"}
    scene.frame_set(1)
    assert file_state() == before, first_difference(file_state(), before)


@pytest.mark.parametrize("handles", ["AUTO_CLAMPED", "FREE"])
def test_late_swing_is_retimed_to_peak_at_takeoff_keeping_its_values_and_removal_restores_it(handles):
    rig, scene = _jump()
    _late_swing(rig, scene, handles)
    _, takeoff, _ = _events(scene)
    forward, up = _facing(rig, 0.0)
    frames = np.arange(takeoff - 14.0, takeoff + 14.0, 0.25)
    assert peak_frame(frames, _elevation(rig, frames, forward, up)) - takeoff == pytest.approx(LATE, abs=0.6)

    s = scene.leapwright_arms
    bpy.context.view_layer.objects.active = rig
    s.upper_arm_left, s.upper_arm_right = ARMS
    assert bpy.ops.leapwright.check_arm_swing() == {"FINISHED"}
    warning = " ".join(t for t, icon in addon().arms.operators.LAST[rig.name] if icon == "ERROR")
    late = float(warning.split("peaks ")[1].split(" frames")[0])
    assert late == pytest.approx(LATE, abs=1.0) and "drops the torso by" in warning

    scene.frame_set(1)
    before, keys_before = file_state(), _arm_curves(rig)
    assert bpy.ops.leapwright.retime_arm_swing() == {"FINISHED"}
    moved = addon().arms.operators.LAST[rig.name][0][0]
    assert float(moved.split("by up to ")[1].split(" frames")[0]) == pytest.approx(LATE, abs=1.0)
    for side in "LR":
        assert abs(peak_frame(frames, _elevation(rig, frames, forward, up, side)) - takeoff) <= 1.0
    keys_after = _arm_curves(rig)
    assert keys_after.keys() == keys_before.keys()
    for k, old in keys_before.items():
        new = keys_after[k]
        assert new["co"][1::2].tobytes() == old["co"][1::2].tobytes()  # every value kept, bit for bit
        assert np.all(np.diff(new["co"][0::2]) > 0)  # still in order
        # Handles stay on their own side of their key and do not cross the next key's (Blender keeps
        # a Bezier span a function of time only then).
        t, left, right = new["co"][0::2], new["handle_left"][0::2], new["handle_right"][0::2]
        assert np.all(left <= t + 1e-4) and np.all(right >= t - 1e-4)
        assert np.all(right[:-1] <= left[1:] + 1e-4)
        assert new["handle_left_type"].tobytes() == old["handle_left_type"].tobytes()
    peak_key = [k for k in keys_before if k[1] == 0][0]
    shift = keys_after[peak_key]["co"][4] - keys_before[peak_key]["co"][4]  # the third key: the peak
    assert shift == pytest.approx(-LATE, abs=1.0)
    assert any(a.name.startswith("lw:before ") for a in bpy.data.actions)
    rerun_changes_nothing_and_removal_restores(scene, before)


def test_remove_plan_restores_retimed_keys_byte_for_byte():
    rig, scene = _jump()
    _late_swing(rig, scene)
    keys_before = _arm_curves(rig)
    s = scene.leapwright_arms
    bpy.context.view_layer.objects.active = rig
    s.upper_arm_left, s.upper_arm_right = ARMS
    assert bpy.ops.leapwright.retime_arm_swing() == {"FINISHED"}
    assert _arm_curves(rig)[(f'pose.bones["{ARMS[0]}"].rotation_quaternion', 0)]["co"].tobytes() != \
        keys_before[(f'pose.bones["{ARMS[0]}"].rotation_quaternion', 0)]["co"].tobytes()
    assert bpy.ops.leapwright.remove_plan() == {"FINISHED"}
    after = _arm_curves(rig)
    assert after.keys() == keys_before.keys()
    for k, old in keys_before.items():
        assert all(after[k][f].tobytes() == old[f].tobytes() for f in old), k
    assert not any(a.name.startswith("lw:before ") for a in bpy.data.actions)
    # The action itself stays: the blocking pass made it, but it now holds the animator's keys.
    state = json.loads(rig.get("lw_state", "{}"))
    assert "backups" not in state and not state.get("written"), state


@pytest.mark.parametrize("contact_from", ["BODY", "FEET", "AUTO"])
def test_contact_window_without_markers_comes_from_the_body_or_the_feet(contact_from):
    # Without the lw: markers the push and take-off are read from the evaluated rig: the body bone's
    # free fall (second difference within 5% of -g: projectile motion) or the feet leaving the ground.
    # Both are sampled once per frame, so they may sit up to a frame from the plan's exact times.
    rig, scene = _jump()
    push, takeoff, _ = _events(scene)
    for m in [m for m in scene.timeline_markers if m.name.startswith("lw:")]:
        scene.timeline_markers.remove(m)
    s = scene.leapwright_arms
    s.upper_arm_left, s.upper_arm_right = ARMS
    s.contact_from = contact_from
    bpy.context.view_layer.objects.active = rig
    assert _place(rig) == {"FINISHED"}
    assert bpy.ops.leapwright.check_arm_swing() == {"FINISHED"}
    (line, _), (verdict, icon) = addon().arms.operators.LAST[rig.name][:2]
    source = {"BODY": "the body bone's free fall", "FEET": "the foot heights", "AUTO": "the body bone's free fall"}
    assert f"(from {source[contact_from]})" in line
    got_push, got_takeoff = (float(x) for x in line.split("; push ")[1].split(" ")[0].split("-"))
    assert abs(got_takeoff - takeoff) <= 1.0
    assert abs(got_push - push) <= 1.0  # the lowest body point before take-off (end of braking)
    assert icon == "CHECKMARK", verdict


def test_a_swing_wholly_in_the_air_is_called_outside_contact_and_retimed_into_the_push():
    rig, scene = _jump()
    push, takeoff, _ = _events(scene)
    late = math.ceil(takeoff - push) + 2  # the upswing starts two frames after take-off
    _late_swing(rig, scene, late=late, low=push + late)
    s = scene.leapwright_arms
    s.upper_arm_left, s.upper_arm_right = ARMS
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.check_arm_swing() == {"FINISHED"}
    warnings = [t for t, icon in addon().arms.operators.LAST[rig.name] if icon == "ERROR"]
    assert any(w.startswith("arm swing outside contact") for w in warnings), warnings
    assert bpy.ops.leapwright.retime_arm_swing() == {"FINISHED"}
    frames = np.arange(push - 4.0, takeoff + late + 8.0, 0.25)
    forward, up = _facing(rig, 0.0)
    elev = _elevation(rig, frames, forward, up)
    assert abs(peak_frame(frames, elev) - takeoff) <= 1.0
    before = frames <= takeoff
    assert push - 1.0 <= float(frames[before][np.argmin(elev[before])]) < takeoff


def test_retiming_a_linked_action_is_refused_and_changes_nothing(tmp_path):
    # Blender does not save edits of linked data: re-timed keys would vanish on save (common practice:
    # linked data is read-only, the user makes it local first).
    rig, scene = _jump()
    _late_swing(rig, scene)
    mine = rig.animation_data.action
    library = str(tmp_path / "arm_library.blend")
    bpy.data.libraries.write(library, {mine}, fake_user=True)
    with bpy.data.libraries.load(library, link=True) as (src, dst):
        dst.actions = [mine.name]
    linked = next(a for a in bpy.data.actions if a.library is not None)
    addon().blender.compat.assign_action(rig, linked)
    s = scene.leapwright_arms
    s.upper_arm_left, s.upper_arm_right = ARMS
    bpy.context.view_layer.objects.active = rig
    before = file_state()
    with pytest.raises(RuntimeError, match="is linked from"):
        bpy.ops.leapwright.retime_arm_swing()
    assert file_state() == before, first_difference(file_state(), before)
