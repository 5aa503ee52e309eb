"""Which control moves what: a rig's profile, found by trying its controls on the evaluated rig.

A production rig is posed through controls while the body lives in its deform bones
(:func:`rig.skeleton.read_body`). Constraints, drivers and IK-FK switches decide which control
moves which deform bone, and reading them is rig-specific; trying them is not. Each
candidate control (a bone the animator can pose: no constraints; on a rig with control
shapes, only the shaped bones) is moved a little, the rig is evaluated, and what the
deform skeleton did says what the control is:

* body: moving it carries the spine and the head with it, unstretched, feet staying;
* whole: moving it carries everything, feet too (a root or a master control);
* foot.L/R: moving it carries that foot's ankle and not the hips (an IK foot);
* heel.L/R: turning it about its own X axis lifts the ankle while the ball stays (a
  foot-roll control), with the sign of the turn that lifts;
* upper_arm.L/R, forearm.L/R: turning it swings the elbow (or only the wrist) about a
  still shoulder (FK arm controls);
* hand.L/R: moving it carries the wrist (an IK hand);
* legs: ``stretch`` when lifting the body off planted feet lengthens the deform legs
  (their IK scales bones rather than lifting the heels).

The profile is plain text on the rig (:data:`PROFILE_PROPERTY`, ``role=bone; ...``)
that the animator can read and edit in the panel. The pose is put back exactly.
"""

from . import skeleton as rig_skeleton
from .trials import ROLES, STRETCHY, carries_upper_body, find_profile

__all__ = ["PROFILE_PROPERTY", "ROLES", "STRETCHY", "ProfileError", "parse", "as_text", "stored", "known",
           "refind", "save", "body_check", "find_profile"]

PROFILE_PROPERTY = "lw_rig_profile"


class ProfileError(Exception):
    """The profile text cannot be read; the message says how to fix it."""


def parse(text):
    """``{role: bone}`` of a profile text (``role=bone; ...``)."""
    out = {}
    for item in (text or "").replace("\n", ";").split(";"):
        if not item.strip():
            continue
        role, sep, bone = item.partition("=")
        role, bone = role.strip(), bone.strip()
        if not sep or role not in ROLES:
            raise ProfileError(f"'{item.strip()}' is not one of the rig controls ({', '.join(ROLES)}) "
                               "followed by '=' and a bone; e.g. 'body=torso'")
        out[role] = bone
    return out


def as_text(profile):
    """The editable text of a ``{role: bone}`` profile, in :data:`ROLES` order."""
    return "; ".join(f"{r}={profile[r]}" for r in ROLES if profile.get(r))


def stored(rig):
    """The profile saved on the rig, or None; bones that are gone are dropped."""
    text = rig.get(PROFILE_PROPERTY) if rig is not None else None
    if not isinstance(text, str):
        return None
    return {r: b for r, b in parse(text).items()
            if r == "legs" or rig.pose.bones.get(b.split("@")[0]) is not None}


#: Profiles found this session and not saved: (rig name, bone count) -> profile.
_FOUND: dict = {}


def known(rig, find=True):
    """The rig's profile: the one saved on it, else one found now (remembered, not saved).

    Returns ``{}`` for an object, a rig whose body cannot be read, or when ``find`` is
    False and nothing is saved or remembered.
    """
    if rig is None or rig.type != "ARMATURE":
        return {}
    try:
        saved = stored(rig)
    except ProfileError:
        saved = None
    if saved is not None:
        return saved
    key = (rig.name, len(rig.pose.bones))
    if key not in _FOUND:
        if not find:
            return {}
        try:
            rest, marks = rig_skeleton.read_body(rig)
        except rig_skeleton.BodyError:
            return {}
        _FOUND[key] = find_profile(rig, rest, marks)
    return dict(_FOUND[key])


def refind(rig):
    """Find the profile again now (after the rig's switches changed); a saved one is updated.

    Roles found now replace those found before; roles set by hand that were not found
    again are kept.
    """
    rest, marks = rig_skeleton.read_body(rig)
    found = find_profile(rig, rest, marks)
    _FOUND[(rig.name, len(rig.pose.bones))] = found
    try:
        saved = stored(rig)
    except ProfileError:
        saved = None
    if saved is not None:
        merged = {**saved, **found}
        for role in ROLES:
            if role.startswith(("upper_arm", "forearm", "hand")) and role not in found:
                merged.pop(role, None)  # the arms' controls follow the switches: only what moves them now
        save(rig, merged)
        return merged
    return dict(found)


def save(rig, profile):
    """Store ``profile`` on the rig as editable text (:data:`PROFILE_PROPERTY`)."""
    rig[PROFILE_PROPERTY] = as_text(profile)
    _FOUND.pop((rig.name, len(rig.pose.bones)), None)


def body_check(rig, bone):
    """Whether moving ``bone`` carries the upper body, and the bone that does.

    Returns
    -------
    carries : bool or None  None when the rig's body cannot be read (nothing to check against)
    better : str  the profile's body control ("" when none was found)
    what : str  what moving ``bone`` does, in words
    """
    try:
        rest, marks = rig_skeleton.read_body(rig)
    except rig_skeleton.BodyError:
        return None, "", ""
    if rig.pose.bones.get(bone) is None:
        return None, "", ""
    carries, what = carries_upper_body(rig, rest, marks, bone)
    return (True, bone, what) if carries else (False, known(rig).get("body", ""), what)
