"""Leapwright's NLA layers: offsets on a track of their own over the animator's keys.

Each capability that layers writes one NLA track (blend COMBINE: locations add,
rotations and scales multiply) playing an action of deltas. While any such
track exists the animator's active action is pushed down into a track of its
own and put back, with its slot, blend, influence and extrapolation, when the
last one goes.

Tracks cannot carry custom properties, so a track is known by the action it
plays: the delta action carries ``lw_layer`` (the capability) and the rig's
record names it by id, and the pushed action is named by id too. Renaming a
track, or the animator's action, changes nothing.
"""

import bpy
import numpy as np

from . import compat, identity
from .key_writer import write_curve
from .state import PREFIX, STATE_VERSION, USER_TRACK, group_name, load_state, save_state

LAYER_PROPERTY = "lw_layer"


class LayerError(Exception):
    """Offsets that cannot be layered as asked (checked before anything is written)."""


def _track_playing(obj, action):
    ad = obj.animation_data
    for track in (ad.nla_tracks if ad is not None and action is not None else ()):
        if any(s.action == action for s in track.strips):
            return track
    return None


def layer_track(obj, capability, state=None):
    """The NLA track of ``capability``'s layer on ``obj``, or None."""
    ad = obj.animation_data
    if ad is None:
        return None
    state = load_state(obj) if state is None else state
    ref = state.get("layer_actions", {}).get(capability)
    track = _track_playing(obj, identity.find_action(ref)) if ref else None
    return track if track is not None else ad.nla_tracks.get(group_name(capability))


def user_track(obj, state):
    """The track holding the animator's pushed action, or None."""
    pushed = state.get("pushed")
    track = _track_playing(obj, identity.find_action(pushed["action"])) if pushed else None
    ad = obj.animation_data
    return track if track is not None or ad is None else ad.nla_tracks.get(USER_TRACK)


def is_our_layer(track):
    """Whether ``track`` is one of leapwright's layers (not the one holding the animator's action)."""
    if any(s.action is not None and LAYER_PROPERTY in s.action for s in track.strips):
        return True
    return track.name.startswith(PREFIX) and track.name != USER_TRACK  # a record from before ids


def push_user_action(obj, state):
    ad = obj.animation_data
    action = ad.action
    if action is None or state.get("pushed"):
        return
    state["pushed"] = {"action": identity.action_ref(action), "slot": compat.active_slot_handle(obj),
                       "blend": ad.action_blend_type, "influence": ad.action_influence,
                       "extrapolation": ad.action_extrapolation}
    track = ad.nla_tracks.new()
    track.name = USER_TRACK
    strip = compat.new_nla_strip(obj, track, action.name, int(np.floor(action.frame_range[0])), action,
                                 state["pushed"]["slot"])
    if strip.frame_start != action.frame_range[0]:
        # strips.new takes whole frames; slide the strip so the keys keep their times.
        strip.frame_start_ui = action.frame_range[0]
    strip.blend_type = ad.action_blend_type
    strip.extrapolation = ad.action_extrapolation
    ad.action = None


def pop_user_action(obj, state):
    """Play the pushed action again; returns notes when the animator keyed a new action meanwhile."""
    ad = obj.animation_data
    pushed = state.pop("pushed")
    track = user_track(obj, dict(pushed=pushed))
    action = identity.find_action(pushed["action"])
    if ad.action is not None and ad.action != action:
        # Keys set while the layer was there went into a new action: it stays active, and
        # the animator's first action stays in its track, under its own name.
        if track is not None:
            track.name = action.name if action is not None else "your animation"
        return [f"'{ad.action.name}' (keys you set while the layer was on) stays active; your action "
                f"'{action.name if action else '?'}' stays in the NLA track of its name"]
    if track is not None:
        ad.nla_tracks.remove(track)
    compat.assign_action(obj, action, pushed["slot"])
    ad.action_blend_type = pushed["blend"]
    ad.action_influence = pushed["influence"]
    ad.action_extrapolation = pushed["extrapolation"]
    return []


def write_layer(obj, capability, specs, remember_static):
    """Write ``specs`` as deltas on ``capability``'s NLA track (blend COMBINE)."""
    summed = [s.data_path for s in specs if s.data_path.endswith("rotation_axis_angle")]
    if summed:
        raise LayerError(f"{summed[0]} is an axis-angle rotation: under COMBINE its four numbers simply add, "
                         "which is not a rotation; give the bone quaternion rotation, or bake the "
                         "correction per frame into its own keys")
    state = load_state(obj)
    if obj.animation_data is None:
        obj.animation_data_create()
        state["created_anim_data"] = True
    remember_static(obj, capability, specs, state)
    push_user_action(obj, state)
    delta = compat.new_delta_action(obj, f"{group_name(capability)} {obj.name}")
    identity.renew_id(delta)
    delta[LAYER_PROPERTY] = capability
    curves = compat.new_fcurves(delta, obj, [(s.data_path, s.index) for s in specs], group_name(capability))
    for fc, spec in zip(curves, specs):
        write_curve(fc, spec.frames, spec.values, spec.slopes, spec.interpolation)
    ad = obj.animation_data
    track = ad.nla_tracks.new()
    track.name = group_name(capability)
    start = int(np.floor(delta.frame_range[0]))
    strip = compat.new_nla_strip(obj, track, delta.name, start, delta)
    if strip.frame_start != delta.frame_range[0]:
        strip.frame_start_ui = delta.frame_range[0]
    strip.blend_type = "COMBINE"
    strip.extrapolation = "HOLD"
    state["layers"] = sorted(set(state["layers"]) | {capability})
    state["layer_actions"][capability] = identity.action_ref(delta)
    state["written"] = sorted(set(state.get("written", [])) | {capability})
    state["version"] = STATE_VERSION
    save_state(obj, state)
    return delta


def remove_layer(obj, capability, state):
    """Delete ``capability``'s track and delta action; returns notes (see :func:`pop_user_action`)."""
    ad = obj.animation_data
    track = layer_track(obj, capability, state)
    if track is not None:
        actions = [s.action for s in track.strips if s.action is not None]
        ad.nla_tracks.remove(track)
        for act in actions:
            if act.users == 0:
                bpy.data.actions.remove(act)
    state["layers"] = [c for c in state["layers"] if c != capability]
    state["layer_actions"].pop(capability, None)
    if not state["layers"] and state.get("pushed"):
        return pop_user_action(obj, state)
    return []
