"""What the checker keeps on the scene: ``scene.leapwright_check``.

``follow`` chooses what the check samples (:mod:`checked_path`); ``findings`` is the list the panel shows (one row a finding, clicking goes to its
frame); ``summary`` one line on the last check; ``show_overlay`` draws the path
overlay in every 3D viewport.
"""

import bpy
from bpy.props import (BoolProperty, CollectionProperty, EnumProperty, FloatProperty, IntProperty,
    PointerProperty, StringProperty)

from . import overlay as path_overlay
from .path import FOLLOW_ITEMS


class LeapwrightFinding(bpy.types.PropertyGroup):
    """One finding of the checker."""

    kind: StringProperty(name="Kind")
    first_frame: IntProperty(name="First frame")
    last_frame: IntProperty(name="Last frame")
    message: StringProperty(name="What is wrong")
    suggestion: StringProperty(name="How to fix it")


def _toggle_overlay(self, context):
    if self.show_overlay:
        path_overlay.add_draw_handler()
    else:
        path_overlay.remove_draw_handler()


class LeapwrightCheckSettings(bpy.types.PropertyGroup):
    """The last check of a jump on this scene."""

    follow: EnumProperty(name="Follow", items=FOLLOW_ITEMS, default="AUTO",
                         description="What the check follows in the air: in flight only the whole-body centre of "
                                     "mass must fall on one parabola; a bone does only while the limbs keep still")
    findings: CollectionProperty(type=LeapwrightFinding)
    active_finding: IntProperty(name="Finding", default=0)
    summary: StringProperty(name="Summary")
    implied_gravity: FloatProperty(name="Implied gravity", default=float("nan"),
                                   description="Gravity the longest flight's timing implies [m/s²]; NaN when none")
    add_markers: BoolProperty(name="Mark phases", default=False,
                              description="Put lw:measured markers at the phase starts found")
    show_overlay: BoolProperty(name="Show path", default=False, update=_toggle_overlay,
                               description="Draw the COM path with a tick per frame, the arc its timing "
                                           "implies, and the planned arc, in the 3D viewport")
    tick_length: FloatProperty(name="Tick size", default=0.03, min=0.001, soft_max=0.2, subtype="DISTANCE")


classes = (LeapwrightFinding, LeapwrightCheckSettings)


def register_properties():
    bpy.types.Scene.leapwright_check = PointerProperty(type=LeapwrightCheckSettings)


def unregister_properties():
    path_overlay.remove_draw_handler()
    del bpy.types.Scene.leapwright_check
