"""The README's pictures of the checker and of the in-air correction, made with the installed extension.

Usage::

    .venv/bin/python blend_examples/docs_pictures.py --zip dist/leapwright-0.1.0.zip --docs docs

Installs the zip the way a user would (``demo_session.install_extension``, in a
throw-away Blender user directory), then on the demo mannequin:

- ``check_readout.png``: a jump keyed by hand in slow motion, checked with
  *Check Jump*; the Check panel's lines exactly as its ``draw()`` emits them,
  laid out with matplotlib (headless Blender has no window to screenshot);
- ``path_overlay.png``: the same scene rendered with Cycles on the CPU, with the
  path overlay's geometry (the function its draw handler draws from) projected
  through the camera and drawn over the render;
- ``body_arc_before_after.png``: the written jump with an arm swing keyed in the
  air (up late in the rise, down again before touchdown); the whole-body COM height read back from the evaluated rig before
  and after *Keep Body on Its Arc*, against the take-off arc, with the
  operator's report (see ``docs_arc.py``).
"""

import argparse
import contextlib
import os
import shutil
import sys
import tempfile
import time

import numpy as np

from demo_session import JUMP_DISTANCE as DISTANCE, JUMP_HEIGHT as PANEL_HEIGHT  # the panel's goals [m]

HERE = os.path.dirname(os.path.abspath(__file__))

#: The hand-keyed take: a lower jump onto the same crate, sampled at twice the
#: scene's rate, so it plays at half speed (hang time doubled, g / 4 implied).
TAKE_HEIGHT, TAKE_SAMPLE_FPS = 0.5, 48
TICK_LENGTH = 0.06  # the overlay's Tick size setting [m], large enough to read in a small picture
OVERLAY_SIZE = (800, 900)  # the full camera picture [px]; only the part shown is rendered


def _channel_location(rig, bone, world_point):
    """``pose_bone.location`` that puts ``bone``'s head at ``world_point`` [BU].

    The bone's parent (the root) is never posed, so the channel is the rest-frame
    displacement of the head.
    """
    from mathutils import Vector

    b = rig.data.bones[bone]
    armature_point = rig.matrix_world.inverted() @ Vector(world_point)
    return b.matrix_local.to_3x3().inverted() @ (armature_point - b.head_local)


def key_take(rig, core, goals, sample_fps, body_bone, feet, tuck=0.1):
    """Key the body bone and both foot controllers on every frame from a plan.

    The plan of ``goals`` is sampled at ``sample_fps`` and each sample goes on the
    next scene frame, so at a lower scene rate the whole jump plays in slow motion.

    Returns
    -------
    int  the number of frames keyed (from frame 1)
    """
    plan = core.plan.planner.plan_jump(goals)
    t = np.arange(int(np.floor(plan.duration_s * sample_fps)) + 1) / sample_fps
    forward, up = -1.0 * plan.forward(t), plan.height(t)  # the mannequin faces -Y
    ball_forward, ball_up = core.plan.feet.foot_ball_path(plan, t, tuck=tuck)
    body = rig.pose.bones[body_bone]
    rest = rig.data.bones[body_bone].head_local
    for i in range(len(t)):
        body.location = _channel_location(rig, body_bone, (rest.x, rest.y + forward[i], rest.z + up[i]))
        body.keyframe_insert("location", frame=i + 1)
        for name in feet:
            head = rig.data.bones[name].head_local
            pb = rig.pose.bones[name]
            pb.location = _channel_location(rig, name, (head.x, head.y - ball_forward[i], head.z + ball_up[i]))
            pb.keyframe_insert("location", frame=i + 1)
    for pb in [body] + [rig.pose.bones[n] for n in feet]:
        pb.location = (0.0, 0.0, 0.0)
    return len(t)



