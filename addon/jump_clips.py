"""A written jump as three game clips: start, air (a loop) and land, each its own action.

Engines whose character controller owns the vertical arc want the jump cut
in three: *start* (first dip frame to take-off), *air* (a loop held in the
air: the flight's rising half played forward then back, with the body's arc
and travel taken off, so its first and last frames are the same pose) and
*land* (touchdown to the end of the settle). Each clip is the rig's evaluated
pose baked on whole frames into a new action named
``<rig>-leap-start`` / ``-leap-air`` / ``-leap-land``, with its frame range
stored on the action (manual frame range), kept with a fake user so that
saving and glTF export ("all armature actions") carry it.
"""

from dataclasses import dataclass

import bpy
import numpy as np

from . import blender_compat as compat
from . import blocking_pass as bp
from . import plan_link
from .key_writer import write_curve
from .rig_space import forward_axis

CLIP_NAMES = ("start", "air", "land")
GROUP = "lw:clip"
_UP = np.array([0.0, 0.0, 1.0])


def clip_name(rig, part):
    """The action name of one clip: ``<rig>-leap-<part>``."""
    return f"{rig.name}-leap-{part}"


@dataclass(frozen=True)
class ClipFrames:
    """Whole scene frames of the three clips, and the flight's events [frame]."""

    start: tuple
    air: tuple  # frames sampled for the loop's first half, take-off to apex
    land: tuple
    takeoff: float
    touchdown: float


def clip_frames(plan, start_frame, fps):
    """The clips' whole frames for the first hop of ``plan`` at ``fps`` [frames/s]."""
    hop = plan.hops[0]
    dip = next(p.start_s for p in plan.phases if p.name == "unweighting")
    f = lambda t: start_frame + t * fps  # noqa: E731
    take, touch = f(hop.takeoff_time_s), f(hop.touchdown_time_s)
    apex = f(hop.takeoff_time_s + (hop.takeoff_speed_m_s / plan.gravity))
    first_air = int(np.ceil(take - 1e-6))
    top = max(first_air + 1, int(np.floor(min(apex, touch) + 1e-6)))
    return ClipFrames(start=(int(round(f(dip))), int(round(take))), air=(first_air, top),
                      land=(int(round(touch)), int(np.floor(f(plan.duration_s) + 1e-6))),
                      takeoff=take, touchdown=touch)


def _channels(rig, include_object):
    """``(data_path, size)`` of every pose channel to bake (and the object's location)."""
    out = [("location", 3)] if include_object else []
    for pb in rig.pose.bones if rig.pose is not None else ():
        path = f'pose.bones["{pb.name}"]'
        mode = pb.rotation_mode
        rot = {"QUATERNION": ("rotation_quaternion", 4), "AXIS_ANGLE": ("rotation_axis_angle", 4)}.get(
            mode, ("rotation_euler", 3))
        out += [(f"{path}.location", 3), (f"{path}.{rot[0]}", rot[1]), (f"{path}.scale", 3)]
    return out


def _sample(scene, rig, channels, frames):
    """``{data_path: (n, size)}`` of the evaluated channels on whole ``frames``."""
    keep = scene.frame_current
    values = {p: np.zeros((len(frames), n)) for p, n in channels}
    for j, frame in enumerate(frames):
        scene.frame_set(int(frame))
        for path, _n in channels:
            values[path][j] = np.array(rig.path_resolve(path))
    scene.frame_set(keep)
    return values


def _new_action(rig, name, frames, values, first, last):
    old = bpy.data.actions.get(name)
    if old is not None:
        bpy.data.actions.remove(old)
    action = compat.new_delta_action(rig, name)
    for path, arr in values.items():
        for i in range(arr.shape[1]):
            fc = compat.new_fcurve(action, rig, path, i, GROUP)
            write_curve(fc, np.asarray(frames, dtype=float), arr[:, i], None, "LINEAR")
    action.use_frame_range = True
    action.frame_start, action.frame_end = first, last
    action.use_fake_user = True
    compat.mark_for_objects(action)
    return action


def split(scene, rig, plan, carriers, start_frame):
    """Bake the three clips.

    Parameters
    ----------
    carriers : list of (rig_space.Channels, tuple of parts)
        Each channel leapwright keyed and the parts of the plan ('forward',
        'height') it carries itself; the air clip takes exactly these off.

    Returns
    -------
    dict of str -> bpy.types.Action
        ``{'start': ..., 'air': ..., 'land': ...}``.
    """
    fps = plan_link.scene_fps(scene)
    m = plan_link.metres_per_unit(scene)
    cf = clip_frames(plan, start_frame, fps)
    include_object = any(c.data_path == "location" for c, _ in carriers)
    channels = _channels(rig, include_object)
    out = {}
    s0, s1 = cf.start
    start_frames = list(range(s0, s1 + 1))
    out["start"] = _new_action(rig, clip_name(rig, "start"), start_frames,
                               _sample(scene, rig, channels, start_frames), s0, s1)
    l0, l1 = cf.land
    land_frames = list(range(l0, l1 + 1))
    out["land"] = _new_action(rig, clip_name(rig, "land"), land_frames,
                              _sample(scene, rig, channels, land_frames), l0, l1)
    a0, a1 = cf.air
    half = list(range(a0, a1 + 1))
    values = _sample(scene, rig, channels, half)
    t = (np.array(half, dtype=float) - start_frame) / fps
    forward = forward_axis(rig, scene.leapwright.forward)
    style = scene.leapwright.key_style
    for ch, parts in carriers:
        if ch.data_path not in values or not parts:
            continue
        world = np.zeros((t.size, 3))
        if "forward" in parts:
            world += np.outer(bp.keyed_path(plan, "forward", style, fps, t), forward)
        if "height" in parts:
            world += np.outer(bp.keyed_path(plan, "height", style, fps, t), _UP)
        rel = world - world[0]  # the pose at take-off stays as it is
        values[ch.data_path] = values[ch.data_path] - (rel / m) @ ch.world_to_channel.T
    # forward to the top, then back: a loop whose ends are the same pose
    loop = {p: np.concatenate([v, v[-2::-1]]) for p, v in values.items()}
    loop_frames = list(range(a0, a0 + 2 * (a1 - a0) + 1))
    out["air"] = _new_action(rig, clip_name(rig, "air"), loop_frames, loop, a0, loop_frames[-1])
    return out
