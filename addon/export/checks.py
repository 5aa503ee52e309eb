"""The rig's numbers for the export rules in ``core.export.game_checks``, and the snap of written keys.

Gathers, without changing anything: the scene's unit scale, the rig's world
scale, the key times of every F-curve that animates it (its action and any
leapwright layer), the root bone's rest axes in world space and the keyed
values of bone scale channels.
"""

import numpy as np

from ..blender import compat as compat
from ..blender import ownership
from ..core.export.game_checks import export_issues, snap_to_whole_frames
from ..blender.key_writer import read_keys, restore_keys

_BONE_SCALE = ".scale"


def _actions(rig):
    """``(action, is_ours)`` of every action that animates ``rig``."""
    out = []
    user = ownership.user_action(rig)
    if user is not None:
        out.append((user, False))
    ad = rig.animation_data
    for track in (ad.nla_tracks if ad else ()):
        if ownership.is_our_layer(track):
            out += [(s.action, True) for s in track.strips if s.action is not None]
    return out


def _frames(fc):
    co = np.zeros(2 * len(fc.keyframe_points), dtype=np.float32)
    fc.keyframe_points.foreach_get("co", co)
    return co.reshape(-1, 2)


def gather(scene, rig, root_bone):
    """The plain numbers :func:`core.export.game_checks.export_issues` takes, as keyword arguments."""
    key_frames, scale_keys = {}, {}
    for action, _ours in _actions(rig):
        for fc in compat.fcurves(action, rig):
            co = _frames(fc)
            if not len(co):
                continue
            label = f"{fc.data_path}[{fc.array_index}]"
            key_frames[label] = np.concatenate([key_frames.get(label, []), co[:, 0]])
            if fc.data_path.startswith("pose.bones[") and fc.data_path.endswith(_BONE_SCALE):
                bone = fc.data_path[len('pose.bones["'):-len('"]' + _BONE_SCALE)]
                scale_keys[bone] = np.concatenate([scale_keys.get(bone, []), co[:, 1]])
    root_axes = None
    if rig.type == "ARMATURE" and root_bone and rig.data.bones.get(root_bone) is not None:
        m = rig.matrix_world.to_3x3() @ rig.data.bones[root_bone].matrix_local.to_3x3()
        root_axes = np.array(m)
    # Axis lengths of the world matrix, all signed negative when it mirrors (a matrix cannot
    # tell which axis was flipped, only that one was).
    m3 = np.array(rig.matrix_world.to_3x3())
    scale = np.linalg.norm(m3, axis=0) * (1.0 if np.linalg.det(m3) >= 0 else -1.0)
    return dict(unit_scale=scene.unit_settings.scale_length, object_scale=tuple(scale), key_frames=key_frames, root_axes=root_axes, root_name=root_bone, scale_keys=scale_keys)


def issues(scene, rig, root_bone):
    """``core.export.game_checks.export_issues`` for the rig as it is now."""
    return export_issues(**gather(scene, rig, root_bone))


def check(scene, view_layer, rig, root_bone, snap_keys=False):
    """Check Export (and Snap and Check): ``(keys moved, tuple of ExportIssue)``.

    Every number is checked before any key moves, so a refusal (the core's
    ``LeapwrightError``: a NaN or inf key time, scale or axis) leaves the file
    as it was.
    """
    view_layer.update()  # world matrices after any change made from a script
    found = issues(scene, rig, root_bone)
    if not snap_keys:
        return 0, found
    moved = snap_written_keys(rig)
    return moved, (issues(scene, rig, root_bone) if moved else found)


def _planned_snaps(rig):
    """``(fcurve, keys, shift [frame], keep)`` of each curve of ours with a key to move; writes nothing."""
    out = []
    for action, ours in _actions(rig):
        for fc in compat.fcurves(action, rig):
            if not (ours or ownership.is_our_curve(fc)):
                continue
            keys = read_keys(fc)
            co = keys["co"].reshape(-1, 2).astype(float)
            new, keep = snap_to_whole_frames(co[:, 0])
            shift = new - co[:, 0]
            if np.any(np.abs(shift) > 0):
                out.append((fc, keys, shift, keep))
    return out


def snap_written_keys(rig):
    """Move leapwright's keys between frames to whole frames (at most half a frame each).

    Only curves leapwright wrote (its groups and layers) are moved; the
    animator's keys are theirs to move. Where a moved key lands on a key
    already there, the moved one (the exact contact event) is kept. Every
    curve is planned before the first is written, so a key time the core
    refuses (NaN, inf) changes no curve at all.

    Returns
    -------
    int
        Keys moved.
    """
    moved = 0
    for fc, keys, shift, keep in _planned_snaps(rig):
        moved += int(np.count_nonzero(np.abs(shift[keep]) > 0))
        out = {}
        for name, arr in keys.items():
            width = arr.size // len(shift)
            a = arr.reshape(len(shift), width).copy()
            if name in ("co", "handle_left", "handle_right"):
                a[:, 0] += shift.astype(a.dtype)
            out[name] = a[keep].ravel()
        restore_keys(fc, out)
    return moved
