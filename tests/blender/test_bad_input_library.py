"""Linked rigs, library overrides and linked actions in real Blender: nothing lost on save.

Blender does not save changes to linked data (linked data is read-only in the
file that links it), and a library override saves only its changes to what the
library already holds: new custom properties on an override are gone after
save and reload (checked below). leapwright keeps on the rig the record that
lets "remove" take its work back, and the apparent weight, so a linked rig and
a library override are both refused with a report that says why and how to go
on (make the rig local), and the file is left as it was. A local rig that plays
a linked action gets its keys in a local copy of that action; removal plays the
linked action again, and keys the animator added to the copy stay. Those cases
are saved and reloaded.

Every refusal is checked two ways: the operator's ERROR report (a RuntimeError
from ``bpy.ops``), and :func:`scene_probe.file_state` equal before and after.
"""

import os
import tempfile

import bpy
import pytest

from rig_builder import add_user_keys, build_rig, configure
from scene_probe import (_all_fcurve_sets, addon, file_state, first_difference, flight_error, refused,
    run_remove, run_write)


def _library_file(make_rig=None, bone="hips"):
    """A .blend in a temp dir holding a rig with the animator's keys on ``bone``."""
    rig = make_rig() if make_rig else build_rig()
    add_user_keys(rig, bone=bone)
    path = os.path.join(tempfile.mkdtemp(prefix="lw-lib-"), "character.blend")
    bpy.data.libraries.write(path, {rig}, fake_user=True)
    bpy.ops.wm.read_factory_settings(use_empty=True)
    import conftest
    conftest.install_or_enable()
    return path


def _link_rig(path):
    with bpy.data.libraries.load(path, link=True) as (_src, dst):
        dst.objects = ["Rig"]
    obj = dst.objects[0]
    bpy.context.scene.collection.objects.link(obj)
    bpy.context.view_layer.objects.active = obj
    return obj


def _override_rig(bone="hips"):
    rig = _link_rig(_library_file(bone=bone)).override_create(remap_local_usages=True)
    bpy.context.view_layer.objects.active = rig
    assert rig.override_library is not None and rig.animation_data.action.library is not None
    configure(rig, height=0.4)
    return rig


def _rig_playing_a_linked_action(bone="hips"):
    """A local rig (the shot's own) whose active action is linked from the character file."""
    path = _library_file(bone=bone)
    with bpy.data.libraries.load(path, link=True) as (_src, dst):
        dst.actions = ["RigAction"]
    rig = build_rig("Shot rig")
    addon().blender.compat.assign_action(rig, dst.actions[0])
    configure(rig, height=0.4)
    assert rig.animation_data.action.library is not None
    return rig


def _written_actions_are_local():
    own = addon().blender.ownership
    for action in bpy.data.actions:
        for _label, fcs, _g in _all_fcurve_sets(action):
            if any(fc.group is not None and fc.group.name.startswith(own.PREFIX) for fc in fcs):
                assert action.library is None, f"leapwright keys went into linked action {action.name}"


def _save_and_reload(local_rig=True):
    """Save the file, open it again, and return its rig (the local one, or the override)."""
    path = os.path.join(tempfile.mkdtemp(prefix="lw-shot-"), "shot.blend")
    bpy.ops.wm.save_as_mainfile(filepath=path)
    bpy.ops.wm.open_mainfile(filepath=path)
    rig = next(o for o in bpy.data.objects if o.library is None and o.type == "ARMATURE"
               and (o.override_library is None) == local_rig)
    bpy.context.view_layer.objects.active = rig
    return rig


@pytest.mark.parametrize("mode", ["ASK", "REPLACE", "LAYER"])
def test_linked_rig_is_refused(mode):
    rig = _link_rig(_library_file())
    assert rig.library is not None
    configure(rig)
    refused("linked|library", lambda: run_write(rig, on_conflict=mode))


