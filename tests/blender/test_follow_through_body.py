"""Follow-through chains keep out of the body and above the ground, in real Blender.

On the demo mannequin's ponytail and on the ponytail of Rigify's generated human rig
(a rig we did not build: Blender's bundled Rigify, ``rigify_rig.py``), after a jump is
written and the ponytail baked, every baked bone's tip is read back through the
depsgraph, in world space and scene time, at every frame, and measured against the
head, neck and torso capsules the bake reports (radii per chain in the panel's body
readout, segments placed on the evaluated deform bones) and the ground. The same
check on a bake without the body finds the ponytail inside, so the check can fail.
Distances are plain geometry (closest point on a segment: Ericson 2005, "Real-Time
Collision Detection", sec. 5.1.2).
"""

import importlib
import json
import os
import sys

import bpy
import numpy as np
import pytest

import rigify_rig
from scene_probe import MODULE, addon, snapshot
from test_body_arc import _jump as body_arc_jump

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "blend_examples"))
import mannequin  # noqa: E402  (the demo's own rig, not edited here)

#: Parts checked: what a ponytail can swing into.
CHECKED = ("head", "neck", "torso")
#: Slack of the check [m]: keys are float32 and the contact is held at the frames exactly (design choice).
SLACK = 0.001


def _mannequin_jump():
    rig, _ = body_arc_jump(arm_raise=False)  # the demo's mannequin with the written 0.5 m jump, frames 1-60
    return rig, tuple(mannequin.PONYTAIL)


def _rigify_jump():
    return rigify_rig.load_jumping_rig(), ("ponytail", "ponytail.001", "ponytail.002")


def _bake(rig, bones, keep_out):
    scene = bpy.context.scene
    scene.leapwright_follow_through.preset = "hair"
    scene.leapwright_follow_through.keep_out = keep_out
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.bake_follow_through(bones=",".join(bones)) == {"FINISHED"}
    raw = scene.leapwright_follow_through.body_readout
    return json.loads(raw) if raw else {}


def _distance_to_segment(p, a, b):
    ab = b - a
    t = np.clip((p - a) @ ab / max(ab @ ab, 1e-12), 0.0, 1.0)
    return float(np.linalg.norm(p - (a + t * ab)))


def _worst(rig, bones, body):
    """Deepest any baked tip goes into a checked capsule or below the ground over the range [m]."""
    scene = bpy.context.scene
    colliders = addon().follow_through.body_colliders
    fit = colliders.fit_body(scene, rig)
    # a part the chain cannot reach is not in its list: it is checked with its full radius all the same
    radii = {name: values[0] for name, values in body["parts"].items()}
    radii.update(body["chains"][bones[0]])
    k_checked = [k for k, p in enumerate(fit.parts) if p.name in CHECKED and radii[p.name] > 0.0]
    assert {fit.parts[k].name for k in k_checked} >= {"neck", "torso"}
    worst, now = -np.inf, scene.frame_current
    for f in range(scene.frame_start, scene.frame_end + 1):
        scene.frame_set(f)
        ev = rig.evaluated_get(bpy.context.evaluated_depsgraph_get())
        world = np.array(ev.matrix_world)
        mats = np.array([world @ np.array(ev.pose.bones[n].matrix) for n in fit.bones])[None]
        starts, ends = colliders.body_segments(fit, np.array([radii[p.name] or 1.0 for p in fit.parts]), mats, 1.0)
        for b in bones:
            tip = np.array(ev.matrix_world @ ev.pose.bones[b].tail)
            for k in k_checked:
                depth = radii[fit.parts[k].name] - _distance_to_segment(tip, starts[0, k], ends[0, k])
                worst = max(worst, depth)
            worst = max(worst, body["ground"] - tip[2])
    scene.frame_set(now)
    return worst


def _check_kept_out(make_jump, typed_neck=0.0, multi_link=False):
    rig, bones = make_jump()
    bpy.context.scene.leapwright_follow_through.neck_radius = typed_neck
    bpy.context.scene.leapwright_follow_through.multi_link = multi_link
    before = snapshot()
    body = _bake(rig, bones, keep_out=True)
    assert all(part in body["parts"] for part in CHECKED)
    if typed_neck:  # a radius typed in the panel is the one the chain is kept out of, and the panel says so
        assert body["parts"]["neck"] == [typed_neck, "panel"]
        assert body["chains"][bones[0]]["neck"] == typed_neck
    kept_out = _worst(rig, bones, body)
    assert bpy.ops.leapwright.remove_follow_through() == {"FINISHED"}
    assert snapshot() == before  # Remove takes back everything the bake added
    assert _bake(rig, bones, keep_out=False) == {}
    # the same check on the chain simulated without the body: it goes in, so the check can fail
    assert _worst(rig, bones, body) > 0.01
    assert kept_out < SLACK


