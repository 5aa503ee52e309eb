"""Ownership by identity: renames, shared actions, save/reload and the animator's later keys.

Workflows as animators work: the action, the rig, a bone or a track renamed
after a write; one action shared by two rigs, both written with Replace; keys
set or moved after a write. Remove must take back exactly what leapwright
wrote and nothing of the animator's. "Exactly" is :func:`scene_probe.file_state`
(every key attribute as raw bytes, NLA tracks, markers, custom properties),
compared before and after, with the renames applied to the "before" record.
"""

import os
import tempfile

import bpy
import numpy as np
import pytest

from rig_builder import add_user_keys, build_rig, configure
from scene_probe import addon, file_state, first_difference, reports, run_remove, run_write


def _rig(name="Rig"):
    rig = build_rig(name)
    add_user_keys(rig)  # hips location at frames 1, 20, 40: a clash for the jump's body curves
    configure(rig, height=0.4, distance=0.3)
    return rig


def _reload(name="Rig"):
    path = os.path.join(tempfile.mkdtemp(prefix="lw-own-"), "shot.blend")
    bpy.ops.wm.save_as_mainfile(filepath=path)
    bpy.ops.wm.open_mainfile(filepath=path)
    return bpy.data.objects[name]


def _renamed(state, *pairs):
    """``file_state`` as plain text, with each (old, new) name replaced (quoted, so only whole names)."""
    text = repr(state)
    for old, new in pairs:
        text = text.replace(repr(old), repr(new))
    return text


def _keys(rig, action, bone="hips"):
    compat, kw = addon().blender.compat, addon().blender.key_writer
    out = []
    for i in range(3):
        fc = compat.find_fcurve(action, rig, f'pose.bones["{bone}"].location', i)
        out.append(None if fc is None else kw.read_keys(fc)["co"].reshape(-1, 2).tolist())
    return out


@pytest.mark.parametrize("mode", ["LAYER", "REPLACE"])
def test_action_renamed_after_write_then_saved_reloaded_and_removed_gives_the_file_back(mode):
    rig = _rig()
    before = file_state()
    assert run_write(rig, on_conflict=mode) == {"FINISHED"}
    action = addon().blender.ownership.user_action(rig)
    action.name = "hero jump v2"
    rig = _reload()
    assert run_remove(rig) == {"FINISHED"}
    rig = _reload()
    assert rig.animation_data.action is not None and rig.animation_data.action.name == "hero jump v2"
    after = file_state()
    assert repr(after) == _renamed(before, ("RigAction", "hero jump v2")), first_difference(
        after, before)


@pytest.mark.parametrize("mode", ["LAYER", "REPLACE"])
def test_rig_renamed_after_write_then_removed_gives_the_file_back(mode):
    rig = _rig()
    before = file_state()
    assert run_write(rig, on_conflict=mode) == {"FINISHED"}
    rig.name = "Hero"
    rig = _reload("Hero")
    assert run_remove(rig) == {"FINISHED"}
    assert repr(file_state()) == _renamed(before, ("Rig", "Hero"))


@pytest.mark.parametrize("mode", ["LAYER", "REPLACE"])
def test_bone_renamed_after_write_then_removed_gives_the_animators_keys_back(mode):
    rig = _rig()
    action = rig.animation_data.action
    mine = _keys(rig, action)
    assert run_write(rig, on_conflict=mode) == {"FINISHED"}
    rig.data.bones["hips"].name = "pelvis"  # Blender renames the curves' paths with the bone
    configure(rig, com_bone="pelvis")
    rig = _reload()
    assert run_remove(rig) == {"FINISHED"}
    action = bpy.data.actions["RigAction"]
    assert rig.animation_data.action == action
    assert _keys(rig, action, "pelvis") == mine
    assert not [t.name for t in rig.animation_data.nla_tracks]
    assert "lw_state" not in rig and "lw_writes" not in action


def test_tracks_renamed_after_a_layer_then_removed_gives_the_file_back():
    rig = _rig()
    before = file_state()
    assert run_write(rig, on_conflict="LAYER") == {"FINISHED"}
    tracks = rig.animation_data.nla_tracks
    assert len(tracks) == 2
    tracks[0].name, tracks[1].name = "base (mine)", "the jump"
    rig = _reload()
    assert run_remove(rig) == {"FINISHED"}
    assert file_state() == before, first_difference(file_state(), before)


