"""An arm swing inside the contact phase, in real Blender, on the demo mannequin.

The swing is measured here independently of the add-on: the elevation of the
shoulder-to-wrist line in the character's side view, read from Blender's evaluated
pose one frame (or quarter frame) at a time, with the facing taken from the
mannequin's own convention (blend_examples/mannequin.py: it faces the armature's
-Y, Z up) turned by the object's world matrix. The times it is checked against are
the plan's take-off and propulsion start (the core's planner, as the blocking pass
wrote them). What is checked is the timing that makes an arm swing add height:
the arms' elevation peaks at take-off and rises during the push (Lees,
Vanrenterghem & De Clercq 2004, J Biomech 37:1929-1940; Feltner, Fraschetti &
Crisp 1999, J Sports Sci 17:449-466), its angular speed peaking before take-off
(Lees et al. 2004, Fig. 4, from memory).
"""

import math
import os
import sys

import bpy
import numpy as np
import pytest
from mathutils import Matrix, Quaternion, Vector

from scene_probe import MODULE, addon, file_state, first_difference, peak_frame

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "blend_examples"))
import mannequin  # noqa: E402  (the demo's own rig, not edited here)

LATE = 6  # frames: issue 6's deliberately late swing peaks this long after take-off
ARMS = ("upper_arm.L", "upper_arm.R")
FOREARMS = ("forearm.L", "forearm.R")


def _enable():
    import addon_utils

    if MODULE not in bpy.context.preferences.addons:
        addon_utils.enable(MODULE, default_set=True)


def _jump(turn_deg=0.0, applied=False):
    """The demo mannequin with the blocking pass written; optionally turned about world Z.

    ``applied`` bakes the turn into the bones (edit-mode rest pose), so the armature
    itself no longer faces -Y: the add-on cannot lean on any fixed axis.
    """
    objs = mannequin.build_demo_scene()  # starts a new file, which disables the add-on
    _enable()
    rig, scene = objs["rig"], bpy.context.scene
    bpy.context.view_layer.objects.active = rig
    if turn_deg:
        rig.rotation_euler = (0.0, 0.0, math.radians(turn_deg))
        bpy.context.view_layer.update()
        if applied:
            for obj in bpy.context.view_layer.objects:
                obj.select_set(obj == rig)
            bpy.ops.object.transform_apply(location=False, rotation=True, scale=False)
    s = scene.leapwright_plan
    s.rig, s.com_bone = rig, mannequin.BODY_BONE
    s.foot_left, s.foot_right = mannequin.FOOT_CONTROLLERS
    s.height = 0.5
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    plan = addon().plan.link.plan_for(scene)[0]
    scene.frame_start, scene.frame_end = 1, int(math.ceil(1 + plan.duration_s * _fps(scene))) + 4
    return rig, scene


def _fps(scene):
    return scene.render.fps / scene.render.fps_base


def _events(scene):
    """Propulsion start, take-off and touchdown [scene frames] of the plan the blocking pass wrote."""
    plan = addon().plan.link.plan_for(scene)[0]
    fps, start = _fps(scene), float(scene.leapwright_plan.start_frame)
    push = next(p for p in plan.phases if p.name == "propulsion")
    hop = plan.hops[0]
    return start + push.start_s * fps, start + hop.takeoff_time_s * fps, start + hop.touchdown_time_s * fps


def _facing(rig, turn_deg):
    """World forward and up of the mannequin: its armature -Y (or the baked turn of it), Z up."""
    forward = Matrix.Rotation(math.radians(turn_deg), 3, "Z") @ Vector((0.0, -1.0, 0.0))
    return np.array(forward), np.array([0.0, 0.0, 1.0])


