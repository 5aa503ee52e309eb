"""One guard in front of every operator that writes.

Registration wraps the ``execute`` (and ``invoke``) of every leapwright
operator that can change the file (``'UNDO'`` in its options) with
:func:`guarded`: before the operator's own code runs, :func:`refusal` looks
at what any writer could trip on, and a refusal is reported in the animator's
words with nothing written:

* edit mode (keys are written in object or pose mode);
* a rig linked from a library, or a library override (changes to it would be
  lost on save, or could not be taken back after reloading);
* NLA tweak mode on the rig;
* a damaged leapwright record on the rig or its action;
* a setting that is not a number (NaN, infinity) or a frame beyond the frames
  Blender has (|frame| <= 1,048,574);
* a frame range whose samples would not fit in memory (estimated before
  anything is allocated);
* a bone list naming a bone twice, or a bone the rig does not have.

An operator that fails anyway reports one line instead of a traceback.

An operator that only changes leapwright's own settings (``lw_settings_only =
True`` on its class: Go to Finding, Use Active Bone, Find Arm Bones) is only
refused in edit mode: it writes nothing on the rig, so a linked or overridden
rig, a damaged record or an odd setting elsewhere is no reason to refuse it.

Before a writer runs, a rig that is a copy of another (Shift+D copies the
identity leapwright recorded on it) gets one of its own
(:func:`identity.separate_copy`).
"""

import functools
import math

from ..core.base import limits
from ..core.base.limits import MAX_FRAME
from . import identity, ownership, state as rig_state, written_keys

GUARD_ATTRIBUTE = "_lw_guarded"
#: Settings that show a result rather than take input (NaN there means "not measured yet").
READOUTS = frozenset({"implied_gravity"})


def in_object_or_pose_mode(cls, context, doing):
    """An operator's poll: True in object or pose mode; otherwise Blender shows the animator how to
    get there (``poll_message_set``) instead of its own "context is incorrect"."""
    if context.mode in {"OBJECT", "POSE"}:
        return True
    cls.poll_message_set(f"leave edit mode (Tab): {doing} in object or pose mode")
    return False


def _settings_groups(scene):
    for name in dir(scene):
        if name.startswith("leapwright"):
            group = getattr(scene, name, None)
            if group is not None and hasattr(group, "bl_rna"):
                yield name, group


def target_rig(op, context):
    """The object an operator writes on: its own chooser (``lw_rig``), else the plan's rig, else the active object.

    The same choice as ``rig.space.chosen_rig``, which this base package cannot import.
    """
    chooser = getattr(type(op), "lw_rig", None)
    if chooser is not None:
        return chooser(context)
    plan = getattr(context.scene, "leapwright_plan", None)
    rig = getattr(plan, "rig", None)
    return rig if rig is not None else context.active_object


def rig_problem(rig):
    """Why leapwright cannot write on ``rig`` (linked, overridden, tweak mode, damaged record), or None."""
    if rig is None:
        return None
    fix = "make it local (Object > Relations > Make Local) and run again"
    for data, what in ((rig, f"'{rig.name}'"), (getattr(rig, "data", None), f"the armature of '{rig.name}'")):
        if data is None:
            continue
        if data.library is not None:
            return f"{what} is linked from another file, so what leapwright writes on it would be lost on save; {fix}"
        if data.override_library is not None:
            return (f"{what} is a library override: what leapwright writes on it could not be taken back after "
                    f"reloading the file; {fix}")
    ad = rig.animation_data
    if ad is not None and ad.use_tweak_mode:
        return f"'{rig.name}' is in NLA tweak mode; leave it (Tab in the NLA editor) and run again"
    try:
        rig_state.load_state(rig)
        if ad is not None and ad.action is not None:
            written_keys.load(ad.action)
    except rig_state.StateError as exc:
        return str(exc)
    return None


def _number_problem(owner, label):
    for prop in owner.bl_rna.properties:
        if prop.type not in {"FLOAT", "INT"} or prop.identifier in READOUTS:
            continue
        value = getattr(owner, prop.identifier)
        values = list(value) if getattr(prop, "array_length", 0) else [value]
        if prop.type == "FLOAT" and not all(math.isfinite(v) for v in values):
            return f"{label} '{prop.name}' is not a number ({value}); type a finite value"
        if "frame" in prop.identifier and any(abs(v) > MAX_FRAME for v in values):
            return (f"{label} '{prop.name}' is {value}, beyond the frames Blender has (-{MAX_FRAME:,} to "
                    f"{MAX_FRAME:,}); choose a frame inside them")
    return None


