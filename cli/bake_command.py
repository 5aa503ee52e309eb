"""``leapwright bake``: drag and follow-through baked into .blend files, headless.

Blender runs in-process as the ``bpy`` module, imported only here and only
when the command runs, so the other commands never need it. Each file is
opened, baked exactly as ``bpy.ops.leapwright.bake_lag`` bakes (same module,
same layer, re-baking replaces) and saved in place.
"""

import math
import os
import sys

from core.errors import InvalidGoalError

from .blend_tracks import addon_module

PRESETS = ("hair", "cloth", "tail", "heavy prop")


def add_parser(subparsers):
    p = subparsers.add_parser("bake", help="bake follow-through on chosen bones of .blend files",
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
    p.add_argument("--remove", action="store_true", help="remove a previous bake instead of baking")
    p.set_defaults(func=run)
    return p


def _bone_names(values):
    return tuple(n.strip() for v in values for n in v.split(",") if n.strip())


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


def run(args):
    bones = _bone_names(args.bones)
    preset = args.preset.strip().lower().replace("_", " ")
    if preset not in PRESETS:
        raise InvalidGoalError(f"unknown preset {args.preset!r}; choose one of {', '.join(PRESETS)}")
    if not math.isfinite(args.key_tolerance) or not 0.0 <= args.key_tolerance <= 10.0:
        raise InvalidGoalError(f"--key-tolerance must be 0 to 10 deg, got {args.key_tolerance:g}")
    missing = [f for f in args.files if not os.path.isfile(f)]
    if missing:
        raise InvalidGoalError(f"no such file: {missing[0]}")
    try:
        import bpy
    except ImportError:
        print("leapwright: bake needs Blender as a Python module (pip install bpy)", file=sys.stderr)
        return 2
    lag_bake = addon_module("lag_bake")
    failed = 0
    for path in args.files:
        bpy.ops.wm.open_mainfile(filepath=os.path.abspath(path))
        scene = bpy.context.scene
        try:
            rig = _find_rig(bpy, args.rig, bones)
            if args.remove:
                done = lag_bake.remove(rig)
                message = "removed the bake" if done else "had no bake"
            else:
                start, end = args.frames if args.frames else (scene.frame_start, scene.frame_end)
                jump = getattr(scene, "leapwright", None)
                request = lag_bake.LagRequest(
                    bones=bones, parameters=lag_bake.chain_preset(preset), frame_start=start, frame_end=end,
                    key_tolerance=math.radians(args.key_tolerance), on_twos=args.on_twos,
                    reset_frames=lag_bake.marker_resets(scene, start, end, ""),
                    gravity=jump.gravity if jump is not None else lag_bake.STANDARD_GRAVITY)
                work = lag_bake.prepare(scene, rig, request)
                lag_bake.apply(rig, work)
                top = max(work.peaks, key=work.peaks.get)
                message = (f"{len(bones)} bones, {work.keys} keys on {lag_bake.TRACK}, largest swing "
                           f"{math.degrees(work.peaks[top]):.1f} deg ({top})")
        except (lag_bake.LagError, lag_bake.ownership.LayerError, InvalidGoalError, Exception) as exc:
            if not _expected(exc, lag_bake):
                raise
            print(f"leapwright: {path}: {exc}", file=sys.stderr)
            failed += 1
            continue
        bpy.ops.wm.save_mainfile(filepath=os.path.abspath(path))
        print(f"{path}: {message}")
    return 2 if failed else 0


def _expected(exc, lag_bake):
    """Errors that are the input's fault (reported in one line), not bugs."""
    from addon.core.errors import LeapwrightError as VendoredError
    from core.errors import LeapwrightError
    return isinstance(exc, (lag_bake.LagError, lag_bake.ownership.LayerError, LeapwrightError, VendoredError))
