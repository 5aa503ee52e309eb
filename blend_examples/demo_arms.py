"""The demo's arm swing, and the README's before/after of re-timing a late one.

``arms_pass(demo)`` is a pass of ``run_demo.py``: it names the mannequin's arm
bones in the panel and places the swing on the written jump (*Place Arm Swing*),
then reads it back with *Check Arm Swing*. Run as a script it draws
``arm_swing_before_after.png``: the demo jump with both arms keyed by hand
(``keyframe_insert``) in a swing that peaks :data:`LATE` frames after take-off, the
arm's elevation read from the evaluated rig, then *Re-time Arm Swing*, read again::

    .venv/bin/python blend_examples/demo_arms.py --zip dist/leapwright-<version>.zip --out docs

``--probe FILE.blend`` prints ``SWING {json}``: the evaluated shoulder and wrist of
each arm at quarter frames, the facing and the phase markers of a saved demo file
(for tests/blender_demo). Blender is imported inside the functions: ``run_demo``
points Blender's user directories elsewhere before the first ``import bpy``.
"""

import argparse
import json
import math
import os
import sys
import tempfile

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
LATE = 6  # frames after take-off the hand-keyed swing peaks
SUBSTEPS = 4  # samples per frame
#: The hand-keyed swing: (event of the written jump, frames after it, elevation [deg]).
HAND_KEYS = (("propulsion", -10, 0.0), ("propulsion", LATE, -40.0), ("flight", LATE, 100.0),
             ("landing", LATE, 40.0), ("landing", LATE + 10, 0.0))
SIDES = "LR"
ARMS = ("upper_arm.L", "upper_arm.R")  # the mannequin's bones (mannequin.py)
FOREARMS = ("forearm.L", "forearm.R")


def _call(op, rig, **props):
    from demo_session import operator_call

    operator_call(op, rig, **props)


def _lines(rig):
    addon = sys.modules["bl_ext.user_default.leapwright"]
    return [text for text, _icon in addon.arms.operators.LAST.get(rig.name, [])]


def arms_pass(demo):
    """Place an arm swing on the written jump with the extension, and check it."""
    import bpy

    rig = demo.objects["rig"]
    s = demo.scene.leapwright_arms
    s.upper_arm_left, s.upper_arm_right = ARMS
    s.forearm_left, s.forearm_right = FOREARMS
    # Arms lowered only 10 deg through the flight into the reach for landing: limbs that
    # move in the air move the whole-body COM off its arc (45 deg moves it 1.4 cm, which
    # the check rightly reports); 10 deg keeps it within the check's 1 cm.
    s.landing_reach = s.upswing - math.radians(10.0)
    _call(bpy.ops.leapwright.place_arm_swing, rig)
    placed = _lines(rig)
    _call(bpy.ops.leapwright.check_arm_swing, rig)
    return f"arm swing placed: {placed[1]}; {placed[2]}; checked: {'; '.join(_lines(rig))}"


def markers(scene):
    """``{force-plate phase: frame}`` of the written jump's ``lw:`` markers (first hop)."""
    from leapwright.core.base.phase_words import phase_of_marker  # the repository's core: the marker words

    found = {m.frame: phase_of_marker(m.name) for m in scene.timeline_markers}
    return {p[0]: frame for frame, p in found.items() if p is not None and p[1] in (None, 1)}


def arm_points(scene, rig, frames):
    """World shoulder (upper arm head) and wrist (hand head) per side [m], each (F, 3), evaluated."""
    import bpy

    m = scene.unit_settings.scale_length
    out = {s: ([], []) for s in SIDES}
    for f in frames:
        whole = int(math.floor(f))
        scene.frame_set(whole, subframe=float(f - whole))
        ev = rig.evaluated_get(bpy.context.evaluated_depsgraph_get())
        w = ev.matrix_world
        for s in SIDES:
            out[s][0].append(np.array(w @ ev.pose.bones[f"upper_arm.{s}"].head) * m)
            out[s][1].append(np.array(w @ ev.pose.bones[f"hand.{s}"].head) * m)
    return {s: (np.array(a), np.array(b)) for s, (a, b) in out.items()}


def facing(rig):
    """The mannequin's world forward (its armature -Y, as mannequin.py builds it) and up."""
    from mathutils import Vector

    f = np.array(rig.matrix_world.to_3x3() @ Vector((0.0, -1.0, 0.0)))
    return f / np.linalg.norm(f), np.array([0.0, 0.0, 1.0])


def elevation_deg(shoulder, wrist, forward, up):
    """Angle [deg] of the shoulder-to-wrist line in the side view: 0 hanging, 90 level forward."""
    d = wrist - shoulder
    return np.degrees(np.unwrap(np.arctan2(d @ forward, -(d @ up))))


def key_late_swing(scene, rig):
    """Key both upper arms as an animator would, peaking :data:`LATE` frames after take-off."""
    from mathutils import Quaternion

    marks = markers(scene)
    for s in SIDES:
        pb = rig.pose.bones[f"upper_arm.{s}"]
        b = rig.data.bones[pb.name].matrix_local.to_quaternion()
        for phase, after, deg in HAND_KEYS:
            if phase == "propulsion" and after > 0:  # the upswing starts inside the push (halfway at most)
                after = min(after, 0.5 * (marks["flight"] - marks["propulsion"]))
            # A turn about the character's side-to-side axis (armature -X: forward x up).
            pb.rotation_quaternion = b.inverted() @ Quaternion((-1.0, 0.0, 0.0), math.radians(deg)) @ b
            pb.keyframe_insert("rotation_quaternion", frame=marks[phase] + after)
        pb.rotation_quaternion = (1.0, 0.0, 0.0, 0.0)
    scene.frame_end = max(scene.frame_end, marks["landing"] + LATE + 14)


