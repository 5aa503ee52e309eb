"""The motion a bake sampled, kept in memory for the next bake of the same rig.

Tuning follow-through means baking the same motion again and again with other
chain settings. Sampling is the bake's one cost that scales with the whole
scene, so the sampled motion is kept here, one take per rig, keyed to the scene,
the rig, the bones and channels read, the frame range and a fingerprint of the
animation (:func:`..rig.fingerprint.motion_fingerprint`). Before a kept take is
used again, a few of its frames are sampled anew and compared: a pose set
without keys, a constraint changed or an object moved by hand changes them and
the take is sampled again. Nothing here is saved in the file; loading a file
forgets everything.
"""

import time
from dataclasses import dataclass, field

import numpy as np

from ..rig.sampling import PoseSampling

#: Frames sampled again to confirm a kept take: its first, middle and last.
SPOT_FRAMES = 3
#: Largest difference of a re-sampled matrix entry that still counts as the same motion [BU].
SAME_MOTION = 1e-5
#: Takes kept at most (one per rig; the oldest goes first).
KEPT = 4

_TAKES: dict = {}  # (scene pointer, rig pointer) -> SampledMotion


@dataclass
class SampledMotion:
    """One sampled take of a rig.

    Parameters
    ----------
    key : tuple
        Bones, frames and channels read (:func:`take_key`).
    fingerprint : str
        The animation it was sampled from.
    matrices : ndarray (F, B, 4, 4)
        World matrices of the bones, row-major [Blender units].
    values : dict of str -> ndarray (F, B, width)
        Pose-bone channels read in the same pass.
    seconds : float
        What sampling it took [s] (tells whether a re-sample fits inside a live re-bake).
    prepared : dict
        The core's drive made from this take (``chain_motion``), by what it was made for (units,
        frame rate, bones, options), so a re-bake with other chain settings skips making it again.
    """

    key: tuple
    fingerprint: str
    matrices: np.ndarray
    values: dict
    seconds: float
    prepared: dict = field(default_factory=dict)


def take_key(bones, frames, channels, chosen=None):
    """What a take is keyed by besides the rig: bone names, frames, channels read and how many of the
    bones were chosen to bake (the rest place the body's capsules)."""
    frames = np.asarray(frames, dtype=float)
    chosen = len(bones) if chosen is None else int(chosen)
    return tuple(bones), (float(frames[0]), float(frames[-1]), int(frames.size)), tuple(channels), chosen


def spot_indices(count):
    """Indices of the frames re-sampled to confirm a take of ``count`` frames."""
    return sorted({0, count // 2, count - 1})[:SPOT_FRAMES]


def _slot(scene, rig):
    return scene.as_pointer(), rig.as_pointer()


def find(scene, rig, key, fingerprint):
    """The kept take for this rig, key and fingerprint, or None (not yet confirmed: see :func:`confirm`)."""
    take = _TAKES.get(_slot(scene, rig))
    if take is None or take.key != key or take.fingerprint != fingerprint:
        return None
    return take


def confirm(scene, rig, take, frames):
    """True when the take's spot frames, sampled now, match what was kept.

    The caller mutes what must not be seen (the bake's own layer) first, and sets
    the scene's frame again afterwards.
    """
    picks = spot_indices(len(frames))
    bones, _, channels, _ = take.key
    sampling = PoseSampling(scene, rig, np.asarray(frames)[picks], list(bones), channels)
    try:
        sampling.step()
    finally:
        sampling.close(restore_frame=False)  # the caller unmutes and evaluates the frame again
    now, _, values = sampling.result()
    if not np.allclose(now, take.matrices[picks], rtol=0.0, atol=SAME_MOTION):
        return False
    return all(np.allclose(values[name], take.values[name][picks], rtol=0.0, atol=SAME_MOTION)
               for name in values)


def keep(scene, rig, take):
    """Keep ``take`` as this rig's (replacing its previous one; the oldest rig's goes past :data:`KEPT`)."""
    slot = _slot(scene, rig)
    _TAKES.pop(slot, None)
    _TAKES[slot] = take
    while len(_TAKES) > KEPT:
        _TAKES.pop(next(iter(_TAKES)))


def spare_matrices(scene, rig, key):
    """The matrices of this rig's kept take when it has ``key`` but is about to be sampled again, else None.

    The take is dropped (its motion no longer holds) and its array is handed to the new
    sampling to write over: for a big take, memory the process already holds is much cheaper
    than new memory (see :class:`..rig.sampling.PoseSampling`).
    """
    take = _TAKES.get(_slot(scene, rig))
    if take is None or take.key != key:
        return None
    _TAKES.pop(_slot(scene, rig))
    return take.matrices


def kept(scene, rig):
    """This rig's kept take, or None."""
    return _TAKES.get(_slot(scene, rig))


def restamp(scene, rig, fingerprint):
    """Give the kept take the fingerprint the file has now.

    Called right after a bake is written: writing its layer may move the
    animator's action onto an NLA track of its own, which plays the same motion
    but reads differently.
    """
    take = _TAKES.get(_slot(scene, rig))
    if take is not None:
        take.fingerprint = fingerprint


def forget(scene=None, rig=None):
    """Drop the take of one rig, or every take (no arguments)."""
    if scene is None or rig is None:
        _TAKES.clear()
    else:
        _TAKES.pop(_slot(scene, rig), None)


def timed_sampling(sampling, seconds):
    """Step ``sampling`` until it is finished or ``seconds`` have passed; returns the time spent [s]."""
    start = time.perf_counter()
    chunk = 8
    while not sampling.finished:
        sampling.step(chunk)
        spent = time.perf_counter() - start
        if seconds is not None and spent >= seconds:
            break
        chunk = min(chunk * 2, 256)
    return time.perf_counter() - start
