"""``leapwright follow-through``: drag and follow-through baked into .blend files, headless.

Blender runs in-process as the ``bpy`` module, imported only here and only
when the command runs, so the other commands never need it. Each file is
opened, baked exactly as ``bpy.ops.leapwright.bake_follow_through`` bakes (same module,
same layer, re-baking replaces) and saved in place. Several files go through the
same process pool (or Dask cluster) as ``leapwright check``, one fresh Blender per
file, with one JSON report per file and a summary (exit 0 all baked, 2 if any file
could not be baked).
"""

import json
import math
import sys

from leapwright.core.base.errors import InvalidGoalError
from leapwright.core.base.limits import check_frame_range

from cli.batch import add_batch_arguments, blend_command_ready, file_error, is_batch, report_batch, run_files
from cli.blend import addon_module

PRESETS = ("hair", "cloth", "tail", "heavy prop")


def add_parser(subparsers):
    p = subparsers.add_parser("follow-through", help="bake follow-through on chosen bones of .blend files",
                              description="Bake drag and follow-through on chosen bones (Blender as a module) "
                                          "and save each file.")
    p.add_argument("files", nargs="+", metavar="FILE", help=".blend files, changed in place")
    p.add_argument("--bones", nargs="+", required=True, help="bone names (or one comma-separated list)")
    p.add_argument("--preset", default="hair", help=f"one of: {', '.join(PRESETS)} (default hair)")
    p.add_argument("--rig", help="armature object (default: the one armature that has all the bones)")
    p.add_argument("--frames", nargs=2, type=int, metavar=("A", "B"), help="frames to bake (default: scene range)")
    p.add_argument("--on-twos", action="store_true", help="hold each pose for two frames")
    p.add_argument("--key-tolerance", type=float, default=0.0, metavar="DEG",
                   help="drop keys within this angle [deg] (default 0: every frame)")
    p.add_argument("--multi-link", action="store_true",
                   help="simulate each chain as a multi-link pendulum: children pull on their parents (slower)")
    p.add_argument("--keep-out", action="store_true",
                   help="keep the chains out of the body's capsules and above the jump's ground")
    p.add_argument("--remove", action="store_true", help="remove a previous bake instead of baking")
    add_batch_arguments(p)
    p.add_argument("--json", action="store_true", help="print JSON (the report, or the batch summary)")
    p.set_defaults(func=run)
    return p


def _bone_names(values):
    names = tuple(n.strip() for v in values for n in v.split(",") if n.strip())
    twice = sorted({n for n in names if names.count(n) > 1})
    if twice:
        raise InvalidGoalError(f"--bones names {', '.join(twice)} more than once; name each bone once")
    return names


def _find_rig(bpy, name, bones):
    if name:
        rig = bpy.data.objects.get(name)
        if rig is None:
            raise InvalidGoalError(f"no object named {name!r}; --rig takes an armature object's name")
        return rig
    fits = [o for o in bpy.data.objects if o.type == "ARMATURE" and all(b in o.data.bones for b in bones)]
    if len(fits) != 1:
        found = ", ".join(o.name for o in fits) or "none"
        raise InvalidGoalError(f"{len(fits)} armatures have all of {', '.join(bones)} ({found}); name one with --rig")
    return fits[0]


def _options(args, bones, preset):
    return dict(bones=bones, preset=preset, rig=args.rig, frames=tuple(args.frames) if args.frames else None,
                on_twos=args.on_twos, key_tolerance_deg=args.key_tolerance, remove=args.remove,
                multi_link=args.multi_link, keep_out=args.keep_out)


