"""Benchmark: the follow-through bake against frame evaluation and Blender's own bake.

A procedural 61-bone rig (root, legs, spine, arms, six five-bone hair chains
and two four-bone straps) bobs and twists for 250 frames; the 30 hair bones
are baked. Timed, in one process:

* the floor: 250 × ``scene.frame_set`` on the same scene, same visibility;
* ``bpy.ops.leapwright.bake_follow_through`` (the real operator: sampling, simulation and
  key writing);
* ``bpy.ops.nla.bake`` of the same 30 bones, rotation only, visual keying.

Each is the best of a few repeats. The last line is one JSON object.

Usage::

    .venv/bin/python bench/follow_through.py --zip dist/leapwright-<version>.zip
"""

import argparse
import json
import math
import os
import sys
import tempfile
import time

FRAMES = 250
#: The issue's targets: at most this many times the floor, at least this many times faster than nla.bake.
FLOOR_TARGET = 1.5
SPEEDUP_TARGET = 6.0
MODULE = "bl_ext.user_default.leapwright"


def _isolate():
    """Point Blender's user directories at a temp dir before bpy is imported."""
    tmp = tempfile.mkdtemp(prefix="lw-bench-")
    for var, sub in (("BLENDER_USER_RESOURCES", "user"), ("HOME", "home"), ("XDG_CACHE_HOME", "cache")):
        os.makedirs(os.path.join(tmp, sub), exist_ok=True)
        os.environ[var] = os.path.join(tmp, sub)


def build_rig(bpy):
    """The 61-bone rig, animated; returns (rig, names of the 30 hair bones)."""
    arm = bpy.data.armatures.new("BenchRig")
    rig = bpy.data.objects.new("BenchRig", arm)
    bpy.context.scene.collection.objects.link(rig)
    bpy.context.view_layer.objects.active = rig
    bpy.ops.object.mode_set(mode="EDIT")
    eb = arm.edit_bones

    def bone(name, head, tail, parent=None):
        b = eb.new(name)
        b.head, b.tail = head, tail
        b.parent = eb[parent] if parent else None
        return name

    bone("root", (0, 0, 0), (0, 0.3, 0))
    bone("hips", (0, 0, 1.0), (0, 0, 1.15), "root")
    for side, x in (("L", 0.1), ("R", -0.1)):
        bone(f"thigh.{side}", (x, 0, 1.0), (x, 0, 0.55), "hips")
        bone(f"shin.{side}", (x, 0, 0.55), (x, 0, 0.1), f"thigh.{side}")
        bone(f"foot.{side}", (x, 0, 0.1), (x, -0.12, 0.03), f"shin.{side}")
        bone(f"toe.{side}", (x, -0.12, 0.03), (x, -0.2, 0.03), f"foot.{side}")
    prev, z = "hips", 1.15
    for name in ("spine.1", "spine.2", "spine.3", "neck", "head"):
        prev = bone(name, (0, 0, z), (0, 0, z + 0.12), prev)
        z += 0.12
    for side, x in (("L", 1), ("R", -1)):
        p = bone(f"shoulder.{side}", (0.05 * x, 0, 1.45), (0.18 * x, 0, 1.45), "spine.3")
        p = bone(f"upper_arm.{side}", (0.18 * x, 0, 1.45), (0.45 * x, 0, 1.45), p)
        p = bone(f"forearm.{side}", (0.45 * x, 0, 1.45), (0.7 * x, 0, 1.45), p)
        bone(f"hand.{side}", (0.7 * x, 0, 1.45), (0.8 * x, 0, 1.45), p)
    hair = []
    for c in range(6):
        angle = math.radians(-50 + 20 * c)
        p, at = "head", (0.06 * math.sin(angle), 0.08, 1.72)
        for k in range(5):
            to = (at[0] + 0.01 * math.sin(angle), at[1] + 0.045, at[2] - 0.045)
            p = bone(f"hair.{c}.{k}", at, to, p)
            hair.append(p)
            at = to
    for side, x in (("L", 0.15), ("R", -0.15)):
        p, at = "spine.3", (x, 0.1, 1.45)
        for k in range(4):
            to = (at[0], at[1] + 0.02, at[2] - 0.1)
            p = bone(f"strap.{side}.{k}", at, to, p)
            at = to
    bpy.ops.object.mode_set(mode="OBJECT")
    assert len(arm.bones) == 61, len(arm.bones)
    hips, spine = rig.pose.bones["hips"], rig.pose.bones["spine.2"]
    for f in range(1, FRAMES + 1, 5):
        t = f / 24.0
        hips.location = (0.05 * math.sin(2.1 * t), 0.3 * abs(math.sin(3.0 * t)), 0.1 * math.sin(1.3 * t))
        hips.keyframe_insert("location", frame=f)
        spine.rotation_quaternion = (math.cos(0.2 * math.sin(2 * t)), 0, 0, math.sin(0.2 * math.sin(2 * t)))
        spine.keyframe_insert("rotation_quaternion", frame=f)
    return rig, hair