def check_pictures(addon, docs, work_dir, log):
    """``check_readout.png`` and ``path_overlay.png`` from a hand-keyed slow-motion jump."""
    import bpy
    from mathutils import Vector

    import docs_overlay as dov
    import docs_readout as dr
    from docs_scene import FPS, captured_output, demo_scene, report_lines
    from demo_session import operator_call

    scene, o, s = demo_scene(PANEL_HEIGHT)
    s.distance, s.landing_height = DISTANCE, o["crate_top"]
    rig, core = o["rig"], addon.core
    goals = core.plan.goals.JumpGoals(height=TAKE_HEIGHT, distance=DISTANCE, landing_height=o["crate_top"],
                                 standing_com_height=o["standing_com_height"])
    n = key_take(rig, core, goals, TAKE_SAMPLE_FPS, o["body_bone"], o["foot_controllers"])
    scene.frame_start, scene.frame_end = 1, n
    c = scene.leapwright_check
    c.tick_length = TICK_LENGTH
    c.add_markers = True
    c.show_overlay = True  # starts the draw handler, as the checkbox does
    printed = []
    with captured_output(printed):
        operator_call(bpy.ops.leapwright.check_jump, rig)
    log += [f"check_jump: {line}" for line in report_lines(printed)]
    root = dr.record_panel(bpy.types.LEAPWRIGHT_PT_check, bpy.context)
    log += [f"panel: {t}" for t in dr.panel_text(root)]
    note = (f"The Check panel after Check Jump on the demo mannequin, drawn with matplotlib from the calls its "
            f"draw() makes (headless Blender has no window). The jump was keyed by hand: a {TAKE_HEIGHT} m jump "
            f"onto the crate keyed frame by frame at {TAKE_SAMPLE_FPS} samples per second of motion, played "
            f"at {FPS} fps.")
    readout = dr.draw_readout(root, bpy.types.LEAPWRIGHT_PT_check.bl_label, note,
                              os.path.join(docs, "check_readout.png"))

    geometry = addon.check.overlay.overlay_geometry(scene)
    frame = c.findings[0].first_frame if len(c.findings) else scene.frame_start  # the take-off
    scene.render.resolution_x, scene.render.resolution_y = OVERLAY_SIZE
    scene.frame_set(frame)
    crate = o["crate"]
    extra = [obj.matrix_world @ Vector(corner) for obj in o["body"] for corner in obj.bound_box]  # the body
    extra += [crate.matrix_world @ v.co for v in crate.data.vertices if v.co.z > 0.0]  # the crate's top
    crop = dov.crop_box(scene, geometry, OVERLAY_SIZE, extra)
    render = dov.render_region(scene, frame, work_dir, OVERLAY_SIZE, crop)
    caption = (f"The path overlay's geometry (path_overlay.overlay_geometry, what its draw handler draws), "
               f"drawn for this picture over a Cycles render of frame {frame}. Blue: the checked COM path of the "
               f"hand-keyed take, a white tick per frame; orange: the parabola its flight timing implies "
               f"(g = {c.implied_gravity:.2f} m/s²); magenta: the arc the panel's goals plan ({PANEL_HEIGHT} m "
               f"rise).")
    overlay = dov.draw_overlay(render, geometry, scene, os.path.join(docs, "path_overlay.png"), caption, crop)
    log.append(f"overlay: {len(geometry['path'])} path points, {len(geometry['implied'])} implied arc(s), "
               f"{0 if geometry['planned'] is None else len(geometry['planned'])} planned points; frame {frame}")
    return [readout, overlay]


@contextlib.contextmanager
def extension_installed(zip_path):
    """Blender with the zip installed and enabled, in a throw-away user directory; yields the add-on."""
    import demo_session

    if not os.path.isfile(zip_path):
        raise SystemExit(f"no such zip: {zip_path}; run `make build` first")
    user_root = tempfile.mkdtemp(prefix="lw-docs-user-")
    demo_session.private_user_dirs(user_root)  # before the first ``import bpy``
    import bpy
    import addon_utils

    try:
        bpy.ops.wm.read_factory_settings(use_empty=True)  # then install: a new file disables add-ons
        demo_session.install_extension(zip_path)
        yield sys.modules[demo_session.MODULE]
    finally:
        # A process that exits with add-on classes registered can crash or hang.
        if demo_session.MODULE in bpy.context.preferences.addons:
            addon_utils.disable(demo_session.MODULE, default_set=False)
        shutil.rmtree(user_root, ignore_errors=True)


def main(argv=None):
    ap = argparse.ArgumentParser(description="draw the README's checker and in-air correction pictures")
    ap.add_argument("--zip", required=True, help="the built extension, dist/leapwright-<version>.zip")
    ap.add_argument("--docs", default=os.path.join(os.path.dirname(HERE), "docs"), help="output directory")
    ap.add_argument("--only", choices=("check", "arc"), default=None, help="draw only one set")
    args = ap.parse_args(argv)
    docs = os.path.abspath(args.docs)
    os.makedirs(docs, exist_ok=True)
    sys.path.insert(0, HERE)
    started, log, outputs = time.monotonic(), [], []
    from script_exit import run_and_exit

    def body():
        nonlocal outputs
        with extension_installed(os.path.abspath(args.zip)) as addon, tempfile.TemporaryDirectory() as work_dir:
            if args.only in (None, "check"):
                outputs += check_pictures(addon, docs, work_dir, log)
            if args.only in (None, "arc"):
                import docs_arc

                outputs += docs_arc.arc_pictures(addon, docs, log)
        print("\n".join(log + [f"wrote {p} ({os.path.getsize(p) // 1024} kB)" for p in outputs]))
        print(f"docs pictures done in {time.monotonic() - started:.0f} s")

    run_and_exit("docs pictures", body)


if __name__ == "__main__":
    main()
