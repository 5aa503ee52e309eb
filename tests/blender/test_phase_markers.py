"""The jump's timeline markers in the animator's words, and markers of earlier versions.

Markers stand at each phase start named after the moment there (anticipation,
crouch, push-off, take-off, touchdown: common practice); files written by earlier
versions carry force-plate names (``lw:flight``: McMahon et al. 2018, Strength Cond J
40(4):96-106). Both must be read alike by the arm re-timing and the body arc, and
both taken back by Remove.
"""

import bpy

from rig_builder import build_rig, configure
from scene_probe import addon, snapshot

#: The trade's moments at the six phase starts of a one-hop jump (common practice).
ONE_HOP = ["lw:stand", "lw:anticipation", "lw:crouch", "lw:push-off", "lw:take-off", "lw:touchdown"]
#: The names earlier versions gave the same markers (force-plate phases).
EARLIER = {"lw:stand": "lw:weighing", "lw:anticipation": "lw:unweighting", "lw:crouch": "lw:braking",
           "lw:push-off": "lw:propulsion", "lw:take-off": "lw:flight", "lw:touchdown": "lw:landing"}


def _written():
    rig = build_rig()
    configure(rig, height=0.4)
    bpy.context.view_layer.objects.active = rig
    before = snapshot()
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    return rig, bpy.context.scene, before


def _marks(scene):
    return sorted((m.frame, m.name) for m in scene.timeline_markers)


def test_markers_name_the_moments_in_order_one_at_each_phase_start():
    rig, scene, _ = _written()
    plan, _ = addon().plan.link.plan_for(scene)
    fps = scene.render.fps / scene.render.fps_base
    start = scene.leapwright_plan.start_frame
    assert [n for _, n in _marks(scene)] == ONE_HOP
    for (frame, _), phase in zip(_marks(scene), plan.phases):
        assert abs(frame - (start + phase.start_s * fps)) <= 0.5  # rounded to the nearest frame


def test_markers_of_earlier_versions_give_the_same_flight_and_contact_and_are_removed():
    rig, scene, before = _written()
    fps = scene.render.fps / scene.render.fps_base
    a = addon()
    stretches = a.body.arc.marker_stretches(scene, scene.frame_start, scene.frame_end)
    window, _ = a.arms.retime._marker_window(scene, 1, fps)
    assert stretches and window.takeoff_s > window.push_start_s
    for m in scene.timeline_markers:
        m.name = EARLIER[m.name]
    assert a.body.arc.marker_stretches(scene, scene.frame_start, scene.frame_end) == stretches
    old_window, _ = a.arms.retime._marker_window(scene, 1, fps)
    # the plan's exact times no longer match renamed markers: the markers' own frames are used
    assert abs(old_window.push_start_s - window.push_start_s) <= 0.5 / fps
    assert abs(old_window.takeoff_s - window.takeoff_s) <= 0.5 / fps
    assert abs(old_window.touchdown_s - window.touchdown_s) <= 0.5 / fps
    assert bpy.ops.leapwright.remove_plan() == {"FINISHED"}
    assert _marks(scene) == []
    assert snapshot() == before  # the file as it was before the jump was written


def test_check_marks_the_phases_it_measures_in_the_same_words():
    rig, scene, _ = _written()
    plan, _ = addon().plan.link.plan_for(scene)
    fps = scene.render.fps / scene.render.fps_base
    scene.frame_start, scene.frame_end = 1, int(1 + plan.duration_s * fps) + 4
    scene.leapwright_check.add_markers = True
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.check_jump() == {"FINISHED"}
    measured = {n: f for f, n in _marks(scene) if n.startswith("lw:measured ")}
    written = {n: f for f, n in _marks(scene) if not n.startswith("lw:measured ")}
    # the check finds the written jump's take-off and touchdown (a ballistic flight: physics law)
    # and names them as the plan's markers do
    assert {"lw:measured take-off", "lw:measured touchdown"} <= set(measured)
    assert set(measured) <= {"lw:measured " + n[len("lw:"):] for n in ONE_HOP}
    assert abs(measured["lw:measured take-off"] - written["lw:take-off"]) <= 1
    assert abs(measured["lw:measured touchdown"] - written["lw:touchdown"]) <= 1
