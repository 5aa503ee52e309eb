"""Every capability on Rigify's generated human rig, read back from the evaluated deform bones.

The rig is Blender's own (built by ``rigify_rig``, cached per run); its rig profile (which
control moves what, found by trial moves) is found once per module and put on every fresh
copy, so each test appends the cached rig and starts from a blank file. Truths used:
Rigify's naming (``.L`` is the character's left, ``DEF-`` bones deform, ``IK_FK`` on
``upper_arm_parent`` is its arms' IK-FK switch, 1 = FK: Rigify's human rig documentation);
the meta-rig faces -Y (common practice; Rigify builds it so); free fall (a physics law: in
flight the centre of mass follows z = z0 + v t - g t²/2); an arm swing that peaks at take-off
(Lees, Vanrenterghem & De Clercq 2004, J Biomech 37:1929-1940); segment masses of de Leva 1996
(Table 4, male) for the centre of mass the test computes itself.
"""

import math

import bpy
import numpy as np
import pytest
from mathutils import Quaternion

import rigify_rig
from scene_probe import addon, peak_frame, snapshot

FORWARD = np.array([0.0, -1.0, 0.0])  # the generated rig faces -Y
UP = np.array([0.0, 0.0, 1.0])
G = 9.80665  # standard gravity [m/s^2] (CGPM 1901), the panel's default
LEGS = {s: (f"DEF-thigh.{s}", f"DEF-shin.{s}", f"DEF-foot.{s}") for s in "LR"}
ARMS = {s: (f"DEF-upper_arm.{s}", f"DEF-forearm.{s}", f"DEF-hand.{s}") for s in "LR"}


@pytest.fixture(scope="module")
def profile_text():
    """The generated rig's profile, found once by the add-on's trial moves (arms in FK)."""
    bpy.ops.wm.read_factory_settings(use_empty=True)
    rig = rigify_rig.load_generated_rig()
    _to_fk(rig)
    a = addon()
    return a.rig.profile.as_text(a.rig.profile.refind(rig))


def _to_fk(rig, value=1.0):
    for side in "LR":  # Rigify's IK-FK switch: 1 is FK
        rig.pose.bones[f"upper_arm_parent.{side}"]["IK_FK"] = value
    rig.update_tag()
    bpy.context.view_layer.update()


def _rig(profile_text, fk=True):
    rig = rigify_rig.load_generated_rig()
    if fk:
        _to_fk(rig)
        rig[addon().rig.profile.PROFILE_PROPERTY] = profile_text
    return rig


def _write(rig):
    scene = bpy.context.scene
    s = scene.leapwright_plan
    s.rig, s.com_bone, s.foot_left, s.foot_right = rig, "torso", "foot_ik.L", "foot_ik.R"
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    plan = addon().plan.link.plan_for(scene)[0]
    scene.frame_start = s.start_frame
    scene.frame_end = s.start_frame + int(math.ceil(plan.duration_s * _fps(scene))) + 4
    return plan


def _fps(scene):
    return scene.render.fps / scene.render.fps_base


def _events(scene, plan):
    """Propulsion start, take-off and touchdown [scene frames] of the written plan."""
    fps, start = _fps(scene), float(scene.leapwright_plan.start_frame)
    push = next(p for p in plan.phases if p.name == "propulsion")
    hop = plan.hops[0]
    return start + push.start_s * fps, start + hop.takeoff_time_s * fps, start + hop.touchdown_time_s * fps


def _heads(rig, frames, bones):
    """World heads [m] (frames, bones, 3) through the depsgraph, at (fractional) scene frames."""
    scene, out = bpy.context.scene, []
    for f in frames:
        whole = int(math.floor(f))
        scene.frame_set(whole, subframe=float(f - whole))
        ev = rig.evaluated_get(bpy.context.evaluated_depsgraph_get())
        out.append([np.array(ev.matrix_world @ ev.pose.bones[b].head) for b in bones])
    return np.array(out)


