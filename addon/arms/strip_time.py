"""Where the animator's arm keys play, and how their action's frames map to scene frames.

The swing is read from the evaluated rig in scene time (:mod:`rig_sampling`), but the
keys it moves live in an action: the active one (played in scene time), the one
leapwright pushed into :data:`ownership.USER_TRACK`, or one in the animator's own NLA
strip, which may start elsewhere, play slower or faster and repeat. For an action
clip strip that plays forward Blender maps an action frame ``a`` to the scene frame

    ``frame_start + k L s + s (a - action_frame_start)``,   ``L = action_frame_end - action_frame_start``

in its ``k``-th repetition (``s`` the strip's scale; Blender's NLA time mapping of an
action clip, ``nlastrip_get_frame_actionclip`` in the source). The keys are warped in
scene time through that line and put back through its inverse, which keeps their
values and moves their handles with them. Strips Blender maps otherwise (played in
reverse, or with an animated strip time) are refused with a way on, before anything
is written.
"""

from dataclasses import dataclass
import math

from ..blender import compat as compat, ownership
from .keys import SwingError, bone_path


@dataclass(frozen=True)
class StripTime:
    """The linear map between an action's frames and scene frames [frames].

    ``scene = start + scale * (action - action_start)``; the identity for an action
    played directly. ``strip`` is the NLA strip (None for the active action).
    """

    start: float = 0.0
    action_start: float = 0.0
    scale: float = 1.0
    strip: object = None

    def to_scene(self, frames):
        return self.start + self.scale * (frames - self.action_start)

    def to_action(self, frames):
        return self.action_start + (frames - self.start) / self.scale


SCENE_TIME = StripTime()


@dataclass(frozen=True, eq=False)
class KeySource:
    """An action that plays arm keys of the animator's, and where (active, or which strip)."""

    action: object
    curves: list
    strip: object = None
    track: object = None

    def where(self):
        if self.strip is None:
            return f"the active action '{self.action.name}'"
        return f"the action '{self.action.name}' in NLA strip '{self.strip.name}' (track '{self.track.name}')"


def _arm_curves(action, rig, arms):
    prefixes = tuple(bone_path(b) + "." for a in arms for b in a.bones)
    return [fc for fc in compat.fcurves(action, rig) if fc.data_path.startswith(prefixes)
            and not ownership.is_our_curve(fc) and len(fc.keyframe_points) >= 2]


def _playing_strips(strips, track):
    for strip in strips:
        if strip.mute:
            continue
        if strip.type == "META":
            yield from _playing_strips(strip.strips, track)
        elif strip.action is not None:
            yield strip, track


def key_sources(rig, arms):
    """Every playing action holding the animator's keys (two or more) on the arms' bones.

    Muted tracks and strips do not play, nor do the others when one track is solo, so
    they are left out; so are leapwright's own tracks other than the one holding the
    animator's pushed action.
    """
    ad = rig.animation_data
    if ad is None:
        return []
    out = []
    if ad.action is not None:
        curves = _arm_curves(ad.action, rig, arms)
        if curves:
            out.append(KeySource(ad.action, curves))
    solo = any(t.is_solo for t in ad.nla_tracks)  # a solo track is the only one that plays
    for track in ad.nla_tracks:
        if track.mute or (solo and not track.is_solo) or ownership.is_our_layer(track):
            continue
        for strip, tr in _playing_strips(track.strips, track):
            curves = _arm_curves(strip.action, rig, arms)
            if curves:
                out.append(KeySource(strip.action, curves, strip, tr))
    return out


def check_mapping(source):
    """Refuse strips whose frames do not map to the action's by one line (before reading anything).

    Raises
    ------
    SwingError  a strip played in reverse, with an animated strip time, or inside a meta strip.
    """
    strip = source.strip
    if strip is None:
        return
    name = f"NLA strip '{strip.name}'"
    if strip.use_reverse:
        raise SwingError(f"{name} plays '{source.action.name}' in reverse, so moving its keys later would move "
                         "the swing earlier; turn off Reversed in the strip's properties, or re-time the keys by hand")
    if strip.use_animated_time:
        raise SwingError(f"{name} has an animated strip time, which maps scene frames to the action's frames "
                         "by a curve; turn off Animated Strip Time, or re-time the keys by hand")
    if strip not in list(source.track.strips):
        raise SwingError(f"{name} sits inside a meta strip, whose own timing is not read here; ungroup it "
                         "(NLA editor: Strip > Remove Meta) and run again")


def strip_time(source, scene_frames):
    """The :class:`StripTime` of ``source`` for the play holding every one of ``scene_frames``.

    Raises
    ------
    SwingError  as :func:`check_mapping`, or when the frames fall outside one play of
        the strip (off its ends, where it holds, or across a repeat).
    """
    check_mapping(source)
    strip = source.strip
    if strip is None:
        return SCENE_TIME
    name = f"NLA strip '{strip.name}'"
    scale = abs(float(strip.scale)) or 1.0
    length = (float(strip.action_frame_end) - float(strip.action_frame_start)) or 1.0
    play = length * scale
    lo, hi = min(scene_frames), max(scene_frames)
    start, end = float(strip.frame_start), float(strip.frame_end)
    if lo < start - 1e-6 or hi > end + 1e-6:
        raise SwingError(f"the swing and the push (scene frames {lo:.1f}-{hi:.1f}) are not all inside {name} "
                         f"(frames {start:.1f}-{end:.1f}), which holds its ends outside; move or lengthen the "
                         "strip so it plays the whole swing")
    k = min(max(math.floor((lo - start) / play + 1e-9), 0), max(math.ceil(float(strip.repeat)) - 1, 0))
    if hi > start + (k + 1) * play + 1e-6:
        raise SwingError(f"the swing and the push (scene frames {lo:.1f}-{hi:.1f}) run across a repeat of {name} "
                         f"(each play is {play:.1f} frames from frame {start:.1f}); shift the strip so one play "
                         "holds the swing")
    return StripTime(start + k * play, float(strip.action_frame_start), scale, strip)
