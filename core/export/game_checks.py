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

from ..base.errors import InvalidGoalError, require_finite

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


def _finite_values(what, values, fix):
    """``values`` as a flat float array, or :class:`InvalidGoalError` naming the first non-finite one.

    NaN compares false with every tolerance, so without this a NaN key passed
    every check unseen, and ``rint(inf)`` is inf, which no frame is.
    """
    try:
        v = np.asarray(values, dtype=float).ravel()
    except (TypeError, ValueError):
        raise InvalidGoalError(f"{what} must be numbers, got {values!r}; {fix}") from None
    bad = np.flatnonzero(~np.isfinite(v))
    if bad.size:
        more = f", {bad.size} such values in all" if bad.size > 1 else ""
        raise InvalidGoalError(f"{what}: value {float(v[bad[0]])!r} (number {bad[0] + 1} of {v.size}{more}) "
                               f"is not a finite number; {fix}")
    return v


def _direction(what, vector, fix):
    """``vector`` scaled to length 1 [-], or None when it has no length.

    Divided by its largest component first, so that neither a huge vector
    overflows nor a subnormal one underflows in the norm.
    """
    v = _finite_values(what, vector, fix)
    if v.size != 3:
        raise InvalidGoalError(f"{what} must be three numbers, got {vector!r}; {fix}")
    big = float(np.max(np.abs(v)))
    if big == 0.0:
        return None
    v = v / big
    return v / np.linalg.norm(v)


def _root_axes_issues(root_axes, root_name, up_axis):
    """The ``root_axes`` issue of :func:`export_issues`, as a list of zero or one."""
    up = _direction("up axis", up_axis, "give the scene's up direction as three finite numbers, such as (0, 0, 1)")
    if up is None:
        raise InvalidGoalError(f"up axis has no length, got {up_axis!r}; give the scene's up direction, "
                               "such as (0, 0, 1)")
    fix = "give the bone's rest axes in world space as a 3 x 3 matrix of finite numbers"
    m = _finite_values(f"root bone '{root_name}' axes", root_axes, fix)
    if m.size != 9:
        raise InvalidGoalError(f"root bone '{root_name}' axes must be a 3 x 3 matrix, got {m.size} number(s); {fix}")
    z = _direction(f"root bone '{root_name}' Z axis", m.reshape(3, 3)[:, 2], fix)
    if z is None:
        return [ExportIssue("root_axes", f"root bone '{root_name}' has no Z axis in world space (length 0: the "
                                         "rig object or the bone is scaled to 0), so which way it stands cannot "
                                         "be checked; give the rig a scale other than 0 (Object > Transform > "
                                         "Scale)")]
    angle = float(np.arccos(np.clip(z @ up, -1.0, 1.0)))
    if angle <= ROOT_AXIS_TOLERANCE:
        return []
    return [ExportIssue("root_axes", f"root bone '{root_name}' has its Z axis {np.degrees(angle):.1f}° away "
                                     "from the scene's up; lay it flat on the ground pointing forward (head at "
                                     "the origin, tail along the facing) so its Z is up")]


_KEY_FIX = ("delete that key or give it a frame number (Graph Editor > Sidebar > F-Curve > Active Keyframe), "
            "then check again")


def export_issues(unit_scale, object_scale, key_frames=None, root_axes=None, root_name="root",
                  up_axis=(0.0, 0.0, 1.0), scale_keys=None):
    """Every export issue of a rig.

    A rig scaled to 0 is a state an animator's file can be in (Blender keeps
    it), so it is reported as issues (``object_scale``, and ``root_axes`` when
    the root bone's Z axis has no length left), not refused: the check exists
    to list what to fix before export, and a refusal would hide the other
    findings, while skipping the axis would call the rig ready to export.
    Numbers no rig can have (NaN, inf, wrong counts) are refused instead.

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
        The scene's up direction [-] (Blender: +Z); any length but 0.
    scale_keys : mapping of str to sequence of float, optional
        Keyed scale values of each bone [-].

    Returns
    -------
    tuple of ExportIssue
        Empty when the rig exports cleanly.

    Raises
    ------
    InvalidGoalError
        A value is not a finite number (a NaN or inf key time, scale, axis),
        the unit scale is not positive, or the up axis has no length; the
        message repeats the value.
    """
    issues = []
    unit_scale = require_finite("unit scale", unit_scale, positive=True, unit=" m per unit")
    if abs(unit_scale - 1.0) > 1e-6:
        issues.append(ExportIssue("unit_scale", f"unit scale is {unit_scale:g} (1 unit = {unit_scale:g} m); "
                                  "set Scene > Units > Unit Scale to 1 and scale the character instead, "
                                  "or set the exporter's scale"))
    s = _finite_values("object scale", object_scale, "give the rig object's scale as three finite numbers")
    if s.size != 3:
        raise InvalidGoalError(f"object scale must be three finite numbers, got {object_scale!r}")
    shown = ", ".join(f"{v:g}" for v in s)
    if np.any(s < 0):
        issues.append(ExportIssue("object_scale", f"object scale ({shown}) is negative (mirrored); apply the "
                                  "scale (Object > Apply > Scale) or mirror the bones instead"))
    a = np.abs(s)
    if a.min() <= 0:
        issues.append(ExportIssue("object_scale", f"object scale ({shown}) is 0 along an axis, which flattens "
                                  "the rig; give it a scale other than 0 and apply it (Object > Apply > Scale)"))
    elif (a.max() - a.min()) / a.max() > UNIFORM_SCALE_TOLERANCE:
        issues.append(ExportIssue("object_scale", f"object scale ({shown}) is not uniform; apply the scale "
                                  "(Object > Apply > Scale) before export"))
    for label, frames in sorted((key_frames or {}).items()):
        off = _fractional(_finite_values(f"key times of {label}", frames, _KEY_FIX), WHOLE_FRAME_TOLERANCE)
        if off.size:
            listed = ", ".join(f"{f:.3f}" for f in off[:4]) + (" …" if off.size > 4 else "")
            issues.append(ExportIssue("fractional_keys", f"{label} has {off.size} key(s) between frames "
                                      f"({listed}); snap them to whole frames"))
    if root_axes is not None:
        issues += _root_axes_issues(root_axes, root_name, up_axis)
    for bone, values in sorted((scale_keys or {}).items()):
        v = _finite_values(f"scale keys of bone '{bone}'", values,
                           "give that key a finite scale (Graph Editor > Sidebar > F-Curve > Active Keyframe)")
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
    tolerance : float
        Keys closer than this to a whole frame count as on it [frame], >= 0.

    Returns
    -------
    new_frames : numpy array (n,)
        Every key's whole frame [frame].
    keep : numpy array of bool (n,)
        Keys to keep (no two kept keys share a frame).

    Raises
    ------
    InvalidGoalError
        A key time or the tolerance is not a finite number (a NaN or inf key
        has no nearest frame), or the tolerance is negative.
    """
    f = _finite_values("key times", frames, _KEY_FIX)
    tolerance = require_finite("snap tolerance", tolerance, non_negative=True, unit=" frames")
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
