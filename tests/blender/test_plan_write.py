"""The blocking pass written into real Blender follows the core's plan.

References: projectile motion (physics law): in flight the centre of mass
follows z = z0 + v0 t - g t^2 / 2, so sampled once a frame its second
difference is exactly -g / fps^2; IEEE 754 float32 key times (Blender stores
key coordinates as float32) bound the time rounding at ulp(frame) / fps.
"""

import addon_utils
import numpy as np
import bpy

import conftest
from rig_builder import build_rig, configure
from scene_probe import addon, run_write, world_path, written_fcurves, key_count

G = 9.80665
KEY_TOLERANCE = 5e-4  # m, the core's default Hermite key tolerance


def fresh():
    """A new empty file inside one test (the fixture does this between tests)."""
    bpy.ops.wm.read_factory_settings(use_empty=True)
    if not conftest.enabled():
        addon_utils.enable(conftest.MODULE, default_set=True)


def _plan():
    return addon().plan.link.plan_for(bpy.context.scene)[0]


def _fps():
    return addon().blender.scene_units.scene_fps(bpy.context.scene)


def _flight_mask(plan, t, margin=0.0):
    m = np.zeros(t.shape, dtype=bool)
    for hop in plan.hops:
        m |= (t > hop.takeoff_time_s + margin) & (t < hop.touchdown_time_s - margin)
    return m


def _body_world_from_curves(rig, body, t, start):
    """World displacement [m] of the body from its F-curves, evaluated by Blender."""
    fcs = {fc.array_index: fc for fc in written_fcurves(rig) if '"hips"' in fc.data_path}
    frames = start + t * _fps()
    local = np.tile(body.base, (t.size, 1))
    for i, fc in fcs.items():
        local[:, i] = [fc.evaluate(f) for f in frames]
    m = bpy.context.scene.unit_settings.scale_length
    return (local - body.base) @ np.linalg.inv(body.world_to_channel).T * m, frames


def test_spline_curve_matches_the_analytic_centre_of_mass_at_sub_frames():
    scene = bpy.context.scene
    scene.render.fps, scene.render.fps_base = 30000, 1001  # NTSC: the true rate is fps / fps_base
    rig = build_rig()
    configure(rig, height=0.45, distance=0.3, key_style="SPLINE", start_frame=7)
    body, _ = addon().rig.space.resolve(rig, "hips", ())
    assert run_write(rig) == {"FINISHED"}
    plan = _plan()
    t = np.linspace(0.0, plan.duration_s, 2000)
    got, frames = _body_world_from_curves(rig, body, t, 7.0)
    want = np.outer(plan.forward(t), [0.0, -1.0, 0.0]) + np.outer(plan.height(t), [0.0, 0.0, 1.0])
    speed = np.hypot(plan.forward_speed(t), plan.vertical_speed(t))
    rounding = speed * np.spacing(np.float32(frames.max())) / _fps()
    air = _flight_mask(plan, t)
    assert air.sum() > 50
    # The key tolerance bounds each channel (forward, height) on its own.
    for axis in (1, 2):
        err = np.abs(got[:, axis] - want[:, axis])
        assert np.all(err[air] <= 1e-6 + rounding[air]), (axis, err[air].max())
        assert np.all(err[~air] <= KEY_TOLERANCE + rounding[~air]), (axis, err[~air].max())
    assert np.max(np.abs(got[:, 0])) < 1e-9  # nothing sideways


def test_world_height_in_flight_has_second_difference_minus_g_over_fps_squared():
    rig = build_rig()
    configure(rig, height=0.6, key_style="SPLINE", start_frame=1)
    assert run_write(rig) == {"FINISHED"}
    plan, fps = _plan(), _fps()
    hop = plan.hops[0]
    first = int(np.ceil(1 + hop.takeoff_time_s * fps + 1e-6))
    last = int(np.floor(1 + hop.touchdown_time_s * fps - 1e-6))
    frames = np.arange(first, last + 1, dtype=float)
    assert frames.size >= 8
    z = world_path(rig, "hips", frames)[:, 2] * bpy.context.scene.unit_settings.scale_length
    d2 = np.diff(z, 2)
    # float32 world matrices: a few ulps of a ~1.5 m position in each of three samples.
    assert np.allclose(d2, -G / fps**2, atol=2e-6, rtol=0), d2