def _stretch(rig, chain, frames):
    """Largest length of a three-joint chain (head to head to head) over its rest length, minus 1."""
    rest = rig.data.bones
    rest_len = sum((rest[b].head_local - rest[a].head_local).length for a, b in zip(chain, chain[1:]))
    h = _heads(rig, frames, chain)
    length = np.linalg.norm(h[:, 1] - h[:, 0], axis=1) + np.linalg.norm(h[:, 2] - h[:, 1], axis=1)
    return float(length.max() / rest_len - 1.0), float(length.min() / rest_len - 1.0)


def _elevation(rig, frames, side="L"):
    """Elevation [deg] of the deform shoulder-to-wrist line, -90 hanging, + in front."""
    h = _heads(rig, frames, (ARMS[side][0], ARMS[side][2]))
    d = h[:, 1] - h[:, 0]
    return np.degrees(np.unwrap(np.arctan2(d @ FORWARD, -(d @ UP))))


def _placed_swing(profile_text):
    rig = _rig(profile_text)
    plan = _write(rig)
    assert bpy.ops.leapwright.find_arm_bones() == {"FINISHED"}
    arms = bpy.context.scene.leapwright_arms
    assert (arms.upper_arm_left, arms.upper_arm_right) == ("upper_arm_fk.L", "upper_arm_fk.R")
    assert bpy.ops.leapwright.place_arm_swing() == {"FINISHED"}
    return rig, plan


def test_arm_swing_on_rigify_peaks_at_take_off_in_the_deform_arms_which_keep_their_length(profile_text):
    rig, plan = _placed_swing(profile_text)
    scene = bpy.context.scene
    push, takeoff, touchdown = _events(scene, plan)
    frames = np.arange(push - 6.0, takeoff + 8.0, 0.5)
    for side in "LR":
        elev = _elevation(rig, frames, side)
        assert abs(peak_frame(frames, elev) - takeoff) <= 1.0, side  # Lees et al. 2004: peak at take-off
        # 0 hanging, + in front: from behind the body to level in front (the swing's own range)
        assert elev.min() < -20.0 and elev.max() > 60.0, (side, elev.min(), elev.max())
        stretch = _stretch(rig, ARMS[side], frames)
        assert -0.01 <= stretch[1] and stretch[0] <= 0.01, (side, stretch)  # the arm is turned, not pulled
    whole = np.arange(scene.frame_start, scene.frame_end + 1)
    for side in "LR":
        assert _stretch(rig, LEGS[side], whole)[0] <= 0.01, side
    assert bpy.ops.leapwright.check_arm_swing() == {"FINISHED"}
    lines = addon().arms.operators.LAST[rig.name]
    assert lines[-1] == ("the swing peaks at take-off and rises inside the push", "CHECKMARK"), lines


def _key_arm_turns(rig, keys):
    """Key both FK upper arms as an animator does (one pose per key): ``(frame, degrees forward)``.

    Each turn is about the character's side-to-side axis (armature -X: forward x up for a rig
    facing -Y), from the rest pose.
    """
    for name in ("upper_arm_fk.L", "upper_arm_fk.R"):
        pb = rig.pose.bones[name]
        pb.rotation_mode = "QUATERNION"
        b = rig.data.bones[name].matrix_local.to_quaternion()
        for frame, deg in keys:
            pb.rotation_quaternion = b.inverted() @ Quaternion((-1.0, 0.0, 0.0), math.radians(deg)) @ b
            pb.keyframe_insert("rotation_quaternion", frame=frame)
        pb.rotation_quaternion = (1.0, 0.0, 0.0, 0.0)


