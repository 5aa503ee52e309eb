"""What every leapwright panel shares: where sub-panels sit, and text cut to fit.

Blender labels do not wrap, so long sentences are cut into lines here.
"""

from typing import Any


class SubPanel:
    """Mixin for a sub-panel under the Plan the Jump panel in the 3D viewport's Leapwright tab.

    Put it before ``bpy.types.Panel`` in the bases (Blender reads these class attributes).
    """

    # Typed Any: Blender's own annotations are enum literals a plain mixin cannot restate.
    bl_space_type: Any = "VIEW_3D"
    bl_region_type: Any = "UI"
    bl_category: Any = "Leapwright"
    bl_parent_id: Any = "LEAPWRIGHT_PT_plan"
    bl_options: Any = {"DEFAULT_CLOSED"}


def wrap_text(text, width=48):
    """``text`` as lines of at most ``width`` characters, broken between words."""
    words, lines, line = text.split(), [], ""
    for w in words:
        if line and len(line) + 1 + len(w) > width:
            lines.append(line)
            line = w
        else:
            line = f"{line} {w}".strip()
    if line:
        lines.append(line)
    return lines
