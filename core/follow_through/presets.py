"""A small frozen table of starting values for common trailing parts.

Every value is from memory or common practice, not measured: a starting point to
tune by eye. The reasoning sits beside each entry.
"""

import math
from types import MappingProxyType

from .parameters import ChainParameters
from ..base.errors import InvalidGoalError

CHAIN_PRESETS = MappingProxyType(
    {
        # A ponytail or long strands: a 0.15-0.3 m hanging length swings at ~1-1.3 Hz
        # as a pendulum (2 pi sqrt(L/g)); hair is light and lively, damped a little by
        # air and strand friction, and bends visibly under its weight (from memory).
        "hair": ChainParameters(frequency=1.5, damping_ratio=0.25, sag=math.radians(20.0),
                                angle_limit=math.radians(80.0), transmission=1.0),
        # Skirt, cape or loose sleeve panels: softer and more damped than hair (air drag
        # on a large area), hanging with more sag; panels rarely fold past ~60 deg
        # (from memory).
        "cloth": ChainParameters(frequency=1.2, damping_ratio=0.45, sag=math.radians(25.0),
                                 angle_limit=math.radians(60.0), transmission=0.85),
        # An animal or costume tail: muscular or stuffed, so stiffer and carried, with
        # low damping for a visible whip toward the tip (common practice: tails overlap
        # strongly in follow-through).
        "tail": ChainParameters(frequency=2.0, damping_ratio=0.2, sag=math.radians(10.0),
                                angle_limit=math.radians(75.0), transmission=1.0),
        # A heavy strapped prop (bag, sword in scabbard, lantern): held close by straps,
        # moves late and little, settles fast (from memory).
        "heavy prop": ChainParameters(frequency=2.5, damping_ratio=0.5, sag=math.radians(6.0),
                                      angle_limit=math.radians(35.0), transmission=1.0),
    }
)


def chain_preset(name):
    """The :class:`ChainParameters` of a preset by name (case and ``_`` ignored).

    Raises
    ------
    InvalidGoalError
        For an unknown name, listing the known ones.
    """
    key = str(name).strip().lower().replace("_", " ")
    if key not in CHAIN_PRESETS:
        raise InvalidGoalError(f"unknown chain preset {name!r}; choose one of {', '.join(sorted(CHAIN_PRESETS))}")
    return CHAIN_PRESETS[key]
