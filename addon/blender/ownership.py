"""What leapwright wrote on a rig, and how to take it back exactly.

Each capability ("plan", "follow_through", "body", "arms", ...) owns:

* F-curves in the rig's own action, in a group named ``lw:<capability>``;
* or, for offsets layered over the animator's keys, one NLA track named
  ``lw:<capability>`` (blend COMBINE: locations add, rotations and scales
  multiply) playing an action of deltas. While any such track exists the
  animator's active action is pushed down into a track of its own
  (:data:`USER_TRACK`) and put back, with its slot, blend, influence and
  extrapolation, when the last one goes.

Every curve written into an action is recorded on that action
(:mod:`written_keys`: which rig, which capability, the keys it held before, the
keys written), so renaming the action, the rig or a bone, sharing the action
between rigs, or keys the animator adds after the write never make removal
take the wrong keys. The rest (layers, the pushed action, values before the
first write) is in the rig's ``lw_state`` property (:mod:`state`), naming
actions by id (:mod:`identity`). Blender's own undo covers the UI; this is for the
"remove what leapwright wrote" operator and for re-runs.

A rig that plays an action linked from a library never gets keys written
into that action: Blender does not save changes to linked data, so they would
be gone after save and reload. The rig plays a local copy of it instead, in
this file ("make local" done for the animator, the library file untouched);
removal puts the linked action back and deletes the copy, as long as the copy
holds nothing but the library's keys (keys the animator added to it are
theirs, and the copy stays). Linked rigs and library overrides themselves are
refused before anything is written (:mod:`write_guard`);
see :mod:`linked_actions`.
"""

import bpy

from . import action_backup, compat, identity, linked_actions, nla_layers, written_keys
from .identity import action_ref, find_action
from .key_writer import read_keys, restore_keys, write_curve
from .nla_layers import LayerError, is_our_layer  # noqa: F401  (part of this module's interface)
from .state import (PREFIX, STATE_PROPERTY, STATE_VERSION, USER_TRACK, StateError, group_name,  # noqa: F401
                    load_state, save_state)


#: What :func:`clear` kept for the animator since the operator began, as sentences; the write guard
#: empties it before each operator and reports it after (:mod:`write_guard`).
NOTES: list = []


def user_action(obj, state=None):
    """The animator's action: the active one, or the one pushed under leapwright's layers."""
    state = load_state(obj) if state is None else state
    pushed = state.get("pushed")
    if pushed:
        return find_action(pushed["action"])
    ad = obj.animation_data
    return ad.action if ad is not None else None


def is_our_curve(fc):
    """Whether ``fc`` is in one of leapwright's F-curve groups (``lw:<capability>``)."""
    return fc.group is not None and fc.group.name.startswith(PREFIX)


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
    state = load_state(obj)
    pushed = nla_layers.user_track(obj, state) if state.get("pushed") else None
    out = []
    for track in (ad.nla_tracks if ad is not None else ()):
        if track != pushed and not is_our_layer(track):  # the pushed track holds user_action
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
            if fc is not None and len(fc.keyframe_points) and (
                    not is_our_curve(fc) or written_keys.foreign_keys(action, obj, fc)):
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
        elif rec["path"].endswith('"]') and '["' in rec["path"]:  # a custom property: owner["key"]
            owner, key = rec["path"][:-2].rsplit('["', 1)
            holder = obj.path_resolve(owner) if owner else obj
            holder[key] = type(holder[key])(rec["value"])
        elif "." in rec["path"]:
            owner, prop = rec["path"].rsplit(".", 1)
            setattr(obj.path_resolve(owner), prop, rec["value"])
        else:
            setattr(obj, rec["path"], rec["value"])
    state["static"] = kept


def layer_track(obj, capability):
    """The NLA track of ``capability``'s layer on ``obj``, or None."""
    return nla_layers.layer_track(obj, capability)


def _actions_with_writes(obj):
    return [a for a in bpy.data.actions if written_keys.WRITES_PROPERTY in a and a.library is None]


