"""The README's pictures on a rig we did not build: the jump and follow-through on Rigify's rig.

Usage::

    .venv/bin/python blend_examples/docs_rigify.py --zip dist/leapwright-0.1.0.zip --docs docs

Installs the zip the way a user would (in a throw-away Blender user directory), builds
Blender's bundled Rigify human rig with a three-bone ponytail and generates its control
rig (``tests/blender/rigify_rig.py``, headless), then does what the README tells a user:
*Find Rig Controls*, *Write Jump* on ``torso`` with the IK feet, and *Bake
Follow-Through* on the ponytail's controls. The generated rig carries no mesh, so each
deform bone gets a bone-parented stand-in (a tapered rod from head to tail) that moves
exactly as the evaluated deform bone does; the moments (crouch, take-off, rising, apex,
touchdown, settle) are rendered with Cycles on the CPU from the side and a little from
behind, with the baked follow-through layer (top row) and with it muted ("no layer",
bottom row), in ``rigify_jump_strip.png``.
"""

import argparse
import math
import os
import shutil
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.dirname(HERE)
#: Each rendered moment [px].
TILE = (170, 260)
#: Cycles samples per pixel, denoised afterwards.
SAMPLES = 12
#: Rigify's own control and bone names (Rigify's human rig documentation).
BODY, FEET = "torso", ("foot_ik.L", "foot_ik.R")
PONYTAIL = ("ponytail", "ponytail.001", "ponytail.002")
#: The head's deform bone, drawn as one ball (the face's many small bones are left out).
HEAD = "DEF-spine.006"
#: The deform bones drawn: the body, limbs, hands and the ponytail (Rigify's DEF- names).
DRAWN = ("DEF-spine", "DEF-pelvis", "DEF-thigh", "DEF-shin", "DEF-foot", "DEF-toe", "DEF-shoulder",
         "DEF-upper_arm", "DEF-forearm", "DEF-hand", "DEF-f_", "DEF-thumb", "DEF-palm", "DEF-ponytail")
#: Direction from the rig to the camera: its side, a little from behind (the ponytail in view) and
#: above (the rig faces -Y).
VIEW = (0.8, 0.5, 0.2)


def _rod_mesh():
    """A unit tapered rod along +Y from 0 to 1 (radius 1 at the head, 0.6 at the tail)."""
    import bmesh
    import bpy
    from mathutils import Matrix

    mesh = bpy.data.meshes.new("lw_doc_rod")
    bm = bmesh.new()
    bmesh.ops.create_cone(bm, cap_ends=True, segments=10, radius1=1.0, radius2=0.6, depth=1.0)
    bmesh.ops.transform(bm, matrix=Matrix.Translation((0, 0.5, 0)) @ Matrix.Rotation(-math.pi / 2, 4, "X"),
                        verts=bm.verts)
    bm.to_mesh(mesh)
    bm.free()
    for p in mesh.polygons:
        p.use_smooth = True
    return mesh


def _material(name, rgb):
    import bpy

    mat = bpy.data.materials.new(name)
    mat.diffuse_color = (*rgb, 1.0)
    if hasattr(mat, "use_nodes"):
        mat.use_nodes = True
    bsdf = next((n for n in mat.node_tree.nodes if n.type == "BSDF_PRINCIPLED"), None) if mat.node_tree else None
    if bsdf is not None:
        bsdf.inputs["Base Color"].default_value = (*rgb, 1.0)
        bsdf.inputs["Roughness"].default_value = 0.6
    return mat


