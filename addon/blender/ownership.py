"""What leapwright wrote on a rig, and how to take it back exactly.

Each capability ("plan", "follow_through", "body", "arms", ...) owns:

* F-curves in the rig's own action, in a group named ``lw:<capability>``;
* or, for offsets layered over the animator's keys, one NLA track named
  ``lw:<capability>`` (blend COMBINE: locations add, rotations and scales
  multiply) playing an action of deltas. While any such track exists the
  animator's active action is pushed down into a track of its own
  (:data:`USER_TRACK`) and put back, with its slot, blend, influence and
  extrapolation, when the last one goes.

Keys of the animator's that a run was told to replace are saved first, in the
rig's ``lw_state`` property (with everything else needed to undo the run), and
written back on removal. Blender's own undo covers the UI; this is for the
"remove what leapwright wrote" operator and for re-runs.

A rig that plays an action linked from a library never gets keys written
into that action: Blender does not save changes to linked data, so they would
be gone after save and reload. The rig plays a local copy of it instead, in
this file ("make local" done for the animator, the library file untouched);
removal puts the linked action back and deletes the copy, as long as the copy
holds nothing but the library's keys (keys the animator added to it are
theirs, and the copy stays). Linked rigs and library overrides themselves are
refused before anything is written (:func:`rig_space.linked_library_problem`);
see :mod:`linked_actions`.
"""

import bpy
import numpy as np

from . import action_backup, compat as compat, linked_actions
from .key_writer import read_keys, restore_keys, write_curve
from .linked_actions import action_ref, find_action
from .state import PREFIX, STATE_PROPERTY, load_state, save_state  # noqa: F401  (part of ownership's API)

USER_TRACK = "lw:your animation"


class LayerError(Exception):
    """Offsets that cannot be layered as asked (checked before anything is written)."""


def group_name(capability):
    return PREFIX + capability


def user_action(obj, state=None):
    """The animator's action: the active one, or the one pushed into :data:`USER_TRACK`."""
    state = load_state(obj) if state is None else state
    pushed = state.get("pushed")
    if pushed:
        return find_action(pushed["action"])
    ad = obj.animation_data
    return ad.action if ad is not None else None


def is_our_curve(fc):
    """Whether ``fc`` is in one of leapwright's F-curve groups (``lw:<capability>``)."""
    return fc.group is not None and fc.group.name.startswith(PREFIX)


def is_our_layer(track):
    """Whether ``track`` is one of leapwright's NLA layers (not the one holding the animator's action)."""
    return track.name.startswith(PREFIX) and track.name != USER_TRACK


def _strip_actions(strips, out):
    for strip in strips:
        if strip.type == "META":
            _strip_actions(strip.strips, out)
        elif strip.action is not None and strip.action not in out:
            out.append(strip.action)
    return out


def user_strip_actions(obj):
    """Actions of the animator's own NLA strips (muted ones too: unmuting them must not surprise)."""
    ad = obj.animation_data
    out = []
    for track in (ad.nla_tracks if ad is not None else ()):
        if not track.name.startswith(PREFIX):  # USER_TRACK holds user_action, the rest are ours
            _strip_actions(track.strips, out)
    return out


def conflicts(obj, specs):
    """``(data_path, index)`` of the specs' channels the animator already keys.

    Searched: the animator's action and the actions of their NLA strips. A
    channel keyed only in a strip clashes too: the active action written over
    it would override the strip's keys without a word.
    """
    actions = [a for a in [user_action(obj)] + user_strip_actions(obj) if a is not None]
    out = []
    for spec in specs:
        for action in actions:
            fc = compat.find_fcurve(action, obj, spec.data_path, spec.index)
            if fc is not None and len(fc.keyframe_points) and not is_our_curve(fc):
                out.append((spec.data_path, spec.index))
                break
    return out


def _remember_static(obj, capability, specs, state):
    """Save the present values of the channels about to be animated.

    Blender leaves a property at its last evaluated value when its curve is
    deleted; putting these back is what makes removal leave the pose as found.
    """
    seen = {(r["path"], r["index"]) for r in state["static"] if r["capability"] == capability}
    for spec in specs:
        if (spec.data_path, spec.index) in seen:
            continue
        try:
            value = obj.path_resolve(spec.data_path)
        except ValueError:
            continue  # a property the run itself adds (and removes)
        value = value[spec.index] if hasattr(value, "__len__") else value
        state["static"].append({"capability": capability, "path": spec.data_path, "index": spec.index,
                                "value": float(value)})


