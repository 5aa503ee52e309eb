"""From the panel's values to the core's plan, and the plan's readout.

Blender lengths become metres here (× ``unit_settings.scale_length``), and the
scene's true frame rate is ``fps / fps_base``. Plans are cached per scene,
keyed by every value that shapes them, so redrawing the panel costs one
dictionary look-up; a change of any value re-plans once, in the property's
update callback, so the readout is current by the time the panel redraws while
a value is dragged. The last :data:`RECENT` plans are kept, so dragging back
over values already seen costs a look-up.
"""

import math

from ..blender.scene_units import exact_gravity, metres_per_unit, scene_fps
from ..core.base.errors import LeapwrightError
from ..core.plan.goals import DEFAULT_TAKEOFF_EXTENSION, JumpGoals
from ..core.plan.planner import plan_jump

#: Plans kept per file session (the most recently used; a drag back and forth re-plans nothing).
RECENT = 64

_CACHE: dict = {}  # (scene pointer, key) -> (plan or None, readout dict), oldest first
_LEG_LIMITS: dict = {}  # (rig, profile, placement, unit) -> take-off rise the legs reach [m]


def goals_from(settings, scene):
    """:class:`core.plan.goals.JumpGoals` from ``scene.leapwright_plan`` (lengths in metres).

    Raises
    ------
    core.base.errors.InvalidGoalError
        For values the core refuses, with the values in the message.
    """
    m = metres_per_unit(scene)
    aim = {"HEIGHT": {"height": settings.height * m},
           "FLIGHT_TIME": {"flight_time": settings.flight_time},
           "TAKEOFF_SPEED": {"takeoff_speed": settings.takeoff_speed}}[settings.goal]
    timing = {}
    if settings.custom_timing:
        timing = {"depth": settings.depth * m, "dip_duration": settings.dip_duration,
                  "push_duration": settings.push_duration, "landing_duration": settings.landing_duration}
    limit = leg_limit(settings, scene)
    if limit is not None:
        timing["takeoff_extension"] = min(DEFAULT_TAKEOFF_EXTENSION, limit)
    return JumpGoals(standing_com_height=settings.standing_com_height * m, distance=settings.distance * m,
                     landing_height=settings.landing_height * m, weighing_duration=settings.weighing_duration,
                     gravity=exact_gravity(settings.gravity), hops=int(settings.hops),
                     fall_gravity_scale=float(settings.fall_gravity_scale), apex_hang=float(settings.apex_hang),
                     **aim, **timing)


def leg_limit(settings, scene):
    """How far the chosen rig's legs let the body rise on its toes at take-off [m], or None.

    Only for a rig whose profile is known and says its legs stretch (:mod:`rig.profile`):
    the plan's take-off extension is kept within it, so the written legs stay in reach.
    """
    from . import reach
    from ..rig import profile as rig_profile
    rig = getattr(settings, "rig", None)
    if rig is None or rig.type != "ARMATURE":
        return None
    profile = rig_profile.known(rig, find=False)
    if profile.get("legs") != "stretch":
        return None
    key = (rig.name, len(rig.data.bones), tuple(sorted(profile.items())), tuple(map(tuple, rig.matrix_world)),
           metres_per_unit(scene))
    if key not in _LEG_LIMITS:
        _LEG_LIMITS.clear()  # one rig at a time: redraws cost one look-up
        _LEG_LIMITS[key] = reach.takeoff_limit(rig, metres_per_unit(scene), profile)
    return _LEG_LIMITS[key]


def _key(settings, scene):
    names = ("goal", "height", "flight_time", "takeoff_speed", "distance", "landing_height", "hops",
             "gravity", "standing_com_height", "custom_timing", "depth", "dip_duration", "push_duration",
             "landing_duration", "weighing_duration", "fall_gravity_scale", "apex_hang")
    return tuple(getattr(settings, n) for n in names) + (metres_per_unit(scene), scene_fps(scene),
                                                          leg_limit(settings, scene))


def plan_for(scene):
    """``(plan, readout)`` for the scene's settings; plan is None when the core refused.

    The readout holds what the panel shows: ``flight_frames`` (per hop),
    ``peak_force_bw``, ``figures`` ((name, value, unit, grade) tuples),
    ``warnings`` (sentences), ``stylisations`` (sentences naming each
    deliberate departure from physics with its physical equivalent) and ``error`` (the core's message, or "").
    """
    settings = scene.leapwright_plan
    key = _key(settings, scene)
    slot = (scene.as_pointer(), key)
    hit = _CACHE.pop(slot, None)
    if hit is not None:
        _CACHE[slot] = hit  # now the most recent
        return hit
    plan, readout = None, {"flight_frames": (), "peak_force_bw": math.nan, "figures": (), "warnings": (),
                           "stylisations": (), "error": "", "duration_frames": 0.0}
    try:
        plan = plan_jump(goals_from(settings, scene))
    except LeapwrightError as exc:
        readout["error"] = str(exc)
    if plan is not None:
        fps = scene_fps(scene)
        rep = plan.report
        readout.update(
            flight_frames=tuple(h.flight_time_s * fps for h in plan.hops),
            peak_force_bw=max(rep.peak_push_force_bw, rep.peak_landing_force_bw),
            figures=tuple((f.name, f.value, f.unit, f.grade) for f in rep.figures),
            warnings=tuple(rep.warnings),
            stylisations=tuple(rep.stylisations),
            duration_frames=plan.duration_s * fps,
        )
    _CACHE[slot] = (plan, readout)
    while len(_CACHE) > RECENT:
        _CACHE.pop(next(iter(_CACHE)))
    return plan, readout


def refresh(scene):
    """Recompute the cached plan now (called when a panel value changes)."""
    if scene is not None and hasattr(scene, "leapwright_plan"):
        plan_for(scene)


def clear_cache():
    _CACHE.clear()
