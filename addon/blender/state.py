"""The record of what leapwright wrote on an object: the rig's ``lw_state`` custom property.

Kept apart from :mod:`ownership` so that the modules ownership itself calls (the animator's
action backup) read and write the record without importing ownership.
"""

import json

#: Prefix of every name leapwright gives (F-curve groups, NLA tracks, markers, actions).
PREFIX = "lw:"
#: The object's custom property holding the record (JSON text).
STATE_PROPERTY = "lw_state"


def load_state(obj):
    raw = obj.get(STATE_PROPERTY)
    state = json.loads(raw) if isinstance(raw, str) else {}
    state.setdefault("replaced", [])
    state.setdefault("layers", [])
    state.setdefault("static", [])
    return state


def save_state(obj, state):
    if (state.get("replaced") or state.get("layers") or state.get("static") or state.get("pushed") or state.get("created_action")
            or state.get("created_anim_data") or state.get("written") or state.get("adopted")):
        obj[STATE_PROPERTY] = json.dumps(state)
    elif STATE_PROPERTY in obj:
        del obj[STATE_PROPERTY]
