"""Sub-panel "Game Export" under the jump panel: the export checks' last findings."""

import bpy

from ..blender.panel_parts import SubPanel, wrap_text

from . import operators


class LEAPWRIGHT_PT_export(SubPanel, bpy.types.Panel):
    """Export checks for game engines"""

    bl_label = "Game Export"
    bl_idname = "LEAPWRIGHT_PT_export"

    @classmethod
    def poll(cls, context):
        return getattr(context.scene, "leapwright_plan", None) is not None

    def draw(self, context):
        layout = self.layout
        row = layout.row(align=True)
        row.operator("leapwright.check_export", icon="CHECKMARK")
        row.operator("leapwright.check_export", text="Snap and Check", icon="SNAP_ON").snap_keys = True
        layout.operator("leapwright.split_clips", icon="NLA")
        last = operators.LAST_CHECK.get(context.scene.as_pointer())
        col = layout.column(align=True)
        if last is None:
            col.label(text="Not checked yet")
            return
        name, found = last
        if not found:
            col.label(text=f"'{name}' is ready to export", icon="CHECKMARK")
        for issue in found:
            for i, line in enumerate(wrap_text(issue.message)):
                col.label(text=line, icon="ERROR" if i == 0 else "BLANK1")



classes = (LEAPWRIGHT_PT_export,)
