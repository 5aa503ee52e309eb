"""README picture of the path overlay: its geometry drawn over a Cycles render of the scene.

:func:`draw_overlay` takes ``path_overlay.overlay_geometry`` (the arrays the
overlay's draw handler hands to the GPU), projects them through the scene camera
and draws them, in the overlay's colours and order, over a render of the frame.
"""

import numpy as np
from mathutils import Vector

from demo_pictures import _pyplot, render_moments

#: The overlay's colours (``addon/path_overlay.py``, ``_draw``).
PATH_RGB, TICK_RGB, IMPLIED_RGB, PLANNED_RGB = (0.1, 0.5, 1.0), (0.9, 0.9, 0.9), (1.0, 0.6, 0.1), (0.9, 0.2, 0.7)


def render_region(scene, frame, directory, size, border, samples=16):
    """Render ``frame`` at ``size`` (w, h) [px] with Cycles on the CPU, only inside ``border``.

    ``border`` (x0, y0, x1, y1) [px, y down] is the part shown; the rest of the
    picture stays empty, so the CPU goes to what is shown. Returns the PNG's path.
    """
    r = scene.render
    r.resolution_x, r.resolution_y = size
    r.resolution_percentage = 100
    x0, y0, x1, y1 = border
    r.use_border, r.use_crop_to_border = True, False
    r.border_min_x, r.border_max_x = x0 / size[0], x1 / size[0]
    r.border_min_y, r.border_max_y = 1.0 - y1 / size[1], 1.0 - y0 / size[1]
    return render_moments(scene, [(frame, "")], directory, samples=samples)[0]


def project(scene, points):
    """World points [BU] (..., 3) to pixel positions (..., 2) of the scene camera's render, y down."""
    from bpy_extras.object_utils import world_to_camera_view

    pts = np.asarray(points, float)
    flat = pts.reshape(-1, 3)
    w = scene.render.resolution_x * scene.render.resolution_percentage / 100
    h = scene.render.resolution_y * scene.render.resolution_percentage / 100
    uv = np.array([tuple(world_to_camera_view(scene, scene.camera, Vector(p)))[:2] for p in flat])
    px = np.column_stack([uv[:, 0] * w, (1.0 - uv[:, 1]) * h])
    return px.reshape(pts.shape[:-1] + (2,))


def draw_overlay(render_path, geometry, scene, path, caption, crop):
    """The overlay's lines over the ``crop`` (x0, y0, x1, y1) [px] of a render, a legend and ``caption``.

    Lines go on in the draw handler's order (path, ticks, implied arc, planned arc),
    each over the one before, as in the viewport; the path is drawn wider so the
    implied arc on top of it leaves it visible.
    """
    import textwrap

    import matplotlib.patheffects as pe

    plt = _pyplot()
    image = plt.imread(render_path)
    x0, y0, x1, y1 = crop
    w, h = x1 - x0, y1 - y0
    lines = textwrap.wrap(caption, int(w / 5.6))
    band = 16 + 13 * len(lines)
    fig = plt.figure(figsize=(w / 100, (h + band) / 100), dpi=100)
    ax = fig.add_axes([0, band / (h + band), 1, h / (h + band)])
    ax.imshow(image)
    ax.set_xlim(x0, x1)
    ax.set_ylim(y1, y0)
    ax.set_axis_off()
    halo = [pe.Stroke(linewidth=4.0, foreground=(0, 0, 0, 0.5)), pe.Normal()]
    if geometry["path"] is not None:
        p = project(scene, geometry["path"])
        ax.plot(p[:, 0], p[:, 1], color=PATH_RGB, lw=3.2, path_effects=halo, label="checked COM path")
        for k, (a, b) in enumerate(project(scene, geometry["ticks"])):
            ax.plot([a[0], b[0]], [a[1], b[1]], color=TICK_RGB, lw=1.1, solid_capstyle="butt",
                    label="a tick per frame" if k == 0 else None)
    for k, arc in enumerate(geometry["implied"]):
        p = project(scene, arc)
        ax.plot(p[:, 0], p[:, 1], color=IMPLIED_RGB, lw=1.3,
                label="parabola the flight's timing implies" if k == 0 else None)
    if geometry["planned"] is not None:
        p = project(scene, geometry["planned"])
        ax.plot(p[:, 0], p[:, 1], color=PLANNED_RGB, lw=1.6, path_effects=halo, label="planned arc (panel goals)")
    ax.legend(loc="upper right", fontsize=8, framealpha=0.85, facecolor="#303030", labelcolor="white",
              edgecolor="#202020")
    for k, line in enumerate(lines):
        fig.text(6 / w, 1.0 - (h + 12 + 13 * k) / (h + band), line, fontsize=7.5, va="center")
    save_small_png(fig, path)
    plt.close(fig)
    return path


def save_small_png(fig, path, colours=256):
    """Save ``fig`` as a palette PNG: a render's smooth shading in 256 colours is a third the size."""
    import io

    from PIL import Image

    buf = io.BytesIO()
    fig.savefig(buf, dpi=100, format="png")
    buf.seek(0)
    with Image.open(buf) as im:
        im.convert("RGB").quantize(colours, method=Image.Quantize.MEDIANCUT, dither=Image.Dither.NONE).save(
            path, optimize=True)


def crop_box(scene, geometry, size, extra=(), margin=40):
    """Pixel box (x0, y0, x1, y1) around every overlay line, the standing body and ``extra``
    world points [BU], inside the render of ``size`` (w, h)."""
    parts = [g for g in (geometry["path"], geometry["planned"]) if g is not None] + list(geometry["implied"])
    parts.append(np.array([[0.0, 0.0, 0.0], [0.0, 0.0, 1.9]] + list(extra)))
    pts = np.concatenate([project(scene, p) for p in parts])
    x0, y0 = np.maximum(pts.min(axis=0) - margin, 0)
    x1, y1 = np.minimum(pts.max(axis=0) + margin, size)
    return int(x0), int(y0), int(x1), int(y1)
