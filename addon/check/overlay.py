"""The path overlay in the 3D viewport: geometry from the core, drawn by a gpu handler.

:func:`overlay_geometry` builds everything as point arrays in Blender units and is
called headless by the tests; the draw handler only hands those arrays to the GPU.
The geometry is built when the overlay is switched on and after each check, never
while drawing, so a redraw costs no frame evaluation.
"""

import numpy as np

import bpy

from ..blender import scene_units
from ..plan import link as plan_link
from ..rig import space as rig_space
from ..core.check.overlay import implied_flight_arc, planned_arc_points, spacing_ticks

# checked: (frames, points [m], analysis, fps, m_per_unit); geometry: what the handler draws.
_STATE = {"handle": None, "checked": None, "geometry": None}
_UP = np.array([0.0, 0.0, 1.0])


def remember_check(frames, points_m, analysis, fps, m_per_unit):
    """Keep the last checked path (metres) for drawing."""
    _STATE["checked"] = (np.asarray(frames, float), np.asarray(points_m, float), analysis, fps, m_per_unit)


def forget_check():
    _STATE["checked"] = None


def planned_arc(scene):
    """The planned COM path at every frame [BU], from the panel's plan and the rig's pose now."""
    settings = scene.leapwright_plan
    rig = settings.rig
    plan, _ = plan_link.plan_for(scene)
    if plan is None or rig is None:
        return None
    m = scene_units.metres_per_unit(scene)
    body = settings.com_bone if rig.type == "ARMATURE" else ""
    if body and body not in rig.pose.bones:
        return None
    frame = scene.frame_current
    scene.frame_set(int(round(settings.start_frame)))
    try:
        start = rig_space.world_point(rig, body) * m
    finally:
        scene.frame_set(frame)
    stand = plan.resolved_goals.standing_com_height
    origin = start - stand * _UP
    forward = rig_space.forward_axis(rig, settings.forward)
    return planned_arc_points(plan, scene_units.scene_fps(scene), origin, forward, _UP) / m


def overlay_geometry(scene):
    """Every line the overlay draws: ``{"path", "ticks", "implied", "planned"}`` in BU.

    ``path`` (n, 3) and ``ticks`` (n, 2, 3) come from the last check; ``implied`` is a
    list of (m, 3) arcs, one per flight found; ``planned`` the plan's path (n, 3).
    Missing parts are None or empty.
    """
    out = {"path": None, "ticks": None, "implied": [], "planned": None}
    checked = _STATE["checked"]
    settings = getattr(scene, "leapwright_check", None)
    if checked is not None:
        frames, pts_m, analysis, fps, m = checked
        out["path"] = pts_m / m
        tick = (settings.tick_length if settings is not None else 0.03)
        out["ticks"] = spacing_ticks(pts_m / m, _UP, tick)
        out["implied"] = [implied_flight_arc(frames, pts_m, f, fps, _UP) / m for f in analysis.flights]
    if getattr(scene, "leapwright_plan", None) is not None:
        out["planned"] = planned_arc(scene)
    return out


def _segments(polyline):
    p = np.asarray(polyline, dtype=np.float32)
    return np.repeat(p, 2, axis=0)[1:-1]


def refresh(scene):
    """Rebuild what the overlay draws (after a check, or when it is switched on)."""
    _STATE["geometry"] = overlay_geometry(scene)


def _draw():
    import gpu
    from gpu_extras.batch import batch_for_shader

    geo = _STATE["geometry"]
    if geo is None:
        return
    shader = gpu.shader.from_builtin("UNIFORM_COLOR")
    layers = []
    if geo["path"] is not None:
        layers.append((_segments(geo["path"]), (0.1, 0.5, 1.0, 1.0)))
        layers.append((geo["ticks"].reshape(-1, 3).astype(np.float32), (0.9, 0.9, 0.9, 1.0)))
    for arc in geo["implied"]:
        layers.append((_segments(arc), (1.0, 0.6, 0.1, 1.0)))
    if geo["planned"] is not None:
        layers.append((_segments(geo["planned"]), (0.9, 0.2, 0.7, 1.0)))
    for coords, colour in layers:
        batch = batch_for_shader(shader, "LINES", {"pos": coords})
        shader.uniform_float("color", colour)
        batch.draw(shader)


def add_draw_handler():
    """Start drawing (once: a second call keeps the one handler)."""
    if _STATE["handle"] is None:
        _STATE["handle"] = bpy.types.SpaceView3D.draw_handler_add(_draw, (), "WINDOW", "POST_VIEW")
    if bpy.context.scene is not None:
        refresh(bpy.context.scene)


def remove_draw_handler():
    """Stop drawing; safe to call when nothing is drawn."""
    if _STATE["handle"] is not None:
        bpy.types.SpaceView3D.draw_handler_remove(_STATE["handle"], "WINDOW")
        _STATE["handle"] = None
    _STATE["geometry"] = None


def is_drawing():
    return _STATE["handle"] is not None
