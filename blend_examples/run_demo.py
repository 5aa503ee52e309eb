"""The leapwright demo: a mannequin jumps onto a crate, written by the installed extension.

Usage::

    .venv/bin/python blend_examples/run_demo.py --zip dist/leapwright-<version>.zip --out blend_examples/out

Steps: install and enable the zip the way a user would (in a throw-away
Blender user directory), build the demo scene, run the passes — each sets the
extension's properties and calls its operators, never the core directly —
then save ``jump_demo.blend`` and draw the pictures from the evaluated file:
``jump_demo_force.png`` (force-plate chart) and ``jump_demo_strip.png`` (a
Cycles strip of key moments). ``--docs DIR`` also copies the pictures there.

A later capability adds its pass to ``PASSES``: a function taking the
:class:`Demo` and returning a one-line summary.
"""

import argparse
import json
import os
import shutil
import sys
import tempfile
import time

from demo_follow_through import follow_through_pass
from demo_session import (FPS, HERE, HOLD_FRAMES, JUMP_DISTANCE, JUMP_HEIGHT, MODULE, START_FRAME,  # noqa: F401
                          STRIP_COLUMNS, Demo, blocking_pass, install_extension, private_user_dirs)
from demo_arms import arms_pass

#: The demo's passes, in order. Later capabilities append theirs.
PASSES = (blocking_pass, arms_pass, follow_through_pass)


def _write_manifest(demo, out_dir, frame_size, moments):
    """``jump_demo.json``: what the demo asked for and where, for its tests and readers."""
    o = demo.objects
    info = {"blend": "jump_demo.blend", "rig": o["rig"].name, "body_bone": o["body_bone"],
            "foot_controllers": list(o["foot_controllers"]), "crate": o["crate"].name,
            "goals": {"height_m": JUMP_HEIGHT, "distance_m": JUMP_DISTANCE, "landing_height_m": o["crate_top"],
                      "standing_com_height_m": o["standing_com_height"], "fps": FPS},
            "strip": {"tile_size": list(frame_size), "columns": STRIP_COLUMNS,
                      "moments": [[int(f), label] for f, label in moments]}, "passes": demo.log}
    path = os.path.join(out_dir, "jump_demo.json")
    with open(path, "w", encoding="utf-8") as f:
        json.dump(info, f, indent=2)
    return path


def write_outputs(demo, out_dir, docs_dir=None):
    """Save the .blend, then draw the chart and the strip from the evaluated scene."""
    import bpy

    import demo_pictures as pics
    from demo_set import FRAME_SIZE

    scene, o = demo.scene, demo.objects
    blend = os.path.join(out_dir, "jump_demo.blend")
    bpy.ops.wm.save_as_mainfile(filepath=blend, check_existing=False)
    samples = pics.sample_scene(scene, o["rig"], o["body_bone"])
    title = (f"jump onto a {o['crate_top']:.1f} m crate: {JUMP_HEIGHT:.1f} m rise, "
             f"{JUMP_DISTANCE:.1f} m forward (evaluated keys, {FPS} fps)")
    chart = pics.write_force_chart(os.path.join(out_dir, "jump_demo_force.png"), samples, title)
    # The trail is drawn for the pictures only; the saved file holds just the scene and the keys.
    pics.add_com_trail(scene, samples, o["rig"], o["body_bone"])
    moments = pics.key_moments(samples)
    frames_dir = os.path.join(out_dir, "strip_frames")
    os.makedirs(frames_dir, exist_ok=True)
    rendered = pics.render_moments(scene, moments, frames_dir)
    strip = pics.compose_strip(rendered, moments, os.path.join(out_dir, "jump_demo_strip.png"),
                               FRAME_SIZE, STRIP_COLUMNS)
    outputs = [blend, chart, strip, _write_manifest(demo, out_dir, FRAME_SIZE, moments)]
    if docs_dir:
        # Smaller copies for the README, each well under 300 kB.
        os.makedirs(docs_dir, exist_ok=True)
        small = (FRAME_SIZE[0] * 2 // 3, FRAME_SIZE[1] * 2 // 3)
        outputs.append(pics.compose_strip(rendered, moments, os.path.join(docs_dir, "jump_demo_strip.png"),
                                                small, STRIP_COLUMNS))
        shutil.copy(chart, os.path.join(docs_dir, os.path.basename(chart)))
        outputs.append(os.path.join(docs_dir, os.path.basename(chart)))
    return outputs


def main(argv=None):
    ap = argparse.ArgumentParser(description="build the demo scene and write a jump through the extension")
    ap.add_argument("--zip", required=True, help="the built extension, dist/leapwright-<version>.zip")
    ap.add_argument("--out", default=os.path.join(HERE, "out"), help="output directory")
    ap.add_argument("--docs", default=None, help="also copy the pictures into this directory (e.g. docs)")
    args = ap.parse_args(argv)
    zip_path = os.path.abspath(args.zip)
    if not os.path.isfile(zip_path):
        raise SystemExit(f"no such zip: {zip_path}; run `make build` first")
    out_dir = os.path.abspath(args.out)
    os.makedirs(out_dir, exist_ok=True)

    started = time.monotonic()
    user_root = tempfile.mkdtemp(prefix="lw-demo-user-")
    private_user_dirs(user_root)
    sys.path.insert(0, HERE)
    import bpy
    import addon_utils

    import mannequin

    from script_exit import run_and_exit

    def body():
        objects = mannequin.build_demo_scene(fps=FPS)
        install_extension(zip_path)  # after the scene reset: read_factory_settings disables add-ons
        demo = Demo(bpy.context.scene, objects)
        for step in PASSES:
            demo.log.append(step(demo))
            print(demo.log[-1], flush=True)
        for path in write_outputs(demo, out_dir, args.docs):
            print(f"wrote {path} ({os.path.getsize(path) // 1024} kB)", flush=True)
        print(f"demo done in {time.monotonic() - started:.0f} s", flush=True)

    def cleanup():
        if MODULE in bpy.context.preferences.addons:
            addon_utils.disable(MODULE, default_set=False)
        shutil.rmtree(user_root, ignore_errors=True)

    run_and_exit("demo", body, cleanup)


if __name__ == "__main__":
    main()