def _frame_span(scene):
    spans = [scene.frame_end - scene.frame_start + 1]
    for _name, group in _settings_groups(scene):
        if hasattr(group, "frame_start") and hasattr(group, "frame_end"):
            spans.append(int(group.frame_end) - int(group.frame_start) + 1)
    return max(spans)


def names_problem(text, rig):
    """Why a comma-separated bone list cannot be used (a bone named twice, or missing), or None."""
    names = [n.strip() for n in text.split(",") if n.strip()]
    twice = sorted({n for n in names if names.count(n) > 1})
    if twice:
        return f"the bone list names {', '.join(repr(n) for n in twice)} twice; name each bone once"
    pose = getattr(rig, "pose", None)
    if pose is None:
        return None  # not an armature: the operator says so in its own words
    missing = [n for n in names if n not in pose.bones]
    if missing:
        return f"'{rig.name}' has no bone '{missing[0]}'; check the spelling (names are case-sensitive)"
    return None


def refusal(op, context):
    """Why ``op`` must not write in ``context``, in the animator's words, or None."""
    if context.mode not in {"OBJECT", "POSE"}:
        return "leave edit mode (Tab) first: leapwright writes in object or pose mode"
    if getattr(type(op), "lw_settings_only", False):
        return None  # changes only leapwright's settings: nothing on the rig to protect
    rig = target_rig(op, context)
    problem = rig_problem(rig)
    for name, group in _settings_groups(context.scene):
        problem = problem or _number_problem(group, "the setting")
    problem = problem or _number_problem(op.properties, "the option")
    if problem is None and rig is not None:
        bones = len(rig.pose.bones) if getattr(rig, "pose", None) is not None else 1
        problem = limits.memory_problem(_frame_span(context.scene), bones)
    text = getattr(op.properties, "bones", "") if "bones" in op.properties.bl_rna.properties else ""
    if problem is None and text.strip():
        problem = names_problem(text, rig)
    return problem


def _guarded_call(self, context, call):
    problem = refusal(self, context)
    if problem is not None:
        self.report({"ERROR"}, problem)
        return {"CANCELLED"}
    if not getattr(type(self), "lw_settings_only", False):
        identity.separate_copy(target_rig(self, context))
    ownership.NOTES.clear()
    try:
        result = call()
        identity.remember(target_rig(self, context))
        for note in ownership.NOTES:  # keys of the animator's that removal kept
            self.report({"WARNING"}, note)
        return result
    except (rig_state.StateError, MemoryError) as exc:
        self.report({"ERROR"}, str(exc) or "not enough memory; work on a shorter frame range")
        return {"CANCELLED"}
    except Exception as exc:  # noqa: BLE001  the animator gets one line, not a traceback
        self.report({"ERROR"}, f"leapwright stopped: {exc}; undo (Ctrl+Z) brings back the file as it was")
        return {"CANCELLED"}


def guarded(method):
    """Wrap an operator's ``execute`` or ``invoke``: refuse before writing, and never show a traceback.

    Blender checks the number of arguments, so each has a wrapper of its own shape.
    """
    if method.__name__ == "invoke":
        @functools.wraps(method)
        def run(self, context, event):
            return _guarded_call(self, context, lambda: method(self, context, event))
    else:
        @functools.wraps(method)
        def run(self, context):
            return _guarded_call(self, context, lambda: method(self, context))
    setattr(run, GUARD_ATTRIBUTE, True)
    return run


def writes(cls):
    """Whether an operator class can change the file (Blender keeps an undo step for it)."""
    return "UNDO" in getattr(cls, "bl_options", set())


def guard_classes(classes):
    """Put :func:`guarded` in front of every writing operator among ``classes`` (once).

    Inherited ``execute``/``invoke`` methods are wrapped too, on the class itself.
    """
    for cls in classes:
        if not writes(cls) or not hasattr(cls, "execute"):
            continue
        for name in ("execute", "invoke"):
            method = getattr(cls, name, None)
            if method is not None and not getattr(method, GUARD_ATTRIBUTE, False):
                setattr(cls, name, guarded(method))
    return classes
