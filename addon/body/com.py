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
from ..rig.skeleton import BodyError, read_body, rig_data, skeletons  # noqa: F401  (the body's reading)
from ..core.body import mass as bm
from ..core.base.errors import LeapwrightError
from ..core.body.segment_tables import LANDMARKS, SIDED_LANDMARKS, TABLES

MAP_PROPERTY = "lw_body_map"
MASS_PROPERTY = "lw_bone_masses"


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
        if not sep or not key.strip():
            raise BodyError(f"{item.strip()!r} is not a key=value pair; write e.g. 'shoulder.L=upper_arm.L'")
        out[key.strip()] = value.strip()  # an empty value is a blank of a fill-in map
    return out


def fill_in_text(rig):
    """A bone map with every joint named and its bone left blank, for a rig that cannot be read.

    Joints the tree alone gives a guess for are not known here, so every blank is the
    animator's to fill: the head of the bone at each joint (``@tail`` for a bone's tip,
    ``+`` to average two).
    """
    keys = [n for base in LANDMARKS for n in ((f"{base}.L", f"{base}.R") if base in SIDED_LANDMARKS else (base,))]
    return "; ".join(f"{k}=" for k in keys)


def _filled(pairs):
    """The map's pairs, or a BodyError naming the joints still blank."""
    blank = [k for k, v in pairs.items() if not v]
    if blank:
        raise BodyError(f"the bone map still needs a bone for {len(blank)} joint(s): {', '.join(blank[:8])}"
                        f"{' ...' if len(blank) > 8 else ''}; write the bone whose head sits at each joint "
                        "(add @tail for a bone's tip)")
    return pairs


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
    if table not in TABLES:
        raise BodyError(f"unknown segment table {table!r}; choose one of {', '.join(TABLES)}")
    try:
        masses = rig.get(MASS_PROPERTY)
        manual = rig.get(MAP_PROPERTY)
        if isinstance(masses, str) and masses.strip():
            rest = skeletons(rig)[-1]  # the whole rig: masses may sit on any bone
            m, groups = _masses(rest, masses)
            return bm.mass_model_from_bone_masses(rest, m, 0.5, groups), None, "per-bone masses"
        if isinstance(manual, str) and manual.strip():
            marks, how = bm.map_by_hand(skeletons(rig)[-1], _filled(_pairs(manual))), "set by hand"
        else:
            marks, how = read_body(rig)[1], "found from the bone tree"
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