def add_stand_ins(rig):
    """A rod on each deform bone of :data:`DRAWN`, parented to the bone; a ball for the head."""
    import bpy

    rod = _rod_mesh()
    body, hair = _material("lw_doc_body", (0.2, 0.32, 0.55)), _material("lw_doc_hair", (0.9, 0.25, 0.02))
    rod.materials.append(body)
    count = 0
    for b in rig.data.bones:
        if not b.use_deform or not b.name.startswith(DRAWN):
            continue
        obj = bpy.data.objects.new("rod " + b.name, rod)
        bpy.context.scene.collection.objects.link(obj)
        obj.parent, obj.parent_type, obj.parent_bone = rig, "BONE", b.name
        radius = min(max(0.3 * b.length, 0.012), 0.07) * (2.2 if "ponytail" in b.name else 1.0)
        obj.location = (0.0, -b.length, 0.0)  # a bone child sits at the tail; back to the head
        obj.scale = (radius, b.length, radius)
        obj.material_slots[0].link = "OBJECT"  # one shared rod mesh, a colour per object
        obj.material_slots[0].material = hair if "ponytail" in b.name else body
        count += 1
    head = rig.data.bones[HEAD]
    bpy.ops.mesh.primitive_uv_sphere_add(radius=0.6 * head.length, segments=16, ring_count=8)
    ball = bpy.context.active_object
    ball.parent, ball.parent_type, ball.parent_bone = rig, "BONE", HEAD
    ball.location = (0.0, -0.45 * head.length, 0.0)
    ball.active_material = body
    return count


def _stage(scene, rig, frames):
    """Ground, sun, light grey world and a camera (:data:`VIEW`) framing every frame's deform bones."""
    import bpy
    import numpy as np
    from mathutils import Vector

    pts = []
    deform = [b.name for b in rig.data.bones if b.use_deform and b.name.startswith(DRAWN)]
    for f in frames[::3]:
        scene.frame_set(int(f))
        ev = rig.evaluated_get(bpy.context.evaluated_depsgraph_get())
        pts += [tuple(ev.matrix_world @ ev.pose.bones[n].head) for n in deform]
    pts = np.array(pts + [(p[0], p[1], 0.0) for p in pts])  # the ground under them too
    mesh = bpy.data.meshes.new("lw_doc_ground")
    c = (pts.min(axis=0) + pts.max(axis=0)) / 2
    mesh.from_pydata([(c[0] + x, c[1] + y, 0.0) for x, y in ((-4, -4), (4, -4), (4, 4), (-4, 4))], [],
                     [(0, 1, 2, 3)])
    ground = bpy.data.objects.new("ground", mesh)
    scene.collection.objects.link(ground)
    mesh.materials.append(_material("lw_doc_ground", (0.75, 0.72, 0.66)))
    sun = bpy.data.objects.new("sun", bpy.data.lights.new("sun", "SUN"))
    sun.data.energy = 3.5
    sun.rotation_euler = (math.radians(35), math.radians(15), math.radians(40))
    scene.collection.objects.link(sun)
    world = bpy.data.worlds.new("lw_doc_world")
    scene.world = world
    world.color = (0.85, 0.87, 0.9)
    if getattr(world, "node_tree", None) is not None:
        for n in world.node_tree.nodes:
            if n.type == "BACKGROUND":
                n.inputs["Color"].default_value = (0.85, 0.87, 0.9, 1.0)
    cam = bpy.data.objects.new("view", bpy.data.cameras.new("view"))
    cam.data.type = "ORTHO"
    view = Vector(VIEW).normalized()
    cam.rotation_euler = (-view).to_track_quat("-Z", "Y").to_euler()  # looking at the rig, world Z up
    right, up = cam.rotation_euler.to_matrix() @ Vector((1, 0, 0)), cam.rotation_euler.to_matrix() @ Vector((0, 1, 0))
    across = pts @ np.array(right)
    along = pts @ np.array(up)
    middle = Vector(c)
    width, height = float(np.ptp(across)) + 0.3, float(np.ptp(along)) + 0.3
    cam.data.ortho_scale = max(height, width * TILE[1] / TILE[0])
    shift = right * float((across.min() + across.max()) / 2 - np.array(right) @ c) + \
        up * float((along.min() + along.max()) / 2 - np.array(up) @ c)
    cam.location = middle + shift + view * 8.0
    scene.collection.objects.link(cam)
    scene.camera = cam


