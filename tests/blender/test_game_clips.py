"""Game clips in real Blender: every hop's start, air and land clips, through Blender's glTF exporter.

References: Khronos glTF 2.0 specification (2021): section 3.4 (one unit is one metre,
+Y up) and section 3.6 (accessors: a bufferView and a byte offset); composition of parent and child
transforms (Blender's bone hierarchy) makes a root's displacement plus its child's the
child's world displacement.
"""

import numpy as np
import pytest
import bpy

from rig_builder import build_rig, configure
from scene_probe import run_write, world_path
from test_game_output import _fps, _plan


def _accessor(g, blob, index):
    """An accessor's floats as an (count, width) array (glTF 2.0 section 3.6: bufferView + offset)."""
    acc = g.accessors[index]
    view = g.bufferViews[acc.bufferView]
    width = {"SCALAR": 1, "VEC3": 3, "VEC4": 4}[acc.type]
    assert acc.componentType == 5126  # FLOAT
    start = (view.byteOffset or 0) + (acc.byteOffset or 0)
    return np.frombuffer(blob, dtype="<f4", count=acc.count * width, offset=start).reshape(acc.count, width)


def _tracks(g, blob, animation):
    """``{(node name, path): (times, values)}`` of one glTF animation."""
    out = {}
    for ch in animation.channels:
        s = animation.samplers[ch.sampler]
        out[(g.nodes[ch.target.node].name, ch.target.path)] = (_accessor(g, blob, s.input)[:, 0],
                                                               _accessor(g, blob, s.output))
    return out


def _y_up(p):
    """Blender's Z-up point in glTF's +Y-up frame (glTF 2.0 section 3.4; the exporter's default)."""
    return np.array([p[0], p[2], -p[1]])


@pytest.mark.parametrize("mode,vertical", [("ROOT_BONE", True), ("IN_PLACE", False), ("OBJECT", False)])
def test_clips_export_with_blenders_gltf_exporter_and_read_back(tmp_path, mode, vertical):
    import addon_utils
    import pygltflib
    rig = build_rig()
    configure(rig, height=0.45, distance=0.4, key_style="SPLINE", foot_left="foot.L", foot_right="foot.R",
              foot_tuck=0.1, root_motion=mode, root_bone="root", root_vertical=vertical)
    assert run_write(rig) == {"FINISHED"}
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.split_clips() == {"FINISHED"}
    plan, fps = _plan(), _fps()
    hop = plan.hops[0]
    take, touch = 1 + hop.takeoff_time_s * fps, 1 + hop.touchdown_time_s * fps
    names = {p: f"{rig.name}-leap-{p}" for p in ("start", "air", "land")}
    for part, name in names.items():
        action = bpy.data.actions[name]
        assert action.use_frame_range and action.use_fake_user, name
    assert tuple(bpy.data.actions[names["start"]].frame_range)[1] == round(take)
    root_at = {f: world_path(rig, "root", [f])[0] for f in (round(take), round(touch))}

    addon_utils.enable("io_scene_gltf2", default_set=True)
    path = str(tmp_path / "jump.glb")
    assert bpy.ops.export_scene.gltf(filepath=path, export_format="GLB", export_animations=True) == {"FINISHED"}
    g = pygltflib.GLTF2().load(path)
    blob = g.binary_blob()
    anims = {a.name: a for a in g.animations}
    assert set(names.values()) <= set(anims), sorted(anims)

    def root_world(tracks, i):
        # the root's head in the world: the armature node's translation plus the root's own (no turn)
        t, v = tracks[("root", "translation")]
        obj = tracks.get((rig.name, "translation"))
        return t[i], v[i] + (obj[1][i] if obj is not None else 0.0)

    start = _tracks(g, blob, anims[names["start"]])
    t, p = root_world(start, -1)
    assert abs(t * fps - round(take)) < 1e-4 and abs(round(take) - take) <= 0.5  # ends at take-off
    assert np.max(np.abs(p - _y_up(root_at[round(take)]))) < 1e-5

    land = _tracks(g, blob, anims[names["land"]])
    t, p = root_world(land, 0)
    assert abs(t * fps - round(touch)) < 1e-4 and abs(round(touch) - touch) <= 0.5  # starts at touchdown
    assert np.max(np.abs(p - _y_up(root_at[round(touch)]))) < 1e-5

    air = _tracks(g, blob, anims[names["air"]])
    assert air
    for key, (t, v) in air.items():
        assert np.max(np.abs(v[0] - v[-1])) < 1e-6, key  # a loop: first and last samples equal
    for node in ("root", "hips", rig.name):  # whatever carried the arc holds still: no vertical travel
        if (node, "translation") in air:
            _, v = air[(node, "translation")]
            assert np.max(np.ptp(v, axis=0)) < 1e-6, node
    assert ("hips", "translation") in air
    # the air clip still moves: the feet tuck and come back
    _, feet = air[("foot.L", "translation")]
    assert feet.shape[0] > 2 and np.ptp(feet[:, 1]) > 1e-3


