"""Read a rig's evaluated pose at many frames, in bulk.

One ``scene.frame_set`` per sample and one ``foreach_get('matrix')`` over all
pose bones: reading bones one by one through ``matrix`` costs far more than the
frame evaluation itself. Sampling goes through scene time, so an action played
by an NLA strip with an offset, a scale or a repeat is read as it plays.

Meshes deformed by the rig are hidden from evaluation while sampling (their
skinning would otherwise dominate the cost: ≈15× for a 20k-vertex mesh) and
shown again afterwards, as is the frame the scene was on.
"""

from contextlib import contextmanager

import numpy as np


def deformed_meshes(scene, rig):
    """Objects in ``scene`` whose modifiers deform by ``rig`` and that are evaluated now.

    Returns
    -------
    list of bpy.types.Object
    """
    out = []
    for obj in scene.objects:
        if obj is rig or obj.hide_viewport:
            continue
        for mod in getattr(obj, "modifiers", ()):
            if mod.type == "ARMATURE" and mod.object == rig:
                out.append(obj)
                break
    return out


@contextmanager
def quiet_evaluation(scene, rig):
    """Hide the rig's deformed meshes and restore them, and the current frame, on exit."""
    frame, subframe = scene.frame_current, scene.frame_subframe
    hidden = deformed_meshes(scene, rig)
    for obj in hidden:
        obj.hide_viewport = True
    try:
        yield hidden
    finally:
        for obj in hidden:
            obj.hide_viewport = False
        scene.frame_set(frame, subframe=subframe)


def _bone_indices(rig, bone_names):
    names = [pb.name for pb in rig.pose.bones]
    if bone_names is None:
        return names, None
    lookup = {n: i for i, n in enumerate(names)}
    missing = [n for n in bone_names if n not in lookup]
    if missing:
        raise KeyError(f"rig {rig.name!r} has no bone {missing[0]!r}")
    return list(bone_names), np.array([lookup[n] for n in bone_names], dtype=int)


def sample_pose_world(scene, rig, frames, bone_names=None):
    """World-space pose-bone matrices of ``rig`` at the given scene frames.

    Parameters
    ----------
    scene : bpy.types.Scene
        The scene whose time is sampled (NLA offsets are played as in it).
    rig : bpy.types.Object
        An armature object.
    frames : array (F,)
        Scene frames [frame]; fractional frames are evaluated as sub-frames.
    bone_names : sequence of str or None
        Bones to return, in this order; None gives every pose bone in the
        rig's order.

    Returns
    -------
    matrices : ndarray (F, B, 4, 4)
        ``rig.matrix_world @ pose_bone.matrix`` per frame and bone, row-major,
        translation in the last column [Blender units].
    names : list of str
        The bone names, in the order of axis 1.
    """
    matrices, names, _ = sample_pose(scene, rig, frames, bone_names)
    return matrices, names


def sample_pose(scene, rig, frames, bone_names=None, channels=(), progress=None):
    """:func:`sample_pose_world`, plus pose-bone channels read in the same pass.

    Parameters
    ----------
    channels : sequence of (str, int)
        Pose-bone properties and their widths, e.g. ``("rotation_euler", 3)``,
        read with ``foreach_get`` at every frame (the evaluated values).
    progress : callable or None
        Called with the number of frames sampled so far.

    Returns
    -------
    matrices : ndarray (F, B, 4, 4)
    names : list of str
    values : dict of str -> ndarray (F, B, width)
    """
    frames = np.atleast_1d(np.asarray(frames, dtype=float))
    names, pick = _bone_indices(rig, bone_names)
    bones = rig.pose.bones
    n_all = len(bones)
    # one row per frame, filled in place: the loop does nothing but evaluate and copy
    buf = np.empty((frames.size, n_all * 16), dtype=np.float32)
    extra_buf = {name: np.empty((frames.size, n_all * width), dtype=np.float32) for name, width in channels}
    placements = []
    whole = np.floor(frames).astype(int)
    sub = frames - whole
    with quiet_evaluation(scene, rig):
        for i, (f, s) in enumerate(zip(whole.tolist(), sub.tolist())):
            scene.frame_set(f, subframe=s)
            bones.foreach_get("matrix", buf[i])
            placements.append(rig.matrix_world.copy())
            for name, _width in channels:
                bones.foreach_get(name, extra_buf[name][i])
            if progress is not None:
                progress(i + 1)
    # foreach_get gives each 4x4 column by column: transpose to row-major.
    arm = buf.reshape(frames.size, n_all, 4, 4).transpose(0, 1, 3, 2)
    if pick is not None:
        arm = arm[:, pick]
    world = np.array([np.array(m, dtype=float) for m in placements]).reshape(frames.size, 1, 4, 4)
    out = world @ arm
    extra = {}
    for name, width in channels:
        vals = extra_buf[name].reshape(frames.size, n_all, width).astype(float)
        extra[name] = vals[:, pick] if pick is not None else vals
    return out, names, extra


def bone_rest_data(rig, bone_names=None):
    """Rest-pose layout of the rig's bones (armature space).

    Parameters
    ----------
    rig : bpy.types.Object
        An armature object.
    bone_names : sequence of str or None
        Bones to return, in this order; None gives every bone.

    Returns
    -------
    names : list of str
    parents : ndarray (B,) of int
        Index (into ``names``) of each bone's nearest ancestor among
        ``names``, or -1.
    heads, tails : ndarray (B, 3)
        ``head_local`` and ``tail_local`` [Blender units, armature space].
    """
    data_bones = rig.data.bones
    names = [b.name for b in data_bones] if bone_names is None else list(bone_names)
    lookup = {n: i for i, n in enumerate(names)}
    parents = np.full(len(names), -1, dtype=int)
    heads = np.empty((len(names), 3))
    tails = np.empty((len(names), 3))
    for i, name in enumerate(names):
        bone = data_bones.get(name)
        if bone is None:
            raise KeyError(f"rig {rig.name!r} has no bone {name!r}")
        heads[i] = bone.head_local
        tails[i] = bone.tail_local
        up = bone.parent
        while up is not None and up.name not in lookup:
            up = up.parent
        parents[i] = lookup[up.name] if up is not None else -1
    return names, parents, heads, tails
