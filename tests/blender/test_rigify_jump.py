"""Writing a jump on Rigify's generated human rig, and reading back what plays.

The rig is Blender's own (built by ``rigify_rig``); the controls are Rigify's
(``torso`` carries the upper body, ``foot_ik`` are the IK feet, ``foot_spin_ik`` and
``foot_heel_ik`` roll the foot: Rigify's human rig documentation). What plays is read
here from the evaluated deform bones (world space, scene time) and compared with free
fall (a physics law: in flight the height's second difference is -g/fps² per frame)
and with the legs' rest lengths.
"""

import bpy
import numpy as np
import pytest

import rigify_rig
from scene_probe import addon, snapshot


def _settings(scene):
    return scene.leapwright_plan


def _configure(rig, body="torso", feet=("foot_ik.L", "foot_ik.R"), **values):
    s = _settings(bpy.context.scene)
    s.rig, s.com_bone = rig, body
    s.foot_left, s.foot_right = feet
    for k, v in values.items():
        setattr(s, k, v)
    bpy.context.view_layer.objects.active = rig
    return s


def _played(rig):
    return addon().plan.operators.LAST_PLAYED[rig.name]


def _deform_world(rig, frames, bones):
    """World heads and tails [m] of ``bones`` at each frame, through the depsgraph."""
    scene = bpy.context.scene
    heads, tails = [], []
    for f in frames:
        scene.frame_set(int(f))
        ev = rig.evaluated_get(bpy.context.evaluated_depsgraph_get())
        heads.append([np.array(ev.matrix_world @ ev.pose.bones[b].head) for b in bones])
        tails.append([np.array(ev.matrix_world @ ev.pose.bones[b].tail) for b in bones])
    return np.array(heads), np.array(tails)


@pytest.fixture(scope="module")
def written_state():
    return {}


def test_jump_on_rigify_plays_its_flight_keeps_the_legs_in_reach_and_the_balls_planted():
    rig = rigify_rig.load_generated_rig()
    _configure(rig)
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    lines = _played(rig)
    assert lines[0].startswith("played:") and lines[1:] == [], lines
    plan, _ = addon().plan.link.plan_for(bpy.context.scene)
    fps = bpy.context.scene.render.fps
    hop = plan.hops[0]
    start = _settings(bpy.context.scene).start_frame
    frames = np.arange(start, start + int(plan.duration_s * fps) + 1)
    bones = ["DEF-spine", "DEF-thigh.L", "DEF-shin.L", "DEF-foot.L", "DEF-thigh.R", "DEF-shin.R", "DEF-foot.R"]
    heads, tails = _deform_world(rig, frames, bones)
    # free fall of the pelvis between take-off and touchdown: second difference -g/fps^2
    t = (frames - start) / fps
    air = np.flatnonzero((t > hop.takeoff_time_s) & (t < hop.touchdown_time_s))
    z = heads[air, 0, 2]
    assert np.diff(z, 2) == pytest.approx(-plan.gravity / fps ** 2, abs=2e-4)
    # every deform leg within 1 % of its rest length (thigh head -> shin head -> foot head)
    rest = rig.data.bones
    for i, side in ((1, "L"), (4, "R")):
        rest_len = ((rest[f"DEF-shin.{side}"].head_local - rest[f"DEF-thigh.{side}"].head_local).length
                    + (rest[f"DEF-foot.{side}"].head_local - rest[f"DEF-shin.{side}"].head_local).length)
        length = (np.linalg.norm(heads[:, i + 1] - heads[:, i], axis=1)
                  + np.linalg.norm(heads[:, i + 2] - heads[:, i + 1], axis=1))
        assert length.max() <= 1.01 * rest_len, (side, length.max() / rest_len)
    # the ball of each foot (the foot bone's tail) stays on its spot until take-off
    ground = np.flatnonzero(t <= hop.takeoff_time_s)
    for i in (3, 6):
        balls = tails[ground, i]
        assert np.linalg.norm(balls - balls[0], axis=1).max() < 0.01
    # the heels were lifted through Rigify's foot-roll control, not the deform bones
    action = rig.animation_data.action
    paths = {fc.data_path for fc in addon().blender.compat.fcurves(action, rig)}
    assert not any("DEF-" in p for p in paths)
    assert any("foot_spin_ik" in p or "foot_heel_ik" in p for p in paths)


