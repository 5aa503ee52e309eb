"""Write whole F-curves at once.

``keyframe_points.add`` plus ``foreach_set`` and one ``update``: inserting keys
one by one grows quadratically with a curve's length. Handles are FREE so they
stay where they are put: a cubic Bezier segment whose handles sit at 1/3 and
2/3 of the interval on the end tangents is the cubic Hermite segment itself,
so a parabola (a flight arc) is reproduced exactly.
"""

import numpy as np

#: Keyframe.interpolation as the integers foreach_set takes.
INTERPOLATION = {"CONSTANT": 0, "LINEAR": 1, "BEZIER": 2}
_FREE = 0


def handle_positions(frames, values, slopes):
    """Bezier handles of cubic Hermite keys.

    Parameters
    ----------
    frames : array (n,)
        Key times [frame], increasing.
    values : array (n,)
        Key values [channel units].
    slopes : array (n,)
        Slopes at the keys [channel units / frame].

    Returns
    -------
    left, right : arrays (n, 2)
        (frame, value) of each key's left and right handle: a third of the
        neighbouring interval along the tangent (the end keys mirror their only
        interval).
    """
    f = np.asarray(frames, dtype=float)
    v = np.asarray(values, dtype=float)
    s = np.asarray(slopes, dtype=float)
    gaps = np.diff(f) if f.size > 1 else np.ones(1)
    prev_gap = np.empty(f.size)
    prev_gap[0], prev_gap[1:] = gaps[0], gaps
    next_gap = np.empty(f.size)
    next_gap[-1], next_gap[:-1] = gaps[-1], gaps
    prev_gap /= 3.0
    next_gap /= 3.0
    left, right = np.empty((f.size, 2)), np.empty((f.size, 2))
    left[:, 0], left[:, 1] = f - prev_gap, v - s * prev_gap
    right[:, 0], right[:, 1] = f + next_gap, v + s * next_gap
    return left, right


def write_curve(fcurve, frames, values, slopes=None, interpolation="BEZIER", in_place=False):
    """Replace every key of ``fcurve`` by the given keys, in one bulk write.

    Parameters
    ----------
    fcurve : bpy.types.FCurve
    frames : array (n,)
        Key times [frame], strictly increasing.
    values : array (n,)
        Key values [channel units].
    slopes : array (n,) or None
        Tangents [channel units / frame] for ``'BEZIER'``; None gives flat FREE
        handles there, and Blender's automatic handles (which they ignore) on
        ``'CONSTANT'`` and ``'LINEAR'`` keys.
    interpolation : {'BEZIER', 'LINEAR', 'CONSTANT'}
    in_place : bool
        When the curve already has ``n`` keys, overwrite their times, values and
        interpolation where they are instead of making new keys (for curves that
        only this add-on writes: other key settings are kept).
    """
    f = np.asarray(frames, dtype=float)
    v = np.asarray(values, dtype=float)
    n = f.size
    points = fcurve.keyframe_points
    if not in_place or len(points) != n:
        if len(points):
            points.clear()
        points.add(n)
        in_place = False
    co = np.empty((n, 2), dtype=np.float32)
    co[:, 0], co[:, 1] = f, v
    points.foreach_set("co", co.ravel())
    wanted = np.full(n, INTERPOLATION[interpolation], dtype=np.int32)
    already = False
    if in_place:
        # reading is cheaper than writing: a re-bake usually keeps its interpolation
        held = np.empty(n, dtype=np.int32)
        points.foreach_get("interpolation", held)
        already = np.array_equal(held, wanted)
    if not already:
        points.foreach_set("interpolation", wanted)
    if slopes is not None or interpolation == "BEZIER":
        # handles only shape Bezier segments; others keep Blender's automatic ones
        left, right = handle_positions(f, v, np.zeros(n) if slopes is None else slopes)
        points.foreach_set("handle_left", left.astype(np.float32).ravel())
        points.foreach_set("handle_right", right.astype(np.float32).ravel())
        free = np.full(n, _FREE, dtype=np.int32)
        points.foreach_set("handle_left_type", free)
        points.foreach_set("handle_right_type", free)
    fcurve.update()


def read_keys(fcurve, names=None):
    """Every key attribute of ``fcurve`` (or those in ``names``) as arrays, for byte-exact comparisons.

    Returns
    -------
    dict of str -> numpy array
    """
    points = fcurve.keyframe_points
    n = len(points)
    out = {}
    for name, width, dtype in KEY_FIELDS:
        if names is not None and name not in names:
            continue
        buf = np.zeros(n * width, dtype=dtype)
        points.foreach_get(name, buf)
        out[name] = buf
    return out


def restore_keys(fcurve, keys):
    """Write back what :func:`read_keys` returned, attribute for attribute."""
    points = fcurve.keyframe_points
    if len(points):
        points.clear()
    n = len(keys["co"]) // 2
    points.add(n)
    for name, _width, dtype in KEY_FIELDS:
        points.foreach_set(name, np.asarray(keys[name], dtype=dtype))
    fcurve.update()


# Keyframe attributes that foreach_get/foreach_set carry (enums as integers).
KEY_FIELDS = (
    ("co", 2, np.float32),
    ("handle_left", 2, np.float32),
    ("handle_right", 2, np.float32),
    ("interpolation", 1, np.int32),
    ("handle_left_type", 1, np.int32),
    ("handle_right_type", 1, np.int32),
    ("easing", 1, np.int32),
    ("type", 1, np.int32),
    ("back", 1, np.float32),
    ("amplitude", 1, np.float32),
    ("period", 1, np.float32),
    ("select_control_point", 1, np.bool_),
    ("select_left_handle", 1, np.bool_),
    ("select_right_handle", 1, np.bool_),
)
