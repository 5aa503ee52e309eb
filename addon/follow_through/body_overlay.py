"""The body's capsules drawn in the 3D viewport, at the current frame, as wire outlines.

Drawn by a viewport draw handler (nothing is added to the file, so nothing needs
taking back): for the active armature (or the jump's rig), the capsules the next
bake keeps the chains out of, with the radii the panel gives, placed on the
evaluated pose of the frame shown.
"""

import bpy
import numpy as np

from . import body_colliders

_STATE = {"handle": None}
#: Points on each drawn circle (design choice: smooth enough at sidebar zoom).
CIRCLE_POINTS = 24


def _frame_of(axis):
    axis = axis / max(np.linalg.norm(axis), 1e-12)
    other = np.array([1.0, 0.0, 0.0]) if abs(axis[0]) < 0.9 else np.array([0.0, 1.0, 0.0])
    u = np.cross(axis, other)
    u /= np.linalg.norm(u)
    return axis, u, np.cross(axis, u)


def capsule_lines(start, end, radius, points=CIRCLE_POINTS):
    """Line-segment ends (2N, 3) outlining a capsule: a ring at each end, four lines along
    its sides and two half-circles over each cap [same unit as the input]."""
    start, end = np.asarray(start, float), np.asarray(end, float)
    axis, u, v = _frame_of(end - start if np.linalg.norm(end - start) > 0 else np.array([0.0, 0.0, 1.0]))
    t = np.linspace(0.0, 2.0 * np.pi, points + 1)
    ring = radius * (np.cos(t)[:, None] * u + np.sin(t)[:, None] * v)
    half = np.linspace(0.0, np.pi, points // 2 + 1)
    lines = []
    for centre, sign in ((start, -1.0), (end, 1.0)):
        lines.append(centre + ring)
        for side in (u, v):
            lines.append(centre + radius * (np.cos(half)[:, None] * side + sign * np.sin(half)[:, None] * axis))
    out = []
    for poly in lines:
        out.append(np.repeat(poly, 2, axis=0)[1:-1])
    for side in (u, -u, v, -v):
        out.append(np.array([start + radius * side, end + radius * side]))
    return np.vstack(out)


def _rig(context):
    obj = context.active_object
    if obj is not None and obj.type == "ARMATURE":
        return obj
    plan = getattr(context.scene, "leapwright_plan", None)
    rig = getattr(plan, "rig", None)
    return rig if rig is not None and rig.type == "ARMATURE" else None


def _geometry(context):
    scene, rig = context.scene, _rig(context)
    if rig is None:
        return None
    try:
        fit = body_colliders.fit_body(scene, rig)
    except body_colliders.BodyError:
        return None
    s = scene.leapwright_follow_through
    radii = fit.radii.copy()
    for k, part in enumerate(fit.parts):
        typed = float(getattr(s, f"{part.name.split('.')[0]}_radius", 0.0))
        radii[k] = typed if typed > 0.0 else radii[k]
    world = np.array(rig.matrix_world)
    mats = np.array([world @ np.array(rig.pose.bones[n].matrix) for n in fit.bones])[None]
    unit = scene.unit_settings.scale_length or 1.0
    starts, ends = body_colliders.body_segments(fit, radii / unit, mats, 1.0)
    return [capsule_lines(a, b, r) for a, b, r in zip(starts[0], ends[0], radii / unit)]


def _draw():
    import gpu
    from gpu_extras.batch import batch_for_shader

    context = bpy.context
    if getattr(context.scene, "leapwright_follow_through", None) is None:
        return
    geo = _geometry(context)
    if geo is None:
        return
    shader = gpu.shader.from_builtin("UNIFORM_COLOR")
    if not geo:
        return
    coords = np.vstack(geo).astype(np.float32)
    batch = batch_for_shader(shader, "LINES", {"pos": coords})
    shader.uniform_float("color", (0.2, 0.9, 0.6, 1.0))
    batch.draw(shader)


def show(on):
    """Start (True) or stop (False) drawing; calling twice keeps one handler."""
    if on and _STATE["handle"] is None:
        _STATE["handle"] = bpy.types.SpaceView3D.draw_handler_add(_draw, (), "WINDOW", "POST_VIEW")
    elif not on and _STATE["handle"] is not None:
        bpy.types.SpaceView3D.draw_handler_remove(_STATE["handle"], "WINDOW")
        _STATE["handle"] = None


def is_drawing():
    return _STATE["handle"] is not None
