"""What the animator sets for drag and follow-through: ``scene.leapwright_follow_through``.

Angles are stored in radians (``subtype='ANGLE'``, shown in the scene's
rotation units). ``readout`` is written by the bake: JSON ``{bone: peak [deg]}``; ``body_readout`` the
capsules it kept the chains out of (:func:`.body_colliders.readout`).
"""

import math

import bpy
from bpy.app.handlers import persistent
from bpy.props import BoolProperty, EnumProperty, FloatProperty, IntProperty, PointerProperty, StringProperty

from . import live_tuning, sampled_motion


def _tuned(self, context):
    # A chain setting changed: with "re-bake as you tune" on, bake the last bake again at once.
    live_tuning.retune(self, context)


def _shown(self, context):
    from . import body_overlay  # drawing needs the gpu module, loaded only when asked for
    body_overlay.show(self.show_body)


#: A capsule radius typed in the panel; 0 keeps the one fitted to the skin or the proportions.
_RADIUS = dict(subtype="DISTANCE", unit="LENGTH", default=0.0, min=0.0, soft_max=0.5,
               description="Radius of this part's capsule; 0 uses the one fitted to the skinned mesh, or to the "
                           "body's proportions when no mesh is skinned")

SOURCE_ITEMS = (
    ("SELECTED", "Selected bones", "The pose bones selected now"),
    ("COLLECTION", "Bone collection", "Every bone of a bone collection of the rig"),
)
DESCRIPTION_ITEMS = (
    ("hair", "Hair", "Hair or a ponytail hanging from the head: its hanging length"),
    ("skirt", "Skirt or cape", "A panel of fabric hanging from its seam: its length and the fabric's weight"),
    ("tail", "Tail", "A tail tapering to its tip: its length and how much lighter the tip is"),
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
    preset: EnumProperty(update=_tuned, name="Behaves like", items=PRESET_ITEMS, default="hair")
    frequency: FloatProperty(update=_tuned, name="Springiness (Hz)", default=1.5, min=0.01, soft_max=10.0,
                             description="Swings per second of the spring alone, gravity off")
    damping_ratio: FloatProperty(update=_tuned, name="Damping", default=0.25, min=0.0, soft_max=2.0,
                                 description="1 settles without overshoot; lower swings longer")
    sag: FloatProperty(update=_tuned, name="Sag", subtype="ANGLE", default=math.radians(20.0), min=0.0,
                       max=math.radians(89.0), description="How far its weight bends a bone held level, standing still")
    angle_limit: FloatProperty(update=_tuned, name="Angle limit", subtype="ANGLE", default=math.radians(80.0),
                               min=math.radians(0.1), max=math.pi)
    transmission: FloatProperty(update=_tuned, name="Carry-through", default=1.0, min=0.0, max=1.0,
                                description="1: a loose whip, the parent's swing carries into the child; "
                                            "lower: the chain trails in still air")
    multi_link: BoolProperty(update=_tuned, name="Children pull on parents", default=False,
                             description="Simulate each chain as one multi-link pendulum: a bone's weight and swing "
                                         "pull on every bone above it, so the float and the drop travel along the "
                                         "chain (slower to bake). Off: each bone follows its parent only")
    describe_as: EnumProperty(name="Describe as", items=DESCRIPTION_ITEMS, default="hair")
    hanging_length: FloatProperty(name="Hanging length", subtype="DISTANCE", unit="LENGTH", default=0.25, min=0.01,
                                  soft_max=3.0, description="From where it hangs to its tip")
    fabric_weight: FloatProperty(name="Fabric weight (g/m²)", default=200.0, min=5.0, soft_max=800.0,
                                 description="Mass per square metre: about 100 for voile, 200 for a dress fabric, "
                                             "400 for denim")
    tip_weight: FloatProperty(name="Tip weight", default=0.2, min=0.01, max=1.0,
                              description="Mass per length at the tip over the root's (1: the same all along)")
    use_scene_range: BoolProperty(name="Scene frame range", default=True)
    frame_start: IntProperty(name="Start", default=1)
    frame_end: IntProperty(name="End", default=250)
    key_tolerance: FloatProperty(update=_tuned, name="Thin keys within", subtype="ANGLE", default=0.0, min=0.0,
                                 max=math.radians(10.0), description="0 keeps a key on every frame")
    on_twos: BoolProperty(update=_tuned, name="On twos", default=False)
    cyclic: BoolProperty(name="Loop", default=False, description="The range is one cycle of a looping action")
    reset_marker: StringProperty(name="Restart at markers named",
                                 description="Markers whose name contains this restart the chains "
                                             "(camera-switch markers always do)")
    live_rebake: BoolProperty(name="Re-bake as you tune", default=False,
                              description="Bake the last bake again at once whenever a chain setting changes "
                                          "(its motion is kept in memory, so only the chains are simulated)")
    readout: StringProperty(name="Peak offsets", options={"HIDDEN"})
    keep_out: BoolProperty(update=_tuned, name="Keep out of the body", default=False,
                           description="Chains slide along the body's capsules (head, neck, torso, pelvis, limbs) "
                                       "and stay above the ground instead of passing through them")
    show_body: BoolProperty(name="Show body capsules", default=False, update=_shown,
                            description="Draw the capsules the chains keep out of in the 3D viewport")
    head_radius: FloatProperty(update=_tuned, name="Head", **_RADIUS)
    neck_radius: FloatProperty(update=_tuned, name="Neck", **_RADIUS)
    torso_radius: FloatProperty(update=_tuned, name="Torso", **_RADIUS)
    pelvis_radius: FloatProperty(update=_tuned, name="Pelvis", **_RADIUS)
    upper_arm_radius: FloatProperty(update=_tuned, name="Upper arms", **_RADIUS)
    forearm_radius: FloatProperty(update=_tuned, name="Forearms", **_RADIUS)
    thigh_radius: FloatProperty(update=_tuned, name="Thighs", **_RADIUS)
    shin_radius: FloatProperty(update=_tuned, name="Shins", **_RADIUS)
    body_readout: StringProperty(name="Body capsules", options={"HIDDEN"})


classes = (LeapwrightFollowThroughSettings,)


@persistent
def _forget_kept_motion(*_args):
    # another file: the kept motion and the live re-bake's status belong to the one closed
    sampled_motion.forget()
    live_tuning.forget_status()


def register_properties():
    bpy.types.Scene.leapwright_follow_through = PointerProperty(type=LeapwrightFollowThroughSettings)
    bpy.app.handlers.load_pre.append(_forget_kept_motion)


def unregister_properties():
    if _forget_kept_motion in bpy.app.handlers.load_pre:
        bpy.app.handlers.load_pre.remove(_forget_kept_motion)
    _forget_kept_motion()
    from . import body_overlay
    body_overlay.show(False)
    del bpy.types.Scene.leapwright_follow_through
