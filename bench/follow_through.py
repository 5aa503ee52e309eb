"""Benchmark, one fresh Blender process: the follow-through bake at one size.

Prints one JSON object (its last line). Run by ``bench/run.py`` (``make bench``),
once per size, each in a fresh process so that the first bake is the first of
a session. Timed, in this order:

* the floor: one ``scene.frame_set`` per frame of the range, same scene, best of a few;
* the first bake: ``bpy.ops.leapwright.bake_follow_through``, once, nothing warmed but the floor;
* the re-bake: the same operator after a key of the body changed (the kept motion no
  longer holds, so it samples again), best of a few;
* the tuning re-bake (springiness changed, motion kept), by the operator and by the
  panel's "re-bake as you tune" (setting the property), best of a few;
* the parts of each bake (sampling, simulation, curves, writing, from the operator's
  :class:`BakeJob`; ``bench/run.py`` puts the rest of the operator's time in "other"),
  and the BLAS threads inside the simulation;
* ``bpy.ops.nla.bake`` of the same bones (rotation, visual keying), best of a few (once at
  the large size);
* at the large size, re-bakes of fewer bones and frames, for the scaling fit.

Usage::

    python bench/follow_through.py --zip dist/leapwright-<version>.zip --size demo
"""

import argparse
import json
import os
import sys
import tempfile
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import follow_through_rigs  # noqa: E402  (the benchmark's own rigs)

MODULE = "bl_ext.user_default.leapwright"
SIZES = {"demo": dict(frames=250, chains=6, links=5, straps=True),
         "large": dict(frames=4000, chains=60, links=5, straps=False)}
#: (chains, frames) re-baked at the large size for the fit; the full size is added.
SCALING = ((15, 1000), (60, 1000), (15, 4000), (30, 2000))


def _isolate():
    """Point Blender's user directories at a temp dir before bpy is imported."""
    tmp = tempfile.mkdtemp(prefix="lw-bench-")
    for var, sub in (("BLENDER_USER_RESOURCES", "user"), ("HOME", "home"), ("XDG_CACHE_HOME", "cache")):
        os.makedirs(os.path.join(tmp, sub), exist_ok=True)
        os.environ[var] = os.path.join(tmp, sub)


def timed(fn):
    start = time.perf_counter()
    fn()
    return time.perf_counter() - start


def best_of(repeats, fn, before=None):
    times = []
    for _ in range(repeats):
        if before is not None:
            before()
        times.append(timed(fn))
    return min(times)


def _install(zip_path):
    import addon_utils
    import bpy
    bpy.ops.wm.read_factory_settings(use_empty=True)
    res = bpy.ops.extensions.package_install_files(filepath=os.path.abspath(zip_path), repo="user_default",
                                                   enable_on_install=True)
    assert res == {"FINISHED"}, res
    if MODULE not in bpy.context.preferences.addons:
        addon_utils.enable(MODULE, default_set=True)
    return sys.modules[MODULE]


