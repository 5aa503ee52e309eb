"""Which keys of an action leapwright wrote, for whom, and what they covered.

The record lives on the action itself (custom property ``lw_writes``), so it
follows the action through renames, save/reload and sharing between rigs. Each
write of one curve adds an entry::

    {"owner": <rig id>, "capability": str, "path": <path_ref>, "index": int,
     "created": bool,            # the curve did not exist before
     "before": <keys> or None,   # the keys the curve held before the write
     "written": <fingerprint>}   # time and value of every key written

Entries on the same curve form a stack, oldest first. Taking one back
(:func:`take_back`):

* when a later write covers the same curve, the entry's ``before`` is handed
  on to it (rig B wrote over rig A's jump: removing A leaves B's jump, and
  removing B then brings back the animator's keys, not A's);
* otherwise the curve goes back to ``before``, except for keys the animator
  added or moved since the write (a key whose time and value are not among the
  written ones): those are kept, merged into the keys put back, and reported.

Keys are stored as base64 of the raw arrays :func:`key_writer.read_keys`
returns, so they come back byte for byte.
"""

import base64
import json

import numpy as np

from . import compat, identity
from .state import StateError
from .key_writer import KEY_FIELDS, read_keys, restore_keys

WRITES_PROPERTY = "lw_writes"


def encode_keys(keys):
    return {name: base64.b64encode(np.ascontiguousarray(arr).tobytes()).decode("ascii")
            for name, arr in keys.items()}


def decode_keys(data):
    out = {}
    for name, _width, dtype in KEY_FIELDS:
        raw = data.get(name)
        out[name] = np.frombuffer(base64.b64decode(raw), dtype=dtype).copy() if raw else np.zeros(0, dtype)
    return out


def fingerprint(fcurve):
    """Time and value of each key, float32 pairs flattened (what identifies a written key)."""
    return read_keys(fcurve, ("co",))["co"]


def _rows(co):
    """One comparable item per key: the raw bytes of its (time, value) pair."""
    return np.ascontiguousarray(co, dtype=np.float32).reshape(-1, 2).view(np.int64).ravel()


def load(action):
    """The entries recorded on ``action`` (a list; empty when none)."""
    raw = action.get(WRITES_PROPERTY)
    if raw is None:
        return []
    try:
        entries = json.loads(raw)
        if not isinstance(entries, list) or not all(isinstance(e, dict) and {"owner", "capability", "path",
                                                                              "index"} <= set(e) for e in entries):
            raise ValueError("not a list of writes")
    except (TypeError, ValueError) as exc:
        raise StateError(f"the action '{action.name}' carries a damaged leapwright record ({exc}); delete its "
                         f"custom property '{WRITES_PROPERTY}' to keep its keys as they are") from None
    return entries


def save(action, entries):
    if entries:
        action[WRITES_PROPERTY] = json.dumps(entries)
    elif WRITES_PROPERTY in action:
        del action[WRITES_PROPERTY]


def record(action, obj, capability, fcurve, created, before):
    """Add the entry for a curve just written (``before``: read_keys of what it held, or None)."""
    entries = load(action)
    entries.append({"owner": identity.ensure_id(obj), "capability": capability,
                    "path": identity.path_ref(obj, fcurve.data_path), "index": fcurve.array_index,
                    "created": bool(created), "before": encode_keys(before) if before is not None else None,
                    "written": base64.b64encode(fingerprint(fcurve).tobytes()).decode("ascii")})
    save(action, entries)


def owners_curves(action, obj, capability):
    """``(data_path, index)`` of the curves ``obj``'s ``capability`` has written in ``action``."""
    owner = obj.get(identity.ID_PROPERTY)
    return [(identity.resolve_path(obj, e["path"]), e["index"]) for e in load(action)
            if owner and e["owner"] == owner and e["capability"] == capability]