def static_values(obj, capability):
    """``{(data_path, index): value}`` of channels as they were before ``capability`` animated them."""
    return {(r["path"], r["index"]): r["value"] for r in load_state(obj)["static"]
            if r["capability"] == capability}


def _restore_static(obj, capability, state):
    kept = []
    for rec in state["static"]:
        if rec["capability"] != capability:
            kept.append(rec)
            continue
        try:
            target = obj.path_resolve(rec["path"])
        except ValueError:
            continue
        if hasattr(target, "__len__"):
            target[rec["index"]] = rec["value"]
        elif "." in rec["path"]:
            owner, prop = rec["path"].rsplit(".", 1)
            setattr(obj.path_resolve(owner), prop, rec["value"])
        else:
            setattr(obj, rec["path"], rec["value"])
    state["static"] = kept


def layer_track(obj, capability):
    """The NLA track ``lw:<capability>`` of ``obj``, or None."""
    ad = obj.animation_data
    return ad.nla_tracks.get(group_name(capability)) if ad is not None else None


def clear(obj, capability):
    """Take back everything ``capability`` wrote on ``obj``; the rest is left as it was."""
    state = load_state(obj)
    action = user_action(obj, state)
    name = group_name(capability)
    if action is not None:
        for fc in [f for f in compat.fcurves(action, obj) if f.group is not None and f.group.name == name]:
            compat.remove_fcurve(action, obj, fc)
        grp = next((g for g in compat.groups(action, obj) if g.name == name), None)
        if grp is not None:
            compat.remove_group(action, obj, grp)
        kept = []
        for rec in state["replaced"]:
            if rec["capability"] != capability:
                kept.append(rec)
                continue
            fc = compat.find_fcurve(find_action(rec["action"]), obj, rec["path"], rec["index"])
            if fc is not None:
                restore_keys(fc, rec["keys"])
        state["replaced"] = kept
    if capability in state["layers"]:
        _remove_layer(obj, capability, state)
    action_backup.restore(obj, capability, state)  # keys of the animator's that the capability moved (arm re-timing)
    state["written"] = [w for w in state.get("written", []) if w != capability]
    _restore_static(obj, capability, state)
    _tidy(obj, state)
    save_state(obj, state)


def _remove_layer(obj, capability, state):
    ad = obj.animation_data
    track = layer_track(obj, capability)
    if track is not None:
        actions = [s.action for s in track.strips if s.action is not None]
        ad.nla_tracks.remove(track)
        for act in actions:
            if act.users == 0:
                bpy.data.actions.remove(act)
    state["layers"] = [c for c in state["layers"] if c != capability]
    if not state["layers"] and state.get("pushed"):
        _pop_user_action(obj, state)


def _tidy(obj, state):
    """Remove the action and animation data this add-on created, once they hold nothing."""
    _return_linked(obj, state)
    ad = obj.animation_data
    made = state.get("created_action")
    if made and not state.get("pushed"):
        act = bpy.data.actions.get(made)
        if act is None:
            state["created_action"] = None
        elif ad is not None and ad.action == act and not len(compat.fcurves(act, obj)):
            ad.action = None
            if act.users == 0:
                bpy.data.actions.remove(act)
            state["created_action"] = None
    ad = obj.animation_data
    if (state.get("created_anim_data") and ad is not None and ad.action is None and not len(ad.nla_tracks)
            and not len(ad.drivers)):
        obj.animation_data_clear()
        state["created_anim_data"] = False


def _target_action(obj, state):
    """The action blocking keys go into, made (and remembered as ours) if the rig has none."""
    if obj.animation_data is None:
        obj.animation_data_create()
        state["created_anim_data"] = True
    action = user_action(obj, state)
    if action is None:
        action = bpy.data.actions.new(f"{obj.name}Action")
        compat.assign_action(obj, action)
        state["created_action"] = action.name
    elif linked_actions.is_linked(action):
        action = _adopt_local_copy(obj, action, state)
    return action


def _swap_action(obj, old, new, state):
    """Let ``new`` play wherever ``old`` played for the animator: active, or pushed into USER_TRACK."""
    ad = obj.animation_data
    if ad.action == old:
        compat.assign_action(obj, new, compat.active_slot_handle(obj))
    track = ad.nla_tracks.get(USER_TRACK)
    for strip in (track.strips if track is not None else ()):
        if strip.action == old:
            compat.set_strip_action(strip, new)
    pushed = state.get("pushed")
    if pushed and find_action(pushed["action"]) == old:
        pushed["action"] = action_ref(new)


