"""The chains simulated against the body's capsules and the ground.

The core keeps every simulated bone's tip out of one set of capsules. A chain
attached to the body touches the part it hangs from, so each chain gets its own
radii (:func:`..core.rig.capsules.chain_radii`); chains with the same radii are
simulated together, each group in one call of the core, and the results put back
in the bake's bone order. Chains do not act on each other, so splitting them
changes nothing but the call count.
"""

import numpy as np

from ..core.follow_through.chains import ChainBake, Colliders, bake_motion, chain_motion, drive_options


def _group_parents(parents, members):
    where = {b: i for i, b in enumerate(members)}
    return [where[parents[b]] if parents[b] >= 0 else -1 for b in members]


def _colliders(body, radii, members):
    keep = np.nonzero(radii > 0.0)[0]
    lengths = body["lengths"][members]
    if keep.size == 0:
        return Colliders(ground=body["ground"], lengths=lengths)
    return Colliders(starts=body["starts"][:, keep], ends=body["ends"][:, keep], radii=radii[keep],
                     ground=body["ground"], lengths=lengths)


def bake_prepared(motions, times, heads, rotations, parents, parameters, gravity, options, colliders=None,
                  members=None):
    """The core's ``bake_chains`` of the bones ``members`` (all when None), with the drive made from
    the motion kept in ``motions`` (a dict this fills): baking the same motion again with other chain
    settings only simulates."""
    key = (None if members is None else tuple(members), drive_options(options))
    motion = motions.get(key)
    if motion is None:
        pick = slice(None) if members is None else list(members)
        chosen = parents if members is None else _group_parents(parents, members)
        motion = motions[key] = chain_motion(times, heads[:, pick], rotations[:, pick], chosen, gravity, options)
    return bake_motion(motion, parameters, colliders, options)


def bake_kept_out(times, heads, rotations, parents, parameters, gravity, options, body, motions=None):
    """The core's ``bake_chains`` with each chain kept out of the body and above the ground.

    Parameters
    ----------
    times, heads, rotations, parents, parameters, gravity, options
        As ``bake_chains`` takes them (one set of parameters for all bones).
    body : dict
        ``starts``, ``ends`` (F, K, 3) capsule segments [m]; ``chains``: list of bone-index lists;
        ``radii``: one (K,) array per chain [m] (0 leaves a part out); ``ground`` [m] or None;
        ``lengths`` (B,) bone lengths [m].
    motions : dict, optional
        Drive kept between bakes of the same motion (:func:`bake_prepared`); None keeps none.

    Returns
    -------
    ChainBake
        In the order of the bones given.
    """
    heads, rotations = np.asarray(heads, float), np.asarray(rotations, float)
    groups = {}
    for members, radii in zip(body["chains"], body["radii"]):
        groups.setdefault(tuple(np.round(radii, 9)), []).extend(members)
    parts = []
    motions = {} if motions is None else motions
    for radii, members in groups.items():
        members = sorted(members)
        result = bake_prepared(motions, times, heads, rotations, parents, parameters, gravity, options,
                               _colliders(body, np.array(radii), members), members)
        parts.append((members, result))
    if len(parts) == 1 and parts[0][0] == list(range(heads.shape[1])):
        return parts[0][1]
    return _merged(parts, heads.shape[1])


def _merged(parts, bones):
    first = parts[0][1]
    frames = first.times.size

    def gather(field, shape, dtype=float):
        out = np.zeros((frames, bones) + shape, dtype=dtype)
        for members, result in parts:
            out[:, members] = getattr(result, field)
        return out
    peaks = np.zeros(bones)
    for members, result in parts:
        peaks[members] = result.peak_offsets
    return ChainBake(times=first.times, rotvecs=gather("rotvecs", (3,)), quaternions=gather("quaternions", (4,)),
                     world_offsets=gather("world_offsets", (3,)), key_mask=gather("key_mask", (), bool),
                     stepped=first.stepped, peak_offsets=peaks,
                     cyclic_mismatch=max(r.cyclic_mismatch for _, r in parts),
                     passes=max(r.passes for _, r in parts))