def test_the_ik_hands_come_along_with_the_body():
    # Rigify's IK hands hang from 'root', which stays put: moved with the body, the
    # deform arms keep their length (shoulder -> elbow -> wrist, DEF bones) within 1 %.
    rig = rigify_rig.load_generated_rig()
    _configure(rig)
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    plan, _ = addon().plan.link.plan_for(bpy.context.scene)
    start = _settings(bpy.context.scene).start_frame
    frames = np.arange(start, start + int(plan.duration_s * bpy.context.scene.render.fps) + 1)
    for side in "LR":
        bones = [f"DEF-upper_arm.{side}", f"DEF-forearm.{side}", f"DEF-hand.{side}"]
        heads, _ = _deform_world(rig, frames, bones)
        rest = rig.data.bones
        rest_len = ((rest[bones[1]].head_local - rest[bones[0]].head_local).length
                    + (rest[bones[2]].head_local - rest[bones[1]].head_local).length)
        length = np.linalg.norm(heads[:, 1] - heads[:, 0], axis=1) + np.linalg.norm(heads[:, 2] - heads[:, 1], axis=1)
        assert length.max() <= 1.01 * rest_len and length.min() >= 0.9 * rest_len, (side, length / rest_len)


def test_a_body_bone_that_does_not_carry_the_body_is_reported_with_the_one_that_does():
    rig = rigify_rig.load_generated_rig()
    addon().rig.profile.save(rig, addon().rig.profile.known(rig))
    _configure(rig, body="hips")
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    problems = " ".join(_played(rig)[1:])
    assert "the control that carries the upper body is 'torso'" in problems


def test_a_constraint_on_the_body_bone_is_named_as_the_cause():
    rig = rigify_rig.load_generated_rig()
    addon().rig.profile.save(rig, addon().rig.profile.known(rig))  # found before the constraint was added
    target = bpy.data.objects.new("anchor", None)
    bpy.context.scene.collection.objects.link(target)
    c = rig.pose.bones["torso"].constraints.new("COPY_LOCATION")
    c.name = "Pin to anchor"
    c.target = target
    c.influence = 0.5  # half-way to an anchor at the origin
    _configure(rig)
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    problems = " ".join(_played(rig)[1:])
    assert "a constraint ('Pin to anchor') on 'torso' overrides its keys" in problems


def test_a_moving_parent_and_time_remapping_are_named_as_causes():
    rig = rigify_rig.load_generated_rig()
    parent = bpy.data.objects.new("turntable", None)
    bpy.context.scene.collection.objects.link(parent)
    rig.parent = parent
    for f, x in ((1, 0.0), (60, 0.5)):
        parent.location = (x, 0.0, 0.0)
        parent.keyframe_insert("location", frame=f)
    _configure(rig)
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    assert "the rig's parent 'turntable' moves or turns during the jump" in " ".join(_played(rig)[1:])
    bpy.ops.leapwright.remove_plan()
    rig.parent = None
    scene = bpy.context.scene
    scene.render.frame_map_old, scene.render.frame_map_new = 100, 50
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    assert "the scene's time is remapped" in " ".join(_played(rig)[1:])


def test_removal_restores_the_rigify_file_exactly():
    rig = rigify_rig.load_generated_rig()
    _configure(rig)
    before = snapshot()
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    assert bpy.ops.leapwright.remove_plan() == {"FINISHED"}
    assert snapshot() == before


def test_check_jump_reports_the_deform_legs_stretching():
    # Written without foot controls, Rigify's IK feet stay on the floor while the body rises:
    # its IK stretches the leg bones. Measured here from the deform bones, then read from
    # Check Jump's findings.
    rig = rigify_rig.load_generated_rig()
    _configure(rig, feet=("", ""))
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    scene = bpy.context.scene
    plan, _ = addon().plan.link.plan_for(scene)
    scene.frame_start = _settings(scene).start_frame
    scene.frame_end = scene.frame_start + int(plan.duration_s * scene.render.fps)
    frames = np.arange(scene.frame_start, scene.frame_end + 1)
    heads, _ = _deform_world(rig, frames, ["DEF-thigh.L", "DEF-shin.L", "DEF-foot.L"])
    rest = rig.data.bones
    rest_len = ((rest["DEF-shin.L"].head_local - rest["DEF-thigh.L"].head_local).length
                + (rest["DEF-foot.L"].head_local - rest["DEF-shin.L"].head_local).length)
    length = np.linalg.norm(heads[:, 1] - heads[:, 0], axis=1) + np.linalg.norm(heads[:, 2] - heads[:, 1], axis=1)
    assert length.max() / rest_len > 1.03  # the measured truth: more than 3 % longer
    assert bpy.ops.leapwright.check_jump() == {"FINISHED"}
    found = [(f.kind, f.message) for f in scene.leapwright_check.findings if f.kind == "leg stretch"]
    assert any("left leg" in m for _k, m in found) and any("right leg" in m for _k, m in found)
    worst = max(float(m.split("up to ")[1].split(" %")[0]) for _k, m in found if "left leg" in m)
    assert worst == pytest.approx(100 * (length.max() / rest_len - 1.0), abs=0.2)
