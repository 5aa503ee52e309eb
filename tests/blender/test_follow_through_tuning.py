"""Live tuning of follow-through in real Blender: kept motion, cancel, re-bake as you tune, sampling.

Checks against things outside the add-on: Blender's own per-bone matrices
(``matrix_world @ pose_bone.matrix`` read one bone at a time), a bake that samples
afresh (the kept motion must give the same keys), the file's own bytes
(scene_probe snapshots) after a cancel, and the thread count OpenBLAS itself reports.
"""

import math

import bpy
import numpy as np
import pytest

from rig_builder import add_user_keys
from scene_probe import addon, snapshot
from test_follow_through import PONY, _bake, _jumping_rig, _key_values, _lag_curves, _ponytail_rig, _remove


def _ft():
    return addon().follow_through


def _keys(rig):
    return {(fc.data_path, fc.array_index): _key_values(fc) for fc in _lag_curves(rig)}


def _request(rig, preset="hair", **values):
    bake = _ft().bake
    scene = bpy.context.scene
    values.setdefault("gravity", scene.leapwright_plan.gravity)  # as the operator asks: the jump panel's gravity
    return bake.LagRequest(bones=PONY, parameters=bake.parameters_for(preset, 1.5, 0.25, 0.3, 1.4, 1.0),
                           frame_start=scene.frame_start, frame_end=scene.frame_end, **values)


def _same_keys(a, b, atol=1e-6):
    assert a.keys() == b.keys()
    for key in a:
        np.testing.assert_allclose(a[key], b[key], atol=atol, err_msg=str(key))


@pytest.mark.parametrize("placement", ["moving", "turned", "origin"])
def test_sampling_in_chunks_gives_blenders_own_matrices_at_subframes(placement):
    rig = _ponytail_rig()
    add_user_keys(rig, bone="hips", frames=(1, 20, 40))
    if placement == "moving":  # a new world matrix every frame
        rig.location = (0.0, 0.0, 0.0)
        rig.keyframe_insert("location", frame=1)
        rig.rotation_euler = (0.2, 0.1, 0.9)
        rig.location = (1.0, -2.0, 0.5)
        rig.keyframe_insert("location", frame=30)
        rig.keyframe_insert("rotation_euler", frame=30)
    elif placement == "turned":  # one world matrix, not the identity
        rig.location, rig.rotation_euler, rig.scale = (1.0, 2.0, 0.3), (0.0, 0.3, 0.5), (1.5, 1.5, 1.5)
    scene = bpy.context.scene
    scene.frame_set(4)
    frames = np.array([1.0, 7.25, 15.0, 22.5, 30.0, 33.0, 40.0])
    sampling = addon().rig.sampling.PoseSampling(scene, rig, frames, list(PONY) + ["hips"])
    sampling.step(2)
    sampling.step(3)
    assert not sampling.finished
    sampling.step()
    sampling.close()
    matrices, names, _ = sampling.result()
    assert scene.frame_current == 4 and names == list(PONY) + ["hips"]
    for i, frame in enumerate(frames):
        whole = int(math.floor(frame))
        scene.frame_set(whole, subframe=float(frame - whole))
        for b, name in enumerate(names):
            own = np.array(rig.matrix_world @ rig.pose.bones[name].matrix)  # Blender's own product, bone by bone
            np.testing.assert_allclose(matrices[i, b], own, atol=2e-6, err_msg=f"{name} at {frame}")


def test_a_tuning_rebake_uses_the_kept_motion_and_writes_what_a_fresh_bake_writes():
    rig, _ = _jumping_rig()
    ft, scene = _ft(), bpy.context.scene
    assert _bake(rig, bones=",".join(PONY), preset="hair") == {"FINISHED"}
    take = ft.sampled_motion.kept(scene, rig)
    drives = [m for motions in take.prepared.values() for m in motions.values()]
    assert len(drives) == 1  # the drive made from the motion is kept with it
    job = ft.bake_job.BakeJob(scene, rig, _request(rig, "cloth"))
    assert job.reused  # springiness, damping or the preset alone: nothing is sampled again
    job.run()
    job.write()
    # nor is the drive made again
    assert [m for motions in take.prepared.values() for m in motions.values()] == drives
    kept = _keys(rig)
    ft.sampled_motion.forget()
    assert _bake(rig, bones=",".join(PONY), preset="cloth") == {"FINISHED"}
    _same_keys(kept, _keys(rig))


