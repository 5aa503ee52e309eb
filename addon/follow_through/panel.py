"""Sub-panel of the Leapwright sidebar: drag and follow-through."""

import json

import bpy

from ..blender.panel_parts import SubPanel, wrap_text
from . import live_tuning


class LEAPWRIGHT_PT_follow_through(SubPanel, bpy.types.Panel):
    """Bake trailing parts (hair, cloth, tails, props) from the body's motion"""

    bl_label = "Follow-Through"
    bl_idname = "LEAPWRIGHT_PT_follow_through"

    @classmethod
    def poll(cls, context):
        return getattr(context.scene, "leapwright_follow_through", None) is not None

    def draw(self, context):
        s = context.scene.leapwright_follow_through
        layout = self.layout
        layout.use_property_split = True
        layout.use_property_decorate = False

        box = layout.box()
        box.prop(s, "source")
        if s.source == "COLLECTION":
            obj = context.active_object
            if obj is not None and obj.type == "ARMATURE":
                box.prop_search(s, "collection", obj.data, "collections")
            else:
                box.prop(s, "collection")
        box.prop(s, "preset")
        col = box.column(align=True)
        col.enabled = s.preset == "custom"
        for name in ("frequency", "damping_ratio", "sag", "angle_limit", "transmission"):
            col.prop(s, name)
        box.prop(s, "multi_link")
        _draw_description(layout, s)

        box = layout.box()
        box.prop(s, "use_scene_range")
        row = box.row(align=True)
        row.enabled = not s.use_scene_range
        row.prop(s, "frame_start")
        row.prop(s, "frame_end")
        box.prop(s, "key_tolerance")
        box.prop(s, "on_twos")
        box.prop(s, "cyclic")
        box.prop(s, "reset_marker")

        _draw_body(layout, s)

        row = layout.row()
        row.prop(s, "live_rebake")
        _draw_live_status(layout, context.scene)
        _draw_readout(layout, s.readout)
        layout.operator("leapwright.bake_follow_through", icon="FORCE_WIND")
        layout.operator("leapwright.remove_follow_through", icon="TRASH")


def _draw_description(layout, s):
    box = layout.box()
    box.label(text="Values from a physical description")
    box.prop(s, "describe_as")
    box.prop(s, "hanging_length")
    if s.describe_as == "skirt":
        box.prop(s, "fabric_weight")
    elif s.describe_as == "tail":
        box.prop(s, "tip_weight")
    box.operator("leapwright.describe_chain", icon="PHYSICS")


def _draw_body(layout, s):
    box = layout.box()
    box.prop(s, "keep_out")
    col = box.column(align=True)
    col.enabled = s.keep_out
    col.prop(s, "show_body")
    for line in wrap_text("Radii (0: fitted to the skinned mesh, or to the body's proportions when no mesh "
                          "is skinned)", 40):
        col.label(text=line)
    for name in ("head", "neck", "torso", "pelvis", "upper_arm", "forearm", "thigh", "shin"):
        col.prop(s, f"{name}_radius")
    try:
        body = json.loads(s.body_readout) if s.body_readout else {}
    except ValueError:
        body = {}
    if body.get("problem"):
        for line in wrap_text(f"No body capsules: {body['problem']}", 40):
            col.label(text=line, icon="ERROR")
    for name, (radius, source) in list(body.get("parts", {}).items())[:8]:
        col.label(text=f"{name}: {radius * 100:.1f} cm, from the {source}")
    if "ground" in body:
        col.label(text=f"Ground at {body['ground']:.3f} m")
    for chain, radii in body.get("chains", {}).items():
        fitted = body.get("parts", {})
        out = [p for p, r in radii.items() if r == 0.0]
        smaller = [p for p, r in radii.items() if 0.0 < r < fitted.get(p, (r,))[0]]
        if out or smaller:
            text = f"{chain} hangs from " + ", ".join(out + smaller) + (": left out" if out else "") + \
                   (f"; made smaller: {', '.join(smaller)}" if smaller else "")
            for line in wrap_text(text, 40):
                col.label(text=line)


def _draw_live_status(layout, scene):
    message, ms = live_tuning.status(scene)
    if message:
        for line in wrap_text(message, 40):
            layout.label(text=line, icon="INFO")
    elif ms is not None and scene.leapwright_follow_through.live_rebake:
        layout.label(text=f"Re-baked in {ms:.0f} ms", icon="TIME")


def _draw_readout(layout, raw):
    try:
        peaks = json.loads(raw) if raw else {}
    except ValueError:
        peaks = {}
    if not peaks:
        return
    box = layout.box()
    box.label(text="Largest swing per bone", icon="INFO")
    col = box.column(align=True)
    for name, deg in sorted(peaks.items(), key=lambda kv: -kv[1])[:12]:
        col.label(text=f"{name}: {deg:.1f}°")
    if len(peaks) > 12:
        col.label(text=f"… and {len(peaks) - 12} more")


classes = (LEAPWRIGHT_PT_follow_through,)
