"""Stylised timing: the gravity a given timing implies, and the scale at which it is real."""

from ..base.errors import require_finite


def gravity_for_timing(flight_time, apex_rise):
    """Gravity [m/s^2] under which a flight of ``flight_time`` [s] rises ``apex_rise`` [m].

    For a flight that lands at its take-off height, h = g T^2 / 8, so g = 8 h / T^2.
    """
    T = require_finite("flight time", flight_time, positive=True, unit=" s")
    h = require_finite("apex rise", apex_rise, positive=True, unit=" m")
    return 8.0 * h / (T * T)


def scale_for_timing(implied_gravity, gravity):
    """Character scale at which a timing is real under ``gravity`` [-].

    Ballistic time goes as sqrt(L / g): keeping the frame timing and changing g
    to g' is the same as scaling every length by g / g'. A jump whose timing
    implies g/4 (hang time doubled) is real for a character 4 times the size.
    """
    gi = require_finite("implied gravity", implied_gravity, positive=True, unit=" m/s^2")
    g = require_finite("gravity", gravity, positive=True, unit=" m/s^2")
    return g / gi
