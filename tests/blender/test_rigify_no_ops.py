"""Keys that do not play on Rigify's rig are reported, never called done.

Rigify's deform bones (``DEF-``) copy the mechanism through constraints, and in IK its
FK arm controls move nothing (Rigify's human rig documentation); the ponytail's own
controls (``ponytail``, ``ponytail.001``, ``ponytail.002``, a ``limbs.simple_tentacle``
chain) do move its deform bones. Whether anything moves is read here from the
evaluated rig through the depsgraph.
"""

import bpy
import numpy as np

import rigify_rig

DEF_TAIL = ("DEF-ponytail", "DEF-ponytail.001", "DEF-ponytail.002")


def _jumping_rig():
    return rigify_rig.load_jumping_rig()


def _bake(bones):
    return bpy.ops.leapwright.bake_follow_through(bones=",".join(bones))


def _world_tips(rig, bones, frames):
    out = []
    for f in frames:
        bpy.context.scene.frame_set(int(f))
        ev = rig.evaluated_get(bpy.context.evaluated_depsgraph_get())
        out.append([np.array(ev.matrix_world @ ev.pose.bones[b].tail) for b in bones])
    return np.array(out)


def test_follow_through_on_deform_bones_is_reported_as_not_playing(capsys):
    _jumping_rig()
    assert _bake(DEF_TAIL) == {"FINISHED"}
    out = capsys.readouterr().out
    assert "none of them plays" in out
    assert "the keys on 'DEF-ponytail.001' do not move it: a constraint" in out


def test_follow_through_on_the_ponytail_controls_plays_on_the_deform_bones(capsys):
    rig = _jumping_rig()
    scene = bpy.context.scene
    frames = np.arange(scene.frame_start, scene.frame_end + 1, 2)
    before = _world_tips(rig, DEF_TAIL, frames)
    assert _bake(("ponytail", "ponytail.001", "ponytail.002")) == {"FINISHED"}
    out = capsys.readouterr().out
    assert "largest swing" in out and "do not move" not in out
    after = _world_tips(rig, DEF_TAIL, frames)
    # the baked lag shows on the mesh's bones: the tip of the ponytail moves by centimetres
    assert np.linalg.norm(after - before, axis=2).max() > 0.01


def test_arm_swing_on_fk_controls_of_arms_in_ik_is_reported(capsys):
    _jumping_rig()
    arms = bpy.context.scene.leapwright_arms
    arms.upper_arm_left, arms.forearm_left = "upper_arm_fk.L", "forearm_fk.L"
    arms.upper_arm_right, arms.forearm_right = "upper_arm_fk.R", "forearm_fk.R"
    assert bpy.ops.leapwright.place_arm_swing() == {"FINISHED"}
    out = capsys.readouterr().out
    assert "'upper_arm_fk.L' moves but nothing that deforms the mesh moves with it" in out


def test_arm_swing_on_fk_controls_with_the_arms_in_fk_plays(capsys):
    rig = _jumping_rig()
    for side in "LR":
        rig.pose.bones[f"upper_arm_parent.{side}"]["IK_FK"] = 1.0  # Rigify: 1 is FK
    rig.update_tag()
    assert bpy.ops.leapwright.find_arm_bones() == {"FINISHED"}
    assert bpy.ops.leapwright.place_arm_swing() == {"FINISHED"}
    out = capsys.readouterr().out
    assert "nothing that deforms" not in out and "do not move" not in out
