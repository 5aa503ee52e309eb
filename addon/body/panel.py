"""Sub-panel "Body in the Air" under the Leapwright panel: masses, bone map, correction, warnings."""

import bpy

from . import arc, operators as body_operators, com as body_com
from ..blender import ownership
from ..rig import space as rig_space
from ..blender.panel_parts import SubPanel, wrap_text


class LEAPWRIGHT_PT_body(SubPanel, bpy.types.Panel):
    """The whole body's centre of mass in flight"""

    bl_label = "Body in the Air"
    bl_idname = "LEAPWRIGHT_PT_body"

    @classmethod
    def poll(cls, context):
        return getattr(context.scene, "leapwright_body", None) is not None

    def draw(self, context):
        a = context.scene.leapwright_body
        layout = self.layout
        layout.use_property_split = True
        layout.use_property_decorate = False
        rig = rig_space.chosen_rig(context)
        layout.prop(a, "table")
        layout.prop(a, "flights")
        if rig is not None and rig.type == "ARMATURE":
            layout.prop_search(a, "carrier_bone", rig.data, "bones")
        else:
            layout.prop(a, "carrier_bone")
        layout.prop(a, "tolerance")
        layout.prop(a, "settle_frames")
        _draw_map(layout.box(), rig, a.table)

        col = layout.column(align=True)
        col.operator("leapwright.check_body_arc", icon="VIEWZOOM")
        row = col.row(align=True)
        row.scale_y = 1.3
        row.operator("leapwright.keep_body_on_arc", icon="FORCE_FORCE")
        col.operator("leapwright.remove_body_arc", icon="TRASH")
        if rig is not None:
            lines = body_operators.LAST_CHECK.get(rig.name, [])
            if lines:
                box = layout.box()
                box.label(text="Last check", icon="INFO")
                for k, text in enumerate(lines):
                    for i, line in enumerate(wrap_text(text)):
                        box.label(text=line, icon=("ERROR" if k else "INFO") if i == 0 else "BLANK1")
            if arc.CAPABILITY in ownership.capabilities_written(rig):
                layout.label(text=f"Correction layer '{arc.TRACK}' is on", icon="NLA")


def _draw_map(box, rig, table):
    box.label(text="Bones to body segments", icon="ARMATURE_DATA")
    if rig is None or rig.type != "ARMATURE":
        box.label(text="Pick an armature under Character", icon="ERROR")
        return
    if body_com.MASS_PROPERTY in rig:
        box.prop(rig, f'["{body_com.MASS_PROPERTY}"]', text="Bone masses")
    if body_com.MAP_PROPERTY in rig:
        box.prop(rig, f'["{body_com.MAP_PROPERTY}"]', text="Bone map")
    try:
        model, marks, how = body_com.body_model(rig, table)
    except body_com.BodyError as exc:
        for i, line in enumerate(wrap_text(str(exc))):
            box.label(text=line, icon="ERROR" if i == 0 else "BLANK1")
        if body_com.MAP_PROPERTY not in rig:
            box.operator("leapwright.edit_body_map", text="Fill In Bone Map", icon="GREASEPENCIL")
        return
    col = box.column(align=True)
    col.label(text=f"{len(model.segment_names)} segments, {how}")
    if marks is not None:
        for key, spec in marks.as_text().items():
            col.label(text=f"{key}: {spec}")
        if body_com.MAP_PROPERTY not in rig:
            box.operator("leapwright.edit_body_map", icon="GREASEPENCIL")


classes = (LEAPWRIGHT_PT_body,)