@pytest.mark.parametrize("order", ["AB", "BA"])
def test_two_rigs_sharing_one_action_written_with_replace_removed_in_turn(order):
    a = _rig("A")
    action = a.animation_data.action
    b = build_rig("B")
    addon().blender.compat.assign_action(b, action)
    mine = _keys(a, action)
    before = file_state()
    for rig in (a, b):
        configure(rig, height=0.4 if rig == a else 0.6, distance=0.3)
        assert run_write(rig, on_conflict="REPLACE") == {"FINISHED"}
    assert _keys(a, action) != mine
    first, second = (a, b) if order == "AB" else (b, a)
    configure(first)
    assert run_remove(first) == {"FINISHED"}
    assert _keys(a, action) != mine  # the other rig's jump is still there
    configure(second)
    assert run_remove(second) == {"FINISHED"}
    assert _keys(a, action) == mine
    assert file_state() == before, first_difference(file_state(), before)


def _key_at(rig, action, frame, value, index=0, bone="hips"):
    pb = rig.pose.bones[bone]
    pb.location[index] = value
    pb.keyframe_insert("location", index=index, frame=frame)


@pytest.mark.parametrize("mode", ["REPLACE", "ASK"])
def test_keys_the_animator_adds_after_a_write_are_kept_by_remove(mode, capfd):
    rig = build_rig()
    if mode == "REPLACE":
        add_user_keys(rig)
    configure(rig, height=0.4, distance=0.3)
    mine = _keys(rig, rig.animation_data.action)[1] if mode == "REPLACE" else []
    assert run_write(rig, on_conflict=mode) == {"FINISHED"}
    action = rig.animation_data.action
    assert len(_keys(rig, action)[1]) > 3  # the plan keys the body's vertical channel (bone Y)
    # on a channel leapwright keyed, and beside it (a bone it never keys)
    _key_at(rig, action, 90, 0.25, index=1)
    _key_at(rig, action, 91, 0.125, index=1, bone="spine")
    capfd.readouterr()
    assert run_remove(rig) == {"FINISHED"}
    assert _keys(rig, action)[1] == sorted(mine + [[90.0, 0.25]])
    assert _keys(rig, action, "spine")[1] == [[91.0, 0.125]]
    out = capfd.readouterr()
    said = " ".join(m for _lvl, m in reports(out.out + out.err))
    assert 'kept 1 key(s) you added or changed on pose.bones["hips"].location[1]' in said


def test_a_rerun_over_keys_the_animator_added_asks_first_and_replace_keeps_them():
    rig = build_rig()
    configure(rig, height=0.4)
    assert run_write(rig) == {"FINISHED"}
    action = rig.animation_data.action
    _key_at(rig, action, 90, 0.25, index=1)
    before = file_state()
    assert run_write(rig, on_conflict="ASK") == {"CANCELLED"}  # the added key makes the channel theirs
    assert file_state() == before, first_difference(file_state(), before)
    assert run_write(rig, on_conflict="REPLACE") == {"FINISHED"}
    assert [90.0, 0.25] not in _keys(rig, action)[1]  # written over, as asked
    assert run_remove(rig) == {"FINISHED"}
    assert _keys(rig, action)[1] == [[90.0, 0.25]]


def test_a_key_the_animator_moves_after_a_write_is_kept_and_the_rest_removed():
    rig = build_rig()
    configure(rig, height=0.4)
    assert run_write(rig) == {"FINISHED"}
    action = rig.animation_data.action
    fc = addon().blender.compat.find_fcurve(action, rig, 'pose.bones["hips"].location', 2)
    n = len(fc.keyframe_points)
    kp = fc.keyframe_points[n // 2]
    kp.co[1] += 0.05
    moved = (float(kp.co[0]), float(kp.co[1]))
    assert run_remove(rig) == {"FINISHED"}
    left = _keys(rig, action)
    assert left[2] == [list(np.float32(moved).astype(float))]
    assert left[0] is None and left[1] is None


def test_remove_after_a_layer_keeps_a_new_action_the_animator_keyed_into():
    rig = _rig()
    assert run_write(rig, on_conflict="LAYER") == {"FINISHED"}
    assert rig.animation_data.action is None  # the animator's action is under the layer
    _key_at(rig, None, 5, 0.3, index=2, bone="spine")  # Blender makes a new active action for it
    new = rig.animation_data.action.name
    assert new != "RigAction"
    assert run_remove(rig) == {"FINISHED"}
    rig = _reload()
    assert rig.animation_data.action is not None and rig.animation_data.action.name == new
    held = [s.action.name for t in rig.animation_data.nla_tracks for s in t.strips]
    assert held == ["RigAction"]  # still playing, in a track of its own name
    assert _keys(rig, bpy.data.actions["RigAction"])[0] is not None


def test_bone_named_twice_in_a_follow_through_bake_is_refused_and_changes_nothing():
    from scene_probe import refused
    from test_follow_through import _jumping_rig
    _jumping_rig()
    refused("names 'pony.2' twice", lambda: bpy.ops.leapwright.bake_follow_through(bones="pony.1,pony.2,pony.2"))
    assert not [a for a in bpy.data.actions if a.name.startswith("lw:")]
