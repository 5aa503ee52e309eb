"""``leapwright plan``: goals in, a table, JSON, CSV or chart of the planned jump out."""

import json
import math

from leapwright.core.base.errors import InvalidGoalError, LeapwrightError
from leapwright.core.base.phase_words import animator_word, figure_label
from leapwright.core.plan.goals import JumpGoals, gravity_from
from leapwright.core.base.keys import hermite_keys
from leapwright.core.plan.planner import plan_jump
from leapwright.core.base.timebase import parse_fps, seconds_to_frames

# (flag, goals field, help) for every plain number goal.
_NUMBER_GOALS = (
    ("--height", "height", "apex rise of the COM above its take-off height [m]"),
    ("--flight-time", "flight_time", "take-off to touchdown [s]"),
    ("--takeoff-speed", "takeoff_speed", "vertical COM speed at take-off [m/s]"),
    ("--standing-com", "standing_com_height", "COM height when standing [m] (default 1.0)"),
    ("--distance", "distance", "forward travel per hop, foot spot to foot spot [m]"),
    ("--landing-height", "landing_height", "landing ground above the take-off ground [m] (negative: a drop)"),
    ("--depth", "depth", "countermovement depth of the COM [m]"),
    ("--dip-duration", "dip_duration", "start of the dip to its bottom [s]"),
    ("--push-duration", "push_duration", "bottom to take-off [s] (default: the lowest peak force)"),
    ("--extension", "takeoff_extension", "COM rise from standing to take-off [m]"),
    ("--landing-depth", "landing_depth", "COM stopping distance after touchdown [m]"),
    ("--landing-duration", "landing_duration", "touchdown to the bottom of the landing [s]"),
    ("--recovery-duration", "recovery_duration", "bottom of the landing to standing [s]"),
    ("--weighing", "weighing_duration", "standing still before the dip [s] (default 0.25)"),
    ("--mass", "mass", "body mass [kg], to report forces in newtons"),
    ("--friction", "friction", "friction coefficient before a slip warning (default 0.6, from memory)"),
    ("--fall-gravity-scale", "fall_gravity_scale", "stylised: fall under this multiple of gravity (default 1)"),
    ("--apex-hang", "apex_hang", "stylised: time held at the apex [s] (default 0)"),
)


def add_parser(subparsers):
    p = subparsers.add_parser("plan", help="plan a jump from a few goals",
                              description="Plan a jump whose centre of mass follows real ballistics.")
    for flag, _, text in _NUMBER_GOALS:
        p.add_argument(flag, type=float, help=text)
    p.add_argument("--flight-frames", type=float, help="flight time in frames at --fps")
    p.add_argument("--like", metavar="TRACE",
                   help="take take-off speed, depth, extension and phase durations from a force-plate trace "
                        "(time [s], vertical force [N]); goals given as well override it")
    p.add_argument("--gravity", default="earth", help="m/s^2 or a preset: earth, moon, mars (default earth)")
    p.add_argument("--hops", type=int, default=1, help="number of hops (default 1)")
    p.add_argument("--fps", default="24", help="frame rate: 24, 23.976 or 24000/1001 (default 24)")
    p.add_argument("--start-frame", type=float, default=1.0, help="frame of time 0 (default 1)")
    p.add_argument("--arm-swing", type=float, metavar="DEG",
                   help="place an arm swing peaking at this elevation [deg] and report its timing and gain")
    p.add_argument("--tolerance", type=float, default=5e-4, help="key tolerance [m] (default 0.0005)")
    out = p.add_mutually_exclusive_group()
    out.add_argument("--json", action="store_true", help="print one JSON object")
    out.add_argument("--csv", action="store_true", help="print samples at --fps as CSV")
    p.add_argument("--chart", metavar="PATH", help="write the force-plate chart as a PNG")
    p.set_defaults(func=run)
    return p


def goals_from_args(args, fps):
    """JumpGoals from parsed arguments (flight frames converted with ``fps``)."""
    values = {field: getattr(args, field_attr(flag)) for flag, field, _ in _NUMBER_GOALS}
    values = {k: v for k, v in values.items() if v is not None}
    if args.flight_frames is not None:
        if "flight_time" in values:
            raise InvalidGoalError("give --flight-time or --flight-frames, not both")
        if not math.isfinite(args.flight_frames) or args.flight_frames <= 0:
            raise InvalidGoalError(f"--flight-frames must be a positive number, got {args.flight_frames:g}")
        values["flight_time"] = args.flight_frames / fps
    if getattr(args, "like", None) is not None:
        from cli.force_trace import goals_like, merged_with
        values = merged_with(goals_like(args.like), values)
    return JumpGoals(gravity=gravity_from(args.gravity), hops=args.hops, **values)


def field_attr(flag):
    return flag.lstrip("-").replace("-", "_")