class Bench:
    """The scene, the rig and the operator calls of one size."""

    def __init__(self, bpy, addon, size):
        self.bpy, self.addon, self.size = bpy, addon, size
        spec = SIZES[size]
        self.scene = bpy.context.scene
        self.scene.frame_start, self.scene.frame_end = 1, spec["frames"]
        self.rig, self.hair = follow_through_rigs.build_rig(bpy, **spec)
        self.settings = self.scene.leapwright_follow_through
        self.settings.preset = "hair"
        self._nudge = 0
        # a curve of the body's keys, kept: after the first bake its action plays from an NLA track
        self._curve = next(iter(addon.blender.compat.fcurves(self.rig.animation_data.action, self.rig)))

    def floor(self, frames=None):
        scene = self.scene
        for f in range(1, (frames or scene.frame_end) + 1):
            scene.frame_set(f)

    def bake(self, bones=None):
        bpy = self.bpy
        bpy.context.view_layer.objects.active = self.rig
        result = bpy.ops.leapwright.bake_follow_through(bones=",".join(bones or self.hair))
        assert result == {"FINISHED"}, result

    def change_animation(self):
        """Nudge one key of the hips (alternately up and back): the kept motion no longer holds."""
        fc = self._curve
        self._nudge = 1 - self._nudge
        key = fc.keyframe_points[len(fc.keyframe_points) // 2]
        key.co.y += 1e-3 if self._nudge else -1e-3
        fc.update()

    def best_with_parts(self, repeats, fn, before=None):
        """(best time [s], the parts of that run) of ``fn`` over ``repeats`` runs."""
        best = None
        for _ in range(repeats):
            if before is not None:
                before()
            took = timed(fn)
            if best is None or took < best[0]:
                best = (took, self.parts())
        return best

    def parts(self):
        """Seconds the last bake spent sampling, simulating, building and writing curves (its job's timings)."""
        return dict(self.addon.follow_through.bake_job.LAST_TIMINGS)


def _sampling_against_floor(bench, repeats):
    """(floor, sampling alone) [s], each the best of ``repeats`` runs taken in turns (same machine load)."""
    sampling = bench.addon.rig.sampling
    frames = list(range(1, bench.scene.frame_end + 1))

    def sample():
        run = sampling.PoseSampling(bench.scene, bench.rig, frames, bench.hair)
        run.step()
        run.close()
        run.result()

    floors, samples = [], []
    for _ in range(repeats):
        floors.append(timed(bench.floor))
        samples.append(timed(sample))
    return min(floors), min(samples)


def _demo(bench, repeats):
    bpy, addon, s = bench.bpy, bench.addon, bench.settings
    out = {}
    bench.floor()
    out["floor_s"] = best_of(repeats, bench.floor)
    out["first_bake_s"] = timed(bench.bake)
    out["first_parts_s"] = bench.parts()
    floors = [out["floor_s"]]

    def floor_then_change():  # a floor between re-bakes: the best of both under the same load
        floors.append(timed(bench.floor))
        bench.change_animation()

    out["rebake_s"], out["parts_s"] = bench.best_with_parts(repeats, bench.bake, before=floor_then_change)
    out["floor_s"] = min(floors)
    assert not out["parts_s"]["reused"]  # the re-bake sampled the changed animation
    out["sampling_floor_s"], out["sampling_alone_s"] = _sampling_against_floor(bench, 2 * repeats)
    s.preset = "custom"
    values = iter([1.6, 1.5] * (2 * repeats + 2))
    out["tune_rebake_operator_s"], out["tune_operator_parts_s"] = bench.best_with_parts(
        repeats, bench.bake, before=lambda: setattr(s, "frequency", next(values)))
    s.live_rebake = True
    out["tune_rebake_live_s"], out["tune_parts_s"] = bench.best_with_parts(
        repeats, lambda: setattr(s, "frequency", next(values)))
    live = addon.follow_through.live_tuning.status(bench.scene)
    assert live[0] == "" and live[1] is not None, live  # the property change re-baked
    assert out["tune_parts_s"]["reused"] and out["tune_operator_parts_s"]["reused"]
    s.live_rebake = False
    out["blas_threads_in_bake"] = addon.follow_through.bake_job.LAST_BLAS_THREADS[0]
    out["blas_threads_outside"] = addon.follow_through.blas_threads.blas_threads()
    jump = bench.scene.leapwright_plan
    heights = iter(0.4 + 0.01 * (1 + i) for i in range(repeats))  # each new: a recent one is a look-up
    out["plan_readout_update_s"] = best_of(repeats, lambda: setattr(jump, "height", next(heights)))
    return out


def _builtin_bake(bench, bones, frames, repeats):
    bpy, rig = bench.bpy, bench.rig
    assert bpy.ops.leapwright.remove_follow_through() == {"FINISHED"}
    bpy.ops.object.mode_set(mode="POSE")
    chosen = set(bones)
    for pb in rig.pose.bones:
        holder = pb if "select" in type(pb).bl_rna.properties else pb.bone  # moved to PoseBone in 5.0
        holder.select = pb.name in chosen

    def builtin():
        assert bpy.ops.nla.bake(frame_start=1, frame_end=frames, only_selected=True, visual_keying=True,
                                clear_constraints=False, use_current_action=True, bake_types={"POSE"},
                                channel_types={"ROTATION"}) == {"FINISHED"}

    took = best_of(repeats, builtin)
    bpy.ops.object.mode_set(mode="OBJECT")
    return took


def _large(bench):
    out = {}
    bench.floor()
    out["floor_s"] = timed(bench.floor)
    out["first_bake_s"] = timed(bench.bake)
    out["first_parts_s"] = bench.parts()
    bench.change_animation()
    out["rebake_s"] = timed(bench.bake)
    out["parts_s"] = bench.parts()
    links = SIZES["large"]["links"]
    points = [(len(bench.hair), bench.scene.frame_end, out["rebake_s"], out["parts_s"]["simulation"])]
    for chains, frames in SCALING:
        bench.scene.frame_end = frames
        bones = bench.hair[:chains * links]
        bench.change_animation()
        took = timed(lambda: bench.bake(bones))
        points.append((len(bones), frames, took, bench.parts()["simulation"]))
    bench.scene.frame_end = SIZES["large"]["frames"]
    out["scaling_points"] = points
    return out


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--zip", required=True, help="the built extension zip")
    ap.add_argument("--size", choices=sorted(SIZES), default="demo")
    ap.add_argument("--repeats", type=int, default=5)
    args = ap.parse_args(argv)
    _isolate()
    import bpy
    import addon_utils  # importable once bpy is
    addon = _install(args.zip)
    bench = Bench(bpy, addon, args.size)
    out = {"blender": bpy.app.version_string, "size": args.size, "rig_bones": len(bench.rig.data.bones),
           "baked_bones": len(bench.hair), "frames": bench.scene.frame_end}
    if args.size == "demo":
        out.update(_demo(bench, args.repeats))
        out["builtin_bake_s"] = _builtin_bake(bench, bench.hair, bench.scene.frame_end, 3)
    else:
        out.update(_large(bench))
        out["builtin_bake_s"] = _builtin_bake(bench, bench.hair, bench.scene.frame_end, 1)
    addon_utils.disable(MODULE, default_set=False)
    print(json.dumps(out))
    sys.stdout.flush()
    os._exit(0)  # leaving with Blender's state alive can crash on some versions


if __name__ == "__main__":
    main()