def test_a_rebake_under_other_gravity_or_looped_makes_its_drive_again_and_matches_a_fresh_bake():
    rig, _ = _jumping_rig()
    ft, scene = _ft(), bpy.context.scene
    assert _bake(rig, bones=",".join(PONY), preset="hair") == {"FINISHED"}
    take = ft.sampled_motion.kept(scene, rig)
    for values in ({"gravity": 1.62}, {"cyclic": True}):  # lunar surface gravity [m/s^2] (NASA fact sheet)
        before = len(take.prepared)
        job = ft.bake_job.BakeJob(scene, rig, _request(rig, **values))
        assert job.reused
        job.run()
        job.write()
        assert len(take.prepared) == before + 1  # the motion is the same; its drive is not
        mine = _keys(rig)
        ft.sampled_motion.forget()
        fresh = ft.bake_job.BakeJob(scene, rig, _request(rig, **values))
        assert not fresh.reused
        fresh.run()
        fresh.write()
        _same_keys(mine, _keys(rig))
        take = ft.sampled_motion.kept(scene, rig)


def test_kept_motion_is_sampled_again_after_a_key_a_pose_or_the_range_changes():
    rig, _ = _jumping_rig()
    ft, scene = _ft(), bpy.context.scene

    def reused_and_same():
        job = ft.bake_job.BakeJob(scene, rig, _request(rig))
        reused = job.reused
        job.run()
        job.write()
        mine = _keys(rig)
        ft.sampled_motion.forget()
        fresh = ft.bake_job.BakeJob(scene, rig, _request(rig))
        fresh.run()
        fresh.write()
        _same_keys(mine, _keys(rig))
        return reused

    assert not reused_and_same()
    assert reused_and_same()
    # a key of the body moved, in the animator's action (played from its NLA track while the layer exists)
    track = rig.animation_data.nla_tracks["lw:your animation"]
    curve = next(fc for fc in addon().blender.compat.fcurves(track.strips[0].action, rig)
                 if fc.data_path.endswith("location") and fc.array_index == 2)
    key = curve.keyframe_points[len(curve.keyframe_points) // 2]
    key.co.y += 0.02
    curve.update()
    assert not reused_and_same()
    # a pose set without a key on a bone the chain hangs from
    rig.pose.bones["head"].rotation_mode = "XYZ"
    rig.pose.bones["head"].rotation_euler = (0.3, 0.0, 0.0)
    assert not reused_and_same()
    assert reused_and_same()
    scene.frame_end -= 3
    assert not reused_and_same()


def test_cancel_while_sampling_or_simulating_writes_nothing_and_puts_the_scene_back():
    rig, _ = _jumping_rig()
    ft, scene = _ft(), bpy.context.scene
    mesh = bpy.data.objects.new("Skin", bpy.data.meshes.new("SkinMesh"))
    scene.collection.objects.link(mesh)
    mesh.modifiers.new("Armature", "ARMATURE").object = rig
    scene.frame_set(12)
    for baked_before in (False, True):
        ft.sampled_motion.forget()
        before = snapshot()
        job = ft.bake_job.BakeJob(scene, rig, _request(rig, "cloth"))
        assert not job.reused
        job._sampling.step(5)  # part of the frames, as a modal step leaves it
        assert mesh.hide_viewport  # hidden while sampling
        job.cancel()
        assert snapshot() == before and scene.frame_current == 12 and not mesh.hide_viewport
        # the simulation on its worker thread: cancelled before its result is taken
        job = ft.bake_job.BakeJob(scene, rig, _request(rig, "cloth"), threaded=True)
        while job._sampling is not None:
            job.step(0.0)
        job.cancel()
        assert snapshot() == before and scene.frame_current == 12
        if not baked_before:
            assert _bake(rig, bones=",".join(PONY), preset="hair") == {"FINISHED"}
    track = rig.animation_data.nla_tracks[_ft().bake.TRACK]
    assert not track.mute


def test_rebake_as_you_tune_writes_the_new_values_at_once_and_only_when_asked():
    rig, _ = _jumping_rig()
    ft, scene = _ft(), bpy.context.scene
    s = scene.leapwright_follow_through
    s.preset = "custom"
    assert _bake(rig, bones=",".join(PONY)) == {"FINISHED"}
    first = _keys(rig)
    s.frequency = 2.5  # re-bake as you tune is off: nothing changes
    _same_keys(first, _keys(rig), atol=0.0)
    s.live_rebake = True
    scene.frame_set(scene.frame_end - 10)
    shown_before = np.array(rig.pose.bones[PONY[2]].matrix)
    s.frequency = 1.1
    message, ms = ft.live_tuning.status(scene)
    assert message == "" and ms is not None
    live = _keys(rig)
    assert any(np.abs(live[k] - first[k]).max() > 1e-3 for k in first)
    # the viewport's next evaluation shows the new keys, without a frame change
    bpy.context.view_layer.update()
    shown = np.array(rig.pose.bones[PONY[2]].matrix)
    scene.frame_set(scene.frame_current)
    np.testing.assert_allclose(shown, np.array(rig.pose.bones[PONY[2]].matrix), atol=1e-6)
    assert np.abs(shown - shown_before).max() > 1e-4
    ft.sampled_motion.forget()
    assert _bake(rig, bones=",".join(PONY)) == {"FINISHED"}  # the panel's values, sampled afresh
    _same_keys(live, _keys(rig))


def test_the_panel_button_bakes_at_once_where_there_is_no_window():
    # invoked as from the panel: headless there is no window for a progress bar, so it bakes at once
    rig, _ = _jumping_rig()
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.bake_follow_through("INVOKE_DEFAULT", bones=",".join(PONY)) == {"FINISHED"}
    assert len(_lag_curves(rig)) == 4 * len(PONY)


def test_blas_runs_on_one_thread_inside_the_simulation_and_as_before_after():
    rig, _ = _jumping_rig()
    ft = _ft()
    threads = ft.blas_threads.blas_threads()
    assert threads is not None  # numpy's OpenBLAS was found (the wheels ship it)
    job = ft.bake_job.BakeJob(bpy.context.scene, rig, _request(rig))
    job.run()
    assert ft.bake_job.LAST_BLAS_THREADS[0] == 1  # what OpenBLAS reported from inside the simulation
    assert ft.blas_threads.blas_threads() == threads


def _played(rig, frames):
    """World matrices of the ponytail at scene frames (sub-frames too), as the depsgraph evaluates them."""
    scene, out = bpy.context.scene, []
    for frame in frames:
        whole = int(math.floor(frame))
        scene.frame_set(whole, subframe=float(frame - whole))
        out.append([np.array(rig.matrix_world @ rig.pose.bones[n].matrix) for n in PONY])
    return np.array(out)


def test_keys_rewritten_in_place_play_as_a_layer_built_afresh_on_and_between_the_keys():
    # A re-bake with other values writes the new key values into the layer's own curves and
    # leaves Blender's sorting and handle pass out (linear keys do not read handles).
    rig, _ = _jumping_rig()
    scene = bpy.context.scene
    assert _bake(rig, bones=",".join(PONY), preset="hair") == {"FINISHED"}
    pointers = {(fc.data_path, fc.array_index): fc.as_pointer() for fc in _lag_curves(rig)}
    assert _bake(rig, bones=",".join(PONY), preset="cloth") == {"FINISHED"}
    rewritten = _lag_curves(rig)
    assert {(fc.data_path, fc.array_index): fc.as_pointer() for fc in rewritten} == pointers  # in place
    for fc in rewritten:
        co = _key_values(fc).reshape(-1, 2).astype(float)
        assert np.all(np.diff(co[:, 0]) > 0)  # still in time order
        # Blender's own curve evaluation between two linear keys: the straight line through them
        for i in range(0, len(co) - 1, 7):
            middle = 0.5 * (co[i] + co[i + 1])
            assert abs(fc.evaluate(middle[0]) - middle[1]) < 1e-6, (fc.data_path, fc.array_index, middle)
    frames = [scene.frame_start + 2.5, 0.5 * (scene.frame_start + scene.frame_end), scene.frame_end - 3.25]
    in_place = _played(rig, frames)
    assert _remove(rig) == {"FINISHED"}
    assert _bake(rig, bones=",".join(PONY), preset="cloth") == {"FINISHED"}  # a new layer, its curves updated
    np.testing.assert_allclose(in_place, _played(rig, frames), atol=1e-6)