def test_bake_follow_through_on_a_linked_rig_is_refused():
    from test_follow_through import _ponytail_rig
    rig = _link_rig(_library_file(_ponytail_rig))
    assert rig.library is not None
    bpy.context.scene.frame_end = 40
    refused("linked|library", lambda: bpy.ops.leapwright.bake_follow_through(bones="pony.1,pony.2,pony.3"))


def test_new_properties_on_an_override_are_lost_on_reload():
    # Why overrides are refused: the fact in Blender itself, on this version.
    rig = _override_rig()
    rig["lw_probe"] = 1.0
    rig = _save_and_reload(local_rig=False)
    assert "lw_probe" not in rig


@pytest.mark.parametrize("mode", ["ASK", "REPLACE", "LAYER"])
def test_library_override_is_refused_and_says_how_to_go_on(mode):
    rig = _override_rig()
    refused("library override.*Make Local", lambda: run_write(rig, on_conflict=mode))


def test_bake_follow_through_on_a_library_override_is_refused():
    from test_follow_through import _ponytail_rig
    rig = _link_rig(_library_file(_ponytail_rig)).override_create(remap_local_usages=True)
    bpy.context.view_layer.objects.active = rig
    bpy.context.scene.frame_end = 40
    refused("library override", lambda: bpy.ops.leapwright.bake_follow_through(bones="pony.1,pony.2,pony.3"))


@pytest.mark.parametrize("mode,bone", [("ASK", "spine"), ("REPLACE", "hips"), ("LAYER", "hips")])
def test_linked_action_gets_a_local_copy_and_removal_plays_it_again(mode, bone):
    rig = _rig_playing_a_linked_action(bone)
    linked = rig.animation_data.action
    before = file_state()
    assert run_write(rig, on_conflict=mode) == {"FINISHED"}
    _written_actions_are_local()
    assert linked.library is not None and rig.animation_data.action != linked
    assert run_remove(rig) == {"FINISHED"}
    assert rig.animation_data.action == linked
    assert file_state() == before, first_difference(file_state(), before)


def test_linked_action_with_a_clash_asks_and_writes_nothing():
    rig = _rig_playing_a_linked_action("hips")
    before = file_state()
    assert run_write(rig, on_conflict="ASK") == {"CANCELLED"}
    assert file_state() == before, first_difference(file_state(), before)


@pytest.mark.parametrize("mode", ["REPLACE", "LAYER"])
def test_keys_over_a_linked_action_survive_save_and_reload_and_removal_plays_it_again(mode):
    rig = _rig_playing_a_linked_action("hips")
    before = file_state()
    assert run_write(rig, on_conflict=mode) == {"FINISHED"}
    planned = flight_error(rig)
    rig = _save_and_reload()
    # The reloaded shot plays the jump as written (over the library's keys when layered): the keys were saved.
    assert flight_error(rig) == pytest.approx(planned, abs=1e-9)
    assert mode == "LAYER" or planned < 2e-4
    bpy.context.scene.frame_set(1)  # where `before` was taken: the animator's keys give the rest pose
    assert run_remove(rig) == {"FINISHED"}
    assert rig.animation_data.action.library is not None
    assert file_state() == before, first_difference(file_state(), before)


def test_keys_the_animator_adds_to_the_local_copy_are_kept_on_removal():
    rig = _rig_playing_a_linked_action("spine")
    assert run_write(rig) == {"FINISHED"}
    copy = rig.animation_data.action
    assert copy.library is None
    pb = rig.pose.bones["spine"]
    pb.rotation_mode = "XYZ"
    pb.rotation_euler = (0.2, 0.0, 0.0)
    pb.keyframe_insert("rotation_euler", frame=12)  # the animator's own work in the shot
    assert run_remove(rig) == {"FINISHED"}
    assert rig.animation_data.action == copy
    paths = {fc.data_path for fc in addon().blender.compat.fcurves(copy, rig)}
    assert paths == {'pose.bones["spine"].location', 'pose.bones["spine"].rotation_euler'}
    assert addon().blender.ownership.STATE_PROPERTY not in rig
    _written_actions_are_local()