def _facing_frame_path(rotation, unit_scale):
    """Body path [m] in (forward, sideways, up) of the rig's facing, from the start position."""
    fresh()
    rig = build_rig(rotation_z_deg=rotation, location=(0.4, -0.2, 0.0), unit_scale=unit_scale)
    k = 1.0 / unit_scale
    configure(rig, height=0.4 * k, distance=0.5 * k, standing_com_height=1.0 * k, key_style="SPLINE",
              foot_left="foot.L", foot_right="foot.R")
    assert run_write(rig) == {"FINISHED"}
    plan, fps = _plan(), _fps()
    frames = 1 + np.linspace(0.0, plan.duration_s, 97) * fps
    p = world_path(rig, "hips", frames) * unit_scale
    f = addon().rig.space.forward_axis(rig, "RIG")
    side = np.cross([0.0, 0.0, 1.0], f)
    rel = p - p[0]
    return np.column_stack([rel @ f, rel @ side, rel[:, 2]]), f


def test_turned_rig_and_centimetre_units_give_the_same_world_jump():
    base, f0 = _facing_frame_path(0.0, 1.0)
    turned, f90 = _facing_frame_path(90.0, 1.0)
    small, _ = _facing_frame_path(0.0, 0.01)
    assert np.allclose(f0, [0, -1, 0], atol=1e-7) and np.allclose(f90, [1, 0, 0], atol=1e-6)
    assert np.max(np.abs(turned - base)) < 1e-5
    assert np.max(np.abs(small - base)) < 1e-5
    # and it is the planned jump: 0.5 m forward, nothing sideways
    assert abs(base[-1, 0] - 0.5) < 1e-3 and np.max(np.abs(base[:, 1])) < 1e-6


def test_foot_balls_stay_put_in_contact_and_travel_the_distance():
    rig = build_rig()
    configure(rig, height=0.4, distance=0.6, key_style="SPLINE", foot_left="foot.L", foot_right="foot.R",
              foot_tuck=0.1)
    assert run_write(rig) == {"FINISHED"}
    plan, fps = _plan(), _fps()
    hop = plan.hops[0]
    before = np.linspace(0.0, hop.takeoff_time_s, 60)
    after = np.linspace(hop.touchdown_time_s, plan.duration_s, 60)
    mid = 0.5 * (hop.takeoff_time_s + hop.touchdown_time_s)
    for foot in ("foot.L", "foot.R"):
        start = world_path(rig, foot, 1 + before * fps)
        end = world_path(rig, foot, 1 + after * fps)
        assert np.max(np.linalg.norm(start - start[0], axis=1)) <= 1e-4  # 0.1 mm
        assert np.max(np.linalg.norm(end - end[0], axis=1)) <= 1e-4
        travel = end[0] - start[0]
        assert abs(-travel[1] - 0.6) < 1e-3 and abs(travel[0]) < 1e-6 and abs(travel[2]) < 1e-6
        assert world_path(rig, foot, [1 + mid * fps])[0, 2] - start[0, 2] > 0.05  # off the ground


def test_markers_at_phase_starts_and_weight_property_in_body_weights():
    rig = build_rig()
    configure(rig, height=0.4, start_frame=11)
    assert run_write(rig) == {"FINISHED"}
    plan, fps = _plan(), _fps()
    marks = sorted((m.frame, m.name) for m in bpy.context.scene.timeline_markers)
    # one marker at each phase start, named in the animator's words (the add-on's own table of names)
    marker_name = addon().core.base.phase_words.marker_name
    want = sorted((int(round(11 + p.start_s * fps)), marker_name(p.name)) for p in plan.phases)
    assert marks == want
    assert "lw_weight_bw" in rig
    fc = next(fc for fc in written_fcurves(rig) if fc.data_path == '["lw_weight_bw"]')
    hop = plan.hops[0]
    assert fc.evaluate(11 + 0.5 * (hop.takeoff_time_s + hop.touchdown_time_s) * fps) == 0.0  # free fall
    assert abs(fc.evaluate(11.0) - 1.0) < 1e-6  # standing: one body weight
    f = 11 + np.arange(int(plan.duration_s * fps))
    vals = np.array([fc.evaluate(x) for x in f])
    assert np.allclose(vals, plan.force_bw((f - 11) / fps), atol=1e-5)


