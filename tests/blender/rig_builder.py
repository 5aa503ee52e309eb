"""A small procedural test rig: root, hips (the body bone) and two foot controllers.

The hips bone points up (its local Y is world Z), so its location channels
are not the world axes: the add-on has to go through the rest matrices.
Lengths are given in metres and divided by the scene's unit scale, so a rig
built under ``scale_length = 0.01`` is the same physical size.
"""

import math

import bpy

HIPS_HEIGHT = 1.0  # m, standing hip (COM) height of the test rig


def build_rig(name="Rig", rotation_z_deg=0.0, location=(0.0, 0.0, 0.0), unit_scale=1.0, scene=None):
    """Make and link an armature object; return it in object mode, active.

    Parameters
    ----------
    rotation_z_deg : float
        Turn of the whole rig object about world Z [deg].
    location : tuple
        Object location [m].
    unit_scale : float
        ``scene.unit_settings.scale_length`` to set [m/BU].
    """
    scene = scene or bpy.context.scene
    scene.unit_settings.scale_length = unit_scale
    k = 1.0 / unit_scale  # BU per metre
    arm = bpy.data.armatures.new(name + "Data")
    obj = bpy.data.objects.new(name, arm)
    scene.collection.objects.link(obj)
    obj.location = tuple(c * k for c in location)
    obj.rotation_euler = (0.0, 0.0, math.radians(rotation_z_deg))
    bpy.context.view_layer.objects.active = obj
    obj.select_set(True)
    bpy.ops.object.mode_set(mode="EDIT")
    eb = arm.edit_bones
    root = eb.new("root")
    root.head, root.tail = (0, 0, 0), (0, 0.3 * k, 0)
    hips = eb.new("hips")
    hips.head, hips.tail = (0, 0, HIPS_HEIGHT * k), (0, 0, (HIPS_HEIGHT + 0.2) * k)
    hips.parent = root
    for side, x in (("L", 0.1), ("R", -0.1)):
        foot = eb.new(f"foot.{side}")
        foot.head, foot.tail = (x * k, 0, 0.05 * k), (x * k, -0.15 * k, 0.05 * k)
        foot.parent = root
    spine = eb.new("spine")
    spine.head, spine.tail = hips.tail.copy(), (0, 0, (HIPS_HEIGHT + 0.5) * k)
    spine.parent = hips
    bpy.ops.object.mode_set(mode="OBJECT")
    bpy.context.view_layer.update()
    return obj


def configure(rig, scene=None, **values):
    """Point ``scene.leapwright_plan`` at ``rig`` (body 'hips', no feet) and set ``values``."""
    scene = scene or bpy.context.scene
    s = scene.leapwright_plan
    s.rig = rig
    s.com_bone = "hips"
    s.foot_left = ""
    s.foot_right = ""
    for key, value in values.items():
        setattr(s, key, value)
    return s


def add_user_keys(rig, bone="hips", frames=(1, 20, 40), offsets=((0.0, 0.0, 0.0), (0.05, 0.02, -0.03),
                                                                  (0.1, 0.0, 0.0))):
    """The animator's own keys on the bone's location, made the way a user makes them."""
    pb = rig.pose.bones[bone]
    for f, off in zip(frames, offsets):
        pb.location = off
        pb.keyframe_insert("location", frame=f)
    pb.location = (0.0, 0.0, 0.0)