def best_of(repeats, fn):
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def _parts(addon, scene, rig, hair, repeats):
    """Best times [s] of the operator's two big parts alone: sampling, and the core's simulation."""
    import numpy as np
    frames = np.arange(1, FRAMES + 1)
    sampled = {}

    def sample():
        sampled["m"] = addon.rig.sampling.sample_pose_world(scene, rig, frames, hair)[0]

    t_sampling = best_of(repeats, sample)
    m = sampled["m"]
    parents = addon.rig.sampling.bone_rest_data(rig, hair)[1]
    preset = addon.core.follow_through.presets.chain_preset("hair")
    t_core = best_of(repeats, lambda: addon.core.follow_through.chains.bake_chains(frames / 24.0, m[:, :, :3, 3], m[:, :, :3, :3],
                                                                    parents, preset))
    return t_sampling, t_core


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--zip", required=True, help="the built extension zip")
    ap.add_argument("--repeats", type=int, default=3)
    args = ap.parse_args(argv)
    _isolate()
    import bpy
    import addon_utils

    bpy.ops.wm.read_factory_settings(use_empty=True)
    res = bpy.ops.extensions.package_install_files(filepath=os.path.abspath(args.zip), repo="user_default",
                                                   enable_on_install=True)
    assert res == {"FINISHED"}, res
    if MODULE not in bpy.context.preferences.addons:
        addon_utils.enable(MODULE, default_set=True)
    scene = bpy.context.scene
    scene.frame_start, scene.frame_end = 1, FRAMES
    rig, hair = build_rig(bpy)

    def floor():
        for f in range(1, FRAMES + 1):
            scene.frame_set(f)

    floor()  # warm caches
    t_floor = best_of(args.repeats, floor)

    def ours():
        assert bpy.ops.leapwright.bake_follow_through(bones=",".join(hair), preset="hair") == {"FINISHED"}

    t_ours = best_of(args.repeats, ours)
    assert bpy.ops.leapwright.remove_follow_through() == {"FINISHED"}
    t_sampling, t_core = _parts(sys.modules[MODULE], scene, rig, hair, args.repeats)

    bpy.ops.object.mode_set(mode="POSE")
    chosen = set(hair)
    for pb in rig.pose.bones:
        # Bone selection moved from Bone to PoseBone in Blender 5.0.
        holder = pb if "select" in type(pb).bl_rna.properties else pb.bone
        holder.select = pb.name in chosen

    def builtin():
        assert bpy.ops.nla.bake(frame_start=1, frame_end=FRAMES, only_selected=True, visual_keying=True,
                                clear_constraints=False, use_current_action=True, bake_types={"POSE"},
                                channel_types={"ROTATION"}) == {"FINISHED"}

    t_builtin = best_of(args.repeats, builtin)
    bpy.ops.object.mode_set(mode="OBJECT")
    out = {
        "blender": bpy.app.version_string,
        "bones": len(rig.data.bones),
        "baked_bones": len(hair),
        "frames": FRAMES,
        "floor_ms": round(t_floor * 1e3, 2),
        "bake_ms": round(t_ours * 1e3, 2),
        "builtin_bake_ms": round(t_builtin * 1e3, 2),
        "sampling_ms": round(t_sampling * 1e3, 2),
        "simulation_ms": round(t_core * 1e3, 2),
        "writing_and_operator_ms": round((t_ours - t_sampling - t_core) * 1e3, 2),
        "sampling_floor_ratio": round(t_sampling / t_floor, 3),
        "floor_ratio": round(t_ours / t_floor, 3),
        "builtin_floor_ratio": round(t_builtin / t_floor, 3),
        "speedup_vs_builtin_bake": round(t_builtin / t_ours, 3),
        # what the simulation may take for each target, given what the rest of this run's bake took
        "simulation_budget_floor_target_ms": round((FLOOR_TARGET * t_floor - (t_ours - t_core)) * 1e3, 2),
        "simulation_budget_speedup_target_ms": round((t_builtin / SPEEDUP_TARGET - (t_ours - t_core)) * 1e3, 2),
    }
    print(f"floor (250 x frame_set): {out['floor_ms']:.1f} ms")
    print(f"leapwright.bake_follow_through:     {out['bake_ms']:.1f} ms = {out['floor_ratio']:.2f} x floor")
    print(f"  of which sampling {out['sampling_ms']:.1f} ms ({out['sampling_floor_ratio']:.2f} x floor: no bake "
          f"that samples every frame goes below it), chain simulation (core) {out['simulation_ms']:.1f} ms, "
          f"key writing and operator (undo step, checks) {out['writing_and_operator_ms']:.1f} ms")
    print(f"nla.bake (same bones):   {out['builtin_bake_ms']:.1f} ms = {out['builtin_floor_ratio']:.2f} x floor; "
          f"leapwright is {out['speedup_vs_builtin_bake']:.1f} x faster")
    print(f"left for the simulation by the rest of this bake: {out['simulation_budget_floor_target_ms']:.1f} ms at "
          f"{FLOOR_TARGET} x floor, {out['simulation_budget_speedup_target_ms']:.1f} ms at {SPEEDUP_TARGET} x faster "
          f"than nla.bake (it took {out['simulation_ms']:.1f} ms)")
    addon_utils.disable(MODULE, default_set=False)
    print(json.dumps(out))
    sys.stdout.flush()
    os._exit(0)  # leaving with Blender's state alive can crash on some versions


if __name__ == "__main__":
    main()
