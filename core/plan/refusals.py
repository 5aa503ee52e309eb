"""Why no jump meets the goals, and changes of the goals that would make one.

Every fix named here has been tried: the planner found a physical stretch with
it. Each changes one goal the animator gave (a duration left to be chosen, a
longer dip or landing, a shallower dip, a deeper landing), so the advice never
asks for what the goals already have (a 0.84 s dip told to last "at least 0.40 s").
"""

from dataclasses import replace
import math

import numpy as np

from .shape_search import line_tables


def _feasible(spec, first, second):
    """Which (first, second) duration pairs [s] give a physical stretch."""
    tables = line_tables(spec)
    tables.hint = None
    return np.isfinite(tables.least_peaks(np.asarray(first, float), np.asarray(second, float))[1])


def _longer(spec, given, others, longest, first_given):
    """The shortest duration above ``given`` [s] feasible with any of ``others`` for the other piece."""
    trial = np.geomspace(given, longest, 40)[1:]
    others = np.atleast_1d(np.asarray(others, float))
    mine, theirs = np.repeat(trial, others.size), np.tile(others, trial.size)
    ok = (_feasible(spec, mine, theirs) if first_given else _feasible(spec, theirs, mine)).reshape(trial.size, -1)
    hit = ok.any(axis=1)
    return float(trial[np.argmax(hit)]) if hit.any() else None


def _up(x):
    """``x`` rounded up to the two decimals printed, so the printed value is on the safe side."""
    return math.ceil(100 * x - 1e-9) / 100


def _fix_list(fixes, fallback):
    return ("fix: " + ", or ".join(fixes)) if fixes else fallback


def start_refusal(goals, spec, choose, takeoff_speed):
    """The message for a dip and push that no physical jump meets, with fixes that work.

    ``choose.push`` is the given push's time before its release [s] (the stretch's second
    piece); the message repeats the animator's own push duration. ``takeoff_speed`` [m/s].
    """
    lo, hi = choose.free_range
    fixes = []
    if choose.push is not None and choose(spec, goals.dip_duration, None) is not None:
        fixes.append("leave the push duration to be chosen")
    pushes = choose.push if choose.push is not None else np.geomspace(lo, hi, 24)
    if goals.dip_duration < hi:
        longer = _longer(spec, goals.dip_duration, pushes, hi, True)
        if longer is not None:
            fixes.append(f"lengthen the dip to at least {_up(longer):.2f} s")
    for fraction in np.linspace(0.9, 0.1, 9):
        shallower = replace(spec, bottom_height=spec.bottom_height * fraction)
        if choose(shallower, goals.dip_duration, choose.push) is not None:
            fixes.append(f"make the dip at most {math.floor(-100 * shallower.bottom_height) / 100:.2f} m deep")
            break
    push = f" after a {goals.push_duration:.3g} s push" if goals.push_duration is not None else ""
    return (f"no dip and push meet these goals: a {goals.dip_duration:.3g} s dip to {goals.depth:.3g} m with a "
            f"take-off at {takeoff_speed:.3g} m/s{push} needs the ground to pull or the body to fall faster "
            f"than g = {goals.gravity:.4g} m/s^2; "
            + _fix_list(fixes, "no longer dip or shallower depth helps: lower the jump"))


def landing_refusal(goals, spec, choose):
    """The message for a landing that no physical stretch meets, with fixes that work."""
    lo, hi = choose.free_range
    fixes = []
    duration, after = goals.landing_duration, None
    if spec.second_kind == "recovery":
        after = goals.recovery_duration
    elif goals.push_duration is not None:
        after = goals.push_duration  # a rebound has no release (planner.py)
    if duration is not None and choose(spec, None, after) is not None:
        fixes.append("leave the landing duration to be chosen")
    if duration is not None and duration < hi:
        others = after if after is not None else np.geomspace(lo, hi, 24)
        longer = _longer(spec, duration, others, hi, True)
        if longer is not None:
            fixes.append(f"lengthen the landing to at least {_up(longer):.2f} s")
    for factor in (1.25, 1.5, 2.0, 3.0):
        deeper = replace(spec, bottom_height=spec.start.height - factor * goals.landing_depth)
        if choose(deeper, duration, after) is not None:
            fixes.append(f"deepen the landing to {_up(factor * goals.landing_depth):.2f} m")
            break
    within = f" in {duration:.3g} s" if duration is not None else ""
    return (f"no landing meets these goals: touchdown at {-spec.start.speed:.3g} m/s stopped within "
            f"{goals.landing_depth:.3g} m{within}; "
            + _fix_list(fixes, "no longer or deeper landing helps: lower the jump"))