def _elevation(rig, frames, forward, up, side="L"):
    """Elevation [deg] of the shoulder-to-wrist line, evaluated by Blender frame by frame."""
    scene = bpy.context.scene
    out = []
    for f in frames:
        whole = int(math.floor(f))
        scene.frame_set(whole, subframe=float(f - whole))
        ev = rig.evaluated_get(bpy.context.evaluated_depsgraph_get())
        w = ev.matrix_world
        d = np.array(w @ ev.pose.bones[f"hand.{side}"].head) - np.array(w @ ev.pose.bones[f"upper_arm.{side}"].head)
        out.append(math.degrees(math.atan2(d @ forward, -(d @ up))))
    return np.unwrap(np.radians(out)) * 180.0 / math.pi


def _place(rig, **values):
    """Place Arm Swing on the mannequin's arms, named by hand (see the test of Find Arm Bones)."""
    s = bpy.context.scene.leapwright_arms
    bpy.context.view_layer.objects.active = rig
    s.upper_arm_left, s.upper_arm_right = ARMS
    s.forearm_left, s.forearm_right = FOREARMS
    for k, v in values.items():
        setattr(s, k, v)
    return bpy.ops.leapwright.place_arm_swing()


def test_find_arm_bones_reads_the_arms_from_the_bone_tree_whatever_their_names():
    rig, scene = _jump()
    bpy.context.view_layer.objects.active = rig
    for b in rig.data.bones:
        b.name = "b" + b.name[::-1]  # no name the add-on could recognise
    assert bpy.ops.leapwright.find_arm_bones() == {"FINISHED"}
    s = scene.leapwright_arms
    found = (s.upper_arm_left, s.forearm_left, s.upper_arm_right, s.forearm_right)
    assert found == tuple("b" + n[::-1] for n in (ARMS[0], FOREARMS[0], ARMS[1], FOREARMS[1]))


@pytest.mark.parametrize("mode", ["QUATERNION", "XYZ"])
def test_placed_swing_peaks_at_takeoff_and_rises_inside_the_push(mode):
    rig, scene = _jump()
    for name in ARMS:
        rig.pose.bones[name].rotation_mode = mode
    assert _place(rig) == {"FINISHED"}
    push, takeoff, _ = _events(scene)
    frames = np.arange(push - 8.0, takeoff + 8.0, 0.25)
    forward, up = _facing(rig, 0.0)
    for side in "LR":
        elev = _elevation(rig, frames, forward, up, side)
        assert abs(peak_frame(frames, elev) - takeoff) <= 1.0
        # The backswing's extreme (the upswing start) is inside propulsion: not before it.
        before = frames <= takeoff
        lowest = float(frames[before][np.argmin(elev[before])])
        assert push - 1.0 <= lowest < takeoff
        rising = (frames > push + 0.5) & (frames < takeoff - 0.5)
        assert np.all(np.diff(elev[rising]) > 0)
        # Angular speed peaks before take-off (the arms slow as they reach the top).
        speed = np.gradient(elev, frames)
        assert float(frames[np.argmax(speed)]) < takeoff - 1.0
        # The default swing: 90 deg (level forward) at take-off, 45 deg behind at its start.
        assert elev[np.argmin(np.abs(frames - takeoff))] == pytest.approx(90.0, abs=2.0)
        assert elev.min() == pytest.approx(-45.0, abs=2.0)


def test_placed_swing_rerun_replaces_and_remove_takes_it_back():
    rig, scene = _jump()
    before = file_state()
    assert _place(rig) == {"FINISHED"}
    once = file_state()
    assert _place(rig) == {"FINISHED"}
    assert file_state() == once, first_difference(file_state(), once)
    group = [fc for fc in addon().blender.compat.fcurves(rig.animation_data.action, rig)
             if fc.group is not None and fc.group.name == "lw:arms"]
    assert {fc.data_path for fc in group} >= {f'pose.bones["{n}"].rotation_quaternion' for n in ARMS}
    assert bpy.ops.leapwright.remove_arm_swing() == {"FINISHED"}
    assert file_state() == before, first_difference(file_state(), before)


