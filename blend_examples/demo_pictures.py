"""The demo's pictures, read from the animated scene (what the file holds, not the plan).

- :func:`sample_scene` evaluates the rig: world height of the body bone and the
  animated ``lw_weight_bw`` at sub-frame times, and the ``lw:`` markers.
- :func:`write_force_chart` draws them as the force-plate chart (the CLI's
  chart code when it is importable, so both look alike).
- :func:`render_strip` renders key moments with Cycles on the CPU and lays
  them side by side with a label under each.
"""

import os
import sys

import bpy
import numpy as np

MARKER_PREFIX = "lw:"
WEIGHT_PROPERTY = "lw_weight_bw"
REPO = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def lw_markers(scene):
    """``[(frame, force-plate phase name)]`` of the ``lw:`` phase markers, in frame order.

    The markers are named in the animator's words; the charts keep the force-plate names.
    """
    from leapwright.core.base.phase_words import phase_of_marker  # the repository's core: the marker words

    found = [(m.frame, phase_of_marker(m.name)) for m in scene.timeline_markers]
    return sorted((frame, p[0] if p[1] is None else f"{p[0]} {p[1]}") for frame, p in found if p is not None)


def sample_scene(scene, rig, body_bone, substeps=4):
    """Evaluate the rig over the scene's frame range.

    Parameters
    ----------
    scene : bpy.types.Scene
    rig : bpy.types.Object
        The armature.
    body_bone : str
        The COM (body) bone.
    substeps : int
        Samples per frame.

    Returns
    -------
    dict
        ``frames`` (fractional); ``com_x``, ``com_y``, ``com_z``: world
        position of the body bone's head [m]; ``weight_bw`` (``lw_weight_bw``, NaN when
        absent), ``markers`` (see :func:`lw_markers`).
    """
    frames = np.arange(scene.frame_start * substeps, scene.frame_end * substeps + 1) / substeps
    m_per_bu = scene.unit_settings.scale_length
    com = np.empty((frames.size, 3))
    weight = np.full(frames.size, np.nan)
    pb = rig.pose.bones[body_bone]
    for i, f in enumerate(frames):
        whole = int(np.floor(f))
        scene.frame_set(whole, subframe=float(f - whole))
        com[i] = np.array(rig.matrix_world @ pb.head) * m_per_bu
        if WEIGHT_PROPERTY in rig:
            weight[i] = float(rig[WEIGHT_PROPERTY])
    scene.frame_set(scene.frame_start)
    return {"frames": frames, "com_x": com[:, 0], "com_y": com[:, 1], "com_z": com[:, 2], "weight_bw": weight,
            "markers": lw_markers(scene)}


def _phase_spans(markers, last_frame):
    spans = []
    for k, (frame, name) in enumerate(markers):
        end = markers[k + 1][0] if k + 1 < len(markers) else last_frame
        spans.append((frame, end, name.split(" ")[0]))
    return spans


def _pyplot():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def _chart_function():
    """The CLI's force-plate chart if the repository's ``cli`` package imports, else None."""
    if REPO not in sys.path:
        sys.path.insert(0, REPO)
    try:
        from cli.charts import force_plate_chart
    except ImportError:
        return None
    return force_plate_chart


def write_force_chart(path, samples, title):
    """COM height [m] and ground force [BW] against frames, phases shaded, as a PNG."""
    spans = _phase_spans(samples["markers"], float(samples["frames"][-1]))
    chart = _chart_function()
    if chart is not None:
        chart(path, samples["frames"], samples["com_z"], samples["weight_bw"], spans, title=title)
        return path
    plt = _pyplot()
    fig, (ax_h, ax_f) = plt.subplots(2, 1, sharex=True, figsize=(8, 5), dpi=100)
    for first, last, label in spans:
        for ax in (ax_h, ax_f):
            ax.axvspan(first, last, alpha=0.25, lw=0, color=f"C{len(label) % 10}")
        ax_h.text((first + last) / 2.0, ax_h.get_ylim()[1], label, ha="center", va="top", fontsize=7)
    ax_h.plot(samples["frames"], samples["com_z"], color="#08306b")
    ax_h.set_ylabel("COM height [m]")
    ax_f.plot(samples["frames"], samples["weight_bw"], color="#67000d")
    ax_f.set_ylabel("ground force [BW]")
    ax_f.set_xlabel("frame")
    ax_h.set_title(title)
    fig.tight_layout()
    fig.savefig(path)
    plt.close(fig)
    return path


