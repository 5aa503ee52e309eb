"""The scene's units: its true frame rate, metres per Blender unit, and gravity as the core reads it.

Blender lengths become metres with ``unit_settings.scale_length``; the scene's true frame rate
is ``fps / fps_base``.
"""

import numpy as np

from ..core.base.constants import GRAVITY_PRESETS


def scene_fps(scene):
    """The scene's true frame rate [frames/s]."""
    return scene.render.fps / scene.render.fps_base


def metres_per_unit(scene):
    """Metres per Blender unit [m/BU]."""
    return scene.unit_settings.scale_length


def exact_gravity(stored):
    """The preset gravity [m/s^2] a float32 panel value stands for, else the value itself.

    Blender keeps float properties in single precision, so 9.80665 comes back as
    9.8066502; the core recognises standard gravity by exact value.
    """
    for value in GRAVITY_PRESETS.values():
        if np.float32(value) == np.float32(stored):
            return value
    return float(stored)
