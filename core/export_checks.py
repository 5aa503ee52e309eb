"""What silently breaks a jump on its way into a game engine, as plain rules on plain numbers.

The Blender side gathers the numbers (unit scale, object scale, key frames,
the root bone's rest axes, scale keys); this module says what is wrong and how
to fix it. Nothing here knows about Blender.

References
----------
Khronos Group, glTF 2.0 Specification (2021), section 3.4 "Coordinate System
and Units": +Y up, linear distances in metres, a right-handed frame; engines
importing glTF read one unit as one metre.
"""

from dataclasses import dataclass

import numpy as np

from .errors import InvalidGoalError, require_finite

#: Keys closer than this to a whole frame count as on it [frames]: float32 key
#: times near frame 10,000 are already this coarse (IEEE 754 binary32 ulp ≈ 1e-3).
WHOLE_FRAME_TOLERANCE = 1e-3
#: Largest relative spread of the three object scales read as uniform [-].
UNIFORM_SCALE_TOLERANCE = 1e-4
#: Largest angle between the root bone's up axis and the scene's up [rad].
ROOT_AXIS_TOLERANCE = 1e-3
#: A scale key this close to 1 changes nothing an engine would drop [-].
UNIT_SCALE_KEY_TOLERANCE = 1e-6

#: Issue kinds, and why each breaks an export.
ISSUE_KINDS = {
    "unit_scale": "the scene's unit is not one metre; glTF and engines read one unit as one metre",
    "object_scale": "the rig object is scaled non-uniformly or mirrored; engines bake or lose it",
    "fractional_keys": "keys between frames; engines sample whole frames and miss or smear them",
    "root_axes": "the root bone's axes do not stand on the scene's up axis; its motion turns on export",
    "bone_scale_keys": "bones keyed in scale; common engine rigs drop bone scale",
}


@dataclass(frozen=True)
class ExportIssue:
    """One problem: ``kind`` from :data:`ISSUE_KINDS`, a sentence with the values and the fix."""

    kind: str
    message: str


def _fractional(frames, tol):
    f = np.asarray(frames, dtype=float).ravel()
    return f[np.abs(f - np.rint(f)) > tol]


def export_issues(unit_scale, object_scale, key_frames=None, root_axes=None, root_name="root",
                  up_axis=(0.0, 0.0, 1.0), scale_keys=None):
    """Every export issue of a rig.

    Parameters
    ----------
    unit_scale : float
        Metres per scene unit [m/BU].
    object_scale : sequence of 3 float
        The rig object's world scale per axis [-] (negative = mirrored).
    key_frames : mapping of str to sequence of float, optional
        Key times of each animated channel [frame].
    root_axes : (3, 3) array, optional
        The root bone's rest axes in world space, as columns (x, y, z) [-].
    root_name : str
        The root bone's name, for messages.
    up_axis : sequence of 3 float
        The scene's up direction [-] (Blender: +Z).
    scale_keys : mapping of str to sequence of float, optional
        Keyed scale values of each bone [-].

    Returns
    -------
    tuple of ExportIssue
        Empty when the rig exports cleanly.
    """
    issues = []
    unit_scale = require_finite("unit scale", unit_scale, positive=True, unit=" m per unit")
    if abs(unit_scale - 1.0) > 1e-6:
        issues.append(ExportIssue("unit_scale", f"unit scale is {unit_scale:g} (1 unit = {unit_scale:g} m); "
                                  "set Scene > Units > Unit Scale to 1 and scale the character instead, "
                                  "or set the exporter's scale"))
    s = np.asarray(object_scale, dtype=float).ravel()
    if s.size != 3 or not np.all(np.isfinite(s)):
        raise InvalidGoalError(f"object scale must be three finite numbers, got {object_scale!r}")
    shown = ", ".join(f"{v:g}" for v in s)
    if np.any(s < 0):
        issues.append(ExportIssue("object_scale", f"object scale ({shown}) is negative (mirrored); apply the "
                                  "scale (Object > Apply > Scale) or mirror the bones instead"))
    a = np.abs(s)
    if a.min() <= 0 or (a.max() - a.min()) / a.max() > UNIFORM_SCALE_TOLERANCE:
        issues.append(ExportIssue("object_scale", f"object scale ({shown}) is not uniform; apply the scale "
                                  "(Object > Apply > Scale) before export"))
    for label, frames in sorted((key_frames or {}).items()):
        off = _fractional(frames, WHOLE_FRAME_TOLERANCE)
        if off.size:
            listed = ", ".join(f"{f:.3f}" for f in off[:4]) + (" …" if off.size > 4 else "")
            issues.append(ExportIssue("fractional_keys", f"{label} has {off.size} key(s) between frames "
                                      f"({listed}); snap them to whole frames"))
    if root_axes is not None:
        m = np.asarray(root_axes, dtype=float).reshape(3, 3)
        up = np.asarray(up_axis, dtype=float)
        z = m[:, 2] / np.linalg.norm(m[:, 2])
        angle = float(np.arccos(np.clip(z @ (up / np.linalg.norm(up)), -1.0, 1.0)))
        if angle > ROOT_AXIS_TOLERANCE:
            issues.append(ExportIssue("root_axes", f"root bone '{root_name}' has its Z axis {np.degrees(angle):.1f}° "
                                      "away from the scene's up; lay it flat on the ground pointing forward "
                                      "(head at the origin, tail along the facing) so its Z is up"))
    for bone, values in sorted((scale_keys or {}).items()):
        v = np.asarray(values, dtype=float).ravel()
        changed = v[np.abs(v - 1.0) > UNIT_SCALE_KEY_TOLERANCE]
        if changed.size:
            issues.append(ExportIssue("bone_scale_keys", f"bone '{bone}' is keyed in scale (to {changed[0]:g}); "
                                      "common engine rigs drop bone scale: move the squash into location or "
                                      "into bones made for it"))
    return tuple(issues)


def snap_to_whole_frames(frames, tolerance=WHOLE_FRAME_TOLERANCE):
    """Move keys between frames to the nearest whole frame.

    A key moves by at most half a frame. Where a moved key lands on a frame
    that already has a key, the moved one is kept (it is the exact event, a
    take-off or a touchdown) and the other dropped.

    Parameters
    ----------
    frames : sequence of float
        Key times [frame], increasing.

    Returns
    -------
    new_frames : numpy array (n,)
        Every key's whole frame [frame].
    keep : numpy array of bool (n,)
        Keys to keep (no two kept keys share a frame).
    """
    f = np.asarray(frames, dtype=float).ravel()
    new = np.rint(f)
    moved = np.abs(f - new) > tolerance
    keep = np.ones(f.size, dtype=bool)
    order = np.lexsort((~moved, new))  # per whole frame, a moved key first
    seen = set()
    for i in order:
        if new[i] in seen:
            keep[i] = False
        seen.add(new[i])
    return new, keep
