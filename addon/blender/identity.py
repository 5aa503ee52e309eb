"""Names that survive renaming: a persistent id on actions, rigs and bones.

Records that say "this action" or "this bone" by name go wrong as soon as the
animator renames it (or names another one like it). Each action, rig and pose
bone leapwright records gets a random id in the custom property ``lw_id``:
custom properties survive renaming and save/reload, and stay with the data
when it is shared. Records name things by id first and keep the name only to
tell copies apart (``Action.copy`` copies the id too, which is why leapwright's
own copies get a fresh one, :func:`renew_id`).

An id is made from the name the data has when it is first recorded (a
name-based UUID, with a counter when another one already answers to it), so
running the same write twice on the same file gives the same file; and it is
taken off again once no record refers to it (:func:`release_unused`), so
removing what leapwright wrote leaves no trace.

Data linked from a library cannot take a property that would be saved; such
actions are named by name and library file, which the library fixes.

A rig duplicated in Blender (Shift+D) carries its original's id, and the copies
of its actions theirs: :func:`separate_copy` finds such a copy (the original is
the one seen first in this session, else the one whose name Blender's copy
naming started from) and gives it, and the actions only it plays, ids of their
own, rewriting the records the copy carries so that they name it; the
original's records are left as they are.
"""

import os
import re
import uuid

import bpy

ID_PROPERTY = "lw_id"
#: Records a copied rig carries that name its ids (``state.STATE_PROPERTY``, ``written_keys.WRITES_PROPERTY``).
RECORD_PROPERTIES = ("lw_state", "lw_writes")
#: id -> ``session_uid`` of the object first seen answering to it in this Blender session.
_FIRST_SEEN: dict = {}
BONE_PATH = re.compile(r'^pose\.bones\["((?:[^"\\]|\\.)*)"\](.*)$')


def _writable(owner):
    data = getattr(owner, "id_data", owner)
    return data.library is None and data.override_library is None


def _siblings(owner):
    """The items an id must be unique among, and the kind of item."""
    if isinstance(owner, bpy.types.PoseBone):
        return owner.id_data.pose.bones, "bone:" + str(ensure_id(owner.id_data))
    if isinstance(owner, bpy.types.Action):
        return bpy.data.actions, "action"
    return bpy.data.objects, "object"


def ensure_id(owner):
    """The persistent id of ``owner`` (an ID or a pose bone), made if missing; None on linked data."""
    value = owner.get(ID_PROPERTY)
    if isinstance(value, str) and value:
        return value
    if not _writable(owner):
        return None
    return renew_id(owner)


def renew_id(owner):
    """Give ``owner`` an id no other item of its kind has (a copy must not answer to its original's)."""
    items, kind = _siblings(owner)
    taken = {item.get(ID_PROPERTY) for item in items if item != owner}
    count = 0
    value = uuid.uuid5(uuid.NAMESPACE_URL, f"leapwright:{kind}:{owner.name}").hex
    while value in taken:
        count += 1
        value = uuid.uuid5(uuid.NAMESPACE_URL, f"leapwright:{kind}:{owner.name}:{count}").hex
    owner[ID_PROPERTY] = value
    return value


def _copy_order(item):
    """Sort key putting the original of a set of copies first: Blender names a copy 'name.001'."""
    base, dot, number = item.name.rpartition(".")
    copied = bool(dot) and number.isdigit()
    return (int(number) if copied else 0, len(item.name), item.name)


def _sharing(collection, item, value):
    return [o for o in collection if o != item and o.get(ID_PROPERTY) == value and _writable(o)]


def _is_copy(obj, value, others):
    """Whether ``obj`` is the copy among the objects answering to ``value`` (``others``: the rest)."""
    first = _FIRST_SEEN.get(value)
    group = [obj] + others
    if first is not None and any(getattr(o, "session_uid", None) == first for o in group):
        return getattr(obj, "session_uid", None) != first
    return min(group, key=_copy_order) != obj


def _played_actions(obj):
    ad = obj.animation_data
    if ad is None:
        return []
    found = [ad.action] if ad.action is not None else []
    found += [s.action for t in ad.nla_tracks for s in t.strips if s.action is not None]
    return list(dict.fromkeys(found))


def remember(obj):
    """Note ``obj`` as the one object answering to its id in this session (called after each write)."""
    value = obj.get(ID_PROPERTY) if obj is not None else None
    if isinstance(value, str) and value and not _sharing(bpy.data.objects, obj, value):
        _FIRST_SEEN[value] = getattr(obj, "session_uid", None)


def _users():
    users = {}
    for o in bpy.data.objects:
        for a in _played_actions(o):
            users.setdefault(a, set()).add(o)
    return users


