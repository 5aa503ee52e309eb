"""The checker's sub-panel: the button, the readout, the findings (click to go there)."""

import bpy

from ..blender.panel_parts import SubPanel, wrap_text


class LEAPWRIGHT_PT_check(SubPanel, bpy.types.Panel):
    """Check the jump on the rig"""

    bl_label = "Check"
    bl_idname = "LEAPWRIGHT_PT_check"

    @classmethod
    def poll(cls, context):
        return getattr(context.scene, "leapwright_check", None) is not None

    def draw(self, context):
        c = context.scene.leapwright_check
        layout = self.layout
        row = layout.row(align=True)
        row.operator("leapwright.check_jump", icon="VIEWZOOM")
        row.operator("leapwright.clear_check", text="", icon="X")
        layout.prop(c, "follow")
        layout.prop(c, "add_markers")
        row = layout.row(align=True)
        row.prop(c, "show_overlay")
        row.prop(c, "tick_length", text="Tick")
        if c.summary:
            layout.label(text=c.summary, icon="INFO")
        for i, f in enumerate(c.findings):
            box = layout.box()
            op = box.operator("leapwright.go_to_finding", text=f"{f.kind.replace('_', ' ')}: frames "
                              f"{f.first_frame}-{f.last_frame}", icon="TIME", emboss=(i == c.active_finding))
            op.index = i
            col = box.column(align=True)
            for text in (f.message, "Fix: " + f.suggestion):
                for line in wrap_text(text):
                    col.label(text=line)


classes = (LEAPWRIGHT_PT_check,)
