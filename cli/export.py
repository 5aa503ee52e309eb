"""``leapwright export``: what would break a rig's export to a game engine, headless.

The same checks as the panel's Check Export (``addon.export.checks``, rules in
``core.export.game_checks``): the scene's unit scale, a mirrored or stretched rig object,
keys between frames, a root bone whose axes do not stand on the scene's up axis, and
bone scale keys. ``--snap-keys`` first moves leapwright's own keys between frames onto
whole frames (each by at most half a frame, the animator's keys untouched) and saves
the file, as Snap and Check does. Several files run through the same process pool
(or Dask cluster) as ``leapwright check``.

Exit codes: 0 ready to export, 1 export issues found, 2 bad input (one line on stderr).
"""

import sys

from cli.batch import add_batch_arguments, blend_command_ready, file_error, is_batch, report_batch, run_files
from cli.blend import addon_module

ROOT_DEFAULT = "root"  # the jump panel's default root bone (addon/settings.py)


def add_parser(subparsers):
    """Register ``export`` on an argparse subparsers object."""
    p = subparsers.add_parser(
        "export", help="check .blend rigs for what breaks game exports (unit scale, object scale, "
                             "keys between frames, root axes, bone scale keys)",
        description="The panel's export checks on a rig in each .blend (Blender as a module).")
    p.add_argument("files", nargs="+", metavar="FILE", help=".blend files")
    p.add_argument("--object", required=True, help="the rig (armature or object) to check")
    p.add_argument("--root-bone", default=None,
                   help="root bone whose axes must stand on the up axis (default: the jump panel's root bone "
                        f"saved in the file, else {ROOT_DEFAULT!r}; skipped when the rig has no such bone)")
    p.add_argument("--snap-keys", action="store_true",
                   help="first move leapwright's keys between frames onto whole frames and save the file")
    add_batch_arguments(p)
    p.add_argument("--json", action="store_true", help="print JSON (the report, or the batch summary)")
    p.set_defaults(func=run)
    return p


def _saved_root_bone(scene):
    from cli.blend import saved_setting

    value = saved_setting(scene, "root_bone")
    return str(value) if value is not None else ROOT_DEFAULT


def check_export_file(path, options):
    """The export checks of one .blend: ``{"file", "exit_code", "report" or "error"}`` (never raises
    for the input's faults: a worker of a batch)."""
    from cli.blend import input_errors, named_object, open_blend, save_blend

    path = str(path)
    try:
        bpy = open_blend(path)
        rig = named_object(bpy, options["object"], path)
        checks = addon_module("export.checks")
        root = options["root_bone"] if options["root_bone"] is not None else _saved_root_bone(bpy.context.scene)
        moved, found = checks.check(bpy.context.scene, bpy.context.view_layer, rig, root, options["snap_keys"])
    except Exception as exc:  # noqa: BLE001 - the input's fault (either copy of the core's errors), or a bug
        if not isinstance(exc, input_errors()):
            raise
        return file_error(path, exc)
    if moved:
        save_blend(path)
    has_root = rig.type == "ARMATURE" and root in rig.data.bones
    report = {"rig": rig.name, "root_bone": root if has_root else None, "snapped_keys": int(moved),
              "issues": [{"kind": i.kind, "message": i.message} for i in found]}
    return {"file": path, "exit_code": 1 if found else 0, "report": report}


def report_text(result):
    """The plain-text report of one file, in the panel's words."""
    r = result["report"]
    lines = [f"{result['file']}: '{r['rig']}'"
             + (f": moved {r['snapped_keys']} key(s) onto whole frames" if r["snapped_keys"] else "")]
    for issue in r["issues"]:
        lines.append(f"[export] {issue['kind']}: {issue['message']}")
    if not r["issues"]:
        lines.append(f"'{r['rig']}' is ready to export")
    return "\n".join(lines)


def run(args):
    """Run ``export``; returns the exit code (0, 1, or 2 with one line on stderr)."""
    import json

    if not blend_command_ready(args, "export"):
        return 2
    options = {"object": args.object, "root_bone": args.root_bone, "snap_keys": args.snap_keys}
    if is_batch(args):
        results = run_files(check_export_file, args.files, options, jobs=args.jobs, scheduler=args.scheduler)
        return report_batch(results, args.out_dir, args.json,
                            lambda r: "ready to export" if not r["report"]["issues"] else "")
    result = check_export_file(args.files[0], options)
    if result["exit_code"] == 2:
        print(f"leapwright export: {result['error']}", file=sys.stderr)
    elif args.json:
        print(json.dumps(result["report"], indent=2))
    else:
        print(report_text(result))
    return result["exit_code"]
