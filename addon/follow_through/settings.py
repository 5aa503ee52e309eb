"""What the animator sets for drag and follow-through: ``scene.leapwright_follow_through``.

Angles are stored in radians (``subtype='ANGLE'``, shown in the scene's
rotation units). ``readout`` is written by the bake: JSON ``{bone: peak [deg]}``.
"""

import math

import bpy
from bpy.props import BoolProperty, EnumProperty, FloatProperty, IntProperty, PointerProperty, StringProperty

SOURCE_ITEMS = (
    ("SELECTED", "Selected bones", "The pose bones selected now"),
    ("COLLECTION", "Bone collection", "Every bone of a bone collection of the rig"),
)
PRESET_ITEMS = (
    ("hair", "Hair", "Light and lively; bends visibly under its weight"),
    ("cloth", "Cloth", "Softer and more damped; hangs with more sag"),
    ("tail", "Tail", "Stiffer and carried; a visible whip toward the tip"),
    ("heavy prop", "Heavy prop", "Strapped close: moves late and little, settles fast"),
    ("custom", "Custom", "The values below"),
)


class LeapwrightFollowThroughSettings(bpy.types.PropertyGroup):
    """Which bones trail, how they behave, and over which frames."""

    source: EnumProperty(name="Bones", items=SOURCE_ITEMS, default="SELECTED")
    collection: StringProperty(name="Bone collection", description="Name of the rig's bone collection to bake")
    preset: EnumProperty(name="Behaves like", items=PRESET_ITEMS, default="hair")
    frequency: FloatProperty(name="Springiness (Hz)", default=1.5, min=0.01, soft_max=10.0,
                             description="Swings per second of the spring alone, gravity off")
    damping_ratio: FloatProperty(name="Damping", default=0.25, min=0.0, soft_max=2.0,
                                 description="1 settles without overshoot; lower swings longer")
    sag: FloatProperty(name="Sag", subtype="ANGLE", default=math.radians(20.0), min=0.0,
                       max=math.radians(89.0), description="How far its weight bends a bone held level, standing still")
    angle_limit: FloatProperty(name="Angle limit", subtype="ANGLE", default=math.radians(80.0),
                               min=math.radians(0.1), max=math.pi)
    transmission: FloatProperty(name="Carry-through", default=1.0, min=0.0, max=1.0,
                                description="1: a loose whip, the parent's swing carries into the child; "
                                            "lower: the chain trails in still air")
    use_scene_range: BoolProperty(name="Scene frame range", default=True)
    frame_start: IntProperty(name="Start", default=1)
    frame_end: IntProperty(name="End", default=250)
    key_tolerance: FloatProperty(name="Thin keys within", subtype="ANGLE", default=0.0, min=0.0,
                                 max=math.radians(10.0), description="0 keeps a key on every frame")
    on_twos: BoolProperty(name="On twos", default=False)
    cyclic: BoolProperty(name="Loop", default=False, description="The range is one cycle of a looping action")
    reset_marker: StringProperty(name="Restart at markers named",
                                 description="Markers whose name contains this restart the chains "
                                             "(camera-switch markers always do)")
    readout: StringProperty(name="Peak offsets", options={"HIDDEN"})


classes = (LeapwrightFollowThroughSettings,)


def register_properties():
    bpy.types.Scene.leapwright_follow_through = PointerProperty(type=LeapwrightFollowThroughSettings)


def unregister_properties():
    del bpy.types.Scene.leapwright_follow_through