def test_the_mannequins_ponytail_stays_out_of_the_head_neck_torso_and_ground():
    # the mannequin's free ponytail only grazes its fitted neck (0.95 mm in), so the neck is typed thicker
    # (a high collar, 10 cm): free, the ponytail goes 3 cm into it
    _check_kept_out(_mannequin_jump, typed_neck=0.1)


def test_rigifys_ponytail_stays_out_of_the_head_neck_torso_and_ground():
    _check_kept_out(_rigify_jump)


@pytest.mark.parametrize("make_jump, typed_neck", [(_mannequin_jump, 0.1), (_rigify_jump, 0.0)],
                         ids=["mannequin", "rigify"])
def test_a_ponytail_whose_bones_pull_on_their_parents_stays_out_too(make_jump, typed_neck):
    _check_kept_out(make_jump, typed_neck, multi_link=True)


@pytest.mark.parametrize("multi_link", [False, True], ids=["follows-parent", "pulls-on-parent"])
def test_rigifys_ponytail_plays_what_was_simulated(multi_link):
    # Rigify's tentacle controls copy their parent's local rotation (a rig we did not build), so a delta
    # keyed on a parent turns the bones below it again: the bake reads the layer back and corrects the
    # deltas. Every tip read back through the depsgraph lies where the core's simulated rotations put it:
    # the first head as animated, each later head carried by its parent's simulated rotation.
    rig, bones = _rigify_jump()
    scene = bpy.context.scene
    scene.leapwright_follow_through.preset = "hair"
    scene.leapwright_follow_through.multi_link = multi_link
    ft = addon().follow_through
    request = ft.bake.request_from_panel(bpy.context, rig, list(bones), frame_range=(scene.frame_start, scene.frame_end))
    assert request.multi_link == multi_link
    job = ft.bake_job.BakeJob(scene, rig, request)
    job.run()
    job.write()
    assert job.result.peak_offsets.max() > 0.3  # the ponytail swings (17 deg or more), so a wrong delta shows
    rotate = addon().core.base.rotation_vectors.rotate
    animated = job._take.matrices[:, :len(bones)]
    # the panel's choice of model reaches the core: its own bake of the sampled motion with that model
    chains = addon().core.follow_through.chains
    fps = scene.render.fps / scene.render.fps_base
    times = np.arange(scene.frame_start, scene.frame_end + 1) / fps
    unit = scene.unit_settings.scale_length or 1.0
    gravity = (0.0, 0.0, -scene.leapwright_plan.gravity)
    core_bake = {model: chains.bake_chains(times, animated[:, :, :3, 3] * unit, animated[:, :, :3, :3], [-1, 0, 1],
                                           addon().core.follow_through.presets.chain_preset("hair"), gravity,
                                           chains.BakeOptions(multi_link=model))
                 for model in (False, True)}
    np.testing.assert_allclose(job.result.world_offsets, core_bake[multi_link].world_offsets, atol=1e-12)
    models_apart = np.degrees(np.abs(core_bake[True].world_offsets - core_bake[False].world_offsets).max())
    assert models_apart > 2.0, models_apart  # so the comparison above tells the models apart
    offsets = job.result.world_offsets
    heads = animated[:, :, :3, 3].copy()
    directions = np.stack([rotate(offsets[:, b], animated[:, b, :3, 1] / np.linalg.norm(animated[:, b, :3, 1],
                                                                                          axis=-1)[:, None])
                           for b in range(len(bones))], axis=1)
    for b in range(1, len(bones)):
        heads[:, b] = heads[:, b - 1] + rotate(offsets[:, b - 1], animated[:, b, :3, 3] - animated[:, b - 1, :3, 3])
    lengths = np.array([rig.data.bones[n].length for n in bones])
    tips = heads + lengths[None, :, None] * directions
    now, worst = scene.frame_current, 0.0
    for i, f in enumerate(job.frames):
        scene.frame_set(int(f))
        ev = rig.evaluated_get(bpy.context.evaluated_depsgraph_get())
        played = np.array([np.array(ev.matrix_world @ ev.pose.bones[n].tail) for n in bones])
        worst = max(worst, float(np.max(np.linalg.norm(played - tips[i], axis=-1))))
    scene.frame_set(now)
    assert worst < 0.001, worst


