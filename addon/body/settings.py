"""What the animator sets for the in-air correction: ``scene.leapwright_body``.

The tolerance is a Blender length (scene units, shown in the scene's unit system);
it becomes metres (× ``unit_settings.scale_length``) when the check runs.
"""

import bpy
from bpy.props import EnumProperty, FloatProperty, IntProperty, PointerProperty, StringProperty

from ..core.body.segment_tables import TABLES

TABLE_ITEMS = tuple((key, {"de_leva_male": "de Leva 1996, men", "de_leva_female": "de Leva 1996, women",
                           "dempster_winter": "Dempster (Winter 2009)"}.get(key, key), t.source)
                    for key, t in TABLES.items())
FLIGHT_ITEMS = (
    ("AUTO", "Markers, else the arc", "The lw:take-off markers of the written jump (flight); without them, the stretches "
                                      "where the body's centre of mass falls freely"),
    ("MARKERS", "Take-off markers", "Only the lw:take-off markers (flight) the jump keys left on the timeline"),
    ("BALLISTIC", "Free-fall stretches", "Stretches where the body's centre of mass follows a falling arc"),
)


class LeapwrightBodySettings(bpy.types.PropertyGroup):
    """Body masses and the in-air centre-of-mass correction of one scene."""

    table: EnumProperty(name="Body masses", items=TABLE_ITEMS, default="de_leva_male",
                        description="Published segment masses used for the body's centre of mass")
    flights: EnumProperty(name="Flights from", items=FLIGHT_ITEMS, default="AUTO")
    carrier_bone: StringProperty(name="Move bone",
                                 description="Bone the correction moves; empty = the bone every body bone "
                                             "hangs from (or the rig object when there are several)")
    tolerance: FloatProperty(name="Tolerance", subtype="DISTANCE", unit="LENGTH", default=0.01, min=0.0,
                             description="How far the centre of mass may leave its arc before a warning")
    settle_frames: IntProperty(name="Ease out", default=0, min=0, max=48,
                               description="Frames after touchdown over which the correction fades out "
                                           "(0: it stops at the last frame in the air, feet untouched)")


classes = (LeapwrightBodySettings,)


def register_properties():
    bpy.types.Scene.leapwright_body = PointerProperty(type=LeapwrightBodySettings)


def unregister_properties():
    del bpy.types.Scene.leapwright_body