def bake_file(path, options):
    """Bake (or remove) follow-through in one .blend and save it in place.

    Exactly what ``bpy.ops.leapwright.bake_follow_through`` does (the add-on's ``follow_bake`` module,
    same layer, re-baking replaces). Returns ``{"file", "exit_code", "report" or
    "error"}`` and never raises for the input's faults: a worker of a batch.
    """
    import bpy

    from cli.blend import jump_gravity, open_blend, save_blend

    path = str(path)
    follow_bake = addon_module("follow_through.bake")
    bones = tuple(options["bones"])
    try:
        open_blend(path)
        scene = bpy.context.scene
        rig = _find_rig(bpy, options["rig"], bones)
        report = {"rig": rig.name, "bones": list(bones)}
        if options["remove"]:
            report["removed"] = bool(follow_bake.remove(rig))
            message = "removed the bake" if report["removed"] else "had no bake"
        else:
            start, end = options["frames"] or (scene.frame_start, scene.frame_end)
            check_frame_range(start, end, len(bones))
            request = follow_bake.LagRequest(
                bones=bones, parameters=follow_bake.chain_preset(options["preset"]), frame_start=start,
                frame_end=end, key_tolerance=math.radians(options["key_tolerance_deg"]),
                on_twos=options["on_twos"], reset_frames=follow_bake.marker_resets(scene, start, end, ""),
                gravity=jump_gravity(scene), multi_link=bool(options.get("multi_link")),
                keep_out=bool(options.get("keep_out")))
            job = addon_module("follow_through.bake_job").BakeJob(scene, rig, request)
            job.run()
            job.write()  # as the panel writes it: deltas corrected to play through the rig's constraints
            work = job.work
            top = max(work.peaks, key=work.peaks.get)
            report.update(preset=options["preset"], frames=[int(start), int(end)], keys=int(work.keys),
                          multi_link=bool(request.multi_link), keep_out=bool(request.keep_out),
                          body=json.loads(work.body) if work.body else None,
                          layer=follow_bake.TRACK, largest_swing_deg=math.degrees(work.peaks[top]),
                          largest_swing_bone=top,
                          swing_deg={b: math.degrees(v) for b, v in sorted(work.peaks.items())})
            message = (f"{len(bones)} bones, {work.keys} keys on {follow_bake.TRACK}, largest swing "
                       f"{report['largest_swing_deg']:.1f} deg ({top})")
            if report["body"] and report["body"].get("problem"):  # kept above the ground only
                message += f"; no body capsules: {report['body']['problem']}"
    except Exception as exc:  # noqa: BLE001 - sorted just below: the input's fault, or a bug
        if not _expected(exc, follow_bake):
            raise
        return file_error(path, exc)
    try:
        save_blend(path)
    except Exception as exc:  # noqa: BLE001 - a full disk or a read-only folder: this file's fault, reported
        if not _expected(exc, follow_bake):
            raise
        return file_error(path, exc)
    return {"file": path, "exit_code": 0, "report": {**report, "message": message}}


def run(args):
    bones = _bone_names(args.bones)
    preset = args.preset.strip().lower().replace("_", " ")
    if preset not in PRESETS:
        raise InvalidGoalError(f"unknown preset {args.preset!r}; choose one of {', '.join(PRESETS)}")
    if not math.isfinite(args.key_tolerance) or not 0.0 <= args.key_tolerance <= 10.0:
        raise InvalidGoalError(f"--key-tolerance must be 0 to 10 deg, got {args.key_tolerance:g}")
    if args.frames:
        check_frame_range(min(args.frames), max(args.frames), len(bones))
    if not blend_command_ready(args, "follow-through"):
        return 2
    options = _options(args, bones, preset)
    if is_batch(args):
        results = run_files(bake_file, args.files, options, jobs=args.jobs, scheduler=args.scheduler)
        return report_batch(results, args.out_dir, args.json, lambda r: r["report"]["message"])
    result = bake_file(args.files[0], options)
    if result["exit_code"]:
        print(f"leapwright: {result['error']}", file=sys.stderr)
    elif args.json:
        print(json.dumps(result["report"], indent=2))
    else:
        print(f"{result['file']}: {result['report']['message']}")
    return result["exit_code"]


def _expected(exc, follow_bake):
    """Errors that are the input's fault (reported in one line), not bugs."""
    from cli.blend import input_errors
    return isinstance(exc, (follow_bake.LagError, follow_bake.ownership.LayerError, *input_errors()))
