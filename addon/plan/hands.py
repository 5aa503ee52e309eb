"""Arms that come along: IK hand controls carried with the body.

On a rig whose arms are in IK, the hands follow their IK controls, and those often hang
from a bone that stays put in the world (Rigify's hang from ``root``). Moving only the
body would leave the hands behind and stretch the arms. The rig's profile
(:mod:`rig.profile`) names the IK hand controls; each one the body bone does not already
carry gets the body's planned motion too (the part a root above it does not carry), so
the arms keep their pose relative to the body and the swing can be added on top.
"""

from . import blocking_pass as bp
from ..rig import space as rig_space


def _ancestors(rig, bone):
    return {p.name for p in rig.pose.bones[bone].parent_recursive}


def hand_channels(rig, profile, body_bone):
    """:class:`rig_space.Channels` of the IK hand controls the body bone does not carry."""
    out = []
    if rig is None or rig.type != "ARMATURE" or not body_bone:
        return out
    for side in "LR":
        hand = profile.get(f"hand.{side}", "")
        if not hand or rig.pose.bones.get(hand) is None or body_bone in _ancestors(rig, hand) | {hand}:
            continue
        if profile.get(f"upper_arm.{side}"):
            continue  # the arm is in FK: the hand control moves nothing
        out.append(rig_space.resolve(rig, hand, ())[0])
    return out


def hand_curves(rig, split, plan, hands, forward, m, timeline, style, as_delta):
    """Location curves carrying each hand control with the body (less what a root carries)."""
    out = []
    for ch in hands:
        bone = ch.label
        riding = split.root is not None and (split.mode == "OBJECT" or split.root.label in _ancestors(rig, bone))
        parts = split.body_parts if riding else bp.BOTH
        if parts:
            out += bp.body_curves(plan, ch, forward, m, timeline, style, as_delta, parts=parts)
    return out