def _adopt_local_copy(obj, linked, state):
    """A local copy of a linked action, playing in its place, to take the keys (see the module notes)."""
    copy = linked_actions.local_copy(linked)
    _swap_action(obj, linked, copy, state)
    state["adopted"] = {"original": action_ref(linked), "copy": action_ref(copy)}
    return copy


def _return_linked(obj, state):
    """Play the linked action again once its local copy holds nothing of ours, and delete the copy."""
    adopted = state.get("adopted")
    if not adopted:
        return
    copy = find_action(adopted["copy"])
    linked = linked_actions.original_of(copy, adopted["original"])
    if copy is not None and linked is not None:
        if any(is_our_curve(fc) for fc in compat.fcurves(copy, obj)) or any(
                r["action"] == adopted["copy"] for r in state["replaced"]):
            return  # another capability still has keys in the copy
        if not linked_actions.same_keys(obj, copy, linked):
            linked_actions.release(copy)  # the animator keyed the copy: it is their action now
            state.pop("adopted")
            return
        _swap_action(obj, copy, linked, state)
        if copy.users == 0:
            bpy.data.actions.remove(copy)
        else:
            linked_actions.release(copy)
    state.pop("adopted")


def write_into_action(obj, capability, specs, replace):
    """Write ``specs`` into the animator's action, in the group ``lw:<capability>``.

    Channels the animator already keys are only written when ``replace`` is
    True; their keys are saved for :func:`clear` and the curve stays where the
    animator keeps it (its group, modifiers and settings are not touched).
    """
    state = load_state(obj)
    _remember_static(obj, capability, specs, state)
    action = _target_action(obj, state)
    for spec in specs:
        fc = compat.find_fcurve(action, obj, spec.data_path, spec.index)
        if fc is not None and not is_our_curve(fc):
            if not replace and len(fc.keyframe_points):
                raise RuntimeError(f"{spec.data_path}[{spec.index}] has the animator's keys")
            keys = {k: v.tolist() for k, v in read_keys(fc).items()}
            state["replaced"].append({"capability": capability, "action": action_ref(action), "path": spec.data_path,
                                      "index": spec.index, "keys": keys})
        elif fc is None:
            fc = compat.new_fcurve(action, obj, spec.data_path, spec.index, group_name(capability))
        write_curve(fc, spec.frames, spec.values, spec.slopes, spec.interpolation)
    state["written"] = sorted(set(state.get("written", [])) | {capability})
    save_state(obj, state)
    return action


def _push_user_action(obj, state):
    ad = obj.animation_data
    action = ad.action
    if action is None or state.get("pushed"):
        return
    state["pushed"] = {"action": action_ref(action), "slot": compat.active_slot_handle(obj),
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


def _pop_user_action(obj, state):
    ad = obj.animation_data
    pushed = state.pop("pushed")
    track = ad.nla_tracks.get(USER_TRACK)
    if track is not None:
        ad.nla_tracks.remove(track)
    action = find_action(pushed["action"])
    compat.assign_action(obj, action, pushed["slot"])
    ad.action_blend_type = pushed["blend"]
    ad.action_influence = pushed["influence"]
    ad.action_extrapolation = pushed["extrapolation"]


def write_layer(obj, capability, specs):
    """Write ``specs`` as deltas on the NLA track ``lw:<capability>`` (blend COMBINE).

    The animator's keys are not touched: their active action is pushed into a
    track below while any leapwright layer exists.
    """
    summed = [s.data_path for s in specs if s.data_path.endswith("rotation_axis_angle")]
    if summed:
        raise LayerError(f"{summed[0]} is an axis-angle rotation: under COMBINE its four numbers simply add, "
                         "which is not a rotation; give the bone quaternion rotation, or bake the "
                         "correction per frame into its own keys")
    state = load_state(obj)
    if obj.animation_data is None:
        obj.animation_data_create()
        state["created_anim_data"] = True
    _remember_static(obj, capability, specs, state)
    _push_user_action(obj, state)
    delta = compat.new_delta_action(obj, f"{group_name(capability)} {obj.name}")
    for spec in specs:
        fc = compat.new_fcurve(delta, obj, spec.data_path, spec.index, group_name(capability))
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
    state["written"] = sorted(set(state.get("written", [])) | {capability})
    save_state(obj, state)
    return delta


def capabilities_written(obj):
    """Names of the capabilities that have something on ``obj``."""
    return list(load_state(obj).get("written", []))
