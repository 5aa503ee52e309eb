"""A rig duplicated with Shift+D, and settings-only operators on a rig linked from a library.

Blender's Duplicate (``object.duplicate``, Shift+D) copies an object's custom properties,
so the copy carries its original's leapwright identity (``lw_id``); after it each rig must
answer for itself: removing the jump from one leaves the other's exactly as it was. Linked
data cannot be changed (Blender's library linking), but choosing a linked rig, finding its
arms and going to a finding only fill in leapwright's settings, so they run.
"""

import bpy
import pytest

from rig_builder import add_user_keys, build_rig, configure
from scene_probe import addon, file_state, first_difference

ID = "lw_id"


def _state_of(name):
    """The file state's record of one object and of the actions it plays (by their names)."""
    state = file_state()
    obj = next(o for o in state["objects"] if o[0] == name)
    played = {a.name for a in _actions(bpy.data.objects[name])}
    return obj[3:], tuple(a[1:] for a in state["actions"] if a[0] in played)


def _actions(obj):
    ad = obj.animation_data
    out = [ad.action] if ad and ad.action else []
    return out + [s.action for t in (ad.nla_tracks if ad else ()) for s in t.strips if s.action]


def _duplicate(rig):
    for o in bpy.context.scene.objects:
        o.select_set(o == rig)
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.object.duplicate() == {"FINISHED"}
    copy = bpy.context.view_layer.objects.active
    assert copy != rig
    return copy


@pytest.mark.parametrize("on_conflict", ["REPLACE", "LAYER"])
def test_a_duplicated_rig_gets_its_own_identity_and_each_removal_takes_back_only_its_own(on_conflict):
    rig = build_rig()
    add_user_keys(rig)
    configure(rig, height=0.4)
    bpy.context.view_layer.objects.active = rig
    before = _state_of(rig.name)
    assert bpy.ops.leapwright.write_plan(on_conflict=on_conflict) == {"FINISHED"}
    written = _state_of(rig.name)
    copy = _duplicate(rig)
    assert copy.get(ID) == rig.get(ID)  # what Blender does: the copy answers to the original's id
    bpy.context.scene.leapwright_plan.rig = copy
    assert bpy.ops.leapwright.remove_plan() == {"FINISHED"}
    assert copy.get(ID) != rig.get(ID)
    assert _state_of(rig.name) == written, first_difference(_state_of(rig.name), written)
    # the copy's own animation is back to the animator's keys (as the original's were before)
    copy_state = _state_of(copy.name)
    assert copy_state[1] == before[1], first_difference(copy_state[1], before[1])
    bpy.context.scene.leapwright_plan.rig = rig
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.remove_plan() == {"FINISHED"}
    assert _state_of(rig.name) == before, first_difference(_state_of(rig.name), before)


def test_the_original_keeps_its_identity_when_it_was_written_first_in_this_session_even_if_renamed():
    rig = build_rig()
    configure(rig, height=0.4)
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    ident, written = rig.get(ID), _state_of(rig.name)
    copy = _duplicate(rig)
    rig.name, copy.name = "Zebra.002", "Ant"  # Blender's copy naming would now take the copy for the original
    bpy.context.scene.leapwright_plan.rig = copy
    assert bpy.ops.leapwright.remove_plan() == {"FINISHED"}
    assert rig.get(ID) == ident and copy.get(ID) != ident
    assert _state_of(rig.name) == written, first_difference(_state_of(rig.name), written)


def _linked_other_style():
    """The other-style skeleton (test_other_style_rig), saved to a library file and linked back in."""
    import os
    import tempfile
    from test_other_style_rig import build_other_style_rig
    built = build_other_style_rig("Linked")
    path = os.path.join(tempfile.mkdtemp(prefix="lw-link-"), "character.blend")
    bpy.data.libraries.write(path, {built}, fake_user=True)
    bpy.data.objects.remove(built)
    with bpy.data.libraries.load(path, link=True) as (_src, dst):
        dst.objects = ["Linked"]
    rig = dst.objects[0]
    bpy.context.scene.collection.objects.link(rig)
    assert rig.library is not None
    return rig


def test_settings_only_operators_run_on_a_linked_rig_and_writers_stay_refused():
    rig = _linked_other_style()
    scene = bpy.context.scene
    bpy.context.view_layer.objects.active = rig
    rig.data.bones.active = rig.data.bones["jnt_pelvis"]
    before = file_state()
    assert bpy.ops.leapwright.use_active_bone() == {"FINISHED"}
    assert scene.leapwright_plan.rig == rig and scene.leapwright_plan.com_bone == "jnt_pelvis"
    assert bpy.ops.leapwright.find_arm_bones() == {"FINISHED"}
    arms = scene.leapwright_arms
    assert (arms.upper_arm_left, arms.upper_arm_right) == ("jnt_lf_arm", "jnt_rt_arm")  # as built
    finding = scene.leapwright_check.findings.add()
    finding.kind, finding.first_frame, finding.last_frame = "note", 7, 9
    assert bpy.ops.leapwright.go_to_finding(index=0) == {"FINISHED"}
    assert scene.frame_current == 7
    scene.frame_set(before["scenes"][0][3][2])
    assert file_state() == before, first_difference(file_state(), before)
    with pytest.raises(RuntimeError, match="linked"):
        bpy.ops.leapwright.write_plan()
    with pytest.raises(RuntimeError, match="linked"):
        bpy.ops.leapwright.place_arm_swing()