@pytest.mark.parametrize("applied", [False, True], ids=["object turned", "bones turned"])
def test_swing_plane_follows_a_rig_turned_90_degrees_about_z(applied):
    rig, scene = _jump(turn_deg=90.0, applied=applied)
    assert _place(rig) == {"FINISHED"}
    _, takeoff, _ = _events(scene)
    forward, up = _facing(rig, 90.0)  # the mannequin now faces world +X
    assert np.allclose(forward, [1.0, 0.0, 0.0], atol=1e-6)
    frames = np.arange(takeoff - 12.0, takeoff + 6.0, 0.25)
    for side in "LR":
        elev = _elevation(rig, frames, forward, up, side)
        assert abs(peak_frame(frames, elev) - takeoff) <= 1.0
        scene.frame_set(int(round(takeoff)))
        d = (np.array(rig.matrix_world @ rig.pose.bones[f"hand.{side}"].head)
             - np.array(rig.matrix_world @ rig.pose.bones[f"upper_arm.{side}"].head))
        # Level forward at take-off: the shoulder-to-wrist line points along the facing.
        assert math.degrees(math.acos(d @ forward / np.linalg.norm(d))) < 8.0


def _late_swing(rig, scene, handles="AUTO_CLAMPED", late=LATE, low=None):
    """The animator's own swing, keyed as a user keys it, peaking LATE frames after take-off.

    Elevation keys (deg) turn each upper arm about the character's side-to-side axis
    (armature -X: forward x up for a rig facing -Y), from its rest pose.
    """
    push, takeoff, touchdown = _events(scene)
    # By default the upswing starts (``low``, a frame) inside the push, halfway at most (a default push
    # is about 6 frames long), so the swing is late at its peak, not outside contact altogether.
    low = push + min(late, 0.5 * (takeoff - push)) if low is None else low
    keys = ((push - 10, 0.0), (low, -40.0), (takeoff + late, 100.0), (touchdown + late, 40.0),
            (touchdown + late + 10, 0.0))
    for name in ARMS:
        pb = rig.pose.bones[name]
        b = rig.data.bones[name].matrix_local.to_quaternion()
        for frame, deg in keys:
            turn = Quaternion((-1.0, 0.0, 0.0), math.radians(deg))
            pb.rotation_quaternion = b.inverted() @ turn @ b
            pb.keyframe_insert("rotation_quaternion", frame=frame)
        pb.rotation_quaternion = (1.0, 0.0, 0.0, 0.0)
    if handles != "AUTO_CLAMPED":  # as the animator leaves them after dragging handles: where they are
        for fc in addon().blender.compat.fcurves(rig.animation_data.action, rig):
            for k in fc.keyframe_points:
                if "upper_arm" in fc.data_path:
                    k.handle_left_type = k.handle_right_type = handles
    scene.frame_end = max(scene.frame_end, int(touchdown + late + 14))
    scene.frame_set(1)


def _arm_curves(rig):
    return {(fc.data_path, fc.array_index): addon().blender.key_writer.read_keys(fc)
            for fc in addon().blender.compat.fcurves(rig.animation_data.action, rig) if "upper_arm" in fc.data_path}


@pytest.mark.parametrize("case", ["missing bone", "forearm without upper arm", "no plan", "retime without keys",
                                  "mesh"])
def test_bad_input_is_refused_and_changes_nothing(case):
    rig, scene = _jump()
    s = scene.leapwright_arms
    s.upper_arm_left, s.upper_arm_right = ARMS
    op, match = bpy.ops.leapwright.place_arm_swing, None
    if case == "missing bone":
        s.upper_arm_right, match = "upper_arm.X", "no bone named 'upper_arm.X'"
    elif case == "forearm without upper arm":
        s.upper_arm_left, s.forearm_left, match = "", "forearm.L", "without its upper arm"
    elif case == "no plan":
        scene.leapwright_plan.height, match = 0.0, "no plan"
    elif case == "retime without keys":
        op, match = bpy.ops.leapwright.retime_arm_swing, "no keys of yours"
    else:
        bpy.ops.mesh.primitive_cube_add()
        scene.leapwright_plan.rig, match = bpy.context.active_object, "not an armature"
    bpy.context.view_layer.objects.active = rig
    before = file_state()
    with pytest.raises(RuntimeError, match=match):
        op()
    assert file_state() == before, first_difference(file_state(), before)


