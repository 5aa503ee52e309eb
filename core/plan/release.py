"""The release: the end of a push, where the ground force falls from body weight to zero.

A real take-off does not leave the ground at its fastest: the force drops below
body weight a few hundredths of a second before the feet leave, and the centre
of mass (COM) slows by a few per cent on the way. The seven force-plate jumps of
shared/reference-values.md reach their peak COM speed 0.019-0.032 s before
take-off and lose 3.1-6.3 % of it (Harman et al. 1990: about 0.03 s and 6-7 %).

The planner ends the countermovement push (the first take-off; a rebound hop leaves
at the end of its stretch, where no published figure says otherwise) with a release of a set duration tau in which the
force falls linearly from 1 BW to 0, so the vertical acceleration is

    a(t) = -g t / tau,  0 <= t <= tau,

and the speed peaks exactly at its start. Integrating from the take-off state
(height e, speed v0, acceleration -g) backwards gives its start in closed form:

    v_peak = v0 + g tau / 2,   z_start = e - v0 tau - g tau^2 / 3,

so the speed lost is g tau / 2 (0.113 m/s at tau = 0.023 s: 3.1 % of the peak at
3.5 m/s, 4.4 % at 2.44 m/s). The contact stretch's push quintic ends where the release
starts (acceleration 0: force 1 BW), and the take-off keeps the goals' speed and
height exactly.

References
----------
Harman E A, Rosenstein M T, Frykman P N, Rosenstein R M (1990). The effects of
arms and countermovement on vertical jumping. Med Sci Sports Exerc 22(6):825-833.
"""

from numpy.polynomial import Polynomial

from .contact_shapes import EndState

#: Release duration [s] for a 1 m standing COM under standard gravity (scaled by dynamic similarity):
#: inside the real jumps' 0.019-0.032 s from peak COM speed to take-off (reference-values.md), and long
#: enough to lose 3.1 % of a 3.5 m/s take-off (g tau / 2 = 0.113 m/s); longer ones make more of the push's
#: last frames look ballistic to the checker.
RELEASE_DURATION = 0.023
#: A given push keeps at least this share of its time for the push proper [-].
_LARGEST_SHARE = 0.5


def release_duration(time_scale, push_duration=None):
    """How long the force takes to fall from body weight to zero before take-off [s].

    Parameters
    ----------
    time_scale : float
        Dynamic-similarity time factor of the goals [-] (:func:`.goals.similarity`).
    push_duration : float, optional
        The whole push the animator gave [s]; a very short push gives half of it to the release.

    Returns
    -------
    float
        [s], positive.
    """
    tau = RELEASE_DURATION * time_scale
    return tau if push_duration is None else min(tau, _LARGEST_SHARE * push_duration)


def release_start(takeoff, gravity, duration):
    """The state where the release starts (force 1 BW), from the take-off state.

    Parameters
    ----------
    takeoff : contact_shapes.EndState
        Height [m], speed [m/s] and acceleration at take-off (the acceleration is -g there).
    gravity : float
        [m/s^2]
    duration : float
        Release duration tau [s].

    Returns
    -------
    contact_shapes.EndState
        Height e - v0 tau - g tau^2 / 3, speed v0 + g tau / 2, acceleration 0.
    """
    e, v0, g, tau = takeoff.height, takeoff.speed, gravity, duration
    return EndState(e - v0 * tau - g * tau * tau / 3.0, v0 + 0.5 * g * tau, 0.0)


def release_path(start, gravity, duration):
    """Height over the release [m] as a polynomial of its local time [s]: z0 + v t - g t^3 / (6 tau)."""
    return Polynomial([start.height, start.speed, 0.0, -gravity / (6.0 * duration)])
