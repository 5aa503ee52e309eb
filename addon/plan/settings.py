"""What the animator sets in the panel: ``scene.leapwright_plan``.

Lengths are Blender lengths (``unit='LENGTH'``): stored in scene units and shown
in the scene's unit system, like every other distance in Blender. They become
metres only when the goals are built (× ``unit_settings.scale_length``).
"""

import bpy
from bpy.props import BoolProperty, EnumProperty, FloatProperty, IntProperty, PointerProperty, StringProperty

from . import link as plan_link


def _changed(self, context):
    # Keep the readout live: recompute (cheaply) whenever a value changes.
    plan_link.refresh(context.scene)


GOAL_ITEMS = (
    ("HEIGHT", "Height", "How high the centre of mass rises above where it leaves the ground"),
    ("FLIGHT_TIME", "Time in the air", "Seconds from leaving the ground to touching down"),
    ("TAKEOFF_SPEED", "Take-off speed", "Upward speed of the centre of mass as the feet leave the ground"),
)
STYLE_ITEMS = (
    ("POSES", "Poses", "One key per phase, held (constant): for blocking"),
    ("SPLINE", "Spline", "The fewest Bezier keys that trace the planned path; exact in the air"),
    ("EVERY_FRAME", "Every frame", "A key on every frame, linear in between"),
    ("TWOS", "On twos", "A held pose every 2nd frame (constant); contact and take-off frames always keyed"),
    ("THREES", "On threes", "A held pose every 3rd frame (constant); contact and take-off frames always keyed"),
)
ROOT_ITEMS = (
    ("IN_PLACE", "In place", "The root stays put; the body bone carries the whole arc and travel"),
    ("ROOT_BONE", "Root bone", "A root bone follows the ground point under the body (travel, optionally "
                               "the rise); the body bone carries the rest"),
    ("OBJECT", "Object", "The armature object carries the travel (optionally the rise); the body bone the rest"),
)
FORWARD_ITEMS = (
    ("RIG", "Rig's facing", "The way the rig faces: its -Y axis, like Blender's front view"),
    ("NEG_Y", "-Y", "World -Y"),
    ("POS_Y", "+Y", "World +Y"),
    ("POS_X", "+X", "World +X"),
    ("NEG_X", "-X", "World -X"),
)


def _rig_poll(self, obj):
    return obj.type in {"ARMATURE", "EMPTY", "MESH"}


class LeapwrightPlanSettings(bpy.types.PropertyGroup):
    """Goals, timing and character of one scene's jump."""

    goal: EnumProperty(name="Aim for", items=GOAL_ITEMS, default="HEIGHT", update=_changed)
    height: FloatProperty(name="Height", subtype="DISTANCE", unit="LENGTH", default=0.4, min=0.0,
                          soft_max=3.0, update=_changed, description="Rise of the centre of mass at the top")
    flight_time: FloatProperty(name="Time in the air", unit="TIME_ABSOLUTE", default=0.55, min=0.0,
                               soft_max=3.0, update=_changed)
    takeoff_speed: FloatProperty(name="Take-off speed (m/s)", default=2.8, min=0.0, soft_max=10.0,
                                 update=_changed)
    distance: FloatProperty(name="Distance", subtype="DISTANCE", unit="LENGTH", default=0.0,
                            update=_changed, description="Forward travel from take-off spot to landing spot")
    landing_height: FloatProperty(name="Landing ground", subtype="DISTANCE", unit="LENGTH", default=0.0,
                                  update=_changed, description="Landing ground above (+) or below (-) the take-off ground")
    hops: IntProperty(name="Hops", default=1, min=1, max=50, update=_changed)
    gravity: FloatProperty(name="Gravity (m/s²)", default=9.80665, min=0.01, soft_max=30.0, update=_changed)

    standing_com_height: FloatProperty(name="Standing hip height", subtype="DISTANCE", unit="LENGTH",
                                       default=1.0, min=0.01, update=_changed,
                                       description="Height of the centre of mass above the ground when standing")
    custom_timing: BoolProperty(name="Set timing", default=False, update=_changed,
                                description="Set the anticipation, push-off and settle yourself instead of the "
                                            "defaults")
    depth: FloatProperty(name="Crouch depth", subtype="DISTANCE", unit="LENGTH", default=0.36, min=0.0,
                         update=_changed, description="How far the body sinks in the anticipation, standing "
                                                      "to the lowest point of the crouch")
    dip_duration: FloatProperty(name="Anticipation", unit="TIME_ABSOLUTE", default=0.6, min=0.0, update=_changed,
                                description="From the first move down to the lowest point of the crouch "
                                            "(force plate: unweighting and braking)")
    push_duration: FloatProperty(name="Push-off", unit="TIME_ABSOLUTE", default=0.25, min=0.0, update=_changed,
                                 description="From the crouch up to the take-off (force plate: propulsion)")
    landing_duration: FloatProperty(name="Settle", unit="TIME_ABSOLUTE", default=0.3, min=0.0,
                                    update=_changed, description="From touchdown down to the lowest point of "
                                                                 "the settle (force plate: landing)")
    weighing_duration: FloatProperty(name="Hold before", unit="TIME_ABSOLUTE", default=0.25, min=0.0,
                                     update=_changed,
                                     description="Standing still before the anticipation (force plate: weighing)")

    rig: PointerProperty(name="Rig", type=bpy.types.Object, poll=_rig_poll, update=_changed)
    com_bone: StringProperty(name="Body bone", update=_changed,
                             description="The bone that carries the body (hips or root); empty = move the object")
    foot_left: StringProperty(name="Left foot", description="Left foot controller bone (optional)")
    foot_right: StringProperty(name="Right foot", description="Right foot controller bone (optional)")
    foot_tuck: FloatProperty(name="Tuck", subtype="DISTANCE", unit="LENGTH", default=0.0, min=0.0,
                             description="How far the feet lift towards the body in the air")
    forward: EnumProperty(name="Forward", items=FORWARD_ITEMS, default="RIG", update=_changed)

    fall_gravity_scale: FloatProperty(name="Fall gravity ×", default=1.0, min=0.01, max=100.0, soft_max=4.0,
                                      update=_changed,
                                      description="Stylisation: the fall after the top uses this multiple of "
                                                  "gravity (1 = physical; games often fall faster)")
    apex_hang: FloatProperty(name="Hang at top", unit="TIME_ABSOLUTE", default=0.0, min=0.0, soft_max=1.0,
                             update=_changed, description="Stylisation: time held at the top (0 = physical)")

    root_motion: EnumProperty(name="Root motion", items=ROOT_ITEMS, default="IN_PLACE")
    root_bone: StringProperty(name="Root bone", default="root",
                              description="Bone that carries the travel in 'Root bone' mode (an ancestor of "
                                          "the body bone)")
    root_vertical: BoolProperty(name="Rise on root", default=False,
                                description="The root (or object) also carries the vertical arc")

    key_style: EnumProperty(name="Keys", items=STYLE_ITEMS, default="SPLINE")
    start_frame: IntProperty(name="Start frame", default=1, update=_changed)


classes = (LeapwrightPlanSettings,)


def register_properties():
    bpy.types.Scene.leapwright_plan = PointerProperty(type=LeapwrightPlanSettings)


def unregister_properties():
    del bpy.types.Scene.leapwright_plan
