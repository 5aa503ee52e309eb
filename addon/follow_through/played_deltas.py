"""Deltas that play as simulated on bones whose rotation passes through constraints.

The core returns, per frame and bone, the simulated world rotation and the delta
to multiply onto the bone's own rotation. That delta plays as simulated when the
bone's world rotation is its parent's with its own rotation last; a production rig
often adds constraints on the way: Rigify's tentacle controls copy their parent's
local rotation, so a delta keyed on a parent turns every bone below it once more.

When a chosen bone (or a bone between it and its chosen parent) has a constraint,
the written layer is read back through the depsgraph at the baked frames and each
delta corrected by what played: with the bone's world rotation ``P = X @ delta``
(its own rotation still last), the delta that plays the simulated ``S`` is
``delta @ P^T S``. ``X`` of a bone depends on the deltas above it, so the chains
are corrected root to tip, one read-back per chain level, until every bone plays
its simulated rotation.
"""

import dataclasses

import numpy as np

from ..core.base.rotation_vectors import (matrix_to_quaternion, nearest_rotations, quaternion_multiply,
                                               rotvec_to_matrix)
from ..rig import sampling as rig_sampling

#: Largest angle [rad] between a played and a simulated bone rotation counted as played (keys are
#: float32: about 1e-7 rad; 1e-5 rad moves a 0.3 m bone's tip by 3 micrometres).
PLAYED_WITHIN = 1e-5


def _constrained(pose_bone):
    return any(c.enabled and c.influence > 0.0 for c in pose_bone.constraints)


def correction_passes(rig, bones):
    """Read-backs needed so ``bones`` play as simulated: 0 when no constraint sits on a chosen bone or
    between one and its nearest chosen ancestor (above a chain's first bone they only move it as
    animated), else the chain levels from the first such bone's down
    (a level's deltas are exact once every level above it plays as simulated)."""
    _, parents, _, _ = rig_sampling.bone_rest_data(rig, bones)
    chosen, first, deepest = set(bones), None, 0
    for b, name in enumerate(bones):
        level, j = 0, parents[b]
        while j >= 0:
            level, j = level + 1, parents[j]
        deepest = max(deepest, level)
        # a first bone's own constraints only: those above it move it as animated, whatever is keyed
        pb = rig.pose.bones[name]
        while pb is not None:
            if _constrained(pb):
                first = level if first is None else min(first, level)
                break
            pb = pb.parent if level else None
            if pb is not None and pb.name in chosen:
                break
    return 0 if first is None else deepest - first + 1


def simulated_rotations(animated, world_offsets):
    """Simulated world rotations (F, B, 3, 3): ``R(world_offset) @ W_animated`` (scale taken out)."""
    rots = nearest_rotations(animated)  # as the core takes them: scale and shear removed
    return np.einsum("fbij,fbjk->fbik", rotvec_to_matrix(np.asarray(world_offsets, float)), rots)


def _played_rotations(scene, rig, frames, bones):
    matrices, _, _ = rig_sampling.sample_pose(scene, rig, frames, list(bones))
    return nearest_rotations(matrices[:, :, :3, :3])


def _angles(played, wanted):
    cos = (np.einsum("fbii->fb", np.einsum("fbji,fbjk->fbik", played, wanted)) - 1.0) / 2.0
    return np.arccos(np.clip(cos, -1.0, 1.0))


def play_as_simulated(scene, rig, job, write, passes):
    """Correct the written deltas of ``job`` so they play as simulated (see the module's text).

    Parameters
    ----------
    job : bake_job.BakeJob
        A job whose curves were just written (``job.result``: the core's ChainBake; ``job.animated``:
        the sampled world rotations of its bones; ``job.frames``: the scene frames).
    write : callable
        ``write(bake) -> None``: turns a ChainBake into curves and writes them over the layer.
    passes : int
        Read-backs to make (:func:`correction_passes`); each corrects every bone still off, and the
        one after it reads a level more exactly.

    Returns
    -------
    list of float
        Largest angle between a played and a simulated rotation at a keyed frame, at each read-back [rad].
    """
    result = job.result
    wanted = simulated_rotations(job.animated, result.world_offsets)
    mask = result.key_mask
    quats = np.array(result.quaternions, dtype=float, copy=True)
    seen = []
    for _ in range(passes):
        played = _played_rotations(scene, rig, job.frames, job.request.bones)
        angles = np.where(mask, _angles(played, wanted), 0.0)
        seen.append(float(angles.max(initial=0.0)))
        if seen[-1] <= PLAYED_WITHIN:
            break
        fix = matrix_to_quaternion(np.einsum("fbji,fbjk->fbik", played, wanted))
        quats = np.where((angles > PLAYED_WITHIN)[..., None], quaternion_multiply(quats, fix), quats)
        quats *= np.where(quats[..., :1] < 0.0, -1.0, 1.0)
        write(dataclasses.replace(result, quaternions=quats))
    return seen