def _channel(entry, obj, owner):
    """The curve an entry is about, by the present name of its bone (seen from its own rig)."""
    rig = obj if entry["owner"] == owner else identity.find_object(entry["owner"])
    path = identity.resolve_path(rig, entry["path"]) if rig is not None else entry["path"]["path"]
    return path, entry["index"]


def _own_group(data_path):
    """The group Blender puts a new key of ``data_path`` in: the bone's name, or "Object Transforms"."""
    match = identity.BONE_PATH.match(data_path)
    return match.group(1) if match else "Object Transforms"


def foreign_keys(action, obj, fcurve):
    """How many keys of ``fcurve`` no write recorded on ``action`` made (keys the animator set since)."""
    owner = obj.get(identity.ID_PROPERTY)
    channel = (fcurve.data_path, fcurve.array_index)
    written = [np.frombuffer(base64.b64decode(e["written"]), dtype=np.float32) for e in load(action)
               if _channel(e, obj, owner) == channel]
    if not written:
        return 0
    current = read_keys(fcurve, ("co",))["co"]
    return int((~np.isin(_rows(current), _rows(np.concatenate(written)))).sum())


def _merge(base, extra):
    """``base`` keys with ``extra`` keys added (an extra key replaces a base key at its time)."""
    times = extra["co"][0::2]
    keep = ~np.isin(np.round(base["co"][0::2], 4), np.round(times, 4))
    out = {}
    for name, width, _dtype in KEY_FIELDS:
        b = base[name].reshape(-1, width)[keep]
        out[name] = np.concatenate([b, extra[name].reshape(-1, width)])
    order = np.argsort(out["co"][:, 0], kind="stable")
    return {name: arr[order].ravel() for name, arr in out.items()}


def _select(keys, mask):
    return {name: keys[name].reshape(-1, width)[mask].ravel() for name, width, _d in KEY_FIELDS}


def _empty():
    return {name: np.zeros(0, dtype) for name, _w, dtype in KEY_FIELDS}


def take_back(action, obj, capability, is_ours):
    """Undo ``obj``'s writes of ``capability`` in ``action``; returns notes on keys kept for the animator.

    ``is_ours(fc)`` says whether a curve is in one of leapwright's groups (a
    curve leapwright made, emptied of its keys, is deleted; a curve of the
    animator's stays, even empty).
    """
    entries = load(action)
    owner = obj.get(identity.ID_PROPERTY)
    notes = []
    for i in reversed(range(len(entries))):
        entry = entries[i]
        if not owner or entry["owner"] != owner or entry["capability"] != capability:
            continue
        channel = _channel(entry, obj, owner)
        later = [e for e in entries[i + 1:] if _channel(e, obj, owner) == channel]
        del entries[i]
        if later:  # written over since: the next write now stands on what this one found
            later[0]["before"], later[0]["created"] = entry["before"], entry["created"]
            continue
        fc = compat.find_fcurve(action, obj, *channel)
        if fc is None:
            continue  # the animator deleted the curve
        notes += _restore_curve(action, obj, fc, entry, is_ours, channel)
    save(action, entries)
    return notes


def _restore_curve(action, obj, fc, entry, is_ours, channel):
    current = read_keys(fc)
    written = np.frombuffer(base64.b64decode(entry["written"]), dtype=np.float32)
    theirs = ~np.isin(_rows(current["co"]), _rows(written))
    base = decode_keys(entry["before"]) if entry["before"] is not None else _empty()
    if not theirs.any():
        if entry["created"] and is_ours(fc):
            compat.remove_fcurve(action, obj, fc)
        else:
            restore_keys(fc, base)
        return []
    restore_keys(fc, _merge(base, _select(current, theirs)))
    if entry["created"] and is_ours(fc):
        # what is left on it is the animator's: into the group Blender itself would give it
        fc.group = compat.ensure_group(action, obj, _own_group(channel[0]))
    n = int(theirs.sum())
    return [f"kept {n} key(s) you added or changed on {channel[0]}[{channel[1]}]"]
