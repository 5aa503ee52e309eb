"""A copy of the animator's action kept before leapwright edits their own keys, and putting it back.

Re-timing an arm swing is the one operation that moves the animator's keys rather
than writing keys of leapwright's own. Before the first move, the whole action is
copied (``Action.copy``: every curve, key and setting) under a name of ours with a
fake user, so it is saved with the file and shows in the action list. The rig's
``lw_state`` (:mod:`ownership`) records which action, which copy and which curves
(``state["backups"]``). :func:`restore` writes those curves' keys back from the copy
attribute for attribute (:func:`key_writer.restore_keys`, byte for byte) and deletes
the copy; ``ownership.clear`` calls it for the capability being removed.

A later edit of the same curves keeps the first copy: removal goes back to the keys
as they were before leapwright first touched them.
"""

import bpy

from . import compat, identity, state as ownership_state, written_keys
from .key_writer import read_keys, restore_keys

STATE_KEY = "backups"
NAME_PREFIX = ownership_state.PREFIX + "before "


def backups(state, capability=None):
    """The backup records in a loaded ``lw_state`` (of one capability, or all)."""
    return [r for r in state.get(STATE_KEY, []) if capability is None or r["capability"] == capability]


def keep(obj, capability, action, paths):
    """Copy ``action`` (once) before ``capability`` edits the curves ``paths`` ((data_path, index), ...).

    Returns the copy's name. The actions and bones are recorded by id
    (:mod:`identity`): renaming them changes nothing. The capability is marked as written on ``obj``, so
    "remove what leapwright wrote" restores the curves.
    """
    state = ownership_state.load_state(obj)
    record = next((r for r in backups(state, capability) if identity.same_action(r["action"], action)), None)
    if record is None or identity.find_action(record["copy"]) is None:
        copy = action.copy()
        identity.renew_id(copy)
        copy.name = NAME_PREFIX + action.name
        copy.use_fake_user = True
        if written_keys.WRITES_PROPERTY in copy:  # the record stays with the original only
            del copy[written_keys.WRITES_PROPERTY]
        record = {"capability": capability, "action": identity.action_ref(action),
                  "copy": identity.action_ref(copy), "curves": []}
        state.setdefault(STATE_KEY, []).append(record)
    known = {(identity.resolve_path(obj, p), i) for p, i in record["curves"]}
    record["curves"] += [[identity.path_ref(obj, p), int(i)] for p, i in paths if (p, int(i)) not in known]
    state["written"] = sorted(set(state.get("written", [])) | {capability})
    ownership_state.save_state(obj, state)
    return identity.find_action(record["copy"]).name


def restore(obj, capability, state):
    """Put back the kept keys of ``capability`` and delete its copies (edits ``state`` in place)."""
    kept = []
    for rec in state.get(STATE_KEY, []):
        if rec["capability"] != capability:
            kept.append(rec)
            continue
        action, copy = identity.find_action(rec["action"]), identity.find_action(rec["copy"])
        if action is not None and copy is not None:
            for ref, index in rec["curves"]:
                path = identity.resolve_path(obj, ref)
                # the copy plays nowhere, so Blender did not rename its paths with the bone
                old = ref["path"] if isinstance(ref, dict) else ref
                src = compat.find_fcurve(copy, obj, path, index) or compat.find_fcurve(copy, obj, old, index)
                dst = compat.find_fcurve(action, obj, path, index)
                if src is not None and dst is not None:
                    restore_keys(dst, read_keys(src))
        if copy is not None:
            copy.use_fake_user = False
            if copy.users == 0:
                bpy.data.actions.remove(copy)
    if STATE_KEY in state:
        if kept:
            state[STATE_KEY] = kept
        else:
            del state[STATE_KEY]
