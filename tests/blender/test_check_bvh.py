"""BVH captures: our reading against Blender's bundled BVH importer, and Check Jump on an import.

Sources named beside each check:
- Blender's bundled BVH importer (``import_anim.bvh``, shipped inside Blender, not built
  here): the same file imported there must put every joint where our forward kinematics
  does, frame by frame, read back evaluated in world space;
- the motion: a real countermovement jump on force plates from the PyPI package
  jumpmetrics 0.2.0 (MIT, tests/data), integrated to a COM path by impulse-momentum, with
  marker-like noise (tests/core/check/capture_paths.py), written as BVH (tests/core/rig/bvh_files.py);
- acceptance from the issue: the flight found with implied g within 5 % of 9.81.
"""

import importlib
import os
import sys
import zlib

import bpy
import numpy as np
import pytest

REPO = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))
sys.path.insert(0, REPO)
from tests.core.check import capture_paths as cp  # noqa: E402
from tests.core.rig import bvh_files  # noqa: E402

from scene_probe import addon  # noqa: E402
from test_body_arc import _enable  # noqa: E402


def _import(path, scale=1.0):
    bpy.ops.wm.read_factory_settings(use_empty=True)
    _enable()
    assert bpy.ops.import_anim.bvh(filepath=str(path), global_scale=scale, frame_start=1,
                                   update_scene_fps=True, update_scene_duration=True) == {"FINISHED"}
    rig = next(o for o in bpy.context.scene.objects if o.type == "ARMATURE")
    return rig, bpy.context.scene


@pytest.mark.parametrize("order", ["ZXY", "XYZ", "YXZ"])
def test_forward_kinematics_puts_every_joint_where_blenders_importer_does(tmp_path, order):
    bvh = importlib.import_module(addon().__name__ + ".core.rig.bvh")
    rng = np.random.default_rng(ord(order[0]) + 7)
    n = 12
    root = np.stack([np.linspace(0, 0.5, n), np.linspace(0, -0.3, n), 0.96 + 0.1 * np.sin(np.arange(n))], axis=1)
    angles = rng.uniform(-60, 60, (n, len(bvh_files.SKELETON), 3))
    path = bvh_files.write_bvh(tmp_path / "posed.bvh", root, 30.0, rotations=angles, order=order)
    motion = bvh.read_bvh(open(path).read(), str(path))
    _rot, pos = bvh.forward_kinematics(motion)
    ours = np.einsum("ij,fbj->fbi", bvh.Y_UP_TO_Z_UP, pos)  # file units (cm), Z up
    rig, scene = _import(path)
    theirs = np.empty_like(ours)
    for f in range(n):
        scene.frame_set(scene.frame_start + f)
        mw = rig.matrix_world
        for j, name in enumerate(motion.names):
            theirs[f, j] = tuple(mw @ rig.pose.bones[name].head)
    # Blender keeps keys in single precision: 1e-3 of a centimetre on a 2 m skeleton.
    np.testing.assert_allclose(ours, theirs, atol=1e-3)
    assert np.ptp(ours[..., 0]) > 10  # the joints really moved


def _imported_jump(tmp_path, name, fps):
    t, z, truth = cp.plate_com_path(name)
    rng = np.random.default_rng(zlib.crc32(f"blender{name}{fps}".encode()))
    ts, zs = cp.sampled(t, z, fps, phase=rng.uniform())
    root = cp.captured(ts, zs - 1.0 + bvh_files.HIPS_HEIGHT_M, rng)
    path = bvh_files.write_bvh(tmp_path / f"{name}.bvh", root, fps)
    return _import(path, scale=0.01)  # centimetres to metres, as an animator would import it


@pytest.mark.parametrize("follow", ["AUTO", "BONE", "BODY"])
def test_check_jump_on_an_imported_capture_finds_the_flight(tmp_path, follow):
    rig, scene = _imported_jump(tmp_path, "F04_CTRL2", 120.0)
    assert scene.render.fps == 120
    s = scene.leapwright_plan
    s.rig, s.com_bone = rig, "Hips"
    scene.leapwright_check.follow = follow
    assert bpy.ops.leapwright.check_jump() == {"FINISHED"}
    c = scene.leapwright_check
    # Automatic follows the whole-body COM of a rig that reads as a body (the add-on's rule).
    follows = "the body bone 'Hips'" if follow == "BONE" else "the whole-body COM (map found from the bone tree)"
    assert c.summary.startswith(f"checked {follows}: 1 flight(s)"), c.summary
    assert abs(c.implied_gravity / 9.81 - 1) < 0.05, c.summary  # the acceptance
    assert not [f.kind for f in c.findings if f.kind in ("floaty_gravity", "heavy_gravity")]
