"""Sub-panel "Arm Swing" under the Leapwright panel: the arm bones, the swing, re-timing and warnings."""

import bpy

from ..blender import ownership
from ..rig import space as rig_space
from . import keys as arm_keys, operators, retime as arm_retime
from ..blender.panel_parts import SubPanel, wrap_text


class LEAPWRIGHT_PT_arms(SubPanel, bpy.types.Panel):
    """An arm swing inside the contact phase: place one, or re-time your own"""

    bl_label = "Arm Swing"
    bl_idname = "LEAPWRIGHT_PT_arms"

    @classmethod
    def poll(cls, context):
        return getattr(context.scene, "leapwright_arms", None) is not None

    def draw(self, context):
        s = context.scene.leapwright_arms
        layout = self.layout
        layout.use_property_split = True
        layout.use_property_decorate = False
        rig = rig_space.chosen_rig(context)

        box = layout.box()
        box.label(text="Arms", icon="BONE_DATA")
        for name in ("upper_arm_left", "forearm_left", "upper_arm_right", "forearm_right"):
            if rig is not None and rig.type == "ARMATURE":
                box.prop_search(s, name, rig.data, "bones")
            else:
                box.prop(s, name)
        for name in ("ik_fk_left", "ik_fk_right"):
            if getattr(s, name):  # shown once Find Arm Bones found an arm in IK and its switch
                box.prop(s, name)
        box.operator("leapwright.find_arm_bones", icon="VIEWZOOM")

        box = layout.box()
        box.label(text="Swing", icon="CON_ROTLIKE")
        for name in ("backswing", "upswing", "landing_reach"):
            box.prop(s, name)
        row = box.row()
        row.enabled = bool(s.forearm_left or s.forearm_right)
        row.prop(s, "forearm_bend")
        box.prop(s, "use_flight_pose")
        row = box.row()
        row.enabled = s.use_flight_pose
        row.prop(s, "flight")
        box.prop(s, "upswing_start_share")
        box.prop(s, "on_conflict")
        row = box.row(align=True)
        row.scale_y = 1.3
        row.operator("leapwright.place_arm_swing", icon="KEY_HLT")

        box = layout.box()
        box.label(text="Your own swing", icon="TIME")
        box.prop(s, "contact_from")
        box.prop(s, "hop")
        col = box.column(align=True)
        col.operator("leapwright.check_arm_swing", icon="VIEWZOOM")
        col.operator("leapwright.retime_arm_swing", icon="MOD_TIME")
        layout.operator("leapwright.remove_arm_swing", icon="TRASH")

        if rig is None:
            return
        written = ownership.capabilities_written(rig)
        if arm_retime.CAPABILITY in written:
            layout.label(text="Your arm keys are re-timed; a copy of the original is kept", icon="FILE_BACKUP")
        if arm_keys.CAPABILITY in written:
            layout.label(text=f"Placed swing in '{ownership.group_name(arm_keys.CAPABILITY)}'", icon="ACTION")
        lines = operators.LAST.get(rig.name, [])
        if lines:
            box = layout.box()
            box.label(text="Last run", icon="INFO")
            for text, icon in lines:
                for i, line in enumerate(wrap_text(text)):
                    box.label(text=line, icon=icon if i == 0 else "BLANK1")


classes = (LEAPWRIGHT_PT_arms,)
