"""What the jump check follows: the body bone, the object, or the whole-body centre of mass.

In the air only the whole-body centre of mass (COM) has to fall on one parabola
(Newton's second law for a system of particles: gravity is the only external force).
A single bone does so only while the limbs keep still relative to it. After Keep Body
on Its Arc (the ``lw:body`` layer) the hips are, rightly, off a parabola while the arms
swing, so the check follows the whole-body COM there.

The choice (:data:`FOLLOW_ITEMS`):

* ``BONE`` — the body bone's head (or the object's origin when no bone is set);
* ``BODY`` — the whole-body COM (:mod:`body_com`); a rig that cannot be read as a body
  is refused with :class:`body_com.BodyError`;
* ``AUTO`` — the whole-body COM whenever the rig reads as a body: its segment map found
  from the bone tree (the reading Body in the Air uses), or a map or per-bone masses it
  carries (:data:`body_com.MAP_PROPERTY`, :data:`body_com.MASS_PROPERTY`); otherwise the
  body bone, otherwise the object. What was followed and why is said in ``reason``.

Every path is sampled over the scene's frame range, in scene time, in metres. This
module is shared by the panel's Check Jump and ``leapwright check`` on a .blend.
"""

from dataclasses import dataclass

import numpy as np

from ..blender import scene_units
from ..body import com as body_com
from ..blender import ownership
from ..rig import sampling as rig_sampling
from ..body.arc import CAPABILITY as AIR_CAPABILITY

FOLLOW_ITEMS = (
    ("AUTO", "Automatic", "The whole-body centre of mass whenever the rig reads as a body (its bones found "
                          "from the bone tree, or a bone map or bone masses set by hand); otherwise the body "
                          "bone, or the object when none is set"),
    ("BONE", "Body bone", "The head of the body bone under Character (the object when none is set)"),
    ("BODY", "Whole-body COM", "The centre of mass of the whole body, from the bones mapped to body segments"),
)
FOLLOW_KEYS = tuple(key for key, _, _ in FOLLOW_ITEMS)


@dataclass(frozen=True, eq=False)
class CheckedPath:
    """A sampled path and what it is.

    Attributes
    ----------
    frames : ndarray (F,)  scene frames
    points : ndarray (F, 3)  world positions [m]
    follows : str  "body", "bone" or "object"
    label : str  what was checked, for the summary ("the whole-body COM (map found from the bone tree)")
    note : str  why Automatic did not follow the whole-body COM, or ""
    reason : str  why this path was followed ("Automatic: the rig reads as a body"), or ""
    """

    frames: np.ndarray
    points: np.ndarray
    follows: str
    label: str
    note: str = ""
    reason: str = ""

    @property
    def text(self):
        """``checked <label>`` plus the note, for reports."""
        return f"checked {self.label}" + (f" ({self.note})" if self.note else "")


def body_signs(rig):
    """What on ``rig`` says it is to be read as a body (empty when nothing does).

    Returns
    -------
    list of str  e.g. ``["a bone map", "the in-air correction layer"]``
    """
    if rig is None or rig.type != "ARMATURE":
        return []
    out = []
    for prop, what in ((body_com.MAP_PROPERTY, "a bone map"), (body_com.MASS_PROPERTY, "bone masses")):
        value = rig.get(prop)
        if isinstance(value, str) and value.strip():
            out.append(what)
    if AIR_CAPABILITY in ownership.capabilities_written(rig):
        out.append("the in-air correction layer")
    return out


def _frames(scene):
    return np.arange(scene.frame_start, scene.frame_end + 1, dtype=float)


def sample_bone_path(scene, rig, bone):
    """``(frames, points [m])`` of the body bone's head (or the object) over the scene range."""
    frames = _frames(scene)
    m = scene_units.metres_per_unit(scene)
    if bone:
        matrices, _ = rig_sampling.sample_pose_world(scene, rig, frames, [bone])
        return frames, matrices[:, 0, :3, 3] * m
    points = np.empty((len(frames), 3))
    with rig_sampling.quiet_evaluation(scene, rig):
        for i, f in enumerate(frames):
            scene.frame_set(int(f))
            points[i] = tuple(rig.matrix_world.translation)
    return frames, points * m


def _bone_path(scene, rig, bone, note="", reason=""):
    frames, points = sample_bone_path(scene, rig, bone)
    if bone:
        return CheckedPath(frames, points, "bone", f"the body bone '{bone}'", note, reason)
    return CheckedPath(frames, points, "object", f"the object '{rig.name}'", note, reason)


def _fallback(rig, bone, exc):
    """``(note, reason)`` of Automatic following the body bone (or the object) instead of the body."""
    instead = f"the body bone '{bone}'" if bone else "the object (no body bone is set)"
    if rig.type != "ARMATURE":
        return "", f"Automatic: '{rig.name}' is not a rig, so {instead}"
    signs = body_signs(rig)
    if signs:
        note = f"the whole-body COM, asked for by {' and '.join(signs)}, cannot be read: {exc}"
    else:
        note = f"the rig does not read as a body: {exc}"
    return note, f"Automatic: the rig does not read as a body, so {instead}"


def _label(how):
    return "the whole-body COM (" + (how if how == "per-bone masses" else f"map {how}") + ")"


def body_refusal(exc, instead):
    """The message for a whole-body COM that cannot be read: the reason, then ``instead`` (what to do)."""
    return f"cannot check the whole-body COM: {exc}; or {instead}"


def checked_path(scene, rig, bone, follow="AUTO", table="de_leva_male"):
    """Sample what the check follows over the scene range (writes nothing).

    Parameters
    ----------
    scene : bpy.types.Scene
    rig : bpy.types.Object  the character (an armature, or any object)
    bone : str  the body bone ("" for the object); the caller has made sure the rig has it
    follow : str  one of :data:`FOLLOW_KEYS`
    table : str  segment table for the whole-body COM (``core.body.segment_tables.TABLES``)

    Returns
    -------
    CheckedPath

    Raises
    ------
    body_com.BodyError
        ``follow`` is ``BODY`` and the rig cannot be read as a body, or ``follow`` is
        not one of :data:`FOLLOW_KEYS`.
    """
    if follow not in FOLLOW_KEYS:
        raise body_com.BodyError(f"unknown path to follow {follow!r}; choose one of {', '.join(FOLLOW_KEYS)}")
    if follow == "BONE":
        return _bone_path(scene, rig, bone, reason="Follow is set to the body bone")
    try:
        if rig.type != "ARMATURE":
            raise body_com.BodyError(f"'{rig.name}' is not a rig")
        model, _marks, how = body_com.body_model(rig, table)
    except body_com.BodyError as exc:
        if follow == "BODY":
            raise
        note, reason = _fallback(rig, bone, exc)
        return _bone_path(scene, rig, bone, note, reason)
    frames = _frames(scene)
    reason = "Follow is set to the whole-body COM" if follow == "BODY" else "Automatic: the rig reads as a body"
    return CheckedPath(frames, body_com.whole_body_com(scene, rig, model, frames), "body", _label(how), "", reason)
