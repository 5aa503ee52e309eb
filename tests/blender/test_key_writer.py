"""Bulk key writing reproduces the curve it is given, on every Blender version.

References: projectile motion z(t) = v0 t - g t^2 / 2 (physics law); a cubic
Bezier segment with handles at 1/3 and 2/3 of the interval on the end tangents
equals the cubic Hermite segment (Farin 2002, Curves and Surfaces for CAGD,
5th ed., ch. 6), so a parabola is exact; key times are float32 (IEEE 754).
"""

import numpy as np
import bpy

from scene_probe import addon

G = 9.80665
FPS = 24.0


def _empty_with_action():
    obj = bpy.data.objects.new("Probe", None)
    bpy.context.scene.collection.objects.link(obj)
    action = bpy.data.actions.new("ProbeAction")
    addon().blender.compat.assign_action(obj, action)
    return obj, action


def test_free_handles_reproduce_a_parabola_under_fcurve_evaluate():
    obj, action = _empty_with_action()
    compat, kw = addon().blender.compat, addon().blender.key_writer
    v0, start = 2.8, 101.0
    t_keys = np.array([0.0, 0.21, 0.57])  # uneven spans, one key mid-arc
    z = lambda t: v0 * t - 0.5 * G * t * t
    slope = lambda t: (v0 - G * t) / FPS  # per frame
    fc = compat.new_fcurve(action, obj, "location", 2, "lw:test")
    kw.write_curve(fc, start + t_keys * FPS, z(t_keys), slope(t_keys), "BEZIER")
    t = np.linspace(0.0, t_keys[-1], 301)
    frames = start + t * FPS
    got = np.array([fc.evaluate(f) for f in frames])
    # float32 key times: a value error of |v| * ulp(frame) / fps on top of the fit.
    allowance = 1e-6 + np.abs(v0 - G * t) * np.spacing(np.float32(frames.max())) / FPS
    assert np.all(np.abs(got - z(t)) <= allowance), np.max(np.abs(got - z(t)))
    types = np.zeros(len(fc.keyframe_points) * 1, dtype=np.int32)
    fc.keyframe_points.foreach_get("handle_left_type", types)
    assert np.all(types == 0)  # FREE survives update()


def test_curve_made_through_the_compat_layer_animates_the_object():
    # The trap on 4.4/4.5: a legacy-made curve on an assigned action animates nothing.
    obj, action = _empty_with_action()
    compat, kw = addon().blender.compat, addon().blender.key_writer
    fc = compat.new_fcurve(action, obj, "location", 1, "lw:test")
    kw.write_curve(fc, [1.0, 11.0], [0.0, 5.0], None, "LINEAR")
    bpy.context.scene.frame_set(6)
    assert abs(obj.location.y - 2.5) < 1e-6
    assert compat.find_fcurve(action, obj, "location", 1) == fc


def test_read_and_restore_keys_are_byte_exact():
    obj, action = _empty_with_action()
    compat, kw = addon().blender.compat, addon().blender.key_writer
    for f, v in ((1, 0.0), (7, 1.3), (19, -0.4), (30, 2.0)):
        obj.location.x = v
        obj.keyframe_insert("location", index=0, frame=f)
    fc = compat.find_fcurve(action, obj, "location", 0)
    fc.keyframe_points[1].interpolation = "CONSTANT"
    fc.keyframe_points[2].easing = "EASE_IN"
    before = kw.read_keys(fc)
    kw.write_curve(fc, [1.0, 2.0], [5.0, 6.0], None, "LINEAR")
    kw.restore_keys(fc, {k: v.tolist() for k, v in before.items()})
    after = kw.read_keys(fc)
    assert all(before[k].tobytes() == after[k].tobytes() for k in before)


def test_bulk_write_of_many_keys_matches_every_value():
    obj, action = _empty_with_action()
    compat, kw = addon().blender.compat, addon().blender.key_writer
    n = 5000
    frames = np.arange(n, dtype=float)
    values = np.sin(frames / 50.0)
    fc = compat.new_fcurve(action, obj, "location", 0, "lw:test")
    kw.write_curve(fc, frames, values, None, "LINEAR")
    co = np.zeros(2 * n, dtype=np.float32)
    fc.keyframe_points.foreach_get("co", co)
    assert np.array_equal(co[1::2], values.astype(np.float32))
    assert abs(fc.evaluate(100.5) - 0.5 * (values[100] + values[101])) < 1e-6


def test_writing_in_place_sets_the_interpolation_asked_for():
    # A re-bake writes into its own keys; a key whose interpolation differs (edited by
    # hand, or a bake that switched to held keys) gets the one asked for, the others stay.
    obj, action = _empty_with_action()
    compat, kw = addon().blender.compat, addon().blender.key_writer
    fc = compat.new_fcurve(action, obj, "location", 0, "lw:test")
    frames = np.arange(1.0, 11.0)
    kw.write_curve(fc, frames, np.zeros(10), None, "LINEAR")
    fc.keyframe_points[4].interpolation = "BEZIER"
    kw.write_curve(fc, frames, frames * 0.1, None, "LINEAR", in_place=True)
    assert [k.interpolation for k in fc.keyframe_points] == ["LINEAR"] * 10
    kw.write_curve(fc, frames, frames * 0.2, None, "CONSTANT", in_place=True)
    assert [k.interpolation for k in fc.keyframe_points] == ["CONSTANT"] * 10
    bpy.context.scene.frame_set(5)
    assert abs(obj.location.x - 1.0) < 1e-6  # the new values are the ones played