def _moments(scene):
    """(frame, label) of the strip, from the jump's phase markers (animator's words)."""
    from leapwright.core.base.phase_words import phase_of_marker

    marks = {}
    for m in scene.timeline_markers:
        p = phase_of_marker(m.name)
        if p is not None:
            marks[p[0]] = m.frame
    up, down = marks["flight"], marks["landing"]
    fps = scene.render.fps / scene.render.fps_base
    return [(marks["propulsion"], "crouch"), (up, "take-off"), ((3 * up + down) // 4, "rising"),
            ((up + down) // 2, "apex"), (down, "touchdown"), (down + int(round(0.25 * fps)), "settle")]


def _render(scene, frame, path):
    import bpy

    scene.frame_set(frame)
    scene.render.filepath = path
    bpy.ops.render.render(write_still=True)
    return path


def make_strip(zip_path, docs):
    """Build the rig, write the jump and the follow-through with the extension, render the strip."""
    import bpy

    sys.path.insert(0, os.path.join(REPO, "tests", "blender"))
    import rigify_rig
    from demo_session import install_extension, operator_call
    import demo_pictures as pics

    bpy.ops.wm.read_factory_settings(use_empty=True)  # no default cube, camera or light in the picture
    install_extension(zip_path)
    scene = bpy.context.scene
    rig = rigify_rig.load_generated_rig(scene)
    scene.render.fps, scene.render.fps_base = 24, 1.0
    s = scene.leapwright_plan
    s.rig = rig
    operator_call(bpy.ops.leapwright.find_rig_controls, rig)
    if (s.com_bone, (s.foot_left, s.foot_right)) != (BODY, FEET):  # the README says what it picks here
        raise SystemExit(f"Find Rig Controls picked {s.com_bone!r}, {s.foot_left!r}, {s.foot_right!r}, "
                         f"not {BODY!r} and {FEET}")
    s.height, s.distance = 0.4, 0.5
    operator_call(bpy.ops.leapwright.write_plan, rig, on_conflict="ASK")
    moments = _moments(scene)
    scene.frame_start, scene.frame_end = 1, moments[-1][0] + 4
    scene.leapwright_follow_through.keep_out = True  # the ponytail stays out of the head and neck
    operator_call(bpy.ops.leapwright.bake_follow_through, rig, bones=",".join(PONYTAIL), preset="hair")
    add_stand_ins(rig)
    _stage(scene, rig, range(scene.frame_start, scene.frame_end + 1))
    pics.render_moments(scene, [], "", samples=SAMPLES)  # the strip's Cycles settings
    scene.render.resolution_x, scene.render.resolution_y = TILE
    scene.render.resolution_percentage = 100
    folder = tempfile.mkdtemp(prefix="lw-rigify-strip-")
    paths, labels = [], []
    track = rig.animation_data.nla_tracks.get("lw:follow_through")
    for muted in (False, True):
        if muted and track is not None:
            track.mute = True
        for k, (frame, label) in enumerate(moments):
            paths.append(_render(scene, frame, os.path.join(folder, f"{int(muted)}_{k}.png")))
            labels.append((frame, "no layer" if muted else label))
    os.makedirs(docs, exist_ok=True)
    out = pics.compose_strip(paths, labels, os.path.join(docs, "rigify_jump_strip.png"), TILE,
                             columns=len(moments))
    from PIL import Image  # matplotlib's own dependency

    Image.open(out).convert("RGB").quantize(256).save(out, optimize=True)
    shutil.rmtree(folder, ignore_errors=True)
    return out


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--zip", required=True, help="the built extension")
    ap.add_argument("--docs", required=True, help="folder for rigify_jump_strip.png")
    args = ap.parse_args(argv)
    sys.path.insert(0, HERE)
    from demo_session import private_user_dirs

    work = tempfile.mkdtemp(prefix="lw-rigify-docs-")
    private_user_dirs(work)
    os.environ.setdefault("LW_RIGIFY_CACHE", os.path.join(work, "rigify"))
    out = make_strip(os.path.abspath(args.zip), args.docs)
    print(f"wrote {out} ({os.path.getsize(out) // 1024} kB)")


if __name__ == "__main__":
    from script_exit import run_and_exit

    run_and_exit("docs_rigify", main)