def test_a_late_swing_on_rigify_is_retimed_to_peak_at_take_off_and_removal_restores_it(profile_text):
    rig = _rig(profile_text)
    plan = _write(rig)
    scene = bpy.context.scene
    push, takeoff, touchdown = _events(scene, plan)
    late = 6
    # the upswing starts inside the push (halfway at most), so the swing is late at its peak only
    low = push + min(late, 0.5 * (takeoff - push))
    keys = ((push - 10, 0.0), (low, -40.0), (takeoff + late, 100.0), (touchdown + late, 40.0),
            (touchdown + late + 10, 0.0))
    _key_arm_turns(rig, keys)
    scene.frame_end = max(scene.frame_end, int(touchdown + late + 14))
    frames = np.arange(takeoff - 10.0, takeoff + 14.0, 0.5)
    assert peak_frame(frames, _elevation(rig, frames)) - takeoff == pytest.approx(late, abs=1.0)
    assert bpy.ops.leapwright.find_arm_bones() == {"FINISHED"}
    assert bpy.ops.leapwright.check_arm_swing() == {"FINISHED"}
    warning = " ".join(t for t, icon in addon().arms.operators.LAST[rig.name] if icon == "ERROR")
    assert float(warning.split("peaks ")[1].split(" frames")[0]) == pytest.approx(late, abs=1.0)
    scene.frame_set(scene.frame_start)
    before = snapshot()
    assert bpy.ops.leapwright.retime_arm_swing() == {"FINISHED"}
    for side in "LR":
        assert abs(peak_frame(frames, _elevation(rig, frames, side)) - takeoff) <= 1.0, side
    assert bpy.ops.leapwright.remove_arm_swing() == {"FINISHED"}
    scene.frame_set(scene.frame_start)
    assert snapshot() == before


def _com(rig, frames):
    """Whole-body centre of mass [m] (frames, 3) of the evaluated deform skeleton, de Leva 1996 (male).

    Joint points are Rigify's deform bones (head = proximal joint; the foot's tail the toe).
    """
    table = addon().core.body.segment_tables.DE_LEVA_MALE
    a = addon()
    rest, marks = a.body.com.read_body(rig)
    names = rest.names
    bones = sorted({names[i] for pts in marks.points.values() for i, _end in pts})
    scene, points = bpy.context.scene, []
    for f in frames:
        scene.frame_set(int(f))
        ev = rig.evaluated_get(bpy.context.evaluated_depsgraph_get())
        w = ev.matrix_world
        at = {b: (np.array(w @ ev.pose.bones[b].head), np.array(w @ ev.pose.bones[b].tail)) for b in bones}
        points.append({k: np.mean([at[names[i]][end] for i, end in pts], axis=0)
                       for k, pts in marks.points.items()})
    com = np.zeros((len(frames), 3))
    total = 0.0
    for e in table.entries:
        for side in ((".L", ".R") if e.bilateral else ("",)):
            p = np.array([[fr[e.start + side], fr[e.end + side]] for fr in points])
            com += e.mass_fraction * (p[:, 0] + e.com_fraction * (p[:, 1] - p[:, 0]))
            total += e.mass_fraction
    return com / total


def _implied_g(com, fps):
    """The arc of a COM track: g [m/s^2] of its least-squares parabola in height (numpy polyfit),
    and its largest distance [m] from the best free fall under standard g (a line plus -g t^2/2)."""
    t = np.arange(len(com)) / fps
    fall = com.copy()
    fall[:, 2] += 0.5 * G * t ** 2
    design = np.column_stack([np.ones_like(t), t])
    fit = design @ np.linalg.lstsq(design, fall, rcond=None)[0]
    return -2.0 * np.polyfit(t, com[:, 2], 2)[0], float(np.max(np.linalg.norm(fall - fit, axis=1)))


def test_body_arc_on_rigify_is_checked_and_kept_without_a_hand_made_map(profile_text):
    rig = _rig(profile_text)
    plan = _write(rig)
    scene = bpy.context.scene
    _push, takeoff, touchdown = _events(scene, plan)
    # the animator raises the arms in the air: still until two frames after take-off, then up 150 degrees
    _key_arm_turns(rig, ((round(takeoff) + 2, 0.0), (round(takeoff) + 7, 150.0)))
    # the frames surely in the air: after the take-off frame, before the touchdown frame (each rounded)
    flight = np.arange(round(takeoff) + 1, round(touchdown))
    fps = _fps(scene)
    g_before, off_before = _implied_g(_com(rig, flight), fps)
    assert off_before > 0.01, off_before  # the arms' raise moves the body's COM off the torso's arc
    assert bpy.ops.leapwright.check_body_arc() == {"FINISHED"}
    lines = addon().body.operators.LAST_CHECK[rig.name]
    assert "torso must move" in " ".join(lines), lines
    before = snapshot()
    assert bpy.ops.leapwright.keep_body_on_arc() == {"FINISHED"}
    com = _com(rig, flight)
    g_after, off_after = _implied_g(com, fps)
    assert off_after < 0.002 and g_after == pytest.approx(G, rel=0.01), (g_before, g_after, off_after)
    for side in "LR":
        assert _stretch(rig, LEGS[side], flight)[0] <= 0.01, side
    assert bpy.ops.leapwright.check_body_arc() == {"FINISHED"}
    assert "the centre of mass stays on its arc in every flight" in addon().body.operators.LAST_CHECK[rig.name]
    assert bpy.ops.leapwright.remove_body_arc() == {"FINISHED"}
    assert snapshot() == before


