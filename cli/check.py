"""``leapwright check``: read a sampled jump from CSV and say what is wrong and where.

The CSV has a header with at least ``frame,x,y,z`` (metres, z up, one row per frame).
Further column triples ``NAME_x,NAME_y,NAME_z`` are read as foot tracks; give their leg
rest lengths with ``--leg-length NAME=METRES`` to check for overstretched legs. Triples
named after body landmarks (``vertex``, ``shoulder.L``, ... see :mod:`body_arc`) are the
body's joints instead: with them the whole-body centre of mass is checked in the air,
as it is for a rig in a .blend (the panel's Check Body Arc).

For a .blend the path checked is chosen as the panel's Check Jump chooses it
(``--follow``, default ``auto``): the whole-body centre of mass whenever the rig reads
as a body (in the air only it must fall on one parabola; after Keep Body on Its Arc the
hips are rightly off one while the limbs swing), else the ``--bone`` or the body bone
saved in the file's jump panel, else the object. The report says which, and why.

Exit codes: 0 no problem found (stylisations may still be listed), 1 problems found,
2 bad input (one line on stderr).
"""

import json
import math
import os
import sys

import numpy as np

from leapwright.core.base.phase_words import animator_word
from leapwright.core.body.arc import ARC_TOLERANCE
from leapwright.core.body.segment_tables import TABLES

from leapwright.core.check.analysis import FootTrack, analyse_trajectory
from leapwright.core.base.constants import BLENDER_DEFAULT_GRAVITY
from leapwright.core.base.errors import InvalidTrajectoryError, LeapwrightError
from leapwright.core.check.findings import FINDING_KINDS, frame_text, no_flight_reason
from leapwright.core.plan.goals import gravity_from
from leapwright.core.base.timebase import parse_fps

from cli import body as body_arc
from cli.path_csv import REQUIRED_COLUMNS, _number, read_csv_tracks, read_trajectory_csv  # noqa: F401  (part of check's API)
from cli.batch import add_batch_arguments, is_batch, report_batch, run_files
from cli.force_trace import add_force_trace_arguments, run_force_trace

def add_parser(subparsers):
    """Register ``check`` on an argparse subparsers object."""
    p = subparsers.add_parser(
        "check", help="check a jump made by hand or captured (CSV frame,x,y,z, BVH or .blend)",
        description="Check a sampled centre-of-mass (or root) path for flights, implied gravity, "
                    "apparent weight and the usual mistakes. Finding kinds: " + ", ".join(FINDING_KINDS))
    p.add_argument("files", nargs="+", metavar="FILE",
                   help="CSV with header frame,x,y,z (metres, z up), .bvh motion capture, or .blend files (with --object)")
    p.add_argument("--fps", help="frame rate: 24, 23.976 or 24000/1001 (CSV: required; .blend: the scene's)")
    p.add_argument("--gravity", default=None,
                   help="the jump's gravity [m/s^2] or earth/moon/mars (default: for a .blend the jump "
                        "panel's gravity saved in it, for a CSV 9.81 as Blender's default); sign ignored")
    p.add_argument("--object", help=".blend: the object (rig) to check")
    p.add_argument("--bone", help=".blend: the body (COM) bone of --object; its head is sampled")
    p.add_argument("--follow", choices=("auto", "bone", "body"), default="auto",
                   help=".blend: what is checked. body: the whole-body centre of mass (in the air only it "
                        "must fall on one parabola); bone: --bone's head (else the body bone saved in the "
                        "jump panel, else the object); auto (default): body whenever the rig reads as a "
                        "body, else bone")
    p.add_argument("--bvh-units", choices=("m", "cm", "mm", "in"),
                   help=".bvh: the file's length unit (default: found from the skeleton's height)")
    p.add_argument("--bvh-up", choices=("y", "z"),
                   help=".bvh: the file's up axis (default Y, the BVH convention, unless the skeleton stands along Z)")
    add_batch_arguments(p)
    p.add_argument("--leg-length", action="append", default=[], metavar="NAME=METRES",
                   help="rest length of the leg ending at foot columns NAME_x,NAME_y,NAME_z")
    p.add_argument("--arc-tolerance", type=float, default=100 * ARC_TOLERANCE, metavar="CM",
                   help="body arc: how far the whole-body centre of mass may leave its arc in the air "
                        f"before a warning [cm] (default {100 * ARC_TOLERANCE:g})")
    p.add_argument("--body-table", default="de_leva_male", choices=sorted(TABLES),
                   help="body arc: published segment masses (default de_leva_male)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the report")
    p.add_argument("--chart", metavar="PATH", help="write a PNG: height and force [BW] against frames")
    add_force_trace_arguments(p)
    p.set_defaults(func=run)
    return p