class _Layout:
    """Stands in for bpy.types.UILayout (headless Blender has no window): records, checks names."""

    def __init__(self, log):
        self.log, self.use_property_split, self.use_property_decorate, self.scale_y = log, False, False, 1.0
        self.enabled = True

    def _child(self, *args, **kw):
        return _Layout(self.log)

    box = column = row = _child

    def label(self, text="", icon="NONE"):
        self.log.append(("label", text, icon))

    def prop(self, data, name, **kw):
        assert name in data.bl_rna.properties, name
        self.log.append(("prop", name, None))

    def prop_search(self, data, name, search_data, search_name, **kw):
        assert name in data.bl_rna.properties and search_name in search_data.bl_rna.properties
        self.log.append(("prop", name, None))

    def operator(self, idname, **kw):
        assert idname.split(".")[1] in dir(bpy.ops.leapwright), idname
        self.log.append(("operator", idname, None))


def _panel_log():
    log = []
    bpy.types.LEAPWRIGHT_PT_arms.draw(type("Stand", (), {"layout": _Layout(log)})(), bpy.context)
    return log


def test_panel_shows_the_arm_bones_the_buttons_and_a_late_swing_warning():
    assert bpy.types.LEAPWRIGHT_PT_arms.bl_parent_id == "LEAPWRIGHT_PT_plan"
    rig, scene = _jump()
    log = _panel_log()
    assert {("prop", "upper_arm_left", None), ("operator", "leapwright.place_arm_swing", None),
            ("operator", "leapwright.retime_arm_swing", None)} <= set(log)
    _late_swing(rig, scene)
    s = scene.leapwright_arms
    s.upper_arm_left, s.upper_arm_right = ARMS
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.check_arm_swing() == {"FINISHED"}
    warned = " ".join(t for kind, t, icon in _panel_log() if kind == "label" and icon in ("ERROR", "BLANK1"))
    assert "frames after take-off" in warned and "cm" in warned
    assert bpy.ops.leapwright.retime_arm_swing() == {"FINISHED"}
    labels = [(t, icon) for kind, t, icon in _panel_log() if kind == "label"]
    assert any(icon == "CHECKMARK" and t.startswith("the swing peaks at take-off") for t, icon in labels)
    assert any("re-timed" in t for t, _ in labels)


@pytest.mark.parametrize("on_conflict", ["ASK", "REPLACE"])
def test_placing_over_your_arm_keys_asks_first_or_replaces_and_gives_them_back(on_conflict):
    rig, scene = _jump()
    _late_swing(rig, scene)
    before = file_state()
    result = _place(rig, on_conflict=on_conflict)
    if on_conflict == "ASK":  # a warning, not an error: nothing was wrong, nothing was written
        assert result == {"CANCELLED"}
        assert file_state() == before, first_difference(file_state(), before)
        return
    assert result == {"FINISHED"}
    push, takeoff, _ = _events(scene)
    frames = np.arange(push - 4.0, takeoff + 8.0, 0.25)
    forward, up = _facing(rig, 0.0)
    assert abs(peak_frame(frames, _elevation(rig, frames, forward, up)) - takeoff) <= 1.0
    assert bpy.ops.leapwright.remove_arm_swing() == {"FINISHED"}
    scene.frame_set(1)
    assert file_state() == before, first_difference(file_state(), before)


def test_a_placed_swing_slowing_through_the_take_off_is_part_of_the_launch_for_the_arc_check():
    # The arms' speed relative to the torso changes across the take-off (they slow as they
    # reach the top), which is how a swing timed to the push works (common practice): the
    # check of the body's arc must not take it for a limb starting to move in the air.
    rig, scene = _jump()
    assert _place(rig) == {"FINISHED"}
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.check_body_arc() == {"FINISHED"}
    lines = addon().body.operators.LAST_CHECK[rig.name]
    assert not [line for line in lines if "where the take-off speed is read" in line], lines