def _own_actions(obj, value, swaps):
    """The actions ``obj`` alone plays once its shared ones that hold records of ``value`` are copied.

    An action the copy shares with another rig (an NLA layer leapwright made; Blender's
    Duplicate copies only the active action) and whose records name ``value`` is copied for
    the copy, so taking the copy's keys back never touches the original's. Every action
    the copy alone plays that answers to another action's id gets an id of its own;
    ``swaps`` (old id -> new id) is filled in.
    """
    from . import compat

    users = _users()

    def own(action):
        if users.get(action) == {obj} or value not in str(action.get("lw_writes", "")):
            return action
        copy = action.copy()
        users[copy] = {obj}
        return copy

    ad = obj.animation_data
    if ad is not None:
        new = own(ad.action) if ad.action is not None else None
        if new != ad.action:
            compat.assign_action(obj, new, compat.active_slot_handle(obj))
        for track in ad.nla_tracks:
            for strip in track.strips:
                if strip.action is not None:
                    new = own(strip.action)
                    if new != strip.action:
                        compat.set_strip_action(strip, new)
    users = _users()
    mine = [a for a in _played_actions(obj) if users.get(a) == {obj} and _writable(a)]
    for action in mine:
        old = action.get(ID_PROPERTY)
        if isinstance(old, str) and old and _sharing(bpy.data.actions, action, old):
            swaps[old] = renew_id(action)
    return mine


def separate_copy(obj):
    """Give ``obj`` an id of its own when it is a copy of another rig (Shift+D); return whether it was.

    The actions only the copy plays and that share an id with another action (Blender's
    copies of the original's) get ids of their own too, and every record the copy and those
    actions carry is rewritten from the old ids to the new ones. The original and its
    records are not touched. Called before each leapwright operator that writes.
    """
    value = obj.get(ID_PROPERTY) if obj is not None else None
    if not isinstance(value, str) or not value or not _writable(obj):
        return False
    others = _sharing(bpy.data.objects, obj, value)
    if not others:
        remember(obj)
        return False
    if not _is_copy(obj, value, others):
        return False
    swaps = {value: renew_id(obj)}
    mine = _own_actions(obj, value, swaps)
    for holder in [obj] + mine:
        for prop in RECORD_PROPERTIES:
            text = holder.get(prop)
            if isinstance(text, str):
                for old, new in swaps.items():
                    text = text.replace(old, new)
                holder[prop] = text
    return True


def release_unused(records, owners):
    """Take the id off each of ``owners`` that no text in ``records`` mentions (nothing refers to it)."""
    text = "\n".join(records)
    for owner in owners:
        value = owner.get(ID_PROPERTY)
        if isinstance(value, str) and value not in text and _writable(owner):
            del owner[ID_PROPERTY]


def _library_path(lib):
    # Saving a file may make its library paths relative ('//...'); compare them absolute.
    return os.path.normpath(bpy.path.abspath(lib.filepath, library=lib.parent))


def action_ref(action):
    """How records name an action: ``{"id", "name", "library"}`` (library: a file path, or None)."""
    if action.library is not None:
        return {"id": action.get(ID_PROPERTY), "name": action.name, "library": _library_path(action.library)}
    return {"id": ensure_id(action), "name": action.name, "library": None}


def _by_id(collection, ident, name):
    """The local item of ``collection`` with id ``ident`` (the one called ``name`` among copies)."""
    found = [item for item in collection if item.get(ID_PROPERTY) == ident
             and getattr(item, "id_data", item).library is None]
    if len(found) > 1:
        return next((item for item in found if item.name == name), found[0])
    return found[0] if found else None


def find_action(ref):
    """The action :func:`action_ref` named, or None.

    Older records name actions by name (a string) or ``[name, library file]``;
    both are still read.
    """
    if not ref:
        return None
    if isinstance(ref, str):
        return bpy.data.actions.get((ref, None))
    if isinstance(ref, list):
        ref = {"id": None, "name": ref[0], "library": ref[1]}
    if ref.get("library"):
        return next((a for a in bpy.data.actions if a.name == ref["name"] and a.library is not None
                     and _library_path(a.library) == ref["library"]), None)
    if ref.get("id"):
        return _by_id(bpy.data.actions, ref["id"], ref.get("name"))
    return bpy.data.actions.get((ref.get("name"), None))


def same_action(ref, action):
    """Whether ``ref`` names ``action``."""
    return action is not None and find_action(ref) == action


def find_object(ident, name=None):
    """The local object with id ``ident``, or None."""
    return _by_id(bpy.data.objects, ident, name) if ident else None


def path_ref(obj, data_path):
    """A record of ``data_path`` on ``obj`` that follows a renamed bone.

    Returns ``{"path", "bone", "rest"}``: the path as written, and for a pose
    bone's property the bone's id and the part after the bone.
    """
    match = BONE_PATH.match(data_path)
    pose = getattr(obj, "pose", None)
    if match is None or pose is None:
        return {"path": data_path, "bone": None, "rest": None}
    name = match.group(1).replace('\\"', '"').replace("\\\\", "\\")
    pb = pose.bones.get(name)
    ident = ensure_id(pb) if pb is not None else None
    return {"path": data_path, "bone": ident, "rest": match.group(2)}


def resolve_path(obj, ref):
    """The data path :func:`path_ref` recorded, with the bone's present name."""
    if isinstance(ref, str):
        return ref
    if ref.get("bone") and getattr(obj, "pose", None) is not None:
        pb = _by_id(obj.pose.bones, ref["bone"], None)
        if pb is not None:
            return f'pose.bones["{bpy.utils.escape_identifier(pb.name)}"]{ref["rest"]}'
    return ref["path"]
