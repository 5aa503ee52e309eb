"""The character's body as masses: bones to segments, and its centre of mass (COM) over frames.

A rig's rest layout (armature space) goes to the core as :class:`core.body.mass.RigData`.
The segment map is found from the tree (``map_by_topology``: bone names are never read,
so renamed bones map the same, and the rig's facing comes from its rest pose, so a rig
built facing +Y or turned inside its armature maps the same) unless the rig carries a map of its own in the custom
property :data:`MAP_PROPERTY`, or a mass per bone for creatures in
:data:`MASS_PROPERTY`. Both are plain text the animator can edit in the panel:

* ``lw_body_map``: ``landmark=bone[@tail][+bone...]; ...``, e.g.
  ``vertex=head@tail; shoulder.L=upper_arm.L; hip_mid=thigh.L+thigh.R`` (or a JSON object);
* ``lw_bone_masses``: ``bone=kg [group]; ...``, e.g. ``body=30 trunk; leg1=4 legs``
  (group "trunk" names the torso the limbs are measured against; default "body").

Positions are sampled through :mod:`rig_sampling` (world matrices in bulk) and turned
into metres with the scene's unit scale.
"""

import json

import numpy as np

from ..blender import scene_units
from ..rig import sampling as rig_sampling
from ..core.body import mass as bm
from ..core.base.errors import LeapwrightError
from ..core.rig.facing import faced_rig
from ..core.body.segment_tables import TABLES

MAP_PROPERTY = "lw_body_map"
MASS_PROPERTY = "lw_bone_masses"


class BodyError(Exception):
    """The rig cannot be read as a body; the message says how to fix it."""


def rig_data(rig):
    """:class:`core.body.mass.RigData` of an armature's rest pose [BU, armature space].

    Up is the armature's Z (Blender's convention); which way the character faces is
    read from the rest pose where it matters (:func:`core.rig.facing.faced_rig`).
    """
    if rig is None or rig.type != "ARMATURE":
        what = "nothing" if rig is None else f"'{rig.name}' (a {rig.type.lower()})"
        raise BodyError(f"the body's centre of mass needs an armature, got {what}; pick the character's "
                        "armature under Character")
    names, parents, heads, tails = rig_sampling.bone_rest_data(rig)
    try:
        return bm.RigData(names, parents, heads, tails)
    except LeapwrightError as exc:
        raise BodyError(str(exc)) from None


def _pairs(text):
    """``key=value`` items of a ``;``/newline separated text, or of a JSON object."""
    text = (text or "").strip()
    if text.startswith("{"):
        try:
            return {str(k): str(v) for k, v in json.loads(text).items()}
        except (ValueError, AttributeError) as exc:
            raise BodyError(f"the map {text[:40]!r}... is not a JSON object ({exc}); write "
                            "landmark=bone pairs separated by ';'") from None
    out = {}
    for item in text.replace("\n", ";").split(";"):
        if not item.strip():
            continue
        key, sep, value = item.partition("=")
        if not sep or not key.strip() or not value.strip():
            raise BodyError(f"{item.strip()!r} is not a key=value pair; write e.g. 'shoulder.L=upper_arm.L'")
        out[key.strip()] = value.strip()
    return out


def map_text(landmarks):
    """A :class:`core.body.mass.Landmarks` as the editable text of :data:`MAP_PROPERTY`."""
    return "; ".join(f"{k}={v}" for k, v in landmarks.as_text().items())


def _masses(rig_rest, text):
    masses, groups = np.zeros(len(rig_rest.names)), ["body"] * len(rig_rest.names)
    for bone, spec in _pairs(text).items():
        parts = spec.split()
        try:
            i = rig_rest.index(bone)
            masses[i] = float(parts[0])
        except LeapwrightError as exc:
            raise BodyError(f"bone masses: {exc}") from None
        except ValueError:
            raise BodyError(f"bone masses: {bone}={spec!r} needs a number of kilograms, e.g. '{bone}=4.5 arms'") from None
        if len(parts) > 1:
            groups[i] = parts[1]
    return masses, groups


def _found_landmarks(rest):
    """Landmarks from the bone tree, the rig's facing read from its rest pose.

    A rig whose symmetry or feet do not tell its facing is read in Blender's
    convention (left on +X, facing -Y) before giving up.
    """
    try:
        return faced_rig(rest)[1]
    except LeapwrightError as facing_problem:
        try:
            return bm.map_by_topology(rest)
        except LeapwrightError:
            raise facing_problem from None


def body_model(rig, table="de_leva_male"):
    """The rig's mass model and how it was found.

    Parameters
    ----------
    rig : bpy.types.Object  an armature
    table : str  segment table key (``core.body.segment_tables.TABLES``)

    Returns
    -------
    model : core.body.mass.MassModel
    landmarks : core.body.mass.Landmarks or None  (None for per-bone masses)
    how : str  "found from the bone tree", "set by hand" or "per-bone masses"

    Raises
    ------
    BodyError
        No armature, an unreadable rig without a map, or a map or mass list that does
        not fit the rig; the message says how to fix it.
    """
    rest = rig_data(rig)
    if table not in TABLES:
        raise BodyError(f"unknown segment table {table!r}; choose one of {', '.join(TABLES)}")
    try:
        masses = rig.get(MASS_PROPERTY)
        if isinstance(masses, str) and masses.strip():
            m, groups = _masses(rest, masses)
            return bm.mass_model_from_bone_masses(rest, m, 0.5, groups), None, "per-bone masses"
        manual = rig.get(MAP_PROPERTY)
        if isinstance(manual, str) and manual.strip():
            marks, how = bm.map_by_hand(rest, _pairs(manual)), "set by hand"
        else:
            marks, how = _found_landmarks(rest), "found from the bone tree"
        return bm.mass_model(marks, table), marks, how
    except LeapwrightError as exc:
        raise BodyError(f"'{rig.name}': {exc}") from None


def sample_points(scene, rig, model, frames):
    """Posed heads and tails of the model's bones [m, world], each (F, B, 3)."""
    matrices, names = rig_sampling.sample_pose_world(scene, rig, frames, list(model.bone_names))
    lengths = np.array([rig.data.bones[n].length for n in names])
    heads, tails = bm.bone_points_from_matrices(matrices, lengths)
    m = scene_units.metres_per_unit(scene)
    return heads * m, tails * m


def whole_body_com(scene, rig, model, frames):
    """Whole-body COM of the evaluated rig at scene ``frames`` [m, world], shape (F, 3)."""
    heads, tails = sample_points(scene, rig, model, frames)
    return bm.whole_body_com(model, heads, tails)


def carrier_bone(rig, model):
    """The bone every mass-bearing bone follows (the top of their common tree), or "".

    "" means the object itself: the masses hang from more than one root bone.
    """
    bones = rig.data.bones
    weighted = np.flatnonzero(np.abs(model.weights).sum(axis=0).reshape(2, -1).sum(axis=0) > 0)
    tops = set()
    for i in weighted:
        b = bones[model.bone_names[i]]
        while b.parent is not None:
            b = b.parent
        tops.add(b.name)
    return tops.pop() if len(tops) == 1 else ""
