"""A cheap fingerprint of what a rig's evaluated motion is made of.

Two states of a file with the same fingerprint play the same keys through the
same NLA set-up on the same rest pose, so motion sampled in one holds in the
other. What it reads: the rig's rest pose and bone tree; for the rig, its
armature, the objects it hangs from and the objects its constraints aim at,
every key (times, values, handles, interpolation), F-curve modifier and driver
of their actions and NLA strips, and how the strips play; the scene's frame
rate. Reading is bulk (``foreach_get``), ≈1 µs per F-curve.

What it cannot see (a pose set without keys, a constraint's settings, an
object moved by hand) is caught by comparing a few frames sampled again
(:mod:`..follow_through.sampled_motion`); channels written by a leapwright
layer that is left out (``skip_tracks``) do not count.
"""

import hashlib

import numpy as np

from ..blender import compat

_KEY_FIELDS = (("co", 2, np.float32), ("handle_left", 2, np.float32), ("handle_right", 2, np.float32),
               ("interpolation", 1, np.int32), ("easing", 1, np.int32))
_STRIP_FIELDS = ("name", "frame_start", "frame_end", "action_frame_start", "action_frame_end", "scale",
                 "repeat", "blend_type", "extrapolation", "influence", "use_animated_influence",
                 "use_animated_time", "mute", "use_reverse", "blend_in", "blend_out")


def _hash_curve(h, fc):
    points = fc.keyframe_points
    n = len(points)
    h.update(f"{fc.data_path}|{fc.array_index}|{fc.mute}|{fc.extrapolation}|{n}|".encode())
    for name, width, dtype in _KEY_FIELDS:
        buf = np.empty(n * width, dtype=dtype)
        points.foreach_get(name, buf)
        h.update(buf.tobytes())
    for mod in fc.modifiers:
        h.update(f"m{mod.type}|{mod.mute}|{mod.influence}|".encode())
    driver = getattr(fc, "driver", None)
    if driver is not None:
        h.update(f"d{driver.type}|{driver.expression}|".encode())
        for var in driver.variables:
            for target in var.targets:
                h.update(f"{var.type}|{target.id!r}|{target.data_path}|{target.bone_target}|"
                         f"{target.transform_type}|{target.transform_space}|".encode())


def _hash_action(h, action, owner):
    if action is None:
        h.update(b"no action|")
        return
    h.update(f"action {action.as_pointer()}|".encode())
    for fc in compat.fcurves(action, owner):
        _hash_curve(h, fc)


def _hash_animation(h, owner, skip_tracks):
    ad = owner.animation_data
    h.update(f"id {owner.as_pointer()}|".encode())
    if ad is None:
        return
    h.update(f"{ad.action_blend_type}|{ad.action_influence}|{ad.action_extrapolation}|{ad.use_nla}|"
             f"{ad.use_tweak_mode}|{compat.active_slot_handle(owner)}|".encode())
    _hash_action(h, ad.action, owner)
    for track in ad.nla_tracks:
        if track.name in skip_tracks:
            continue
        h.update(f"track {track.name}|{track.mute}|{track.is_solo}|".encode())
        for strip in track.strips:
            h.update("|".join(str(getattr(strip, name)) for name in _STRIP_FIELDS).encode())
            _hash_action(h, strip.action, owner)
            for fc in strip.fcurves:  # animated influence or time
                _hash_curve(h, fc)
    for fc in ad.drivers:
        _hash_curve(h, fc)


def _constraint_targets(rig):
    """Objects the rig's constraints (object and pose bones) aim at, other than the rig."""
    out = []
    stacks = [rig.constraints] + [pb.constraints for pb in rig.pose.bones]
    for stack in stacks:
        for con in stack:
            for name in ("target", "pole_target"):
                obj = getattr(con, name, None)
                if obj is not None and obj is not rig:
                    out.append(obj)
            for sub in getattr(con, "targets", ()):  # the Armature constraint
                if sub.target is not None and sub.target is not rig:
                    out.append(sub.target)
    return out


def _with_parents(objects):
    out, seen = [], set()
    for obj in objects:
        while obj is not None and obj.as_pointer() not in seen:
            seen.add(obj.as_pointer())
            out.append(obj)
            obj = obj.parent
    return out


def motion_fingerprint(scene, rig, skip_tracks=()):
    """Hex digest of what the rig's evaluated motion is made of (see the module notes).

    Parameters
    ----------
    scene : bpy.types.Scene
    rig : bpy.types.Object
        An armature object.
    skip_tracks : collection of str
        NLA track names left out (a layer that is muted while sampling).

    Returns
    -------
    str
    """
    h = hashlib.blake2b(digest_size=16)
    h.update(f"{scene.as_pointer()}|{scene.render.fps}|{scene.render.fps_base}|".encode())
    bones = rig.data.bones
    rest = np.empty(len(bones) * 16, dtype=np.float32)
    bones.foreach_get("matrix_local", rest)
    h.update(rest.tobytes())
    h.update("|".join(f"{b.name}<{b.parent.name if b.parent else ''}" for b in bones).encode())
    for obj in _with_parents([rig] + _constraint_targets(rig)):
        h.update(f"{obj.parent_type}|{obj.parent_bone}|".encode())
        _hash_animation(h, obj, skip_tracks if obj is rig else ())
    _hash_animation(h, rig.data, ())
    return h.hexdigest()
