"""The body's skeleton in a rig: its deform bones as one tree, and the landmarks found on it.

A production rig (hundreds of bones: controls, mechanism, deform) is read from its
deform skeleton (:func:`core.rig.skeleton.deform_tree`), a rig whose every bone deforms
as a whole; the landmarks come from the tree and the rest pose alone
(:func:`core.rig.facing.faced_rig`: names are never read, the facing and the sides come
from the rest pose). Rest layouts are in armature space [Blender units].
"""

from . import sampling as rig_sampling
from ..core.base.errors import LeapwrightError
from ..core.rig.facing import faced_rig
from ..core.rig.landmarks import RigData, map_by_topology
from ..core.rig.skeleton import deform_tree


class BodyError(Exception):
    """The rig cannot be read as a body; the message says how to fix it."""


def skeletons(rig):
    """The rig's rest layouts to read the body from, best first [BU, armature space].

    A rig with control or mechanism bones (bones that do not deform the mesh) is read
    from its deform skeleton first (:func:`core.rig.skeleton.deform_tree`), then as a
    whole; a rig whose every bone deforms, as a whole.

    Returns
    -------
    list of core.rig.landmarks.RigData
    """
    if rig is None or rig.type != "ARMATURE":
        what = "nothing" if rig is None else f"'{rig.name}' (a {rig.type.lower()})"
        raise BodyError(f"the body's centre of mass needs an armature, got {what}; pick the character's "
                        "armature under Character")
    names, parents, heads, tails = rig_sampling.bone_rest_data(rig)
    deform = [rig.data.bones[n].use_deform for n in names]
    layouts = []
    try:
        if 3 <= sum(deform) < len(names):
            keep, tree = deform_tree(parents, heads, tails, deform)
            layouts.append(RigData([names[i] for i in keep], tree, heads[keep], tails[keep]))
        layouts.append(RigData(names, parents, heads, tails))
    except LeapwrightError as exc:
        raise BodyError(str(exc)) from None
    return layouts


def rig_data(rig):
    """:class:`core.body_mass.RigData` of an armature's rest pose [BU, armature space]: the deform
    skeleton when the rig has other bones too (:func:`skeletons`).

    Up is the armature's Z (Blender's convention); which way the character faces is
    read from the rest pose where it matters (:func:`core.rig_facing.faced_rig`).
    """
    return skeletons(rig)[0]


def _faced_one(rest):
    try:
        return faced_rig(rest)
    except LeapwrightError as facing_problem:
        # a rig whose symmetry or feet do not tell its facing: Blender's convention
        try:
            return rest, map_by_topology(rest)
        except LeapwrightError:
            raise facing_problem from None


def read_body(rig):
    """``(rest, landmarks)`` found from the bone tree: deform skeleton first, then the whole rig.

    Raises
    ------
    BodyError  the first layout's problem, in words for the panel (no code names).
    """
    first = None
    for rest in skeletons(rig):
        try:
            return _faced_one(rest)
        except LeapwrightError as exc:
            first = first or exc
    reason = getattr(first, "reason", None)
    if reason is None:
        raise BodyError(f"'{rig.name}': {first}") from None
    raise BodyError(f"'{rig.name}': the bones could not be read as a body ({reason}); map the bones by hand: fill in the bone map "
                    "below (which bone is each joint), or check that the rest pose stands upright in a T or "
                    "A pose") from None
