"""Thinning baked deltas into keys: holding on twos and dropping keys within a tolerance."""

import numpy as np


def hold_on_twos(rotvecs, quats, segments):
    """Hold every other sample of each segment for two samples.

    Parameters
    ----------
    rotvecs : numpy.ndarray, shape (F, B, 3)
        [rad]
    quats : numpy.ndarray, shape (F, B, 4)
    segments : list of (int, int)
        Sample ranges between resets; each range restarts the count.

    Returns
    -------
    rotvecs, quats : numpy.ndarray
        With odd samples (counted from each range's start) set to the one before.
    mask : numpy.ndarray of bool, shape (F, B)
        True on the held (keyed) samples.
    """
    frames, bones = quats.shape[:2]
    source = np.arange(frames)
    for lo, hi in segments:
        source[lo:hi] = lo + ((np.arange(lo, hi) - lo) // 2) * 2
    mask = np.broadcast_to((source == np.arange(frames))[:, None], (frames, bones)).copy()
    return rotvecs[source], quats[source], mask


def _angle_between(q, r):
    """Rotation angle [rad] from unit quaternions ``q`` to ``r`` (..., 4)."""
    dot = np.clip(np.abs(np.sum(q * r, axis=-1)), 0.0, 1.0)
    return 2.0 * np.arccos(dot)


def reduce_keys(quats, tolerance, mask, stepped, segments):
    """Keys to keep so that interpolating them stays within ``tolerance`` of every sample.

    With ``stepped`` the keys hold (constant interpolation) and a key is dropped when
    it is within ``tolerance`` of the last kept one. Otherwise the error is measured
    under linear interpolation of the quaternion components between kept keys,
    normalised (what per-channel linear F-curves give), and keys are added where the
    error is largest, per interval, until every sample is within the tolerance (a
    Ramer-Douglas-Peucker split). Each segment's first and last key always stay.

    Parameters
    ----------
    quats : numpy.ndarray, shape (F, B, 4)
    tolerance : float
        Largest rotation error allowed [rad].
    mask : numpy.ndarray of bool, shape (F, B)
        Samples that may be keyed (the others are holds on twos).
    stepped : bool
    segments : list of (int, int)

    Returns
    -------
    numpy.ndarray of bool, shape (F, B)

    References
    ----------
    Douglas, D. H. & Peucker, T. K. 1973, "Algorithms for the reduction of the number
    of points required to represent a digitized line or its caricature",
    Cartographica 10(2):112-122.
    """
    frames, bones = quats.shape[:2]
    kept = np.zeros((frames, bones), dtype=bool)
    for lo, hi in segments:
        kept[lo] = mask[lo]
        last = lo + np.max(np.nonzero(mask[lo:hi].any(axis=1))[0])
        kept[last] = mask[last]
    if stepped:
        for lo, hi in segments:
            ref = quats[lo].copy()
            for f in range(lo + 1, hi):
                take = mask[f] & (_angle_between(ref, quats[f]) > tolerance)
                kept[f] |= take
                ref[take] = quats[f][take]
        return kept
    index = np.arange(frames)[:, None]
    bone = np.broadcast_to(np.arange(bones), (frames, bones))
    while True:
        prev = np.maximum.accumulate(np.where(kept, index, 0), axis=0)
        nxt = np.flip(np.minimum.accumulate(np.flip(np.where(kept, index, frames - 1), axis=0), axis=0), axis=0)
        span = np.maximum(nxt - prev, 1)
        s = ((index - prev) / span)[..., None]
        qa = np.take_along_axis(quats, prev[..., None], axis=0)
        qb = np.take_along_axis(quats, nxt[..., None], axis=0)
        qb = np.where(np.sum(qa * qb, axis=-1, keepdims=True) < 0.0, -qb, qb)
        interp = (1.0 - s) * qa + s * qb
        interp /= np.linalg.norm(interp, axis=-1, keepdims=True)
        error = np.where(mask & ~kept, _angle_between(interp, quats), -1.0)
        interval = np.cumsum(kept, axis=0)
        order = np.lexsort((-error.ravel(), interval.ravel(), bone.ravel()))
        group = bone.ravel()[order] * (frames + 1) + interval.ravel()[order]
        first = np.ones(len(order), dtype=bool)
        first[1:] = group[1:] != group[:-1]
        worst = order[first]
        worst = worst[error.ravel()[worst] > tolerance]
        if len(worst) == 0:
            return kept
        kept.flat[worst] = True
