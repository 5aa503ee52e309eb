"""Operators for drag and follow-through: bake it, take it back.

Everything (checks, sampling, simulation, curves) is done before the first key
is written, so a refused bake leaves the file as it was. No ``bpy.ops`` inside
``execute``.
"""

import json

import bpy
from bpy.props import EnumProperty, StringProperty

from . import bake as lag_bake
from ..core.base.errors import LeapwrightError
from .settings import PRESET_ITEMS

PRESET_CHOICES = (("SETTINGS", "As set in the panel", "The panel's preset or values"),) + PRESET_ITEMS


def _lag(context):
    return getattr(context.scene, "leapwright_follow_through", None)


def _rig(context):
    obj = context.active_object
    if obj is not None:
        return obj
    jump = getattr(context.scene, "leapwright_plan", None)
    return jump.rig if jump is not None else None


def _selected_bones(context, rig):
    chosen = getattr(context, "selected_pose_bones", None)
    if chosen is None:
        raise lag_bake.LagError("the pose-bone selection cannot be read here; name the bones "
                                "(bones='a,b,c') or pick a bone collection")
    picked = {pb.name for pb in chosen}
    return tuple(pb.name for pb in rig.pose.bones if pb.name in picked)


def _request(context, op, rig):
    s = context.scene.leapwright_follow_through
    if rig is None or rig.type != "ARMATURE":
        lag_bake.check(rig, None)
    if op.bones.strip():
        bones = tuple(n.strip() for n in op.bones.split(",") if n.strip())
    elif s.source == "COLLECTION":
        bones = lag_bake.bones_of_collection(rig, s.collection)
    else:
        bones = _selected_bones(context, rig)
    preset = s.preset if op.preset == "SETTINGS" else op.preset
    params = lag_bake.parameters_for(preset, s.frequency, s.damping_ratio, s.sag, s.angle_limit, s.transmission)
    scene = context.scene
    start, end = (scene.frame_start, scene.frame_end) if s.use_scene_range else (s.frame_start, s.frame_end)
    jump = getattr(scene, "leapwright_plan", None)
    gravity = jump.gravity if jump is not None else lag_bake.STANDARD_GRAVITY
    return lag_bake.LagRequest(bones=bones, parameters=params, frame_start=int(start), frame_end=int(end),
                               key_tolerance=s.key_tolerance, on_twos=s.on_twos, cyclic=s.cyclic,
                               reset_frames=lag_bake.marker_resets(scene, start, end, s.reset_marker),
                               gravity=gravity)


def _can_run(cls, context):
    """Poll of both operators: object or pose mode, and the settings registered."""
    if context.mode not in {"OBJECT", "POSE"}:
        cls.poll_message_set("leave edit mode (Tab): follow-through is baked in object or pose mode")
        return False
    return _lag(context) is not None


class LEAPWRIGHT_OT_bake_lag(bpy.types.Operator):
    """Bake drag and follow-through on the chosen bones, as keys on a layer above yours"""

    bl_idname = "leapwright.bake_follow_through"
    bl_label = "Bake Follow-Through"
    bl_options = {"REGISTER", "UNDO"}
    lw_rig = staticmethod(_rig)  # the rig the write guard checks: the active object first, as here

    bones: StringProperty(name="Bones", description="Comma-separated bone names; empty uses the panel's choice")
    preset: EnumProperty(name="Behaves like", items=PRESET_CHOICES, default="SETTINGS")

    @classmethod
    def poll(cls, context):
        return _can_run(cls, context)

    def execute(self, context):
        rig = _rig(context)
        wm = context.window_manager
        shown = context.window is not None
        try:
            request = _request(context, self, rig)
            lag_bake.check(rig, request)
            if shown:
                wm.progress_begin(0, request.frame_end - request.frame_start + 1)
            try:
                work = lag_bake.prepare(context.scene, rig, request, wm.progress_update if shown else None)
            finally:
                if shown:
                    wm.progress_end()
        except (lag_bake.LagError, LeapwrightError) as exc:
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        try:
            lag_bake.apply(rig, work)
        except lag_bake.ownership.LayerError as exc:
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        peaks = lag_bake.degrees(work.peaks)
        context.scene.leapwright_follow_through.readout = json.dumps(peaks)
        top = max(peaks, key=peaks.get)
        self.report({"INFO"}, f"Baked {len(peaks)} bones, {work.keys} keys on {lag_bake.TRACK}; "
                              f"largest swing {peaks[top]:.1f}° ({top})")
        return {"FINISHED"}


class LEAPWRIGHT_OT_remove_lag(bpy.types.Operator):
    """Remove the baked follow-through and put the bones back as they were"""

    bl_idname = "leapwright.remove_follow_through"
    bl_label = "Remove Follow-Through"
    bl_options = {"REGISTER", "UNDO"}
    lw_rig = staticmethod(_rig)  # the rig the write guard checks: the active object first, as here

    @classmethod
    def poll(cls, context):
        return _can_run(cls, context)

    def execute(self, context):
        rig = _rig(context)
        if not lag_bake.remove(rig):
            self.report({"WARNING"}, "nothing to remove: this object has no baked follow-through")
            return {"CANCELLED"}
        context.scene.leapwright_follow_through.readout = ""
        self.report({"INFO"}, f"Removed the follow-through from {rig.name}")
        return {"FINISHED"}


classes = (LEAPWRIGHT_OT_bake_lag, LEAPWRIGHT_OT_remove_lag)