def test_a_bad_bone_keeps_out_nothing_and_writes_nothing():
    rig, bones = _rigify_jump()
    scene = bpy.context.scene
    scene.leapwright_follow_through.keep_out = True
    before = snapshot()
    bpy.context.view_layer.objects.active = rig
    with pytest.raises(RuntimeError, match="no bone 'no such bone'"):  # the operator's error, as a script sees it
        bpy.ops.leapwright.bake_follow_through(bones=",".join(bones) + ",no such bone")
    assert snapshot() == before
    assert scene.leapwright_follow_through.body_readout == ""


def test_the_drawn_capsules_have_the_panels_radii():
    # the viewport outline of each capsule lies at its radius from its segment (plain geometry), with a
    # typed radius drawn as typed
    rig = rigify_rig.load_generated_rig()
    scene = bpy.context.scene
    bpy.context.view_layer.objects.active = rig
    scene.leapwright_follow_through.torso_radius = 0.2
    overlay = importlib.import_module(MODULE + ".follow_through.body_overlay")  # loaded when first asked to draw
    colliders = addon().follow_through.body_colliders
    fit = colliders.fit_body(scene, rig)
    lines = overlay._geometry(bpy.context)
    assert len(lines) == len(fit.parts)
    radii = [0.2 if p.name == "torso" else r for p, r in zip(fit.parts, fit.radii)]
    mats = np.array([np.array(rig.matrix_world) @ np.array(rig.pose.bones[n].matrix) for n in fit.bones])[None]
    starts, ends = colliders.body_segments(fit, np.array(radii), mats, 1.0)
    for k, pts in enumerate(lines):
        gaps = [_distance_to_segment(p, starts[0, k], ends[0, k]) for p in pts]
        assert np.allclose(gaps, radii[k], atol=1e-6), fit.parts[k].name
    overlay.show(True)
    overlay.show(True)
    assert overlay.is_drawing()
    overlay.show(False)
    assert not overlay.is_drawing()


def test_a_skinned_neck_gives_the_neck_capsule_its_radius_and_the_panel_says_so():
    # a tube of radius 0.055 m around Rigify's neck, skinned to its neck deform bones: every vertex lies
    # 0.055 m from the neck's axis (plain geometry), so the fitted radius is 0.055 m, "from the skin"
    rig = rigify_rig.load_generated_rig()
    scene = bpy.context.scene
    colliders = addon().follow_through.body_colliders
    fit = colliders.fit_body(scene, rig)
    k = [p.name for p in fit.parts].index("neck")
    assert fit.sources[k].startswith("proportions")  # no mesh yet
    mats = np.array([np.array(rig.matrix_world) @ np.array(rig.pose.bones[n].matrix) for n in fit.bones])[None]
    start, end = (x[0, k] for x in colliders.landmark_positions(fit, mats, 1.0))
    axis = (end - start) / np.linalg.norm(end - start)
    u = np.cross(axis, (1.0, 0.0, 0.0))
    u /= np.linalg.norm(u)
    v = np.cross(axis, u)
    ring = [0.055 * (np.cos(a) * u + np.sin(a) * v) for a in np.linspace(0, 2 * np.pi, 16, endpoint=False)]
    verts = [tuple(start + t * (end - start) + r) for t in np.linspace(0.1, 0.9, 5) for r in ring]
    mesh = bpy.data.meshes.new("neck_tube")
    mesh.from_pydata(verts, [], [])
    obj = bpy.data.objects.new("neck_tube", mesh)
    scene.collection.objects.link(obj)
    neck_bones = [n for n in rig.data.bones.keys() if n.startswith("DEF-spine.00") and n[-1] in "45"]
    assert neck_bones, "Rigify's neck deform bones (DEF-spine.004/.005)"
    group = obj.vertex_groups.new(name=neck_bones[0])
    group.add(list(range(len(verts))), 1.0, "REPLACE")
    obj.modifiers.new("Armature", "ARMATURE").object = rig
    fit = colliders.fit_body(scene, rig)
    k = [p.name for p in fit.parts].index("neck")
    assert abs(fit.radii[k] - 0.055) < 1e-4
    assert fit.sources[k] == "skin of neck_tube"
