"""The sidebar panel in the 3D viewport, tab "Leapwright"."""

import math

import bpy

from ..blender.panel_parts import wrap_text
from ..core.base.phase_words import figure_label

from . import link as plan_link, operators as plan_operators
from ..rig import profile as rig_profile


class LEAPWRIGHT_PT_plan(bpy.types.Panel):
    """Plan a jump and write it on the character"""

    bl_label = "Plan the Jump"
    bl_idname = "LEAPWRIGHT_PT_plan"
    bl_space_type = "VIEW_3D"
    bl_region_type = "UI"
    bl_category = "Leapwright"

    @classmethod
    def poll(cls, context):
        return getattr(context.scene, "leapwright_plan", None) is not None

    def draw(self, context):
        s = context.scene.leapwright_plan
        layout = self.layout
        layout.use_property_split = True
        layout.use_property_decorate = False

        box = layout.box()
        box.label(text="Goal", icon="TRACKING_FORWARDS")
        box.prop(s, "goal")
        box.prop(s, {"HEIGHT": "height", "FLIGHT_TIME": "flight_time", "TAKEOFF_SPEED": "takeoff_speed"}[s.goal])
        box.prop(s, "distance")
        box.prop(s, "landing_height")
        box.prop(s, "hops")
        box.prop(s, "gravity")
        box.prop(s, "fall_gravity_scale")
        box.prop(s, "apex_hang")

        box = layout.box()
        box.label(text="Timing", icon="TIME")
        box.prop(s, "weighing_duration")
        box.prop(s, "custom_timing")
        col = box.column()
        col.enabled = s.custom_timing
        for name in ("depth", "dip_duration", "push_duration", "landing_duration"):
            col.prop(s, name)

        box = layout.box()
        box.label(text="Character", icon="ARMATURE_DATA")
        box.prop(s, "rig")
        rig = s.rig
        if rig is not None and rig.type == "ARMATURE":
            box.prop_search(s, "com_bone", rig.data, "bones")
            box.prop_search(s, "foot_left", rig.data, "bones")
            box.prop_search(s, "foot_right", rig.data, "bones")
        else:
            box.prop(s, "com_bone")
        row = box.row(align=True)
        row.operator("leapwright.use_active_bone", icon="BONE_DATA")
        row.operator("leapwright.find_rig_controls", icon="VIEWZOOM")
        if rig is not None and rig_profile.PROFILE_PROPERTY in rig:
            box.prop(rig, f'["{rig_profile.PROFILE_PROPERTY}"]', text="Rig controls")
        box.prop(s, "standing_com_height")
        box.prop(s, "foot_tuck")
        box.prop(s, "forward")

        box = layout.box()
        box.label(text="Keys", icon="KEYFRAME")
        box.prop(s, "key_style")
        box.prop(s, "start_frame")
        box.prop(s, "root_motion")
        if s.root_motion != "IN_PLACE":
            if s.root_motion == "ROOT_BONE" and rig is not None and rig.type == "ARMATURE":
                box.prop_search(s, "root_bone", rig.data, "bones")
            elif s.root_motion == "ROOT_BONE":
                box.prop(s, "root_bone")
            box.prop(s, "root_vertical")

        _draw_readout(layout.box(), context.scene)

        row = layout.row(align=True)
        row.scale_y = 1.4
        row.operator("leapwright.write_plan", icon="KEY_HLT")
        layout.operator("leapwright.remove_plan", icon="TRASH")
        played = plan_operators.LAST_PLAYED.get(rig.name) if rig is not None else None
        if played:
            box = layout.box()
            box.label(text="As it plays", icon="PLAY")
            for k, text in enumerate(played):
                for i, line in enumerate(wrap_text(text)):
                    box.label(text=line, icon=("ERROR" if k else "CHECKMARK") if i == 0 else "BLANK1")


def _draw_readout(box, scene):
    plan, r = plan_link.plan_for(scene)
    box.label(text="The plan", icon="INFO")
    col = box.column(align=True)
    if plan is None:
        for line in wrap_text(r["error"] or "no plan"):
            col.label(text=line, icon="ERROR")
        return
    frames = ", ".join(f"{f:.1f}" for f in r["flight_frames"])
    col.label(text=f"In the air: {frames} frames")
    col.label(text=f"Whole jump: {r['duration_frames']:.0f} frames")
    if not math.isnan(r["peak_force_bw"]):
        col.label(text=f"Hardest push-off or touchdown: {r['peak_force_bw']:.2f} × body weight")
    for name, value, unit, grade in r["figures"]:
        col.label(text=f"{figure_label(name).capitalize()}: {value:.2f} {unit} ({grade})")
    for w in r["warnings"]:
        for i, line in enumerate(wrap_text(w)):
            col.label(text=line, icon="ERROR" if i == 0 else "BLANK1")
    for note in r.get("stylisations", ()):
        for i, line in enumerate(wrap_text("Stylised: " + note)):
            col.label(text=line, icon="INFO" if i == 0 else "BLANK1")



classes = (LEAPWRIGHT_PT_plan,)
