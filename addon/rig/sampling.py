"""Read a rig's evaluated pose at many frames, in bulk.

One ``scene.frame_set`` per sample and one ``foreach_get('matrix')`` over all
pose bones: reading bones one by one through ``matrix`` costs far more than the
frame evaluation itself. The object's world matrix is read the same way (a raw
property array, no matrix object per frame), and the rig's placement is applied
once for the whole take when it does not move, so the loop costs what the frame
evaluation and the two reads cost (≈1.05× the evaluation alone, measured).
Sampling goes through scene time, so an action played by an NLA strip with an
offset, a scale or a repeat is read as it plays.

Meshes deformed by the rig are hidden from evaluation while sampling (their
skinning would otherwise dominate the cost: ≈15× for a 20k-vertex mesh) and
shown again afterwards, as is the frame the scene was on.

:class:`PoseSampling` samples in chunks (a modal bake calls :meth:`~PoseSampling.step`
between events, so Esc is seen and a progress bar moves); :func:`sample_pose`
runs it to the end in one call.
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


def place_in_world(placements, arm):
    """World matrices ``placement @ arm``.

    Parameters
    ----------
    placements : ndarray (F, 16)
        The object's world matrix per frame, column by column (as ``foreach_get`` gives it).
    arm : ndarray (F, B, 4, 4)
        Pose-bone matrices in armature space, row-major, float64.

    Returns
    -------
    ndarray (F, B, 4, 4)
        Row-major world matrices, float64, C-contiguous: ``arm`` itself when the rig stays at
        the world's origin, unturned and unscaled (the common case).
    """
    frames = arm.shape[0]
    w = placements.reshape(frames, 4, 4).astype(float).transpose(0, 2, 1)  # w[f] = W, row-major
    # not through BLAS: its product of a tall matrix by a 4x4 one took 1.16 s for 300 bones x 1,000
    # frames where einsum's own loop took 0.21 s (measured on the 2-core test machine)
    if frames and np.all(w == w[0]):
        if np.array_equal(w[0], np.eye(4)):
            return arm
        return np.einsum("rk,fbkc->fbrc", w[0], arm)  # a rig that stays put: one matrix for the whole take
    return np.einsum("frk,fbkc->fbrc", w, arm)


class PoseSampling:
    """Sampling of a rig's evaluated pose, frame by frame, that can stop between chunks.

    While it runs, the rig's deformed meshes are hidden; :meth:`close` shows them
    again and puts the scene back on its frame (also after a cancel).

    Parameters
    ----------
    scene : bpy.types.Scene
    rig : bpy.types.Object
    frames : array (F,)
        Scene frames [frame]; fractional frames are evaluated as sub-frames.
    bone_names : sequence of str or None
        Bones to return, in this order; None gives every pose bone.
    channels : sequence of (str, int)
        Pose-bone properties and their widths read at every frame, e.g. ``("rotation_euler", 3)``.
    out : ndarray (F, B, 4, 4) of float64 or None
        An array of a take no longer needed, written over instead of a new one (memory the
        process already has costs no page faults: for 300 bones x 4,000 frames a new one cost
        0.7-1.8 s more inside Blender on the 2-core test machine).
    """

    def __init__(self, scene, rig, frames, bone_names=None, channels=(), out=None):
        self.scene, self.rig = scene, rig
        self.frames = np.atleast_1d(np.asarray(frames, dtype=float))
        self.names, self._pick = _bone_indices(rig, bone_names)
        self._channels = tuple(channels)
        n_all, count = len(rig.pose.bones), self.frames.size
        pick = self._pick
        # Every bone is read each frame into one buffer; the chosen ones (one slice when they are
        # consecutive, as a chain's bones are) go straight into the float64 row-major result: 4,000
        # frames of a 700-bone rig do not all stay in memory, and nothing is gathered, widened or
        # transposed over the whole take afterwards.
        self._copy = slice(None)
        if pick is not None and not np.array_equal(pick, np.arange(n_all)):
            lo = int(pick[0])
            self._copy = slice(lo, lo + pick.size) if np.array_equal(pick, np.arange(lo, lo + pick.size)) else pick
        kept = n_all if pick is None else pick.size
        self._frame_buf = np.empty(n_all * 16, dtype=np.float32)
        shape = (count, kept, 4, 4)
        usable = (out is not None and out.shape == shape and out.dtype == np.float64
                  and out.flags.c_contiguous and out.flags.writeable)
        self._arm = out if usable else np.empty(shape)
        self._placements = np.empty((count, 16), dtype=np.float32)
        self._extra = {name: np.empty((count, n_all * width), dtype=np.float32) for name, width in self._channels}
        whole = np.floor(self.frames).astype(int)
        self._whole, self._sub = whole.tolist(), (self.frames - whole).tolist()
        self.done = 0
        self._restore = (scene.frame_current, scene.frame_subframe)
        self._hidden = deformed_meshes(scene, rig)
        for obj in self._hidden:
            obj.hide_viewport = True
        self._open = True

    @property
    def finished(self):
        """True when every frame has been sampled."""
        return self.done >= self.frames.size

    def step(self, count=None):
        """Sample up to ``count`` more frames (all that are left when None); returns how many are done."""
        stop = self.frames.size if count is None else min(self.frames.size, self.done + int(count))
        scene, bones = self.scene, self.rig.pose.bones
        world = self.rig.path_resolve("matrix_world", False)  # a live property array, read without a Matrix
        arm, placements, whole, sub = self._arm, self._placements, self._whole, self._sub
        frame_buf, copy = self._frame_buf, self._copy
        frame_rows = frame_buf.reshape(-1, 16)
        for i in range(self.done, stop):
            if sub[i]:
                scene.frame_set(whole[i], subframe=sub[i])
            else:
                scene.frame_set(whole[i])
            bones.foreach_get("matrix", frame_buf)
            arm[i] = frame_rows[copy].reshape(-1, 4, 4).transpose(0, 2, 1)  # column-major float32 in
            world.foreach_get(placements[i])
            for name, _width in self._channels:
                bones.foreach_get(name, self._extra[name][i])
        self.done = stop
        return stop

    def close(self, restore_frame=True):
        """Show the hidden meshes and return to the frame the scene was on (once).

        ``restore_frame=False`` leaves the frame change to the caller, which sets it
        anyway (one evaluation fewer).
        """
        if not self._open:
            return
        self._open = False
        for obj in self._hidden:
            obj.hide_viewport = False
        if restore_frame:
            self.scene.frame_set(self._restore[0], subframe=self._restore[1])

    @property
    def restore_to(self):
        """``(frame, subframe)`` the scene was on when sampling began."""
        return self._restore

    def result(self):
        """``(matrices (F, B, 4, 4), names, values {channel: (F, B, width)})`` of a finished sampling.

        ``matrices`` are ``rig.matrix_world @ pose_bone.matrix``, row-major, translation in
        the last column [Blender units].
        """
        if not self.finished:
            raise RuntimeError(f"sampling stopped at {self.done} of {self.frames.size} frames")
        count, n_all = self.frames.size, len(self.rig.pose.bones)
        out = place_in_world(self._placements, self._arm)  # the chosen bones only, written per frame
        extra = {}
        for name, width in self._channels:
            vals = self._extra[name].reshape(count, n_all, width).astype(float)
            extra[name] = vals[:, self._pick] if self._pick is not None else vals
        return out, self.names, extra


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
        Called with the number of frames sampled so far (every 16 frames and at the end).

    Returns
    -------
    matrices : ndarray (F, B, 4, 4)
    names : list of str
    values : dict of str -> ndarray (F, B, width)
    """
    sampling = PoseSampling(scene, rig, frames, bone_names, channels)
    try:
        while not sampling.finished:
            done = sampling.step(None if progress is None else 16)
            if progress is not None:
                progress(done)
    finally:
        sampling.close()
    return sampling.result()


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
