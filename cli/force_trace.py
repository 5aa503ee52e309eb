"""Force-plate traces on the command line: ``leapwright check --force-trace`` and ``plan --like``.

A trace is a text file of two columns, time [s] and vertical force [N] (both
plates summed), starting with the jumper standing still.
"""

import json
import math

import numpy as np

from leapwright.core.base.errors import InvalidGoalError, LeapwrightError
from leapwright.core.base.phase_words import animator_word
from leapwright.core.check.force_trace import read_force_csv, read_force_trace


def add_force_trace_arguments(parser):
    """The ``check`` options for force-plate traces."""
    parser.add_argument("--force-trace", action="store_true",
                        help="the file is a force-plate trace: two columns, time [s] and vertical force [N]")
    parser.add_argument("--mass", type=float, help="force trace: body mass [kg] (default: weighed from quiet standing)")
    parser.add_argument("--quiet", metavar="START,END",
                        help="force trace: seconds of quiet standing before the jump (default: the first 0.25 s)")


def _quiet(text):
    if text is None:
        return None
    try:
        start, end = (float(x) for x in text.split(","))
    except ValueError:
        raise InvalidGoalError(f"--quiet wants two times in seconds like 0,0.5; got {text!r}") from None
    if not (math.isfinite(start) and math.isfinite(end) and end > start):
        raise InvalidGoalError(f"--quiet {text}: the end must come after the start")
    return start, end


def read_trace_file(path, mass=None, quiet=None):
    """Read a force-trace file into a :class:`ForceTraceReading`."""
    if mass is not None and not (math.isfinite(mass) and mass > 0):
        raise InvalidGoalError(f"--mass must be a positive number of kilograms, got {mass:g}")
    times, force = read_force_csv(path)
    return read_force_trace(times, force, mass_kg=mass, quiet=quiet)


def trace_summary(reading):
    """The reading as one JSON-ready dict."""
    lead, loss = reading.peak_speed_before_takeoff()
    return {
        "body_weight_n": reading.body_weight_n,
        "mass_kg": reading.mass_kg,
        "takeoff_speed_m_s": reading.takeoff_speed_m_s,
        "jump_height_m": reading.jump_height_m,
        "depth_m": reading.depth_m,
        "takeoff_rise_m": reading.takeoff_rise_m,
        "lowest_unweighting_force_bw": reading.lowest_unweighting_bw,
        "peak_push_force_bw": reading.peak_push_bw,
        "peak_landing_force_bw": None if math.isnan(reading.peak_landing_bw) else reading.peak_landing_bw,
        "peak_speed_before_takeoff_s": lead,
        "speed_lost_by_takeoff": loss,
        "phases": [{"name": p.name, "start_s": p.start_s, "end_s": p.end_s, "duration_s": p.duration_s}
                   for p in reading.phases],
    }


def trace_text(summary, path):
    lines = [f"leapwright check: {path} (force-plate trace, body weight {summary['body_weight_n']:.0f} N = "
             f"{summary['mass_kg']:.1f} kg)", "", "  phase          start s    end s   duration s   force plate"]
    for p in summary["phases"]:
        lines.append(f"  {animator_word(p['name']):<12} {p['start_s']:8.3f} {p['end_s']:8.3f} "
                     f"{p['duration_s']:10.3f}   {p['name']}")
    lines += ["",
              f"  take-off speed               {summary['takeoff_speed_m_s']:6.3f} m/s (impulse-momentum from rest)",
              f"  jump height                  {summary['jump_height_m']:6.3f} m (v^2 / 2g)",
              f"  crouch depth                 {summary['depth_m']:6.3f} m (countermovement depth)",
              f"  lightest in the anticipation {summary['lowest_unweighting_force_bw']:6.2f} BW (lowest unweighting force)",
              f"  hardest push-off             {summary['peak_push_force_bw']:6.2f} BW (peak push force)"]
    if summary["peak_landing_force_bw"] is not None:
        lines.append(f"  hardest touchdown            {summary['peak_landing_force_bw']:6.2f} BW (peak landing force)")
    lines.append(f"  fastest {summary['peak_speed_before_takeoff_s']:.3f} s before take-off, "
                 f"{100 * summary['speed_lost_by_takeoff']:.1f} % slower at take-off")
    return "\n".join(lines)


def write_trace_chart(reading, path, title):
    """The planner's force-plate chart (COM height and apparent weight, phases shaded) for a trace."""
    from cli.charts import force_plate_chart

    t = reading.times
    step = max(1, len(t) // 4000)  # a few thousand points draw the same picture
    spans = [(p.start_s, p.end_s, p.name) for p in reading.phases]
    force_plate_chart(path, t[::step], reading.height[::step], reading.apparent_weight_bw[::step], spans,
                      title=title, x_label="time [s]")


def run_force_trace(args):
    """``leapwright check --force-trace FILE``: exit 0, or 2 with one line on stderr."""
    import sys

    try:
        if len(args.files) != 1:
            raise InvalidGoalError(f"--force-trace reads one file at a time, got {len(args.files)}")
        path = args.files[0]
        reading = read_trace_file(path, args.mass, _quiet(args.quiet))
        summary = trace_summary(reading)
        if args.chart:
            write_trace_chart(reading, args.chart, f"force-plate trace: jump height {reading.jump_height_m:.2f} m")
    except LeapwrightError as exc:
        print(f"leapwright check: {exc}", file=sys.stderr)
        return 2
    print(json.dumps(summary, indent=2) if args.json else trace_text(summary, path))
    return 0


def goals_like(path):
    """Plan goals taken from a force-plate trace: its take-off speed, depth, extension and phase durations."""
    reading = read_trace_file(path)
    phase = {p.name: p for p in reading.phases}
    goals = {"takeoff_speed": reading.takeoff_speed_m_s, "depth": reading.depth_m,
             "takeoff_extension": reading.takeoff_rise_m, "mass": reading.mass_kg,
             "dip_duration": phase["unweighting"].duration_s + phase["braking"].duration_s,
             "push_duration": phase["propulsion"].duration_s}
    if "landing" in phase:
        land = phase["landing"]
        bottom = float(np.interp(land.end_s, reading.times, reading.height))
        # The plan lands at its take-off height; the bottom stays where the trace has it.
        goals.update(landing_duration=land.duration_s, landing_depth=reading.takeoff_rise_m - bottom)
    return goals


def merged_with(trace_goals, given):
    """Trace goals overridden by the goals given; a given height or flight time replaces the trace's speed."""
    if any(k in given for k in ("height", "flight_time", "takeoff_speed")):
        trace_goals = {k: v for k, v in trace_goals.items() if k != "takeoff_speed"}
    return {**trace_goals, **given}