def _track(scene, rig):
    frames = np.arange(scene.frame_start * SUBSTEPS, scene.frame_end * SUBSTEPS + 1) / SUBSTEPS
    pts = arm_points(scene, rig, frames)
    fwd, up = facing(rig)
    return frames, elevation_deg(*pts["L"], fwd, up)


def _peak(frames, elev, last):
    inside = frames <= last
    i = int(np.argmax(np.where(inside, elev, -np.inf)))
    return float(frames[i]), float(elev[i])


def draw_before_after(path, frames, before, after, marks, moved_line):
    """Elevation against frames, the push and the flight shaded, take-off marked."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(8, 4.5), dpi=100)
    spans = (("unweighting", "propulsion", "dip", "#dddddd"), ("propulsion", "flight", "push", "#b7e4c7"),
             ("flight", "landing", "in the air", "#c6dbef"))
    for a, b, label, colour in spans:
        ax.axvspan(marks[a], marks[b], color=colour, lw=0)
        ax.text((marks[a] + marks[b]) / 2.0, -57, label, ha="center", va="bottom", fontsize=9)
    ax.axvline(marks["flight"], color="k", lw=1.0)
    ax.text(marks["flight"] + 0.3, -46, "take-off", fontsize=9, ha="left", va="center")
    for elev, style, name in ((before, dict(color="#a50f15", ls="--"), "keyed by hand"),
                              (after, dict(color="#08519c", ls="-"), "after Re-time Arm Swing")):
        f, v = _peak(frames, elev, marks["landing"])
        off = f - marks["flight"]
        ax.plot(frames, elev, lw=2.0, label=f"{name}: peak {off:+.1f} frames from take-off", **style)
        ax.plot([f], [v], "o", color=style["color"])
    ax.set_xlim(marks["unweighting"] - 4, marks["landing"] + LATE + 12)
    ax.set_ylim(-60, 165)
    ax.set_xlabel("frame (24 fps)")
    ax.set_ylabel("arm elevation [deg]\n(0 hanging, 90 level forward)")
    ax.set_title("A late arm swing re-timed into the push (evaluated rig, left arm)", fontsize=11)
    ax.legend(loc="upper right", fontsize=8, title=moved_line, title_fontsize=8)
    fig.tight_layout()
    fig.savefig(path)
    plt.close(fig)
    return path


def before_after(out_dir, zip_path):
    """Build the demo jump, key a late swing, re-time it with the extension, draw the chart."""
    import bpy

    import mannequin
    import demo_session

    objects = mannequin.build_demo_scene(fps=demo_session.FPS)
    demo_session.install_extension(zip_path)
    demo = demo_session.Demo(bpy.context.scene, objects)
    print(demo_session.blocking_pass(demo), flush=True)
    scene, rig = demo.scene, objects["rig"]
    key_late_swing(scene, rig)
    frames, before = _track(scene, rig)
    s = scene.leapwright_arms
    s.upper_arm_left, s.upper_arm_right = ARMS
    _call(bpy.ops.leapwright.retime_arm_swing, rig)
    moved = _lines(rig)[0].split(";")[0]
    _, after = _track(scene, rig)
    print(moved, "|", " | ".join(_lines(rig)[1:]), flush=True)
    os.makedirs(out_dir, exist_ok=True)
    return draw_before_after(os.path.join(out_dir, "arm_swing_before_after.png"), frames, before, after,
                             markers(scene), moved)


def probe(blend):
    """Print ``SWING {json}`` for a saved demo file (plain Blender data, add-on not needed)."""
    import bpy

    bpy.ops.wm.open_mainfile(filepath=os.path.abspath(blend))
    scene = bpy.context.scene
    rig = next(o for o in bpy.data.objects if o.type == "ARMATURE")
    frames = np.arange(scene.frame_start * SUBSTEPS, scene.frame_end * SUBSTEPS + 1) / SUBSTEPS
    pts = arm_points(scene, rig, frames)
    fwd, up = facing(rig)
    print("SWING " + json.dumps({"fps": scene.render.fps / scene.render.fps_base, "frames": frames.tolist(),
                                 "forward": fwd.tolist(), "up": up.tolist(), "markers": markers(scene),
                                 "arms": {s: [p.tolist() for p in pts[s]] for s in SIDES}}))


def main(argv=None):
    ap = argparse.ArgumentParser(description="the arm swing's before/after chart, or a probe of a demo file")
    ap.add_argument("--zip", help="the built extension, dist/leapwright-<version>.zip")
    ap.add_argument("--out", default=os.path.join(os.path.dirname(HERE), "docs"), help="output directory")
    ap.add_argument("--probe", help="a saved demo .blend to read back instead")
    args = ap.parse_args(argv)
    sys.path.insert(0, HERE)
    from script_exit import run_and_exit

    def body():
        if args.probe:
            probe(args.probe)
        else:
            if not args.zip or not os.path.isfile(args.zip):
                raise SystemExit(f"no such zip: {args.zip}; run `make build` first")
            import demo_session

            demo_session.private_user_dirs(tempfile.mkdtemp(prefix="lw-swing-user-"))
            path = before_after(os.path.abspath(args.out), os.path.abspath(args.zip))
            print(f"wrote {path} ({os.path.getsize(path) // 1024} kB)")

    def cleanup():
        import addon_utils
        import bpy

        if session := sys.modules.get("demo_session"):
            if session.MODULE in bpy.context.preferences.addons:
                addon_utils.disable(session.MODULE, default_set=False)

    run_and_exit("demo_arms", body, cleanup)


if __name__ == "__main__":
    main()
