"""The plan's readout follows a value as it is dragged: the property's update re-plans, once per value.

Checks against the core itself (``plan_jump`` on the same goals) and against
ballistics: the flight time of a rise h under gravity g is 2·sqrt(2h/g)
(projectile motion, any mechanics text).
"""

import math

import bpy

from rig_builder import build_rig, configure
from scene_probe import addon


def _counting_planner(link, calls):
    real = link.plan_jump

    def plan_jump(goals):
        calls.append(goals)
        return real(goals)

    return real, plan_jump


def test_a_changed_value_is_planned_in_its_update_and_a_value_seen_before_is_not_planned_again():
    link = addon().plan.link
    rig = build_rig()
    settings = configure(rig, height=0.4)
    scene = bpy.context.scene
    calls = []
    real, counting = _counting_planner(link, calls)
    link.plan_jump = counting
    try:
        for height in (0.41, 0.42, 0.43):  # as a drag sets them, one update each
            settings.height = height
        assert len(calls) == 3  # planned in the update callbacks, before any redraw
        plan, readout = link.plan_for(scene)  # what the panel's redraw reads
        assert len(calls) == 3
        goals = link.goals_from(settings, scene)
        fps = scene.render.fps / scene.render.fps_base
        expected = real(goals).hops[0].flight_time_s * fps
        assert math.isclose(readout["flight_frames"][0], expected, rel_tol=1e-12)
        g = goals.gravity
        ballistic = 2.0 * math.sqrt(2.0 * settings.height / g) * fps  # rise h, straight up and down
        assert math.isclose(readout["flight_frames"][0], ballistic, rel_tol=1e-3)
        for height in (0.42, 0.41, 0.43):  # dragged back over values already planned
            settings.height = height
        assert len(calls) == 3
        settings.height = 0.44
        assert len(calls) == 4
    finally:
        link.plan_jump = real
