"""What the animator sets for the arm swing: ``scene.leapwright_arms``.

Angles are stored in radians (``subtype='ANGLE'``, shown in the scene's rotation
units) and become the core's degrees when a swing is placed. Elevation is the
angle of the shoulder-to-hand line in the character's side view: 0 hanging,
90° level forward, 180° overhead, negative behind.
"""

import math

import bpy
from bpy.props import BoolProperty, EnumProperty, FloatProperty, IntProperty, PointerProperty, StringProperty

CONTACT_ITEMS = (
    ("AUTO", "Markers, else the body", "The lw: markers of the written jump (exact times when the plan still "
                                       "matches them); without them the body bone's fall, then the feet"),
    ("MARKERS", "Phase markers", "Only the lw:push-off and lw:take-off markers on the timeline "
                                 "(force plate: propulsion and flight)"),
    ("BODY", "Body's free fall", "Where the body bone's height follows a falling arc (take-off to touchdown)"),
    ("FEET", "Foot heights", "Where both foot controllers are off the ground"),
)
CONFLICT_ITEMS = (
    ("ASK", "Ask", "Stop and say which arm channels already have your keys"),
    ("REPLACE", "Replace my keys",
     "Write over your arm keys (they come back with Remove Leapwright Keys)"),
)


class LeapwrightArmsSettings(bpy.types.PropertyGroup):
    """Which bones swing, how far, and where the contact is."""

    upper_arm_left: StringProperty(name="Upper arm, left", description="The character's left upper-arm bone")
    upper_arm_right: StringProperty(name="Upper arm, right", description="The character's right upper-arm bone")
    forearm_left: StringProperty(name="Forearm, left",
                                 description="Optional: keyed with the swing (bent by Elbow bend) and its tail "
                                             "is the hand end of the arm")
    forearm_right: StringProperty(name="Forearm, right", description="Optional, as the left forearm")
    ik_fk_left: StringProperty(name="IK-FK switch, left",
                               description="The rig's IK-FK setting keyed to FK while the swing plays (found by "
                                           "Find Arm Bones when the arm follows an IK hand); empty: keyed as it is")
    ik_fk_right: StringProperty(name="IK-FK switch, right", description="As the left IK-FK switch")
    backswing: FloatProperty(name="Backswing", subtype="ANGLE", default=math.radians(45.0), min=0.0,
                             max=math.pi, description="How far behind hanging the arms go before the upswing")
    upswing: FloatProperty(name="Up at take-off", subtype="ANGLE", default=math.radians(90.0),
                           min=-math.pi, max=2.0 * math.pi,
                           description="Elevation at take-off, the peak of the swing (90° = level forward)")
    landing_reach: FloatProperty(name="Reach at landing", subtype="ANGLE", default=math.radians(45.0),
                                 min=-math.pi, max=2.0 * math.pi,
                                 description="Elevation at touchdown: the arms reach forward for balance")
    forearm_bend: FloatProperty(name="Elbow bend", subtype="ANGLE", default=math.radians(15.0), min=0.0,
                                max=math.radians(90.0),
                                description="How far the elbows bend at the bottom of the backswing; they "
                                            "straighten by take-off (0 = straight arms). Needs the forearms")
    use_flight_pose: BoolProperty(name="Pose at the top", default=False,
                                  description="Key an elevation at the apex; off eases from take-off "
                                              "straight to the landing reach")
    flight: FloatProperty(name="Elevation at the top", subtype="ANGLE", default=math.radians(70.0),
                          min=-math.pi, max=2.0 * math.pi)
    upswing_start_share: FloatProperty(name="Upswing starts at", subtype="FACTOR", default=0.0, min=0.0,
                                       max=0.9, description="Where in the push the upswing starts "
                                                            "(0 = at the bottom of the dip)")
    on_conflict: EnumProperty(name="Where you already have keys", items=CONFLICT_ITEMS, default="ASK")
    contact_from: EnumProperty(name="Contact from", items=CONTACT_ITEMS, default="AUTO")
    hop: IntProperty(name="Hop", default=1, min=1, max=50, description="Which take-off to re-time the swing to")


classes = (LeapwrightArmsSettings,)


def register_properties():
    bpy.types.Scene.leapwright_arms = PointerProperty(type=LeapwrightArmsSettings)


def unregister_properties():
    del bpy.types.Scene.leapwright_arms
