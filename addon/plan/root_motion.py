"""Where the jump's travel goes: the body bone, a root bone, or the armature object.

Game engines take root motion from different places: a root bone at the
ground point under the centre of mass, or the object itself, or none (the
clip plays in place and the character controller moves the body). The plan's
world-space path is split between the root and the body bone so that their
sum, the body's world path, is the same in every mode.
"""

from dataclasses import dataclass

from . import blocking_pass as bp
from ..rig import space as rig_space


@dataclass(frozen=True)
class RootSplit:
    """How one run splits the plan.

    Attributes
    ----------
    mode : {'IN_PLACE', 'ROOT_BONE', 'OBJECT'}
    root : rig_space.Channels or None
        The root's location channels (None in place).
    root_parts, body_parts : tuple of {'forward', 'height'}
        What the root and the body bone carry.
    feet_riding : tuple of bool
        Per foot controller: does it hang under the root (so the root's part
        must be taken off its own path)?
    """

    mode: str
    root: object
    root_parts: tuple
    body_parts: tuple
    feet_riding: tuple


def _ancestors(rig, bone):
    out, p = set(), rig.pose.bones[bone].parent
    while p is not None:
        out.add(p.name)
        p = p.parent
    return out


def resolve(rig, settings, feet):
    """The :class:`RootSplit` the settings ask for.

    Parameters
    ----------
    rig : bpy.types.Object
    settings : LeapwrightPlanSettings
        ``root_motion``, ``root_bone``, ``root_vertical``, ``com_bone``.
    feet : sequence of str
        Foot controller bones in use.

    Raises
    ------
    rig_space.SelectionError
        A root bone that is missing, is the body bone, or is not above it.
    """
    mode = settings.root_motion
    body = settings.com_bone
    root_parts, body_parts = bp.carried_parts(mode, settings.root_vertical)
    if mode == "IN_PLACE" or (mode == "OBJECT" and not body):
        # Without a body bone the object already carries everything.
        return RootSplit(mode, None, (), bp.BOTH, tuple(False for _ in feet))
    if mode == "OBJECT":
        root, _ = rig_space.resolve(rig, "", ())
        return RootSplit(mode, root, root_parts, body_parts, tuple(True for _ in feet))
    name = settings.root_bone
    if not body:
        raise rig_space.SelectionError("root-bone motion needs a body bone under the root; name the hips "
                                       "under Character, or choose 'Object' root motion")
    if rig.type != "ARMATURE" or rig.pose.bones.get(name) is None:
        raise rig_space.SelectionError(f"'{rig.name}' has no bone named '{name}' to carry the root motion; "
                                       "check the root bone's name, or choose 'In place'")
    if name == body or name not in _ancestors(rig, body):
        raise rig_space.SelectionError(f"root bone '{name}' is not above the body bone '{body}', so moving it "
                                       "would not carry the body; parent the body bone under it or pick "
                                       "another root")
    root, _ = rig_space.resolve(rig, name, ())
    riding = tuple(bool(f) and name in _ancestors(rig, f) for f in feet)
    return RootSplit(mode, root, root_parts, body_parts, riding)


def curves(split, plan, body, feet, forward, metres_per_unit, timeline, style, tuck_m, as_delta):
    """Every location curve of the run: root (if any), body, feet."""
    out = []
    if split.root is not None and split.root_parts:
        out += bp.body_curves(plan, split.root, forward, metres_per_unit, timeline, style, as_delta,
                              parts=split.root_parts)
    if split.body_parts:
        out += bp.body_curves(plan, body, forward, metres_per_unit, timeline, style, as_delta,
                              parts=split.body_parts)
    for foot, riding in zip(feet, split.feet_riding):
        out += bp.foot_curves(plan, foot, forward, metres_per_unit, timeline, style, tuck_m, as_delta,
                              riding=split.root_parts if riding else ())
    return out