def _leg_lengths(items, feet):
    out = {}
    for item in items:
        name, sep, value = item.partition("=")
        if not sep:
            raise InvalidTrajectoryError(f"--leg-length {item!r}: write NAME=METRES, e.g. foot_l=0.92")
        if name not in feet:
            known = ", ".join(feet) or "none"
            raise InvalidTrajectoryError(
                f"--leg-length {item!r}: no columns {name}_x,{name}_y,{name}_z in the CSV (foot tracks: {known})")
        length = _number(value, "--leg-length", name)
        if length <= 0:
            raise InvalidTrajectoryError(f"--leg-length {item!r}: the length must be positive")
        out[name] = length
    return out


def gravity_option(value, default=None):
    """The ``--gravity`` option [m/s^2]: a number or earth/moon/mars, its sign ignored (a
    gravity pulls down whichever way it is written); ``default`` when it was not given."""
    if value is None:
        return default
    return gravity_from(str(value).strip().lstrip("-"))


def _frame_value(f):
    f = float(f)
    return int(round(f)) if abs(f - round(f)) < 1e-9 else f


def _clean(value):
    """JSON-safe copy: numpy scalars to Python, non-finite floats to None."""
    if isinstance(value, dict):
        return {k: _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    if isinstance(value, (np.floating, float)):
        v = float(value)
        return v if math.isfinite(v) else None
    if isinstance(value, np.integer):
        return int(value)
    return value


def to_json_dict(result):
    """The analysis as one JSON-ready dict."""
    longest = result.longest_flight
    flights = []
    for f in result.flights:
        d = dict(vars(f))
        d["first_frame"], d["last_frame"] = _frame_value(f.first_frame), _frame_value(f.last_frame)
        flights.append(d)
    hops = []
    for h in result.hops:
        d = dict(vars(h))
        for key in ("push_frames", "landing_frames"):
            if d[key] is not None:
                d[key] = [_frame_value(v) for v in d[key]]
        hops.append(d)
    return _clean({
        "fps": result.fps,
        "frame_count": len(result.frames),
        "scene_gravity_m_s2": result.scene_gravity_m_s2,
        "implied_gravity_m_s2": result.implied_gravity_m_s2,
        "flight_start_frame": None if longest is None else _frame_value(longest.first_frame),
        "flight_end_frame": None if longest is None else _frame_value(longest.last_frame),
        "character_scale": result.character_scale,
        "gravity_comparisons": [dict(vars(c)) for c in result.gravity_comparisons],
        "flights": flights,
        "phases": [{"name": p.name, "hop": p.hop,
                    "frames": [_frame_value(p.first_frame), _frame_value(p.last_frame)]} for p in result.phases],
        "hops": hops,
        "noise_m": result.noise_m,
        "measured": result.measured,
        "stepped_keys": result.stepped_keys,
        "findings": [{"kind": f.kind, "severity": f.severity,
                      "frames": [_frame_value(f.first_frame), _frame_value(f.last_frame)],
                      "message": f.message, "suggestion": f.suggestion} for f in result.findings],
    })


def _pm(sd, fmt):
    """`` +- x`` for a 95 % interval (1.96 standard errors), or nothing when not measured."""
    return f" +- {1.96 * sd:{fmt}}" if sd else ""


def report_text(result, path):
    """A plain-text report for an animator."""
    g = result.scene_gravity_m_s2
    lines = [f"{path}: {len(result.frames)} frames {frame_text(result.frames[0])}-"
             f"{frame_text(result.frames[-1])} at {result.fps:g} fps, scene gravity {g:g} m/s^2"]
    if result.stepped_keys:
        lines.append("  held frames read as stepped keys (fitted at the key frames)")
    if not result.flights:
        lines.append("  no ballistic flight found: " + no_flight_reason(result.height_m))
    elif result.measured:
        lines.append(f"  read as captured motion (jitter {result.noise_m * 1000:.2f} mm): flights found from "
                     "free fall; implied g with its 95% interval")
    for i, f in enumerate(result.flights, start=1):
        lines.append(
            f"  flight {i}: frames {frame_text(f.first_frame)}-{frame_text(f.last_frame)}, implied g "
            f"{f.gravity_m_s2:.3f} m/s^2 ({f.gravity_m_s2 / g:.2f} g; 95% interval "
            f"{f.gravity_low_m_s2:.2f}-{f.gravity_high_m_s2:.2f}), top {f.rise_m:.3f} m above frame "
            f"{frame_text(f.first_frame)} at frame {frame_text(round(f.apex_frame, 2))}, hang {f.hang_time_s:.3f} s "
            f"(under {g:g} m/s^2: {f.expected_hang_time_s:.3f} s), fit within {f.max_residual_m * 1000:.3f} mm")
        if f.rise_gravity_m_s2 != f.fall_gravity_m_s2:
            lines.append(f"    rise g {f.rise_gravity_m_s2:.3f}, fall g {f.fall_gravity_m_s2:.3f} m/s^2, "
                         f"held at the apex {f.apex_hang_s:.3f} s")
    for c in result.gravity_comparisons:
        lines.append(f"  against {c.name} gravity {c.reference_m_s2:g}: ratio {c.ratio:.4f}, real for a "
                     f"character {c.character_scale:.3f}x this size (or retime the flight by {c.retime_factor:.3f})")
    if result.phases:
        lines.append("  phases: " + ", ".join(
            f"{animator_word(p.name)} {frame_text(p.first_frame)}-{frame_text(p.last_frame)}" for p in result.phases))
    for h in result.hops:
        parts = []
        if h.min_unweighting_bw is not None:
            if h.dip_depth_m is not None:
                parts.append(f"crouch depth {h.dip_depth_m:.3f}{_pm(h.dip_depth_sd_m, '.3f')} m")
            parts.append(f"lightest in the anticipation {h.min_unweighting_bw:.2f}{_pm(h.unweighting_sd_bw, '.2f')} BW "
                         f"({h.unweighting_grade})")
            parts.append(f"hardest push-off {h.peak_push_bw:.2f} BW ({h.push_grade})")
        parts.append(f"take-off {abs(h.takeoff_speed_m_s):.2f} m/s ({h.takeoff_speed_grade})")
        if h.peak_landing_bw is not None:
            parts.append(f"hardest touchdown {h.peak_landing_bw:.2f} BW, mean {h.mean_landing_bw:.2f} BW "
                         f"over {h.stopping_distance_m:.3f}{_pm(h.stopping_distance_sd_m, '.3f')} m "
                         f"({h.landing_grade})")
        lines.append(f"  hop {h.hop + 1}: " + "; ".join(parts))
    if not result.findings and result.flights:
        lines.append("no findings: the jump is physically consistent")
    elif not result.findings:
        lines.append("no findings, but nothing was checked against gravity without a flight")
    for f in result.findings:
        label = "stylisation" if f.severity == "stylisation" else "problem"
        lines.append(f"[{label}] {f.kind} frames {frame_text(f.first_frame)}-{frame_text(f.last_frame)}: {f.message}")
        lines.append(f"    fix: {f.suggestion}")
    return "\n".join(lines)


def write_chart(result, path, title):
    """Height and apparent weight against frames with the phases (flight) shaded."""
    from cli.charts import force_plate_chart

    # Phases are inclusive frame ranges; widen by half a frame so neighbours meet.
    half = 0.5 * float(np.median(np.diff(result.frames)))
    spans = [(float(p.first_frame) - half, float(p.last_frame) + half, p.name) for p in result.phases]
    force_plate_chart(path, result.frames, result.height_m, result.force_bw, spans, title,
                      force_label="apparent weight m(g+a) [BW]")


def analyse_file(path, fps=None, gravity=None, leg_lengths=(), object_name=None, bone_name=None, **body_options):
    """Read one CSV or .blend and analyse its path (raises the core's errors with the file named)."""
    return check_path(path, fps, gravity, leg_lengths, object_name, bone_name, **body_options)[0]


def check_path(path, fps=None, gravity=None, leg_lengths=(), object_name=None, bone_name=None,
               arc_tolerance_cm=100 * ARC_TOLERANCE, body_table="de_leva_male", follow="auto",
               bvh_units=None, bvh_up=None):
    """Analyse one CSV or .blend: ``(analysis, body arc dict or None, checked dict or None)``.

    The body arc (:mod:`body_arc`) is checked for a rig in a .blend and for a CSV with
    landmark columns; None when there is nothing to check it on. ``checked`` says which
    path of a .blend was analysed (``follows``, ``text``, ``note``; see
    :func:`blend_tracks.sample_blend_track`) and of a BVH (:func:`cli.bvh.bvh_track`); None
    for a CSV (its own path).
    """
    path = str(path)
    if not (math.isfinite(arc_tolerance_cm) and arc_tolerance_cm >= 0):
        raise InvalidTrajectoryError(f"--arc-tolerance must be 0 cm or more, got {arc_tolerance_cm:g}")
    tolerance = arc_tolerance_cm / 100.0
    arc = checked = None
    try:
        if path.lower().endswith(".blend"):
            from cli.blend import sample_blend_track

            if not object_name:
                raise InvalidTrajectoryError("give --object (and --bone for a rig's body bone)")
            frames, positions, scene_fps, scene_g, checked = sample_blend_track(path, object_name, bone_name,
                                                                                follow, body_table)
            feet = []
            fps = parse_fps(fps) if fps is not None else scene_fps
            given = gravity_option(gravity)
            gravity = given if given is not None else scene_g
            arc = body_arc.blend_body_arc(object_name, given, tolerance, body_table)
        elif path.lower().endswith(".bvh"):
            from cli.bvh import bvh_track

            frames, positions, file_fps, checked = bvh_track(path, bvh_units, bvh_up, follow, body_table, bone_name)
            feet = []
            fps = parse_fps(fps) if fps is not None else file_fps
            gravity = gravity_option(gravity, BLENDER_DEFAULT_GRAVITY)
        else:
            if fps is None:
                raise InvalidTrajectoryError("a CSV needs --fps (e.g. 24 or 24000/1001)")
            fps = parse_fps(fps)
            gravity = gravity_option(gravity, BLENDER_DEFAULT_GRAVITY)
            frames, positions, tracks = read_csv_tracks(path)
            foot_columns = {k: v for k, v in tracks.items() if k not in body_arc.LANDMARK_COLUMNS}
            lengths = _leg_lengths(list(leg_lengths), foot_columns)
            feet = [FootTrack(name, pos, lengths.get(name)) for name, pos in foot_columns.items()]
            landmarks = body_arc.landmark_tracks(tracks)
            if landmarks:
                arc = body_arc.csv_body_arc(frames, landmarks, fps, gravity, tolerance, body_table)
        return analyse_trajectory(frames, positions, fps, gravity=gravity, feet=feet), arc, checked
    except LeapwrightError as exc:
        text = str(exc)
        raise type(exc)(text if text.startswith(path) else f"{path}: {text}") from None


def has_problems(result, arc, checked=None):
    """Whether the file needs fixing: a problem finding, the body leaving its arc in the air, or
    (a .blend) deform limbs stretched beyond their rest length."""
    return bool(result.has_problems or (arc is not None and arc["departures"])
                or (checked is not None and checked.get("stretch")))


def report_dict(result, arc, checked=None):
    """The JSON report of one file: the analysis, ``checked_path`` for a .blend, and
    ``body_arc`` when it was checked."""
    out = to_json_dict(result)
    if checked is not None:
        out["checked_path"] = {k: v for k, v in checked.items() if k != "stretch"}
        out["limb_stretch"] = list(checked.get("stretch", ()))
    if arc is not None:
        out["body_arc"] = _clean(arc)
    return out


def arc_text(arc):
    """The body-arc part of the plain-text report (the panel's lines)."""
    if arc is None:
        return []
    if not arc["checked"]:
        return [f"body arc not checked: {arc['reason']}"]
    lines = ["body arc: " + arc["lines"][0]]
    for d in arc["departures"]:
        lines.append(f"[problem] body_off_arc {d['message']}")
        lines.append(f"    fix: {d['suggestion']}")
    if not arc["departures"]:
        lines.append(f"  {body_arc.STAYS_ON_ARC} (within {arc['tolerance_cm']:g} cm)")
    for t in arc.get("takeoff_motion", ()):
        lines.append(f"[warning] takeoff_motion {t['message']}")
    return lines


def stretch_text(checked):
    """The limb-stretch part of the plain-text report of a .blend (as Check Jump lists it)."""
    lines = []
    for f in (checked or {}).get("stretch", ()):
        kind = f["kind"].replace(" ", "_")
        lines.append(f"[problem] {kind} frames {f['first_frame']:.0f}-{f['last_frame']:.0f}: {f['message']}")
        lines.append(f"    fix: {f['suggestion']}")
    return lines


def _options(args):
    return dict(fps=args.fps, gravity=args.gravity, leg_lengths=tuple(args.leg_length),
                object_name=args.object, bone_name=args.bone, arc_tolerance_cm=args.arc_tolerance,
                body_table=args.body_table, follow=args.follow, bvh_units=args.bvh_units, bvh_up=args.bvh_up)


def check_file(path, options):
    """Check one file; returns ``{"file", "exit_code", "report" or "error"}`` (never raises).

    Module-level so that it pickles to the batch's worker processes.
    """
    try:
        result, arc, checked = check_path(path, **options)
    except LeapwrightError as exc:
        return {"file": str(path), "exit_code": 2, "error": str(exc)}
    return {"file": str(path), "exit_code": 1 if has_problems(result, arc, checked) else 0,
            "report": report_dict(result, arc, checked)}


def _run_batch(args):
    if args.jobs is not None and args.jobs < 1:
        raise LeapwrightError(f"--jobs must be 1 or more, got {args.jobs}")
    results = run_files(check_file, args.files, _options(args), jobs=args.jobs, scheduler=args.scheduler)
    return report_batch(results, args.out_dir, args.json, lambda r: "ok")


def run(args):
    """Run ``check``; returns the exit code (0, 1, or 2 with one line on stderr)."""
    if args.force_trace:
        return run_force_trace(args)
    try:
        if is_batch(args):
            return _run_batch(args)
        path = args.files[0]
        result, arc, checked = check_path(path, **_options(args))
        if args.chart:
            write_chart(result, args.chart, f"{os.path.basename(str(path))} at {result.fps:g} fps")
    except LeapwrightError as exc:
        print(f"leapwright check: {exc}", file=sys.stderr)
        return 2
    if args.json:
        print(json.dumps(report_dict(result, arc, checked), indent=2))
    else:
        head = [f"  {checked['text']}"] if checked is not None else []
        head += [f"  why: {checked['reason']}"] if checked is not None and checked.get("reason") else []
        text = report_text(result, path).split("\n")
        print("\n".join(text[:1] + head + text[1:] + arc_text(arc) + stretch_text(checked)))
    return 1 if has_problems(result, arc, checked) else 0
