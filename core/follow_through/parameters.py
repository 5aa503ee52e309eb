"""Parameters of a simulated bone: the animator's set and the physical one it maps to."""

import math
from dataclasses import dataclass

import numpy as np

from ..base.constants import STANDARD_GRAVITY
from ..base.errors import InvalidGoalError, require_finite

#: Highest natural frequency accepted [Hz]: hundreds of times any frame rate, far
#: past where a spring looks rigid; it only keeps the step's matrix exponential
#: within double precision.
CHAIN_MAX_FREQUENCY = 1000.0
#: Highest damping ratio accepted [-]: a hundred times critical damping.
CHAIN_MAX_DAMPING_RATIO = 100.0
#: Highest damping rate accepted [1/s] (zeta = 1 at 1000 Hz is 12,566 1/s).
CHAIN_MAX_DAMPING_RATE = 1.0e7


@dataclass(frozen=True)
class ChainParameters:
    """Behaviour of a bone, defined by what it does on its own.

    Parameters
    ----------
    frequency : float
        Natural frequency f_n of the spring alone, gravity off [Hz]; > 0.
    damping_ratio : float
        Damping ratio zeta of the spring alone [-]; >= 0 (1 is critical).
    sag : float
        Static bend at standard gravity, standing still, of a bone held
        horizontal, from its unloaded shape [rad]; 0 <= sag < pi/2.
    angle_limit : float
        Largest bend of the joint away from its animated rotation [rad]; (0, pi].
    transmission : float
        Share of the joint's damping that acts across the joint (against the
        parent's swing rate) rather than against the world [-]; 0 to 1.
    mass : float
        Mass of the bone [kg, or any unit shared along the chain: only the ratios
        within a chain matter]; >= 0. It sets how hard a bone pulls on its parent.
    """

    frequency: float
    damping_ratio: float
    sag: float
    angle_limit: float = math.radians(90.0)
    transmission: float = 1.0
    mass: float = 1.0

    def coefficients(self):
        """The physical :class:`LinkCoefficients`, after checking every value.

        Raises
        ------
        InvalidGoalError
            Naming the value and the range it must be in.
        """
        f = require_finite("frequency", self.frequency, positive=True, unit=" Hz")
        if f > CHAIN_MAX_FREQUENCY:
            raise InvalidGoalError(
                f"frequency {f:g} Hz is above {CHAIN_MAX_FREQUENCY:g} Hz; a spring that stiff is rigid at any "
                "frame rate: give a lower frequency or leave the bone out"
            )
        zeta = require_finite("damping_ratio", self.damping_ratio, non_negative=True)
        if zeta > CHAIN_MAX_DAMPING_RATIO:
            raise InvalidGoalError(
                f"damping_ratio {zeta:g} is above {CHAIN_MAX_DAMPING_RATIO:g}; past a few times critical (1) a bone barely "
                "moves: give e.g. 0.1-1"
            )
        sag = require_finite("sag", self.sag, non_negative=True, unit=" rad")
        if sag >= math.pi / 2:
            raise InvalidGoalError(
                f"sag must be below pi/2 rad (90 deg), got {sag:g} rad ({math.degrees(sag):g} deg); a bone cannot bend "
                "past square to its unloaded shape: give e.g. 0.35 rad (20 deg)"
            )
        omega = 2.0 * math.pi * f
        return LinkCoefficients(
            spring_rate=omega * omega,
            damping_rate=2.0 * zeta * omega,
            gravity_gain=sag * omega * omega / STANDARD_GRAVITY,
            angle_limit=self.angle_limit,
            transmission=self.transmission,
            mass=self.mass,
        ).coefficients()


