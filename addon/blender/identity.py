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
"""

import os
import re
import uuid

import bpy

ID_PROPERTY = "lw_id"
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
