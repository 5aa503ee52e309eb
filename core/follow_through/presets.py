"""Starting values for common trailing parts: a small frozen table by name, and
parameters from a physical description (hair length, a tail's taper, a fabric's
weight) through the hanging chain's first mode (:mod:`.hanging_chains`).

The table's values are from memory or common practice, not measured: a starting
point to tune by eye. The reasoning sits beside each entry.
"""

import math
from types import MappingProxyType


from ..base.errors import InvalidGoalError
from .hanging_chains import BESSEL_J0_FIRST_ZERO, hanging_frequency, tapered_hanging_frequency
from .parameters import ChainParameters

__all__ = ["BESSEL_J0_FIRST_ZERO", "CHAIN_PRESETS", "REFERENCE_FABRIC_DENSITY", "chain_preset", "hair_parameters",
           "hanging_frequency", "skirt_parameters", "tail_parameters"]

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


#: Areal density of a mid-weight dress fabric [kg/m^2] (200 g/m^2, common practice) at
#: which the "cloth" preset's damping ratio 0.45 and transmission 0.85 apply.
REFERENCE_FABRIC_DENSITY = 0.200


def _spring_frequency(first_mode, sag):
    """Spring-alone frequency [Hz] whose bone, hanging, swings at ``first_mode`` [Hz]: a
    hanging bone's rate is omega_n^2 + g/l = omega_n^2 (1 + sag) (its swing length
    l = g0 / (sag omega_n^2), :mod:`.chains`), so omega_n = omega_1 / sqrt(1 + sag)."""
    return first_mode / math.sqrt(1.0 + sag)


def _positive(name, value, unit, example):
    try:
        value = float(value)
    except (TypeError, ValueError):
        value = math.nan
    if not (value > 0.0 and math.isfinite(value)):
        raise InvalidGoalError(f"{name} must be a positive number of {unit}, got {value!r}; e.g. {example}")
    return value


def _sag(sag, example):
    sag = _positive("sag", sag, "radians", example)
    if sag >= math.pi / 2:
        raise InvalidGoalError(f"sag must be below pi/2 rad (90 deg), got {sag:g} rad; e.g. {example}")
    return sag


def hair_parameters(length, sag=math.radians(20.0), damping_ratio=0.25):
    """Parameters of hair or a ponytail of ``length`` [m] hanging from the head.

    The frequency is set so a hanging bone swings like the hanging chain's first mode,
    ``f = (2.4048 / 2) sqrt(g / L) / (2 pi) / sqrt(1 + sag)`` (textbook hanging-chain
    result, :func:`.hanging_chains.hanging_frequency`); ``sag`` [rad] says how limp it
    is (how far a lock held level bends under its weight), ``damping_ratio`` the air and
    strand friction (0.25: from memory). Angle limit and transmission are the "hair"
    preset's.

    Returns
    -------
    ChainParameters
    """
    length = _positive("length", length, "metres", "0.25 for a shoulder-length ponytail")
    sag = _sag(sag, "0.35 (20 deg) for hair")
    preset = chain_preset("hair")
    return ChainParameters(_spring_frequency(hanging_frequency(length), sag), damping_ratio, sag, preset.angle_limit,
                           preset.transmission)


def tail_parameters(length, bones, tip_mass_ratio=0.2, sag=math.radians(10.0), damping_ratio=0.2):
    """Per-bone parameters of a tail of ``length`` [m] in ``bones`` bones, tapering so its
    mass per length at the tip is ``tip_mass_ratio`` of the root's.

    The tail is a cone: radius linear along it, mass per length as radius squared (solid
    geometry). A lighter tip hangs under less tension below it but also has less mass
    to move, and the taper's first mode is faster than a uniform chain's
    (:func:`.hanging_chains.tapered_hanging_frequency`); each bone swings at it, held
    by its small ``sag`` (10 deg: common practice, tails are carried). The bake's
    chains are single-link (every bone carries its own weight), so the taper enters
    through the frequency, the same for every bone.

    Returns
    -------
    list of ChainParameters, root first
    """
    length = _positive("length", length, "metres", "0.6 for a cat-sized tail")
    count = _positive("bones", bones, "bones", "5")
    if count != int(count):
        raise InvalidGoalError(f"bones must be a whole number, got {bones!r}; e.g. 5")
    ratio = _positive("tip_mass_ratio", tip_mass_ratio, "(tip mass over root mass)", "0.2")
    sag = _sag(sag, "0.17 (10 deg) for a tail")
    taper = 1.0 - math.sqrt(ratio)
    first_mode = tapered_hanging_frequency(length, lambda s: (1.0 - taper * s) ** 2)
    preset = chain_preset("tail")
    one = ChainParameters(_spring_frequency(first_mode, sag), damping_ratio, sag, preset.angle_limit, preset.transmission)
    return [one] * int(count)


def skirt_parameters(length, fabric_density, sag=math.radians(25.0)):
    """Parameters of a skirt, cape or panel of ``length`` [m] in a fabric of
    ``fabric_density`` [kg/m^2] (e.g. 0.1 for voile, 0.2 for a dress fabric, 0.4 for
    denim).

    A hanging panel is a hanging chain, so its first mode does not depend on its weight
    (textbook hanging-chain result). What the weight changes is how much the air holds
    it back against its inertia: air drag per unit area is the same for any fabric, so
    the damping ratio goes as one over the areal density (drag over mass), 0.45 at
    200 g/m^2 (the "cloth" preset, from memory), kept within 0.1-1.5; a lighter fabric
    also trails in the air more than it follows its seam (transmission
    ``rho / (rho + 35 g/m^2)``, 0.85 at 200 g/m^2, from memory).

    Returns
    -------
    ChainParameters
    """
    length = _positive("length", length, "metres", "0.5 for a knee-length skirt")
    density = _positive("fabric_density", fabric_density, "kg per square metre", "0.2 for a dress fabric")
    sag = _sag(sag, "0.44 (25 deg) for cloth")
    preset = chain_preset("cloth")
    zeta = min(1.5, max(0.1, 0.45 * REFERENCE_FABRIC_DENSITY / density))
    transmission = density / (density + 0.035)
    return ChainParameters(_spring_frequency(hanging_frequency(length), sag), zeta, sag, preset.angle_limit, transmission)