@dataclass(frozen=True)
class LinkCoefficients:
    """Physical coefficients of a bone, per unit of its inertia.

    Use directly for a pure pendulum (``spring_rate = 0``) or values measured
    elsewhere; :meth:`ChainParameters.coefficients` builds them from the
    animator's set.

    Parameters
    ----------
    spring_rate : float
        Spring stiffness over inertia, omega_n^2 [1/s^2]; >= 0.
    damping_rate : float
        Damper over inertia, 2 zeta omega_n [1/s]; >= 0.
    gravity_gain : float
        Inverse swing length 1/l [1/m]: the gravity-only (pendulum) angular
        frequency is sqrt(g * gravity_gain); >= 0.
    angle_limit : float
        Largest joint bend away from the animated rotation [rad]; (0, pi].
    transmission : float
        Share of the damping acting across the joint rather than against the
        world [-]; 0 to 1.
    mass : float
        Mass of the bone's bob [relative: only ratios within a chain matter]; >= 0.
    """

    spring_rate: float
    damping_rate: float
    gravity_gain: float
    angle_limit: float = math.radians(90.0)
    transmission: float = 1.0
    mass: float = 1.0

    def coefficients(self):
        """These coefficients, checked (same interface as :class:`ChainParameters`)."""
        k = require_finite("spring_rate", self.spring_rate, non_negative=True, unit=" 1/s^2")
        limit_k = (2.0 * math.pi * CHAIN_MAX_FREQUENCY) ** 2
        if k > limit_k:
            raise InvalidGoalError(
                f"spring_rate {k:g} 1/s^2 is above {limit_k:.4g} 1/s^2 ({CHAIN_MAX_FREQUENCY:g} Hz); give a softer spring"
            )
        c = require_finite("damping_rate", self.damping_rate, non_negative=True, unit=" 1/s")
        if c > CHAIN_MAX_DAMPING_RATE:
            raise InvalidGoalError(
                f"damping_rate {c:g} 1/s is above {CHAIN_MAX_DAMPING_RATE:g} 1/s, far past critical damping; give a smaller value"
            )
        gain = require_finite("gravity_gain", self.gravity_gain, non_negative=True, unit=" 1/m")
        # the largest gain any ChainParameters can give: sag just under pi/2 at the top frequency
        if gain > 0.5 * math.pi * limit_k / STANDARD_GRAVITY:
            raise InvalidGoalError(
                f"gravity_gain {gain:g} 1/m is a swing length under {2e3 * STANDARD_GRAVITY / (math.pi * limit_k):.3g} mm; "
                "give a longer swing length (a smaller gain)"
            )
        limit = require_finite("angle_limit", self.angle_limit, positive=True, unit=" rad")
        if limit > math.pi:
            raise InvalidGoalError(
                f"angle_limit must be at most pi rad (180 deg), got {limit:g} rad ({math.degrees(limit):g} deg); give e.g. 1.57 rad (90 deg)"
            )
        mu = require_finite("transmission", self.transmission, non_negative=True)
        if mu > 1.0:
            raise InvalidGoalError(f"transmission must be from 0 to 1, got {mu:g}; give e.g. 1 (damping only across the joint) or 0.5")
        mass = require_finite("mass", self.mass, non_negative=True)
        return LinkCoefficients(k, c, gain, limit, mu, mass)


def coefficient_arrays(parameters, bones):
    """Per-bone coefficient arrays from one parameter set or one per bone.

    Returns
    -------
    dict of numpy.ndarray, shape (bones,)
        ``spring`` [1/s^2], ``damping`` [1/s], ``gain`` [1/m], ``limit`` [rad],
        ``transmission`` [-].
    """
    shared = isinstance(parameters, (ChainParameters, LinkCoefficients))
    if shared:
        sets = [parameters] * bones
    elif isinstance(parameters, str):
        raise InvalidGoalError(
            f"the chain's parameters are the text {parameters!r}, not numbers: pick the preset of that name, "
            "or give the stiffness, damping and sag"
        )
    else:
        try:
            sets = list(parameters)
        except TypeError:
            raise InvalidGoalError(
                f"the chain's parameters are a {type(parameters).__name__}, not numbers: give one set of "
                "stiffness, damping and sag for every bone, or one set per bone"
            ) from None
        if len(sets) != bones:
            raise InvalidGoalError(f"got {len(sets)} parameter sets for {bones} bones; give one set, or one per bone")
    checked = []
    if shared:
        sets = sets[:1]
    for i, p in enumerate(sets):
        if not isinstance(p, (ChainParameters, LinkCoefficients)):
            raise InvalidGoalError(f"the parameters of bone {i + 1} of the chain are a {type(p).__name__}, "
                                   "not numbers: give its stiffness, damping and sag")
        try:
            checked.append(p.coefficients())
        except InvalidGoalError as exc:
            if shared:
                raise
            raise InvalidGoalError(f"bone {i}: {exc}") from None
    checked = checked * bones if shared else checked

    def column(attr):
        return np.array([getattr(p, attr) for p in checked], dtype=float)

    return {
        "spring": column("spring_rate"),
        "damping": column("damping_rate"),
        "gain": column("gravity_gain"),
        "limit": column("angle_limit"),
        "transmission": column("transmission"),
        "mass": column("mass"),
    }
