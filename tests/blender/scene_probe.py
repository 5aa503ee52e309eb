"""Read a file's animation back: byte-exact snapshots and evaluated world positions."""

import sys

import bpy
import numpy as np

MODULE = "bl_ext.user_default.leapwright"


def addon():
    """The installed add-on package."""
    return sys.modules[MODULE]


def _fcurve_record(fc):
    keys = addon().key_writer.read_keys(fc)
    mods = tuple(m.type for m in fc.modifiers)
    return (fc.data_path, fc.array_index, fc.group.name if fc.group else None, fc.extrapolation, fc.mute,
            fc.lock, fc.hide, mods, tuple((k, v.tobytes()) for k, v in sorted(keys.items())))


def _props(idblock):
    out = []
    for key in sorted(idblock.keys()):
        value = idblock[key]
        out.append((key, repr(value.to_dict() if hasattr(value, "to_dict") else
                               (value.to_list() if hasattr(value, "to_list") else value))))
    return tuple(out)


def snapshot(scene=None):
    """Everything animation-related in the file, as comparable plain data.

    Every action's F-curves (every key attribute as raw bytes), every object's
    custom properties and animation data (action, slot, blend, NLA tracks and
    strips), the scene's markers and frame range.
    """
    scene = scene or bpy.context.scene
    compat = addon().blender_compat
    objects = []
    for obj in sorted(bpy.data.objects, key=lambda o: o.name):
        ad = obj.animation_data
        anim = None
        if ad is not None:
            tracks = tuple((t.name, t.mute, tuple((s.name, s.action.name if s.action else None, s.frame_start,
                                                   s.frame_end, s.blend_type, s.extrapolation,
                                                   compat.strip_slot_handle(s)) for s in t.strips))
                           for t in ad.nla_tracks)
            anim = (ad.action.name if ad.action else None, compat.active_slot_handle(obj), ad.action_blend_type,
                    ad.action_influence, ad.action_extrapolation, tracks)
        curves = []
        for action in sorted(bpy.data.actions, key=lambda a: a.name):
            fcs = compat.fcurves(action, obj)
            curves.append((action.name, tuple(sorted(_fcurve_record(fc) for fc in fcs)),
                           tuple(g.name for g in compat.groups(action, obj))))
        pose = None
        if obj.pose is not None:
            pose = tuple((pb.name, tuple(pb.location), tuple(pb.rotation_quaternion)) for pb in obj.pose.bones)
        objects.append((obj.name, _props(obj), anim, tuple(curves), tuple(obj.location), pose))
    markers = tuple(sorted((m.name, m.frame, m.select) for m in scene.timeline_markers))
    return {"objects": tuple(objects), "markers": markers, "actions": tuple(sorted(a.name for a in bpy.data.actions)),
            "range": (scene.frame_start, scene.frame_end, scene.frame_current)}


def world_head(rig, bone, frame):
    """World position [BU] of ``bone``'s head at a (fractional) frame, as Blender evaluates it."""
    scene = bpy.context.scene
    whole = int(np.floor(frame))
    scene.frame_set(whole, subframe=float(frame - whole))
    depsgraph = bpy.context.evaluated_depsgraph_get()
    ev = rig.evaluated_get(depsgraph)
    if not bone:
        return np.array(ev.matrix_world.translation)
    return np.array(ev.matrix_world @ ev.pose.bones[bone].head)


def world_path(rig, bone, frames):
    """:func:`world_head` at each frame, shape (n, 3) [BU]."""
    return np.array([world_head(rig, bone, f) for f in frames])


def written_fcurves(rig):
    """F-curves of the rig's active (or pushed) action in leapwright's blocking group."""
    a = addon()
    action = a.ownership.user_action(rig)
    return [fc for fc in a.blender_compat.fcurves(action, rig) if fc.group and fc.group.name == "lw:blocking"]


def key_count(rig):
    """Keys leapwright wrote on the rig: its groups plus any layer tracks' actions."""
    a = addon()
    n = sum(len(fc.keyframe_points) for fc in written_fcurves(rig))
    ad = rig.animation_data
    for track in (ad.nla_tracks if ad else ()):
        if track.name.startswith("lw:") and track.name != a.ownership.USER_TRACK:
            for s in track.strips:
                n += sum(len(fc.keyframe_points) for fc in a.blender_compat.fcurves(s.action, rig))
    return n


def run_write(rig, **props):
    """``bpy.ops.leapwright.write_blocking`` with ``rig`` active; returns the operator's result."""
    bpy.context.view_layer.objects.active = rig
    return bpy.ops.leapwright.write_blocking(**props)


def run_remove(rig):
    bpy.context.view_layer.objects.active = rig
    return bpy.ops.leapwright.remove_written()