def test_check_jump_on_the_written_rigify_jump_finds_g_and_no_stretch(profile_text):
    rig = _rig(profile_text)
    _write(rig)
    scene = bpy.context.scene
    assert bpy.ops.leapwright.check_jump() == {"FINISHED"}
    s = scene.leapwright_check
    assert s.implied_gravity == pytest.approx(G, rel=0.02), s.summary
    assert not [f.message for f in s.findings if f.kind in ("leg stretch", "arm stretch")]


def test_game_export_on_rigify_checks_and_its_start_clip_plays_the_written_push(profile_text):
    rig = _rig(profile_text)
    plan = _write(rig)
    scene = bpy.context.scene
    _push, takeoff, _touchdown = _events(scene, plan)
    assert bpy.ops.leapwright.check_export() == {"FINISHED"}
    frames = np.arange(scene.leapwright_plan.start_frame, math.floor(takeoff) + 1)
    written = _heads(rig, frames, ("DEF-spine", "DEF-foot.L"))
    assert bpy.ops.leapwright.split_clips() == {"FINISHED"}
    start = bpy.data.actions[f"{rig.name}-leap-start"]
    assert tuple(start.frame_range)[1] == round(takeoff)
    ad = rig.animation_data
    addon().blender.compat.assign_action(rig, start)
    played = _heads(rig, frames, ("DEF-spine", "DEF-foot.L"))
    # the clip plays the written body and feet (baked on whole frames: within a millimetre)
    assert np.abs(played - written).max() < 1e-3, np.abs(played - written).max()
    assert ad.action == start


def test_everything_on_rigify_comes_off_again_leaving_the_file_exactly_as_it_was(profile_text):
    rig = _rig(profile_text)
    bpy.context.scene.leapwright_plan.rig = rig
    before = snapshot()
    _write(rig)
    assert bpy.ops.leapwright.find_arm_bones() == {"FINISHED"}
    assert bpy.ops.leapwright.place_arm_swing() == {"FINISHED"}
    assert bpy.ops.leapwright.keep_body_on_arc() == {"FINISHED"}
    assert bpy.ops.leapwright.bake_follow_through(bones="ponytail,ponytail.001,ponytail.002") == {"FINISHED"}
    for op in (bpy.ops.leapwright.remove_follow_through, bpy.ops.leapwright.remove_body_arc,
               bpy.ops.leapwright.remove_arm_swing, bpy.ops.leapwright.remove_plan):
        assert op() == {"FINISHED"}
    scene = bpy.context.scene
    scene.frame_start, scene.frame_end = before["range"][:2]
    scene.frame_set(before["range"][2])
    assert snapshot() == before


def _cli(*args):
    import os
    import subprocess
    import sys
    repo = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))
    return subprocess.run([sys.executable, "-m", "cli.main", *args], cwd=repo, capture_output=True, text=True,
                          env=dict(os.environ, PYTHONPATH=repo))