def test_poses_and_every_frame_styles():
    rig = build_rig()
    configure(rig, height=0.4, distance=0.2, key_style="POSES")
    assert run_write(rig) == {"FINISHED"}
    plan, fps = _plan(), _fps()
    body = [fc for fc in written_fcurves(rig) if '"hips"' in fc.data_path]
    starts = sorted({1 + p.start_s * fps for p in plan.phases} | {1 + plan.duration_s * fps})
    for fc in body:
        assert {k.interpolation for k in fc.keyframe_points} == {"CONSTANT"}
        assert np.allclose([k.co.x for k in fc.keyframe_points], starts, atol=1e-4)
    configure(rig, key_style="EVERY_FRAME")
    assert run_write(rig) == {"FINISHED"}
    n = int(np.floor(plan.duration_s * fps + 1e-9)) + 1
    for fc in [fc for fc in written_fcurves(rig) if '"hips"' in fc.data_path]:
        assert np.allclose([k.co.x for k in fc.keyframe_points], 1 + np.arange(n))


def test_rerun_with_another_height_leaves_exactly_a_fresh_runs_keys():
    rig = build_rig()
    configure(rig, height=0.3, distance=0.4, foot_left="foot.L", foot_right="foot.R")
    assert run_write(rig) == {"FINISHED"}
    configure(rig, height=0.7, distance=0.4, foot_left="foot.L", foot_right="foot.R")
    assert run_write(rig) == {"FINISHED"}
    rerun = key_count(rig), len(bpy.context.scene.timeline_markers), len(bpy.data.actions)
    fresh()
    rig = build_rig()
    configure(rig, height=0.7, distance=0.4, foot_left="foot.L", foot_right="foot.R")
    assert run_write(rig) == {"FINISHED"}
    assert rerun == (key_count(rig), len(bpy.context.scene.timeline_markers), len(bpy.data.actions))
    assert rerun[0] > 0


def test_moving_the_object_when_no_bone_is_named():
    obj = bpy.data.objects.new("Ball", None)
    bpy.context.scene.collection.objects.link(obj)
    configure(obj, height=0.5)
    obj.rotation_euler.z = 0.7
    bpy.context.scene.leapwright_plan.com_bone = ""
    assert run_write(obj) == {"FINISHED"}
    plan, fps = _plan(), _fps()
    hop = plan.hops[0]
    apex_frame = 1 + (hop.takeoff_time_s + hop.takeoff_speed_m_s / G) * fps
    z = world_path(obj, "", [apex_frame])[:, 2]
    assert abs(z[0] - plan.height(hop.takeoff_time_s + hop.takeoff_speed_m_s / G)) < 1e-5


def test_rerun_from_another_frame_writes_the_same_keys():
    # The channels' own values before the first run are the base, not whatever
    # the previous run's keys evaluate to at the current frame.
    rig = build_rig()
    configure(rig, height=0.5, distance=0.4, foot_left="foot.L", foot_right="foot.R")
    assert run_write(rig) == {"FINISHED"}
    first = sorted(_curve_bytes(fc) for fc in written_fcurves(rig))
    bpy.context.scene.frame_set(40)  # mid-air
    assert rig.pose.bones["hips"].location.length > 0.1
    assert run_write(rig) == {"FINISHED"}
    assert sorted(_curve_bytes(fc) for fc in written_fcurves(rig)) == first


def _curve_bytes(fc):
    keys = addon().blender.key_writer.read_keys(fc)
    return (fc.data_path, fc.array_index, keys["co"].tobytes(), keys["handle_left"].tobytes(),
            keys["handle_right"].tobytes())