@pytest.mark.parametrize("mode,vertical", [("ROOT_BONE", True), ("IN_PLACE", False)])
def test_every_hop_gets_its_clips_and_they_chain_in_the_gltf_read_back(tmp_path, mode, vertical):
    import addon_utils
    import pygltflib
    rig = build_rig()
    configure(rig, height=0.35, distance=0.3, hops=3, key_style="SPLINE", foot_left="foot.L",
              foot_right="foot.R", foot_tuck=0.1, root_motion=mode, root_bone="root", root_vertical=vertical)
    assert run_write(rig) == {"FINISHED"}
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.split_clips() == {"FINISHED"}
    plan, fps = _plan(), _fps()
    assert len(plan.hops) == 3
    names = [[f"{rig.name}-leap{'' if k == 0 else k + 1}-{p}" for p in ("start", "air", "land")] for k in range(3)]
    addon_utils.enable("io_scene_gltf2", default_set=True)
    path = str(tmp_path / "hops.glb")
    assert bpy.ops.export_scene.gltf(filepath=path, export_format="GLB", export_animations=True) == {"FINISHED"}
    g = pygltflib.GLTF2().load(path)
    blob = g.binary_blob()
    anims = {a.name: _tracks(g, blob, a) for a in g.animations}
    assert {n for hop in names for n in hop} <= set(anims), sorted(anims)

    def times(name):  # every clip's key times [frames], from its root track
        return anims[name][("root", "translation")][0] * fps

    ends = []
    for k, (start, air, land) in enumerate(names):
        hop = plan.hops[k]
        take, touch = 1 + hop.takeoff_time_s * fps, 1 + hop.touchdown_time_s * fps
        assert abs(times(start)[-1] - round(take)) < 1e-4 and abs(round(take) - take) <= 0.5  # ends at take-off
        assert abs(times(land)[0] - round(touch)) < 1e-4  # begins at touchdown
        root_at = {f: world_path(rig, "root", [f])[0] for f in (round(take), round(touch))}
        _, v = anims[start][("root", "translation")]
        assert np.max(np.abs(v[-1] - _y_up(root_at[round(take)]))) < 1e-5
        _, v = anims[land][("root", "translation")]
        assert np.max(np.abs(v[0] - _y_up(root_at[round(touch)]))) < 1e-5
        for key, (_t, v) in anims[air].items():
            assert np.max(np.abs(v[0] - v[-1])) < 1e-6, (air, key)  # a loop
        for node in ("root", "hips"):  # whatever carried the arc holds still in the loop
            _, v = anims[air][(node, "translation")]
            assert np.max(np.ptp(v, axis=0)) < 1e-6, (air, node)
        ends.append((times(start)[0], times(land)[-1]))
    # Land k ends on the frame start k+1 begins (the bottom of the rebound, where the push starts);
    # the last land runs to the end of the jump.
    for (_s, land_end), (next_start, _e) in zip(ends, ends[1:]):
        assert land_end == next_start
    assert abs(ends[-1][1] - np.floor(1 + plan.duration_s * fps + 1e-6)) < 1e-4
    assert abs(ends[0][0] - round(1 + next(p.start_s for p in plan.phases if p.name == "unweighting") * fps)) < 1e-4
    # Splitting again after one hop only leaves the first hop's three clips.
    configure(rig, hops=1)
    assert run_write(rig) == {"FINISHED"}
    assert bpy.ops.leapwright.split_clips() == {"FINISHED"}
    left = sorted(a.name for a in bpy.data.actions if a.name.startswith(f"{rig.name}-leap"))
    assert left == sorted(names[0])
