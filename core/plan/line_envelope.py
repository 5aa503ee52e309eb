"""The lowest point of the upper envelope of lines, row by row, exactly.

For a stretch of fixed durations (:mod:`.shape_search`) every sample's
acceleration is a line in the bottom acceleration a_b; the peak is their upper
envelope, convex and piecewise linear, and the least peak its minimum over the
feasible interval of a_b. Many rows (durations) are solved at once.
"""

import numpy as np


def _highest_line(alpha, beta, x):
    """Index and value of the highest line in each row at ``x`` (n,)."""
    values = alpha + beta * x[:, None]
    k = values.argmax(axis=1)
    return k, values[np.arange(alpha.shape[0]), k]


def _on_top(v, model):
    """Whether the highest value ``v`` is no higher than the pair's own ``model`` (to rounding)."""
    return v <= model + 1e-12 * np.maximum(1.0, np.abs(model))


def _clipped(x, lo, hi):
    """``x`` held inside ``[lo, hi]`` in place (np.clip's own checks cost more than the work here)."""
    np.minimum(x, hi, out=x)
    return np.maximum(x, lo, out=x)


def lowest_envelope(alpha, beta, lo, hi, hint=None, passes=60):
    """Minimum over x in [lo, hi] of max_i(alpha_i + beta_i x), row by row, exactly.

    Parameters
    ----------
    alpha : ndarray (n, m)
        Line offsets; ``beta`` (m,) their slopes, shared by every row.
    lo, hi : ndarray (n,)
        The interval of each row.
    hint : sequence of (int, int), optional
        (falling, rising) line pairs likely to cross at the minimum, tried first in turn.

    Returns
    -------
    (x, value, pairs) : ndarrays (n,) and the distinct (falling, rising) pairs that crossed at
    a row's minimum (the next batch's hint: neighbouring durations share their active pairs)

    Notes
    -----
    The envelope is convex and piecewise linear. Keep a bracket whose left end
    has a falling highest line and right end a rising one; the two lines cross
    at the envelope's minimum unless another line is higher there, which then
    replaces the bracket end on its side. Each pass removes at least one corner.
    A hinted pair is accepted only where its crossing passes the same test, so a
    hint changes the work, never the answer.
    """
    n = alpha.shape[0]
    x, value = np.empty(n), np.empty(n)
    todo = np.arange(n)
    used = []
    for i, j in hint or ():
        if not todo.size:
            break
        rows, a, b = alpha[todo], lo[todo], hi[todo]
        cross = (rows[:, i] - rows[:, j]) / (beta[j] - beta[i])
        _, v = _highest_line(rows, beta, _clipped(cross.copy(), a, b))
        done = (cross > a) & (cross < b) & _on_top(v, rows[:, j] + beta[j] * cross)
        if done.any():
            x[todo[done]], value[todo[done]] = cross[done], v[done]
            used.append((i, j))
            todo = todo[~done]
    if todo.size:
        x[todo], value[todo], found = _lowest_envelope_rows(alpha[todo], beta, lo[todo], hi[todo], passes)
        used += [pair for pair in found if pair not in used]
    return x, value, used[:_HINT_PAIRS]


#: Pairs kept as the next batch's hint (a bracket around one crossing of two quadratics has two).
_HINT_PAIRS = 3


def _lowest_envelope_rows(alpha, beta, lo, hi, passes):
    """:func:`lowest_envelope` from the interval ends, without a hint; also the pairs found, most used first."""
    k_lo, v_lo = _highest_line(alpha, beta, lo)
    k_hi, v_hi = _highest_line(alpha, beta, hi)
    x, value = lo.copy(), v_lo.copy()
    at_hi = (beta[k_hi] <= 0.0) & (beta[k_lo] < 0.0)  # falling all the way: the minimum is at hi
    x[at_hi], value[at_hi] = hi[at_hi], v_hi[at_hi]
    idx = np.flatnonzero((beta[k_lo] < 0.0) & (beta[k_hi] > 0.0))
    a, b, i, j = lo[idx], hi[idx], k_lo[idx], k_hi[idx]
    counts = {}
    rows = alpha[idx]
    m = rows.shape[1]
    for _ in range(passes):
        if not idx.size:
            break
        base = np.arange(0, idx.size * m, m)  # each row's start in the flat table
        flat = rows.ravel()
        aj, bj = flat[base + j], beta[j]
        cross = _clipped((flat[base + i] - aj) / (bj - beta[i]), a, b)
        values = rows + beta * cross[:, None]
        k = values.argmax(axis=1)
        top, bk = values.ravel()[base + k], beta[k]
        done = _on_top(top, aj + bj * cross) | (bk == 0.0)
        rising = bk > 0.0
        if done.any():
            x[idx[done]], value[idx[done]] = cross[done], top[done]
            for pair in zip(i[done].tolist(), j[done].tolist()):
                counts[pair] = counts.get(pair, 0) + 1
            keep = ~done  # carry on with the rows left only
            idx, rows, cross, k, rising = idx[keep], rows[keep], cross[keep], k[keep], rising[keep]
            a, b, i, j = a[keep], b[keep], i[keep], j[keep]
        b, j = np.where(rising, cross, b), np.where(rising, k, j)
        a, i = np.where(rising, a, cross), np.where(rising, i, k)
    return x, value, sorted(counts, key=counts.get, reverse=True)
