"""Reading a production rig: Blender's bundled Rigify human rig, which the project did not build.

The truth is Rigify's own: its bones are named for the character's side (``.L`` is the
character's left, Rigify's naming convention), its deform bones carry the ``DEF-``
prefix and the rest its controls and mechanism, ``torso`` is the control that carries
the upper body and ``hips`` turns the pelvis under it, ``foot_ik``/``hand_ik`` are its
IK controls and ``root`` moves everything (Rigify's documentation of the human rig
type, and its generated UI). The meta-rig faces Blender's front view, the character's
left on +X (common practice; Rigify builds it so). Names are what the test checks; the
add-on never reads them.
"""

import bpy
import numpy as np
import pytest

import rigify_rig
from scene_probe import addon


def _settings(scene):
    return scene.leapwright_plan


@pytest.fixture
def generated():
    return rigify_rig.load_generated_rig()


@pytest.fixture
def metarig():
    return rigify_rig.load_metarig()


def test_generated_rig_is_read_from_its_deform_bones_with_the_sides_right(generated):
    rest, marks = addon().body.com.read_body(generated)
    text = marks.as_text()
    for side in "LR":
        assert text[f"shoulder.{side}"] == f"DEF-upper_arm.{side}@head"
        assert text[f"elbow.{side}"] == f"DEF-forearm.{side}@head"
        assert text[f"wrist.{side}"] == f"DEF-hand.{side}@head"
        assert text[f"hip.{side}"] == f"DEF-thigh.{side}@head"
        assert text[f"knee.{side}"] == f"DEF-shin.{side}@head"
        assert text[f"ankle.{side}"] == f"DEF-foot.{side}@head"
        assert text[f"toe_tip.{side}"] == f"DEF-toe.{side}@tail"
    assert text["vertex"] == "DEF-spine.006@tail"  # the head bone's tip, not a face bone or the ponytail
    # the character's left is on +X (Rigify builds its rigs facing -Y)
    assert np.allclose(rest.left, (1.0, 0.0, 0.0), atol=1e-6)
    assert all(generated.data.bones[n].use_deform for n in rest.names)


def test_metarig_reads_the_left_arm_as_its_left_and_the_toes_not_the_heel(metarig):
    # The meta-rig's lowest bone on each side is a heel guide lying across the foot
    # (heel.02); the toes are the bone carrying on from the foot.
    rest, marks = addon().body.com.read_body(metarig)
    text = marks.as_text()
    assert text["shoulder.L"] == "upper_arm.L@head" and text["shoulder.R"] == "upper_arm.R@head"
    assert text["toe_tip.L"] == "toe.L@tail" and text["ankle.R"] == "foot.R@head"
    assert np.allclose(rest.left, (1.0, 0.0, 0.0), atol=1e-6)


def test_body_model_weighs_the_generated_rig_without_a_hand_made_map(generated):
    model, marks, how = addon().body.com.body_model(generated)
    assert how == "found from the bone tree"
    # de Leva (1996, J Biomech 29(9):1223-1230, Table 4): 14 or more segments, shares summing to 1
    assert len(model.segment_names) >= 14
    assert model.fractions.sum() == pytest.approx(1.0, abs=1e-9)
    com = addon().body.com.whole_body_com(bpy.context.scene, generated, model, [1])[0]
    # standing COM of an adult at about 55-57 % of the height (Drillis & Contini, from memory):
    # Rigify's human is 1.98 m to the top of the head bone here
    assert 0.5 < com[2] / 1.98 < 0.62


def test_profile_names_the_controls_that_move_the_deform_skeleton(generated):
    profile = addon().rig.profile.known(generated)
    assert profile["body"] == "torso" and profile["whole"] == "root" and profile["legs"] == "stretch"
    for side in "LR":
        assert profile[f"foot.{side}"] == f"foot_ik.{side}"
        assert profile[f"hand.{side}"] == f"hand_ik.{side}"
        bone, _, axis = profile[f"heel.{side}"].partition("@")
        assert bone.startswith(("foot_heel_ik", "foot_spin_ik", "foot_roll")) and axis in ("+X", "-X")
        # the arms are in IK (Rigify's default): no FK control moves them
        assert f"upper_arm.{side}" not in profile


def test_profile_on_the_metarig_is_its_own_bones(metarig):
    profile = addon().rig.profile.known(metarig)
    assert profile["upper_arm.L"] == "upper_arm.L" and profile["forearm.R"] == "forearm.R"
    assert profile["body"] == "spine"  # no IK legs: the pelvis bone carries everything
    assert "foot.L" not in profile


def test_profile_text_round_trips_and_is_kept_on_the_rig(generated):
    prof = addon().rig.profile
    found = prof.known(generated)
    prof.save(generated, found)
    assert prof.stored(generated) == found
    generated[prof.PROFILE_PROPERTY] = "body=chest; foot.L=foot_ik.L"
    assert prof.known(generated) == {"body": "chest", "foot.L": "foot_ik.L"}