def clear(obj, capability):
    """Take back everything ``capability`` wrote on ``obj``; the rest is left as it was.

    Returns notes for the animator (keys of theirs that were kept, an action
    that stays where they keyed it).
    """
    state = load_state(obj)
    name = group_name(capability)
    notes = []
    for action in _actions_with_writes(obj):
        notes += written_keys.take_back(action, obj, capability, is_our_curve)
        for grp in [g for g in compat.groups(action, obj) if g.name == name and not len(g.channels)]:
            compat.remove_group(action, obj, grp)
    _clear_legacy(obj, capability, state)
    if capability in state["layers"]:
        notes += nla_layers.remove_layer(obj, capability, state)
    action_backup.restore(obj, capability, state)  # keys of the animator's that the capability moved (arm re-timing)
    state["written"] = [w for w in state.get("written", []) if w != capability]
    _restore_static(obj, capability, state)
    _tidy(obj, state)
    save_state(obj, state)
    _release_ids(obj)
    NOTES.extend(notes)
    return notes


def _release_ids(obj):
    """Take off the ids no record needs any more (removal leaves the file as it was)."""
    records = [o.get(STATE_PROPERTY) for o in bpy.data.objects] + [
        a.get(written_keys.WRITES_PROPERTY) for a in bpy.data.actions]
    owners = [obj] + list(obj.pose.bones if obj.pose is not None else ()) + [
        a for a in bpy.data.actions if a.library is None]
    identity.release_unused([r for r in records if isinstance(r, str)], owners)


def _clear_legacy(obj, capability, state):
    """Records written before curves were recorded on their action: group and replaced keys by name."""
    action = user_action(obj, state)
    if action is None or state.get("version", 1) >= STATE_VERSION:
        return
    name = group_name(capability)
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


def _tidy(obj, state):
    """Remove the action and animation data this add-on created, once they hold nothing."""
    _return_linked(obj, state)
    ad = obj.animation_data
    made = state.get("created_action")
    if made and not state.get("pushed"):
        act = find_action(made)
        if act is None:
            state["created_action"] = None
        elif ad is not None and ad.action == act and not len(compat.fcurves(act, obj)) \
                and written_keys.WRITES_PROPERTY not in act:
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
        identity.renew_id(action)
        compat.assign_action(obj, action)
        state["created_action"] = action_ref(action)
    elif linked_actions.is_linked(action):
        action = _adopt_local_copy(obj, action, state)
    return action


def _swap_action(obj, old, new, state):
    """Let ``new`` play wherever ``old`` played for the animator: active, or pushed under the layers."""
    ad = obj.animation_data
    if ad.action == old:
        compat.assign_action(obj, new, compat.active_slot_handle(obj))
    track = nla_layers.user_track(obj, state)
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
        if any(is_our_curve(fc) for fc in compat.fcurves(copy, obj)) or written_keys.WRITES_PROPERTY in copy:
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
    True; the curve stays where the animator keeps it (its group, modifiers and
    settings are not touched). Each curve's write is recorded on the action
    (:mod:`written_keys`) for :func:`clear`.
    """
    state = load_state(obj)
    _remember_static(obj, capability, specs, state)
    action = _target_action(obj, state)
    for spec in specs:
        fc = compat.find_fcurve(action, obj, spec.data_path, spec.index)
        created = fc is None
        if created:
            fc = compat.new_fcurve(action, obj, spec.data_path, spec.index, group_name(capability))
        elif not is_our_curve(fc) and not replace and len(fc.keyframe_points):
            raise RuntimeError(f"{spec.data_path}[{spec.index}] has the animator's keys")
        before = None if created else read_keys(fc)
        write_curve(fc, spec.frames, spec.values, spec.slopes, spec.interpolation)
        written_keys.record(action, obj, capability, fc, created, before)
    state["written"] = sorted(set(state.get("written", [])) | {capability})
    state["version"] = STATE_VERSION
    save_state(obj, state)
    return action


def write_layer(obj, capability, specs):
    """Write ``specs`` as deltas on ``capability``'s NLA track (blend COMBINE), see :mod:`nla_layers`.

    The animator's keys are not touched: their active action is pushed into a
    track below while any leapwright layer exists.
    """
    return nla_layers.write_layer(obj, capability, specs, _remember_static)


def capabilities_written(obj):
    """Names of the capabilities that have something on ``obj``."""
    return list(load_state(obj).get("written", []))
