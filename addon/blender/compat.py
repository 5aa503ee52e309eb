"""Where Blender versions differ, and nowhere else.

Blender 4.4 introduced layered ("slotted") actions: F-curves live in a
channelbag per slot, inside a keyframe strip of a layer. Blender 4.2 keeps them
directly on the action (``Action.fcurves``), which 5.0 removed. A trap sits in
between: on 4.4/4.5 ``Action.fcurves`` still exists, but a curve made with
``action.fcurves.new`` on an assigned empty action animates nothing, without an
error. So the choice is made once, by feature (``bl_rna``, since ``hasattr`` is
always False for Blender's own members), never by version number, and every
other module goes through these functions.
"""

import bpy

#: True where actions have layers and slots (Blender 4.4 and later).
LAYERED = "layers" in bpy.types.Action.bl_rna.properties


def _slot_of(obj, action):
    """The slot of ``action`` that animates ``obj``, or None (layered only)."""
    ad = obj.animation_data
    if ad is not None and ad.action == action and ad.action_slot is not None:
        return ad.action_slot
    for track in (ad.nla_tracks if ad else ()):
        for strip in track.strips:
            if strip.action == action and strip.action_slot is not None:
                return strip.action_slot
    # An action not yet played by obj (a fresh delta action): its object slot.
    for slot in action.slots:
        if slot.target_id_type in ("OBJECT", "UNSPECIFIED"):
            return slot
    return None


def _channelbag(action, obj, create):
    slot = _slot_of(obj, action)
    if slot is None:
        if not create:
            return None
        slot = action.slots.new(id_type="OBJECT", name=obj.name)
        ad = obj.animation_data
        if ad is not None and ad.action == action:
            ad.action_slot = slot
    if not action.layers:
        if not create:
            return None
        action.layers.new("Layer")
    layer = action.layers[0]
    if not layer.strips:
        if not create:
            return None
        layer.strips.new(type="KEYFRAME")
    return layer.strips[0].channelbag(slot, ensure=create)


def fcurves(action, obj):
    """The F-curve collection of ``action`` for ``obj`` (empty tuple if none)."""
    if action is None:
        return ()
    if not LAYERED:
        return action.fcurves
    bag = _channelbag(action, obj, create=False)
    return bag.fcurves if bag is not None else ()


def groups(action, obj):
    """The F-curve group collection of ``action`` for ``obj`` (empty tuple if none)."""
    if action is None:
        return ()
    if not LAYERED:
        return action.groups
    bag = _channelbag(action, obj, create=False)
    return bag.groups if bag is not None else ()


def find_fcurve(action, obj, data_path, index):
    """The F-curve for ``data_path[index]`` of ``obj`` in ``action``, or None."""
    for fc in fcurves(action, obj):
        if fc.data_path == data_path and fc.array_index == index:
            return fc
    return None


def ensure_group(action, obj, name):
    """The group called ``name`` for ``obj``'s curves in ``action`` (made if missing)."""
    coll = action.groups if not LAYERED else _channelbag(action, obj, create=True).groups
    grp = coll.get(name)
    return grp if grp is not None else coll.new(name)


def new_fcurve(action, obj, data_path, index, group_name):
    """A new, empty F-curve in group ``group_name`` of ``action`` for ``obj``."""
    if not LAYERED:
        return action.fcurves.new(data_path, index=index, action_group=group_name)
    bag = _channelbag(action, obj, create=True)
    fc = bag.fcurves.new(data_path, index=index)
    fc.group = ensure_group(action, obj, group_name)
    return fc


def new_fcurves(action, obj, channels, group_name):
    """New, empty F-curves for ``channels`` ((data_path, index) pairs) in one group of ``action``.

    :func:`new_fcurve` for many curves at once: the slot's channel bag and the group are
    looked up once, not once per curve (a layer of 120 curves spent more on those look-ups
    than on its keys).
    """
    if not LAYERED:
        return [action.fcurves.new(path, index=index, action_group=group_name) for path, index in channels]
    bag = _channelbag(action, obj, create=True)
    group = bag.groups.get(group_name) or bag.groups.new(group_name)
    out = []
    for path, index in channels:
        fc = bag.fcurves.new(path, index=index)
        fc.group = group
        out.append(fc)
    return out


def remove_fcurve(action, obj, fc):
    """Delete one F-curve from ``action``."""
    fcurves(action, obj).remove(fc)


def remove_group(action, obj, grp):
    """Delete an (emptied) F-curve group."""
    groups(action, obj).remove(grp)


def assign_action(obj, action, slot_handle=None):
    """Make ``action`` the active action of ``obj``, on the given or a fitting slot.

    Returns the slot handle in use (0 on versions without slots).
    """
    ad = obj.animation_data or obj.animation_data_create()
    ad.action = action
    if not LAYERED or action is None:
        return 0
    slot = None
    if slot_handle:
        slot = next((s for s in action.slots if s.handle == slot_handle), None)
    if slot is None and ad.action_slot is None:
        slot = next((s for s in action.slots if s.target_id_type in ("OBJECT", "UNSPECIFIED")), None)
        if slot is None:
            slot = action.slots.new(id_type="OBJECT", name=obj.name)
    if slot is not None:
        ad.action_slot = slot
    return ad.action_slot.handle


def active_slot_handle(obj):
    """The handle of the slot the active action plays (0 without slots)."""
    ad = obj.animation_data
    if not LAYERED or ad is None or ad.action_slot is None:
        return 0
    return ad.action_slot.handle


def new_nla_strip(obj, track, name, start, action, slot_handle=0):
    """An NLA strip playing ``action`` (on its slot for ``obj``) in ``track``."""
    strip = track.strips.new(name, int(start), action)
    if LAYERED:
        slot = next((s for s in action.slots if s.handle == slot_handle), None) or _slot_of(obj, action)
        if slot is None:
            slot = action.slots.new(id_type="OBJECT", name=obj.name)
        if strip.action_slot != slot:
            strip.action_slot = slot
    return strip


def set_strip_action(strip, action):
    """Let an NLA strip play ``action``, on the slot with the handle it played before."""
    handle = strip_slot_handle(strip)
    strip.action = action
    if LAYERED:
        slot = next((s for s in action.slots if s.handle == handle), None)
        if slot is not None and strip.action_slot != slot:
            strip.action_slot = slot


def new_delta_action(obj, name):
    """A new empty action ready to take ``obj``'s curves without being assigned."""
    action = bpy.data.actions.new(name)
    if LAYERED:
        _channelbag(action, obj, create=True)
    return action


def strip_slot_handle(strip):
    """The slot handle an NLA strip plays (0 without slots)."""
    if not LAYERED or strip.action_slot is None:
        return 0
    return strip.action_slot.handle


def mark_for_objects(action):
    """Say that ``action`` animates objects, for tools that look for such actions unassigned.

    With slots (4.4+) the object slot says so; before, it is the action's
    ``id_root``, which an action never assigned leaves unset (glTF export's
    "all armature actions" then skips it).
    """
    if not LAYERED:
        action.id_root = "OBJECT"
