"""The record of what leapwright wrote on an object: the rig's ``lw_state`` custom property.

Kept apart from :mod:`ownership` so that the modules ownership itself calls (the animator's
action backup, the NLA layers) read and write the record without importing ownership.
A JSON object; every reader goes through :func:`load_state`, which refuses a
damaged or wrongly shaped record with a message saying how to go on, instead of
acting on half of it.
"""

import json

#: Prefix of every name leapwright gives (F-curve groups, NLA tracks, markers, actions).
PREFIX = "lw:"
#: The object's custom property holding the record (JSON text).
STATE_PROPERTY = "lw_state"
USER_TRACK = "lw:your animation"
#: 2: curves written into actions are recorded on the action (written_keys); 1 (no "version"): in "replaced".
STATE_VERSION = 2

#: Keys of the record and the type each must have.
_SHAPE = {"replaced": list, "layers": list, "static": list, "written": list, "backups": list,
          "layer_actions": dict, "pushed": (dict, type(None)), "adopted": (dict, type(None)),
          "created_action": (str, list, dict, type(None)), "created_anim_data": (bool, type(None)), "version": int}


class StateError(Exception):
    """A leapwright record on the file that cannot be read (damaged, or of another shape)."""


def group_name(capability):
    return PREFIX + capability


def damaged(obj, why):
    return StateError(f"the leapwright record on '{obj.name}' is damaged ({why}); nothing was changed. Delete the "
                      f"custom property '{STATE_PROPERTY}' (Object Properties > Custom Properties) to start afresh: "
                      "leapwright's keys then stay as ordinary keys")


def load_state(obj):
    """The record on ``obj`` as a dict (empty lists when there is none); StateError when it is damaged."""
    raw = obj.get(STATE_PROPERTY)
    if raw is None:
        state = {}
    elif not isinstance(raw, str):
        raise damaged(obj, "it is not text")
    else:
        try:
            state = json.loads(raw)
        except ValueError:
            raise damaged(obj, "it is not readable") from None
        if not isinstance(state, dict):
            raise damaged(obj, "it is not a record")
    for key, kind in _SHAPE.items():
        if key in state and not isinstance(state[key], kind):
            raise damaged(obj, f"its entry '{key}' has the wrong form")
    for key in ("replaced", "layers", "static"):
        state.setdefault(key, [])
    state.setdefault("layer_actions", {})
    return state


def save_state(obj, state):
    if any(state.get(k) for k in ("replaced", "layers", "static", "pushed", "created_action", "created_anim_data",
                                  "written", "adopted", "backups")):
        obj[STATE_PROPERTY] = json.dumps(state)
    elif STATE_PROPERTY in obj:
        del obj[STATE_PROPERTY]
