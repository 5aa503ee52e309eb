"""README picture of the in-air correction: the body's centre of mass (COM) before and after.

The demo jump onto the crate is written by the extension (*Write Jump Keys*), then
both arms are keyed by hand (``keyframe_insert``) swinging up late in the rise and
down again before touchdown. The
whole-body COM is read back from the evaluated rig (``body_com.whole_body_com``,
the extension's segment model) before and after *Keep Body on Its Arc*, and drawn
against the arc fixed at take-off (the arc the operator aims at). As a check from
outside the extension, each COM track in the air is also compared with its own
least-squares free-fall parabola under the scene's gravity (projectile motion:
z = z0 + v0 t - g t^2 / 2, textbook mechanics).
"""

import math
import os
import textwrap

import bpy
import numpy as np
from mathutils import Quaternion

from docs_scene import FPS
from demo_session import JUMP_DISTANCE as DISTANCE, JUMP_HEIGHT as HEIGHT  # the demo's jump [m]

#: The arm swing keyed in the air: (fraction of the flight from take-off, degrees about the
#: upper arm's X): up late in the rise, down again by the last frame in the air.
ARM_SWING = ((0.25, 0.0), (0.55, 150.0), (0.95, 0.0))
ARM_LABELS = ("arms start up", "arms up", "arms down")
SUBSTEPS = 4  # COM samples per frame for the curves


def _pyplot():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def flight_markers(scene):
    """(take-off frame, touchdown frame) of the written jump's ``lw:take-off`` / ``lw:touchdown`` markers."""
    from leapwright.core.base.phase_words import phase_of_marker  # the repository's core: the marker words

    marks = sorted((m.frame, m.name) for m in scene.timeline_markers if m.name.startswith("lw:"))
    names = [(phase_of_marker(n) or ("",))[0] for _, n in marks]
    i = names.index("flight")
    return marks[i][0], marks[i + 1][0]


def key_arm_swing(rig, takeoff, touchdown):
    """Key both upper arms swinging up and down in the flight (:data:`ARM_SWING`); return the key frames."""
    span = touchdown - takeoff
    keys = [(int(round(takeoff + f * span)), deg) for f, deg in ARM_SWING]
    for side in "LR":
        pb = rig.pose.bones[f"upper_arm.{side}"]
        for frame, deg in keys:
            pb.rotation_quaternion = Quaternion((1.0, 0.0, 0.0), math.radians(deg))
            pb.keyframe_insert("rotation_quaternion", frame=frame)
        pb.rotation_quaternion = (1.0, 0.0, 0.0, 0.0)
    return [f for f, _ in keys]


def parabola_through(frames, z, at):
    """The quadratic through (``frames``, ``z``) by least squares, evaluated at frames ``at``.

    The arc is a parabola in time; drawing it between its whole-frame points needs the
    curve itself (a straight chord sags g dt^2 / 8, about 2 mm at 24 fps).
    """
    return np.polyval(np.polyfit(frames, z, 2), at)


def free_fall_residual(com, fps, gravity):
    """Largest distance [m] of a COM track (F, 3) from its least-squares free-fall parabola."""
    t = np.arange(len(com)) / fps
    fall = np.array(com, float)
    fall[:, 2] += 0.5 * gravity * t ** 2
    design = np.column_stack([np.ones_like(t), t])
    fit = design @ np.linalg.lstsq(design, fall, rcond=None)[0]
    return float(np.max(np.linalg.norm(fall - fit, axis=1)))


def draw_chart(path, curves, arc, flight, raise_keys, report, caption):
    """COM height before/after against the arc (top), and departure from the arc in the air (bottom)."""
    plt = _pyplot()
    fig, (top, low) = plt.subplots(2, 1, figsize=(8.0, 6.4), dpi=100, height_ratios=(3, 2))
    f, before, after = curves["frames"], curves["before"], curves["after"]
    af, az = arc
    for ax in (top, low):
        ax.axvspan(flight[0], flight[1], color="#dbe9f6", lw=0, zorder=0)
        for k in raise_keys:
            ax.axvline(k, color="#999999", lw=0.8, ls=":", zorder=1)
    top.plot(f, before[:, 2], color="#c0392b", lw=1.6, label="before: arms keyed swinging up in the air")
    top.plot(f, after[:, 2], color="#1f5fa8", lw=1.6, label="after Keep Body on Its Arc")
    top.plot(af, az[:, 2], ls="none", marker="o", ms=3.2, mfc="none", mec="black", mew=0.8,
             label="arc fixed at take-off (its points, one a frame)")
    top.set_ylabel("whole-body COM height [m]")
    lo, hi = az[:, 2].min(), az[:, 2].max()
    top.set_ylim(lo - 0.55 * (hi - lo), hi + 0.2 * (hi - lo))
    top.set_xlim(flight[0] - 8, flight[1] + 8)
    top.legend(loc="lower center", fontsize=8, ncol=1, framealpha=0.9)
    for k, label in zip(raise_keys, ARM_LABELS):
        top.text(k, top.get_ylim()[1], " " + label, fontsize=7.5, va="top", color="#555555")
    inside = (f >= af[0]) & (f <= af[-1])
    arc_z = parabola_through(af, az[:, 2], f[inside])
    low.plot(f[inside], 100 * (before[inside, 2] - arc_z), color="#c0392b", lw=1.6, label="before")
    low.plot(f[inside], 100 * (after[inside, 2] - arc_z), color="#1f5fa8", lw=1.6, label="after")
    low.axhline(0.0, color="black", lw=0.6)
    low.text(flight[1], low.get_ylim()[1], "in the air ", fontsize=8, va="top", ha="right", color="#3a6fa0")
    low.set_xlim(top.get_xlim())
    low.set_ylabel("COM height minus arc [cm]")
    low.set_xlabel("frame (24 fps)")
    low.legend(loc="lower left", fontsize=8)
    top.set_title("The body's centre of mass in the air, read back from the evaluated rig", fontsize=10)
    text = "\n".join(textwrap.wrap(report, 112) + [""] + textwrap.wrap(caption, 118))
    fig.text(0.01, 0.01, text, fontsize=7.2, va="bottom", family="DejaVu Sans")
    fig.tight_layout(rect=(0, 0.045 + 0.0155 * text.count("\n"), 1, 1))
    fig.savefig(path, dpi=100, pil_kwargs={"optimize": True})
    plt.close(fig)
    return path