def test_the_command_line_reports_the_stretched_deform_legs_as_check_jump_does(profile_text, tmp_path):
    # Written without foot controls, Rigify's IK feet stay on the floor while the body rises and
    # its IK stretches the leg bones: measured here from the evaluated deform bones.
    import json
    rig = _rig(profile_text)
    scene = bpy.context.scene
    scene.leapwright_plan.foot_left = scene.leapwright_plan.foot_right = ""
    s = scene.leapwright_plan
    s.rig, s.com_bone = rig, "torso"
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    plan = addon().plan.link.plan_for(scene)[0]
    scene.frame_start, scene.frame_end = s.start_frame, s.start_frame + int(plan.duration_s * _fps(scene))
    truth = _stretch(rig, LEGS["L"], np.arange(scene.frame_start, scene.frame_end + 1))[0]
    assert truth > 0.03
    path = str(tmp_path / "stretched.blend")
    bpy.ops.wm.save_as_mainfile(filepath=path, copy=True)
    out = _cli("check", path, "--object", rig.name, "--bone", "torso", "--json")
    assert out.returncode == 1, out.stdout[-2000:] + out.stderr[-2000:]
    found = json.loads(out.stdout)["limb_stretch"]
    left = [f for f in found if f["kind"] == "leg stretch" and "left leg" in f["message"]]
    assert left and any("right leg" in f["message"] for f in found)
    worst = max(float(f["message"].split("up to ")[1].split(" %")[0]) for f in left)
    assert worst == pytest.approx(100 * truth, abs=0.2)
    assert bpy.ops.leapwright.check_jump() == {"FINISHED"}  # the panel says the same, frame for frame
    panel = sorted((f.kind, f.first_frame, f.last_frame, f.message) for f in scene.leapwright_check.findings
                   if f.kind.endswith("stretch"))
    assert panel == sorted((f["kind"], round(f["first_frame"]), round(f["last_frame"]), f["message"]) for f in found)
    text = _cli("check", path, "--object", rig.name, "--bone", "torso").stdout
    assert "[problem] leg_stretch frames" in text and "lift the heel" in text


def test_the_command_line_finds_no_stretch_on_the_jump_written_with_its_feet(profile_text, tmp_path):
    import json
    rig = _rig(profile_text)
    _write(rig)
    path = str(tmp_path / "in_reach.blend")
    bpy.ops.wm.save_as_mainfile(filepath=path, copy=True)
    out = _cli("check", path, "--object", rig.name, "--bone", "torso", "--json")
    assert out.returncode in (0, 1), out.stderr[-2000:]
    assert json.loads(out.stdout)["limb_stretch"] == []


def test_arm_swing_on_rigify_arms_in_ik_keys_the_switch_and_the_deform_arms_swing(profile_text):
    # Rigify's arms in IK (its default): the swing is written on the FK controls with the rig's
    # IK_FK keyed to 1 (FK) over the swing; the deform arms swing and peak at take-off (Lees et
    # al. 2004), and Remove Arm Swing gives back the file as it was, the switch at IK again.
    rig = rigify_rig.load_generated_rig()
    plan = _write(rig)
    scene = bpy.context.scene
    assert bpy.ops.leapwright.find_arm_bones() == {"FINISHED"}
    scene.frame_set(scene.frame_start)
    before = snapshot()
    assert bpy.ops.leapwright.place_arm_swing() == {"FINISHED"}
    push, takeoff, touchdown = _events(scene, plan)
    frames = np.arange(push - 6.0, takeoff + 8.0, 0.5)
    for side in "LR":
        elev = _elevation(rig, frames, side)
        assert abs(peak_frame(frames, elev) - takeoff) <= 1.0, side
        assert elev.min() < -20.0 and elev.max() > 60.0, (side, elev.min(), elev.max())
        stretch = _stretch(rig, ARMS[side], frames)
        assert -0.01 <= stretch[1] and stretch[0] <= 0.01, (side, stretch)
        scene.frame_set(int(round(takeoff)))
        ev = rig.evaluated_get(bpy.context.evaluated_depsgraph_get())
        assert ev.pose.bones[f"upper_arm_parent.{side}"]["IK_FK"] == 1.0  # FK while the swing plays
    assert bpy.ops.leapwright.check_arm_swing() == {"FINISHED"}
    assert addon().arms.operators.LAST[rig.name][-1][1] == "CHECKMARK", addon().arms.operators.LAST[rig.name]
    assert bpy.ops.leapwright.remove_arm_swing() == {"FINISHED"}
    scene.frame_set(scene.frame_start)
    assert snapshot() == before
    assert rig.pose.bones["upper_arm_parent.L"]["IK_FK"] == 0.0
