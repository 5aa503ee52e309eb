"""A written jump as game clips: start, air (a loop) and land for every hop, each its own action.

Engines whose character controller owns the vertical arc want each hop cut
in three: *start* (to take-off), *air* (a loop held in the air: the flight's
rising half played forward then back, with the body's arc and travel taken
off, so its first and last frames are the same pose) and *land* (from
touchdown). Each clip is the rig's evaluated pose baked on whole frames into
a new action, with its frame range stored on the action (manual frame range),
kept with a fake user so that saving and glTF export ("all armature actions")
carry it.

Naming and frame ranges (hop ``k`` counted from 1)
--------------------------------------------------
* hop 1: ``<rig>-leap-start`` (first dip frame -> take-off), ``<rig>-leap-air``,
  ``<rig>-leap-land``;
* hop ``k`` >= 2: ``<rig>-leap<k>-start``, ``<rig>-leap<k>-air``, ``<rig>-leap<k>-land``;
* a start clip after the first runs from the bottom of the rebound (the end of
  the previous landing, where the push begins) to its take-off; a land clip
  before the last runs from its touchdown to that bottom, so land ``k`` and
  start ``k+1`` meet on one frame and play back to back; the last land clip
  runs from touchdown to settled (the end of the jump).
"""

import re
from dataclasses import dataclass

import bpy
import numpy as np

from ..blender import scene_units
from ..blender import compat as compat
from ..plan import blocking_pass as bp
from ..blender.key_writer import write_curve
from ..rig.space import forward_axis

CLIP_NAMES = ("start", "air", "land")
GROUP = "lw:clip"
_UP = np.array([0.0, 0.0, 1.0])


def clip_name(rig, part, hop=0):
    """The action name of one clip: ``<rig>-leap-<part>``, ``<rig>-leap<k>-<part>`` for hop k >= 2.

    ``hop`` counts from 0 (the first hop).
    """
    return f"{rig.name}-leap{'' if hop == 0 else hop + 1}-{part}"


@dataclass(frozen=True)
class ClipFrames:
    """Whole scene frames of one hop's three clips, and its flight's events [frame]."""

    start: tuple
    air: tuple  # frames sampled for the loop's first half, take-off to apex
    land: tuple
    takeoff: float
    touchdown: float
    hop: int = 0


def _phase(plan, name, hop):
    """The plan's phase called ``name`` of hop ``hop`` (0-based)."""
    return next(p for p in plan.phases if p.name == name and p.hop == hop + 1)


def clip_frames(plan, start_frame, fps, hop=0):
    """The clips' whole frames for hop ``hop`` (0-based) of ``plan`` at ``fps`` [frames/s]."""
    h = plan.hops[hop]
    f = lambda t: start_frame + t * fps  # noqa: E731
    # Hop 1 starts at the first dip; later hops where the rebound's push begins.
    first = _phase(plan, "unweighting", 0).start_s if hop == 0 else _phase(plan, "propulsion", hop).start_s
    last_hop = hop == len(plan.hops) - 1
    end = (int(np.floor(f(plan.duration_s) + 1e-6)) if last_hop
           else int(round(f(_phase(plan, "propulsion", hop + 1).start_s))))
    take, touch = f(h.takeoff_time_s), f(h.touchdown_time_s)
    apex = f(h.takeoff_time_s + (h.takeoff_speed_m_s / plan.gravity))
    first_air = int(np.ceil(take - 1e-6))
    top = max(first_air + 1, int(np.floor(min(apex, touch) + 1e-6)))
    return ClipFrames(start=(int(round(f(first))), int(round(take))), air=(first_air, top),
                      land=(int(round(touch)), end), takeoff=take, touchdown=touch, hop=hop)


def every_hop(plan, start_frame, fps):
    """:class:`ClipFrames` of every hop, in order."""
    return [clip_frames(plan, start_frame, fps, k) for k in range(len(plan.hops))]


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


def _air_loop(scene, rig, plan, carriers, start_frame, channels, cf, m, fps):
    """The air clip's samples: the rising half with the carried arc taken off, then back."""
    a0, a1 = cf.air
    half = list(range(a0, a1 + 1))
    values = _sample(scene, rig, channels, half)
    t = (np.array(half, dtype=float) - start_frame) / fps
    forward = forward_axis(rig, scene.leapwright_plan.forward)
    style = scene.leapwright_plan.key_style
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
    return list(range(a0, a0 + 2 * (a1 - a0) + 1)), loop


def _remove_stale(rig, hops):
    """Remove clips of hops the jump no longer has (a re-split after fewer hops)."""
    pattern = re.compile(rf"^{re.escape(rig.name)}-leap(\d*)-({'|'.join(CLIP_NAMES)})$")
    for action in list(bpy.data.actions):
        found = pattern.match(action.name)
        if found and int(found.group(1) or 1) > hops:
            bpy.data.actions.remove(action)


def split(scene, rig, plan, carriers, start_frame):
    """Bake every hop's three clips.

    Parameters
    ----------
    carriers : list of (rig_space.Channels, tuple of parts)
        Each channel leapwright keyed and the parts of the plan ('forward',
        'height') it carries itself; the air clips take exactly these off.

    Returns
    -------
    dict of str -> bpy.types.Action
        Action name -> action, in play order (start, air, land of hop 1, then hop 2 ...).
    """
    fps = scene_units.scene_fps(scene)
    m = scene_units.metres_per_unit(scene)
    include_object = any(c.data_path == "location" for c, _ in carriers)
    channels = _channels(rig, include_object)
    _remove_stale(rig, len(plan.hops))
    out = {}
    for cf in every_hop(plan, start_frame, fps):
        for part in CLIP_NAMES:
            if part == "air":
                frames, values = _air_loop(scene, rig, plan, carriers, start_frame, channels, cf, m, fps)
            else:
                first, last = getattr(cf, part)
                frames = list(range(first, last + 1))
                values = _sample(scene, rig, channels, frames)
            name = clip_name(rig, part, cf.hop)
            out[name] = _new_action(rig, name, frames, values, frames[0], frames[-1])
    return out
