"""Affine recurrences ``X_{f+1} = M_f X_f + C_f`` over a whole range, few steps in Python.

The maps of consecutive intervals are composed in pairs a few times over
(Kogge & Stone's recursive doubling); only the coarsest level runs frame by frame,
and each finer level is filled in by one batched step from the coarse states.
A periodic run (the last state equals the first) solves for its start with the
product of all maps, the monodromy matrix.

References
----------
Kogge, P. M. & Stone, H. S. 1973, "A parallel algorithm for the efficient solution
of a general class of recurrence equations", IEEE Trans. Computers C-22(8):786-793.
"""

import numpy as np

__all__ = ["compose_pairs", "run_affine", "periodic_start"]


def compose_pairs(m, levels):
    """Maps of pairs, quadruples, ... of consecutive intervals: list of (M, kept count)."""
    out = [m]
    for _ in range(levels):
        cur = out[-1]
        if len(cur) < 4:
            break
        pairs = len(cur) // 2
        out.append(cur[1:2 * pairs:2] @ cur[0:2 * pairs:2])
    return out


def run_affine(maps, forces, start):
    """States after every interval of ``X_{f+1} = M_f X_f + C_f`` from ``start``.

    ``maps`` from :func:`compose_pairs`; ``forces`` (S-1, trees, 2n, 3).
    Returns (S, trees, 2n, 3).
    """
    levels = [forces]
    for lvl in range(1, len(maps)):
        cur, m = levels[-1], maps[lvl - 1]
        pairs = len(cur) // 2
        levels.append(m[1:2 * pairs:2] @ cur[0:2 * pairs:2] + cur[1:2 * pairs:2])
    # the coarsest level frame by frame
    m, c = maps[-1], levels[-1]
    states = np.empty((len(c) + 1,) + start.shape)
    states[0] = start
    x = start
    for f in range(len(c)):
        x = m[f] @ x + c[f]
        states[f + 1] = x
    # refine: a coarse state at every other fine node, the rest one fine step on
    for lvl in range(len(maps) - 2, -1, -1):
        m, c = maps[lvl], levels[lvl]
        fine = np.empty((len(c) + 1,) + start.shape)
        coarse = len(states) - 1
        fine[0:2 * coarse + 1:2] = states
        fine[1:2 * coarse:2] = m[0:2 * coarse:2] @ states[:-1] + c[0:2 * coarse:2]
        for f in range(2 * coarse, len(c)):  # an odd interval left over
            fine[f + 1] = m[f] @ fine[f] + c[f]
        states = fine
    return states


def periodic_start(maps, forces, shape):
    """State at the first sample whose run returns to itself (linear part exact)."""
    total = np.broadcast_to(np.eye(shape[-2]), shape[:-1] + (shape[-2],))
    for lvl_map in maps[-1]:
        total = lvl_map @ total
    end = run_affine(maps, forces, np.zeros(shape))[-1]
    # in the order the run takes them: the coarse level, then each finer level's odd
    # interval left over at its end
    for lvl in range(len(maps) - 2, -1, -1):
        coarse = (len(maps[lvl]) // 2) * 2
        for f in range(coarse, len(maps[lvl])):
            total = maps[lvl][f] @ total
    eye = np.eye(shape[-2])
    try:
        return np.linalg.solve(eye - total, end)
    except np.linalg.LinAlgError:  # an undamped mode in resonance: the least-squares loop
        return np.stack([np.linalg.lstsq(eye - t, e, rcond=None)[0] for t, e in zip(total, end)])
