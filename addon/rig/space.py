"""From world-space metres to a bone's (or object's) own location channels.

The plan is in world space, Z up, forward along the rig's facing. A pose bone's
``location`` is in its rest frame under its parent, and an object's under its
parent's inverse; the map from a world displacement [BU] to those channels is
linear (a 3×3 matrix), taken from the rest, pose and object matrices, so a rig
turned, scaled or built with Y-up bones gets the same jump in the world.
"""

from dataclasses import dataclass

import numpy as np
from mathutils import Vector


class SelectionError(Exception):
    """The character as set in the panel cannot be animated; the message says why."""


@dataclass(frozen=True)
class Channels:
    """Where one moving part is keyed: ``data_path`` of its location, its world map.

    Attributes
    ----------
    label : str
        Bone or object name, for messages.
    data_path : str
        RNA path of the location on the rig object (``'location'`` or
        ``'pose.bones["hips"].location'``).
    base : numpy array (3,)
        The channel values now [BU, channel space].
    world_to_channel : numpy array (3, 3)
        Channel change per world displacement [BU / BU].
    """

    label: str
    data_path: str
    base: np.ndarray
    world_to_channel: np.ndarray


def _bone_map(obj, pb):
    """3×3 map from a change of ``pb.location`` to its head's world displacement."""
    basis = pb.matrix_basis.copy()
    # The map is linear in the location; measured from zero so the present
    # (perhaps animated) location adds no float32 rounding of its own.
    basis.translation = Vector((0.0, 0.0, 0.0))
    origin = obj.convert_space(pose_bone=pb, matrix=basis, from_space="LOCAL", to_space="POSE").translation
    cols = []
    for i in range(3):
        m = basis.copy()
        m.translation = basis.translation + Vector([1.0 if j == i else 0.0 for j in range(3)])
        moved = obj.convert_space(pose_bone=pb, matrix=m, from_space="LOCAL", to_space="POSE").translation
        cols.append(np.array(moved - origin))
    pose_map = np.column_stack(cols)
    return np.array(obj.matrix_world.to_3x3()) @ pose_map


def _object_map(obj):
    if obj.parent is None:
        return np.eye(3)
    return np.array((obj.parent.matrix_world @ obj.matrix_parent_inverse).to_3x3())


def _invert(m, label):
    if abs(np.linalg.det(m)) < 1e-12:
        raise SelectionError(f"{label} has zero scale or a degenerate parent, so it cannot be moved; "
                             "fix its scale first")
    return np.linalg.inv(m)


def _ancestors(pb):
    out, p = set(), pb.parent
    while p is not None:
        out.add(p.name)
        p = p.parent
    return out


def chosen_rig(context):
    """The character: the panel's rig, or the active object when none is set."""
    s = getattr(context.scene, "leapwright_plan", None)
    return s.rig if s is not None and s.rig is not None else context.active_object


def linked_library_problem(rig):
    """Why leapwright cannot write on a rig from another file, or None for a local rig.

    Blender keeps linked data read-only on disk: keys written into a linked rig
    in memory are lost when the file is saved. A library override saves only
    its changes to what the library already holds: the properties leapwright
    adds to the rig (the record that lets removal take its work back, the
    apparent weight) are gone after reloading, so an override is refused too.
    Making the rig local keeps everything.
    """
    if rig is None:
        return None
    fix = "make it local (Object > Relations > Make Local) and run again"
    if rig.library is not None:
        return (f"'{rig.name}' is linked from '{rig.library.filepath}', so keys written on it would be lost on "
                f"save; {fix}")
    if rig.override_library is not None:
        return (f"'{rig.name}' is a library override: Blender does not save new properties on an override, so "
                f"what leapwright writes could not be taken back after reloading the file; {fix}")
    return None


def resolve(rig, body_bone, feet):
    """Check the character and return its :class:`Channels`.

    Parameters
    ----------
    rig : bpy.types.Object or None
    body_bone : str
        Bone that carries the body; "" moves the object itself.
    feet : sequence of str
        Foot controller bones ("" entries are skipped).

    Returns
    -------
    body : Channels
    feet : list of Channels

    Raises
    ------
    SelectionError
        No rig, a bone named on something that is not an armature, a missing
        bone, or a foot controller that would ride along with the body.
    """
    if rig is None:
        raise SelectionError("no rig chosen: pick the character's armature under Character")
    linked = linked_library_problem(rig)
    if linked:
        raise SelectionError(linked)
    named = [b for b in (body_bone, *feet) if b]
    if named and rig.type != "ARMATURE":
        raise SelectionError(f"'{rig.name}' is a {rig.type.lower()}, not an armature, so it has no bone "
                             f"'{named[0]}'; pick the armature or clear the bone names")
    if not body_bone and feet and any(feet):
        raise SelectionError("foot controllers need a body bone; name the hips or root bone")
    if rig.type == "ARMATURE":
        missing = [b for b in named if rig.pose.bones.get(b) is None]
        if missing:
            raise SelectionError(f"armature '{rig.name}' has no bone named {', '.join(repr(m) for m in missing)}; "
                                 "check the spelling under Character")
    if body_bone:
        pb = rig.pose.bones[body_bone]
        body = Channels(body_bone, f'pose.bones["{_escape(body_bone)}"].location', np.array(pb.location),
                        _invert(_bone_map(rig, pb), f"bone '{body_bone}'"))
    else:
        body = Channels(rig.name, "location", np.array(rig.location), _invert(_object_map(rig), rig.name))
    out = []
    for name in (f for f in feet if f):
        pb = rig.pose.bones[name]
        if name == body_bone or body_bone in _ancestors(pb):
            raise SelectionError(f"foot controller '{name}' is parented under the body bone '{body_bone}', "
                                 "so it would move with the body; use controllers outside it (IK targets)")
        out.append(Channels(name, f'pose.bones["{_escape(name)}"].location', np.array(pb.location),
                            _invert(_bone_map(rig, pb), f"bone '{name}'")))
    return body, out


def _escape(name):
    return name.replace("\\", "\\\\").replace('"', '\\"')


def forward_axis(rig, mode):
    """Unit horizontal world direction of "forward" (rig's -Y by default)."""
    fixed = {"NEG_Y": (0, -1, 0), "POS_Y": (0, 1, 0), "POS_X": (1, 0, 0), "NEG_X": (-1, 0, 0)}
    if mode in fixed:
        return np.array(fixed[mode], dtype=float)
    facing = np.array(rig.matrix_world.to_3x3() @ Vector((0.0, -1.0, 0.0)))
    facing[2] = 0.0
    n = np.linalg.norm(facing)
    if n < 1e-6:  # float32 matrices leave ~1e-7 of rounding where there is no horizontal part
        raise SelectionError(f"'{rig.name}' faces straight up or down, so it has no forward direction; "
                             "choose a world axis under Forward")
    return facing / n


def world_point(rig, body_bone):
    """World position [BU] of the body bone's head (or the object), as evaluated now."""
    if body_bone:
        return np.array(rig.matrix_world @ rig.pose.bones[body_bone].head)
    return np.array(rig.matrix_world.translation)