def arc_pictures(addon, docs, log):
    """``body_arc_before_after.png`` in ``docs``; the reports and figures go to ``log``."""
    from docs_scene import captured_output, demo_scene, report_lines
    from demo_session import operator_call

    scene, o, s = demo_scene(HEIGHT)
    rig = o["rig"]
    s.distance, s.landing_height, s.key_style = DISTANCE, o["crate_top"], "SPLINE"
    operator_call(bpy.ops.leapwright.write_plan, rig)
    scene.frame_start = 1
    scene.frame_end = int(round(rig.animation_data.action.frame_range[1])) + 6
    takeoff, touchdown = flight_markers(scene)
    raise_keys = key_arm_swing(rig, takeoff, touchdown)

    gravity = addon.blender.scene_units.exact_gravity(s.gravity)
    model = addon.body.com.body_model(rig, scene.leapwright_body.table)[0]
    frames = np.arange(scene.frame_start * SUBSTEPS, scene.frame_end * SUBSTEPS + 1) / SUBSTEPS
    before = addon.body.com.whole_body_com(scene, rig, model, frames)
    work = addon.body.arc.prepare(scene, rig, scene.leapwright_body, gravity)
    printed = []
    with captured_output(printed):
        operator_call(bpy.ops.leapwright.check_body_arc, rig)
        operator_call(bpy.ops.leapwright.keep_body_on_arc, rig)
    reports = report_lines(printed)
    log += [f"air: {line}" for line in reports]
    after = addon.body.com.whole_body_com(scene, rig, model, frames)
    (first, last), arc = work.stretches[0], work.fix.arcs[0]
    arc_frames = np.arange(first, last + 1, dtype=float)
    whole = np.isclose(frames, np.round(frames)) & (frames >= first) & (frames <= last)
    residuals = [free_fall_residual(c[whole], FPS, gravity) for c in (before, after)]
    inside = (frames >= first) & (frames <= last)
    between = float(np.max(np.abs(after[inside, 2] - parabola_through(arc_frames, arc[:, 2], frames[inside]))))
    log.append(f"air: flight frames {first}-{last}; free-fall parabola residual before {1000 * residuals[0]:.1f} mm, "
               f"after {1000 * residuals[1]:.3f} mm; between frames after {1000 * between:.2f} mm")
    moved = next((r for r in reports if "moved" in r), "Info: (no report)")
    report = "Keep Body on Its Arc reported: " + moved.split(": ", 1)[-1]
    caption = (f"The demo jump ({HEIGHT} m rise onto the crate) written by the extension; both upper arms keyed by "
               f"hand swinging up 150 deg (frames {raise_keys[0]}-{raise_keys[1]}) and down again (to frame "
               f"{raise_keys[2]}) while in the air (shaded). "
               f"COM = the extension's whole-body COM (de Leva 1996 segments) of the evaluated rig, {SUBSTEPS} "
               f"samples a frame. Outside check: distance from the best free-fall parabola (g = {gravity:.3f} "
               f"m/s^2) over frames {first}-{last}: before {1000 * residuals[0]:.0f} mm, after "
               f"{1000 * residuals[1]:.2f} mm on the frames; between frames (the layer keys each frame, linearly) "
               f"the corrected COM stays within {1000 * between:.1f} mm of the arc.")
    curves = {"frames": frames, "before": before, "after": after}
    return [draw_chart(os.path.join(docs, "body_arc_before_after.png"), curves, (arc_frames, arc),
                       (takeoff, touchdown), raise_keys, report, caption)]
