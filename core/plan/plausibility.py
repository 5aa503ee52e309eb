"""How human a planned jump is: its key figures, graded against published ranges."""

from dataclasses import dataclass

import numpy as np

from ..base import constants as C

EVERYDAY, ATHLETIC, BEYOND = "everyday", "athletic", "beyond human (stylised)"


@dataclass(frozen=True)
class Figure:
    """A graded figure: value, unit, grade, and where the grade's ranges come from."""

    name: str
    value: float
    unit: str
    grade: str
    newtons: float = None  # the same force in N when a body mass was given
    source: str = ""


@dataclass(frozen=True)
class PlausibilityReport:
    """Figures of the whole plan plus warnings (plain sentences)."""

    takeoff_speed_m_s: float
    flight_time_s: float
    apex_rise_m: float
    peak_push_force_bw: float
    min_unweighting_force_bw: float
    peak_landing_force_bw: float
    friction_needed: float
    figures: tuple
    warnings: tuple
    stylisations: tuple = ()  # deliberate deviations, each with its physical equivalent


def grade_upper(value, limits):
    """Grade a figure where larger is harder: ``limits`` = (everyday up to, athletic up to)."""
    if value <= limits[0]:
        return EVERYDAY
    return ATHLETIC if value <= limits[1] else BEYOND


def grade_lower(value, limits):
    """Grade a figure where smaller is harder: ``limits`` = (everyday down to, athletic down to)."""
    if value >= limits[0]:
        return EVERYDAY
    return ATHLETIC if value >= limits[1] else BEYOND


def _force_extremes(z_path, phases, groups, gravity):
    """Extreme force [BW] of each ``(names, pick)`` group over its phases, 801 samples a phase.

    One evaluation of the path for every phase at once (the panel re-plans while a value is
    dragged). The plan keeps its phases in time order, so the samples come in order and are
    evaluated piece by piece, unmasked (phases out of order give the same figures, masked).
    """
    times, owners = [], []
    for p in phases:
        owner = next((n for n, (names, _) in enumerate(groups) if p.name in names), None)
        if owner is not None and p.end_s > p.start_s:
            times.append(np.linspace(p.start_s, p.end_s, 801))
            owners.append(owner)
    force = (1.0 + z_path.evaluate(np.concatenate(times), 2) / gravity).reshape(len(times), 801) if times else None
    out = []
    for n, (_, pick) in enumerate(groups):
        rows = [k for k, owner in enumerate(owners) if owner == n]
        out.append(float(pick(pick(force[rows], axis=1))) if rows else float("nan"))
    return out


def stylisation_notes(flight, fps=None):
    """Plain sentences naming each stylisation of a flight with its physical equivalent."""
    notes = []
    g = flight.gravity
    if flight.fall_gravity != g:
        k = flight.fall_gravity / g
        notes.append(f"falls as if g were {k:.2g} g ({flight.fall_gravity:.3g} m/s^2): a "
                     f"{'faster' if k > 1 else 'slower'} fall than rise, on purpose")
    if flight.hang > 0:
        frames = f" ({flight.hang * fps:.1f} frames)" if fps else ""
        notes.append(f"hangs {flight.hang:.3g} s{frames} at the apex: as if gravity vanished for that time")
    return tuple(notes)


def plausibility_report(goals, phases, z_path, hops, flight):
    """Figures and grades of a plan (``goals`` resolved, ``z_path`` the COM height)."""
    g = goals.gravity
    push, unweighting, landing = _force_extremes(
        z_path, phases, ((("braking", "propulsion"), np.max), (("unweighting",), np.min), (("landing",), np.max)), g)
    first = hops[0]
    friction = max(h.friction_needed for h in hops)
    bw_n = goals.mass * g if goals.mass is not None else None

    def newtons(x):
        return None if bw_n is None or x != x else x * bw_n

    figures = [
        Figure("take-off speed", first.takeoff_speed_m_s, "m/s",
               grade_upper(first.takeoff_speed_m_s, C.TAKEOFF_SPEED_GRADES),
               source="Feltner et al. 1999 (CMJ 2.44 m/s); Coh et al. 2017 (elite 3.9 m/s)"),
        Figure("peak push force", push, "BW", grade_upper(push, C.PUSH_FORCE_GRADES), newtons(push),
               source="CMJ 2.0-2.8 BW, from memory"),
    ]
    if unweighting == unweighting:
        figures.append(Figure("lowest unweighting force", unweighting, "BW",
                              grade_lower(unweighting, C.UNWEIGHTING_FORCE_FLOOR_GRADES), newtons(unweighting),
                              source="PMC11208864 (2024): 0.43 BW self-chosen depth"))
    figures.append(Figure("peak landing force", landing, "BW", grade_upper(landing, C.LANDING_FORCE_GRADES),
                          newtons(landing), source="3-6 BW for 0.3-0.6 m drops, from memory"))

    warnings = []
    if goals.gravity == C.STANDARD_GRAVITY:
        for f in figures:
            if f.grade == BEYOND:
                warnings.append(f"{f.name} {f.value:.3g} {f.unit} is beyond human: reads as stylised "
                                "(superhuman) action")
    if friction > goals.friction:
        warnings.append(f"the push needs a friction coefficient of {friction:.2f} (horizontal / vertical "
                        f"force), above {goals.friction:.2f}: the feet would slip; lower the distance or "
                        "lengthen the push")
    return PlausibilityReport(first.takeoff_speed_m_s, first.flight_time_s, first.apex_rise_m, push,
                              unweighting, landing, friction, tuple(figures), tuple(warnings),
                              stylisation_notes(flight))