def key_moments(samples):
    """``[(frame, label)]`` of the moments the strip shows, from markers and the evaluated COM.

    Standing, bottom of the dip, take-off, rising, apex, touchdown, bottom of
    the landing, and standing on the crate.
    """
    marks = {name: frame for frame, name in samples["markers"]}
    f, z = samples["frames"], samples["com_z"]
    whole = np.isclose(f, np.round(f))
    f, z = f[whole].astype(int), z[whole]
    takeoff, touchdown = marks["flight"], marks["landing"]
    air = (f >= takeoff) & (f <= touchdown)
    apex = int(f[air][np.argmax(z[air])])
    after = f >= touchdown
    bottom = int(f[after][np.argmin(z[after])])
    dip = int(f[f < takeoff][np.argmin(z[f < takeoff])])
    return [(int(f[0]), "stand"), (dip, "crouch"), (takeoff, "take-off"), ((takeoff + apex) // 2, "rising"),
            (apex, "apex"), (touchdown, "touchdown"), (bottom, "settle"), (int(f[-1]), "stand on crate")]


def add_com_trail(scene, samples, rig, body_bone, colour=(0.75, 0.0, 0.22), nearer=0.35):
    """A thin glowing curve along the evaluated COM path and a dot riding on it.

    Both are moved ``nearer`` [BU] towards the scene camera along its view
    axis, so they are drawn over the body yet still line up with the COM.
    """
    from mathutils import Vector

    from primitives import material, parent_to_bone, sphere

    view = scene.camera.matrix_world.to_3x3() @ Vector((0.0, 0.0, -1.0))
    shift = -view.normalized() * nearer
    glow = material("lw_demo_trail", colour, emission=0.6)
    curve = bpy.data.curves.new("com_trail", "CURVE")
    curve.dimensions = "3D"
    curve.bevel_depth = 0.009
    spline = curve.splines.new("POLY")
    m = scene.unit_settings.scale_length
    pts = np.column_stack([samples["com_x"] / m, samples["com_y"] / m, samples["com_z"] / m])
    pts += np.array(shift)
    spline.points.add(len(pts) - 1)
    spline.points.foreach_set("co", np.column_stack([pts, np.ones(len(pts))]).ravel().tolist())
    curve.materials.append(glow)
    trail = bpy.data.objects.new("com_trail", curve)
    scene.collection.objects.link(trail)
    head = rig.matrix_world @ rig.data.bones[body_bone].head_local
    dot = sphere("com_dot", head + shift, (0.045,) * 3, glow, scene.collection)
    parent_to_bone(dot, rig, body_bone)
    return trail, dot


def _load_pixels(path, size=None):
    """RGB rows top-down (display values, 0..1) of a PNG, scaled to ``size`` (w, h) by Blender."""
    img = bpy.data.images.load(path)
    if size is not None and tuple(img.size) != tuple(size):
        img.scale(*size)
    w, h = img.size
    px = np.empty(w * h * 4, dtype=np.float32)
    img.pixels.foreach_get(px)
    bpy.data.images.remove(img)
    return px.reshape(h, w, 4)[::-1, :, :3]  # Blender stores rows bottom-up


def render_moments(scene, moments, directory, samples=24):
    """Render each of ``moments`` ([(frame, label)]) with Cycles on the CPU; return the PNG paths.

    Parameters
    ----------
    samples : int
        Cycles samples per pixel (denoised afterwards).
    """
    scene.render.engine = "CYCLES"
    scene.cycles.device = "CPU"
    scene.cycles.samples = samples
    scene.cycles.use_denoising = True
    scene.cycles.max_bounces = 4
    scene.render.image_settings.file_format = "PNG"
    paths = []
    for k, (frame, _) in enumerate(moments):
        scene.frame_set(frame)
        scene.render.filepath = os.path.join(directory, f"moment_{k}.png")
        bpy.ops.render.render(write_still=True)
        paths.append(scene.render.filepath)
    return paths


def compose_strip(paths, moments, out_path, tile_size, columns=4):
    """Lay rendered moments out in rows of ``columns``, a label under each, as one PNG.

    Parameters
    ----------
    tile_size : (int, int)
        Width and height of each picture in the output [px].
    """
    tiles = [_load_pixels(p, tile_size) for p in paths]
    tw, th = tile_size
    rows = -(-len(tiles) // columns)
    band = max(18, int(0.09 * th))
    width, height = tw * columns, rows * (th + band)
    canvas = np.ones((height, width, 3), dtype=np.float32)
    for k, tile in enumerate(tiles):
        r, c = divmod(k, columns)
        canvas[r * (th + band):r * (th + band) + th, c * tw:(c + 1) * tw] = np.clip(tile, 0.0, 1.0)
        canvas[:, c * tw:c * tw + 2] = 1.0  # a white gutter between pictures
    plt = _pyplot()
    dpi = 100
    fig = plt.figure(figsize=(width / dpi, height / dpi), dpi=dpi)
    ax = fig.add_axes([0, 0, 1, 1])
    ax.imshow(canvas, interpolation="nearest")
    ax.set_axis_off()
    for k, (frame, label) in enumerate(moments):
        r, c = divmod(k, columns)
        ax.text((c + 0.5) * tw, r * (th + band) + th + band / 2.0, f"{k + 1}. {label}   frame {frame}",
                ha="center", va="center", fontsize=max(7, band * 0.42))
    fig.savefig(out_path, dpi=dpi, pil_kwargs={"optimize": True})
    plt.close(fig)
    return out_path
