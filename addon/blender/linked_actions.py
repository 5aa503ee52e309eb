"""Actions linked from a library: named without ambiguity, and stood in for by a local copy.

Blender does not save changes to linked data, so keys written into a linked
action would be gone after save and reload. :mod:`ownership` lets the rig play
a local copy of it instead (:func:`local_copy`) and, on removal, the linked
action again. A local copy usually has the linked action's name, so the
records in ``lw_state`` name linked actions by name and library file
(:func:`action_ref`).
"""

from . import compat, identity
from .key_writer import read_keys

#: On a local copy of a linked action: the linked action it stands in for.
LINKED_PROPERTY = "lw_linked_action"


def action_ref(action):
    """How records name an action (see :func:`identity.action_ref`)."""
    return identity.action_ref(action)


def find_action(ref):
    """The action :func:`action_ref` named, or None (see :func:`identity.find_action`)."""
    return identity.find_action(ref)


def is_linked(action):
    """Whether keys written into ``action`` would not be saved with this file."""
    return action.library is not None or action.override_library is not None


def local_copy(linked):
    """A local copy of ``linked`` that points back at it.

    The pointer keeps the linked action in the file: a linked ID nothing uses
    is not written on save, and removal after reloading must find it again.
    """
    copy = linked.copy()
    identity.renew_id(copy)
    copy.use_fake_user = False
    copy[LINKED_PROPERTY] = linked
    return copy


def original_of(copy, ref):
    """The linked action ``copy`` stands in for (its pointer, else the record ``ref``), or None."""
    linked = copy.get(LINKED_PROPERTY) if copy is not None else None
    return linked if linked is not None else find_action(ref)


def release(copy):
    """Make ``copy`` a plain action of the animator's (it no longer points at the linked one)."""
    if LINKED_PROPERTY in copy:
        del copy[LINKED_PROPERTY]


def same_keys(obj, a, b):
    """Whether two actions hold the same curves with byte-identical keys for ``obj``."""
    def curves(action):
        return sorted((fc.data_path, fc.array_index, tuple((k, v.tobytes()) for k, v in sorted(read_keys(fc).items())))
                      for fc in compat.fcurves(action, obj))
    return curves(a) == curves(b)