def plan_summary(plan, fps, start_frame, tolerance):
    """The plan as one JSON-ready dict (the ``--json`` contract)."""
    r = plan.report
    keys = hermite_keys(plan, "height", tolerance)
    return {
        "takeoff_speed_m_s": r.takeoff_speed_m_s,
        "flight_time_s": r.flight_time_s,
        "flight_frames": r.flight_time_s * fps,
        "apex_rise_m": r.apex_rise_m,
        "peak_push_force_bw": r.peak_push_force_bw,
        "min_unweighting_force_bw": r.min_unweighting_force_bw,
        "peak_landing_force_bw": r.peak_landing_force_bw,
        "friction_needed": r.friction_needed,
        "gravity_m_s2": plan.gravity,
        "fps": fps,
        "duration_s": plan.duration_s,
        "height_keys": len(keys),
        "figures": [{"name": f.name, "value": f.value, "unit": f.unit, "grade": f.grade,
                     "newtons": f.newtons, "source": f.source} for f in r.figures],
        "hops": [{"takeoff_frame": seconds_to_frames(h.takeoff_time_s, fps, start_frame),
                  "touchdown_frame": seconds_to_frames(h.touchdown_time_s, fps, start_frame),
                  "takeoff_speed_m_s": h.takeoff_speed_m_s, "flight_time_s": h.flight_time_s,
                  "apex_rise_m": h.apex_rise_m, "forward_speed_m_s": h.forward_speed_m_s}
                 for h in plan.hops],
        "warnings": list(r.warnings),
        "stylisations": list(r.stylisations),
        "phases": [{"name": p.name, "hop": p.hop,
                    "start_frame": seconds_to_frames(p.start_s, fps, start_frame),
                    "end_frame": seconds_to_frames(p.end_s, fps, start_frame),
                    "start_s": p.start_s, "end_s": p.end_s} for p in plan.phases],
    }


def _table(summary):
    lines = [f"leapwright plan  (g = {summary['gravity_m_s2']:.5g} m/s^2, {summary['fps']:.6g} fps)", ""]
    lines.append(f"  flight      {summary['flight_time_s']:.3f} s = {summary['flight_frames']:.1f} frames,"
                 f" apex rise {summary['apex_rise_m']:.3f} m")
    for f in summary["figures"]:
        newtons = f"  ({f['newtons']:.0f} N)" if f["newtons"] is not None else ""
        lines.append(f"  {figure_label(f['name']):<28} {f['value']:7.2f} {f['unit']:<4} {f['grade']}{newtons}")
    lines.append(f"  friction needed              {summary['friction_needed']:7.2f}")
    lines += ["", "  phase          hop   start frame   end frame   force plate"]
    for p in summary["phases"]:
        lines.append(f"  {animator_word(p['name']):<13} {p['hop']:>4}   {p['start_frame']:11.2f} "
                     f"{p['end_frame']:11.2f}   {p['name']}")
    lines.append("")
    lines.append(f"  {summary['height_keys']} height keys reproduce the COM path")
    for note in summary["stylisations"]:
        lines.append(f"  stylised: {note}")
    for w in summary["warnings"]:
        lines.append(f"  warning: {w}")
    return "\n".join(lines)


def _csv(plan, fps, start_frame):
    s = plan.sample(fps)
    rows = ["frame,time_s,height_m,forward_m,vertical_speed_m_s,force_bw"]
    for t, h, x, v, f in zip(s.times, s.height, s.forward, s.vertical_speed, s.force_bw):
        rows.append(f"{seconds_to_frames(t, fps, start_frame):.6g},{t:.6f},{h:.6f},{x:.6f},{v:.6f},{f:.6f}")
    return "\n".join(rows)


def write_chart(plan, path, fps, start_frame):
    """Force-plate chart of a plan at ``fps`` (dense enough to show the force shape)."""
    from cli.charts import force_plate_chart
    import numpy as np

    t = np.linspace(0.0, plan.duration_s, max(200, int(plan.duration_s * fps * 8)))
    frames = seconds_to_frames(t, fps, start_frame)
    spans = [(seconds_to_frames(p.start_s, fps, start_frame), seconds_to_frames(p.end_s, fps, start_frame), p.name)
             for p in plan.phases]
    force_plate_chart(path, frames, plan.height(t), plan.force_bw(t), spans,
                      title=f"planned jump: apex {plan.report.apex_rise_m:.2f} m, "
                            f"flight {plan.report.flight_time_s * fps:.1f} frames")


def run(args):
    fps = parse_fps(args.fps)
    if not math.isfinite(args.start_frame):
        raise InvalidGoalError(f"--start-frame must be finite, got {args.start_frame}")
    goals = goals_from_args(args, fps)
    plan = plan_jump(goals)
    swing_lines = ()
    if args.arm_swing is not None:
        from leapwright.core.arms.swing import SwingAmplitudes
        from leapwright.core.arms.timing import plan_swing_report

        swing_lines = plan_swing_report(plan, SwingAmplitudes(upswing_deg=args.arm_swing), fps)
    if args.chart:
        write_chart(plan, args.chart, fps, args.start_frame)
    if args.csv:
        print(_csv(plan, fps, args.start_frame))
    elif args.json:
        summary = plan_summary(plan, fps, args.start_frame, args.tolerance)
        summary["arm_swing"] = list(swing_lines)
        print(json.dumps(summary, allow_nan=False))
    else:
        print(_table(plan_summary(plan, fps, args.start_frame, args.tolerance)))
        for line in swing_lines:
            print(f"  {line}")
    return 0


__all__ = ["add_parser", "run", "plan_summary", "LeapwrightError"]
