"""Re-write a layer's keys in place when a new bake has the same channels and range.

Animators re-bake over and over while they tune a preset. Taking the old layer
apart (its NLA track, its action, the pushed-down user action) and building it
again costs more than writing the keys themselves; when the new curves are the
same channels over the same frames, only the key values change, so they are
written into the existing F-curves. Anything else (other channels, another range,
a layer edited by hand into more strips, or its strip moved, scaled or repeated)
goes the long way: clear, then write.
"""

import numpy as np

from . import compat as compat
from . import ownership
from .key_writer import write_curve


def _layer_track(obj, capability):
    """The capability's track when it has one strip playing its action where it was written, or None."""
    if capability not in ownership.load_state(obj).get("layers", []):
        return None
    track = ownership.layer_track(obj, capability)
    if track is None or len(track.strips) != 1:
        return None
    strip = track.strips[0]
    action = strip.action
    if action is None or strip.scale != 1.0 or strip.repeat != 1.0 \
            or abs(strip.frame_start - action.frame_range[0]) > 1e-6:
        return None  # the strip no longer plays the action where it was written
    return track


def rewrite_in_place(obj, capability, specs):
    """Write ``specs`` into the existing layer of ``capability``; False (nothing written) if it does not fit.

    Parameters
    ----------
    obj : bpy.types.Object
    capability : str
    specs : sequence of CurveSpec
        The new curves, each with at least one key.

    Returns
    -------
    bool
        True when every curve was re-written in place.
    """
    track = _layer_track(obj, capability) if specs else None
    if track is None:
        return False
    action = track.strips[0].action
    curves = {(fc.data_path, fc.array_index): fc for fc in compat.fcurves(action, obj)}
    if set(curves) != {(s.data_path, s.index) for s in specs}:
        return False
    first = min(float(s.frames[0]) for s in specs)
    last = max(float(s.frames[-1]) for s in specs)
    if not np.allclose(tuple(action.frame_range), (first, last)):
        return False  # the strip would have to move: build it again
    for spec in specs:
        write_curve(curves[(spec.data_path, spec.index)], spec.frames, spec.values, spec.slopes, spec.interpolation,
                    in_place=True)
    track.mute = False  # a bake is shown, as a rebuilt layer is
    return True