def test_find_arm_bones_on_the_ik_arms_finds_the_fk_controls_and_the_switch_and_changes_nothing(generated):
    # Rigify's arms start in IK (IK_FK = 0 on upper_arm_parent); its FK controls move them once
    # the switch is at 1 (Rigify's documentation). Finding them puts the switch back.
    from scene_probe import file_state
    scene = bpy.context.scene
    _settings(scene).rig = generated
    bpy.context.view_layer.objects.active = generated
    before = file_state()
    assert bpy.ops.leapwright.find_arm_bones() == {"FINISHED"}
    arms = scene.leapwright_arms
    assert (arms.upper_arm_left, arms.forearm_left) == ("upper_arm_fk.L", "forearm_fk.L")
    assert (arms.upper_arm_right, arms.forearm_right) == ("upper_arm_fk.R", "forearm_fk.R")
    assert (arms.ik_fk_left, arms.ik_fk_right) == ('upper_arm_parent.L["IK_FK"] = 1', 'upper_arm_parent.R["IK_FK"] = 1')
    assert file_state() == before


def test_find_arm_bones_on_the_generated_rig_in_fk_picks_the_fk_controls(generated):
    for side in "LR":  # Rigify's IK-FK switch: 1 is FK
        generated.pose.bones[f"upper_arm_parent.{side}"]["IK_FK"] = 1.0
    scene = bpy.context.scene
    _settings(scene).rig = generated
    bpy.context.view_layer.objects.active = generated
    assert bpy.ops.leapwright.find_arm_bones() == {"FINISHED"}
    arms = scene.leapwright_arms
    assert (arms.upper_arm_left, arms.forearm_left) == ("upper_arm_fk.L", "forearm_fk.L")
    assert (arms.upper_arm_right, arms.forearm_right) == ("upper_arm_fk.R", "forearm_fk.R")


def test_find_arm_bones_on_the_metarig_picks_the_left_arm_on_the_left(metarig):
    scene = bpy.context.scene
    _settings(scene).rig = metarig
    bpy.context.view_layer.objects.active = metarig
    assert bpy.ops.leapwright.find_arm_bones() == {"FINISHED"}
    arms = scene.leapwright_arms
    assert (arms.upper_arm_left, arms.forearm_left) == ("upper_arm.L", "forearm.L")


@pytest.mark.parametrize("picked, expected", [("hips", "torso"), ("torso", "torso"), ("chest", "torso")])
def test_use_active_bone_keeps_a_bone_that_carries_the_upper_body_or_names_the_one_that_does(
        generated, picked, expected):
    generated.data.bones.active = generated.data.bones[picked]
    bpy.context.view_layer.objects.active = generated
    assert bpy.ops.leapwright.use_active_bone() == {"FINISHED"}
    assert _settings(bpy.context.scene).com_bone == expected
    # the pose is left as it was
    assert all(tuple(pb.location) == (0.0, 0.0, 0.0) for pb in generated.pose.bones)


def test_unreadable_rig_message_has_no_code_names():
    arm = bpy.data.armatures.new("snake")
    obj = bpy.data.objects.new("snake", arm)
    bpy.context.scene.collection.objects.link(obj)
    bpy.context.view_layer.objects.active = obj
    bpy.ops.object.mode_set(mode="EDIT")
    for i in range(4):
        b = arm.edit_bones.new(f"s{i}")
        b.head, b.tail = (0, i * 0.2, 0.1), (0, (i + 1) * 0.2, 0.1)
        if i:
            b.parent = arm.edit_bones[f"s{i - 1}"]
    bpy.ops.object.mode_set(mode="OBJECT")
    with pytest.raises(addon().body.com.BodyError) as err:
        addon().body.com.read_body(obj)
    text = str(err.value)
    assert "fill in the bone map" in text
    for code in ("map_by_hand", "mass_model_from_bone_masses", "dict", "{'"):
        assert code not in text


def test_find_rig_controls_fills_in_the_character_and_keeps_the_profile_on_the_rig(generated):
    scene = bpy.context.scene
    s = _settings(scene)
    s.rig = generated
    before = [tuple(pb.location) + tuple(pb.rotation_quaternion) for pb in generated.pose.bones]
    assert bpy.ops.leapwright.find_rig_controls() == {"FINISHED"}
    assert (s.com_bone, s.foot_left, s.foot_right) == ("torso", "foot_ik.L", "foot_ik.R")
    text = generated[addon().rig.profile.PROFILE_PROPERTY]
    assert "body=torso" in text and "hand.L=hand_ik.L" in text and "legs=stretch" in text
    # the trial moves put every control back
    assert [tuple(pb.location) + tuple(pb.rotation_quaternion) for pb in generated.pose.bones] == before
