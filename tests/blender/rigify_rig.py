"""Blender's bundled Rigify human rig, built once per test run and cached on disk.

A rig the project did not build: Rigify's human meta-rig (``armature_human_metarig_add``)
with a three-bone ponytail (meta-type ``limbs.simple_tentacle``) on the head, and the
control rig Rigify generates from it (``pose.rigify_generate``: ≈700 bones, control,
mechanism ``MCH-``, original ``ORG-`` and deform ``DEF-`` layers, IK/FK switches).

Generation takes ≈20 s, so it runs once per test run, in a child process (Blender's
state is one per process, and the test process keeps its own), and both files are kept
in :func:`cache_dir` (under the run's ``XDG_CACHE_HOME``, which ``run.py`` makes fresh
for every run, one folder per Blender version). A lock file keeps two test processes
from building at once.

API
---
``metarig_path()``        the saved meta-rig file (object :data:`METARIG`)
``generated_rig_path()``  the saved generated rig file (objects :data:`METARIG` and :data:`RIG`)
``load_metarig(scene)``   append the meta-rig into the open file; returns the object
``load_generated_rig(scene)``  append the generated rig; returns the object
``PONYTAIL``              the meta-rig's ponytail bones, root first
"""

import fcntl
import os
import subprocess
import sys
import tempfile

import bpy

#: Object names in the saved files (Rigify's defaults).
METARIG = "metarig"
RIG = "rig"
#: The ponytail chain added to the meta-rig, root first (three bones up and back from the head).
PONYTAIL = ("ponytail", "ponytail.001", "ponytail.002")
#: Rigify meta-type of the ponytail's first bone (a chain of FK controls, Rigify's own).
PONYTAIL_TYPE = "limbs.simple_tentacle"
#: Bone of the meta-rig the ponytail hangs from (the head).
HEAD_BONE = "spine.006"
#: Overrides the cache folder (e.g. to keep the files between runs while developing).
CACHE_ENV = "LW_RIGIFY_CACHE"
_META_FILE = "rigify_metarig.blend"
_RIG_FILE = "rigify_generated.blend"


def cache_dir():
    """Folder holding this run's Rigify files, one per Blender version."""
    base = os.environ.get(CACHE_ENV) or os.path.join(
        os.environ.get("XDG_CACHE_HOME") or tempfile.gettempdir(), "leapwright-rigify")
    return os.path.join(base, "blender-" + ".".join(str(v) for v in bpy.app.version))


def metarig_path():
    """Path of the saved meta-rig file, building it (and the generated rig) first if needed."""
    return _ensure(_META_FILE)


def generated_rig_path():
    """Path of the saved generated-rig file, building it first if needed."""
    return _ensure(_RIG_FILE)


def _ensure(name):
    folder = cache_dir()
    os.makedirs(folder, exist_ok=True)
    path = os.path.join(folder, name)
    with open(os.path.join(folder, ".lock"), "w") as lock:
        fcntl.flock(lock, fcntl.LOCK_EX)  # a second process waits for the first build
        if not os.path.exists(os.path.join(folder, _RIG_FILE)):
            _build_in_child(folder)
    return path


def _build_in_child(folder):
    here = os.path.dirname(os.path.abspath(__file__))
    code = f"import sys; sys.path.insert(0, {here!r}); import rigify_rig; rigify_rig.build_files({folder!r})"
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    if res.returncode != 0 or not os.path.exists(os.path.join(folder, _RIG_FILE)):
        raise RuntimeError(f"building the Rigify rig failed (exit {res.returncode}):\n{res.stdout[-3000:]}\n"
                           f"{res.stderr[-3000:]}")


def _enable_rigify():
    import addon_utils
    name = next(m.__name__ for m in addon_utils.modules() if m.__name__.split(".")[-1] == "rigify")
    addon_utils.enable(name, default_set=True)
    return name


def _add_ponytail(meta):
    """Three bones up and back from the head, a Rigify tentacle chain."""
    bpy.ops.object.mode_set(mode="EDIT")
    eb = meta.data.edit_bones
    head = eb[HEAD_BONE]
    start = head.tail.copy()
    start.y += 0.06  # the back of the skull (the meta-rig faces -Y)
    parent, connect = head, False
    for i, name in enumerate(PONYTAIL):
        bone = eb.new(name)
        bone.head = start
        start = start.copy()
        start.y += 0.05
        start.z -= 0.06
        bone.tail = start
        bone.parent, bone.use_connect = parent, connect
        bone.roll = 0.0
        parent, connect = bone, True
    bpy.ops.object.mode_set(mode="OBJECT")
    meta.pose.bones[PONYTAIL[0]].rigify_type = PONYTAIL_TYPE
    for name in PONYTAIL:  # Rigify places generated bones by the meta-rig's collections
        for coll in meta.data.bones[HEAD_BONE].collections:
            coll.assign(meta.data.bones[name])


def build_files(folder):
    """Build the meta-rig and the generated rig and save both into ``folder`` (child process only)."""
    bpy.ops.wm.read_factory_settings(use_empty=True)
    name = _enable_rigify()
    try:
        bpy.ops.object.armature_human_metarig_add()
        meta = bpy.context.view_layer.objects.active
        meta.name = METARIG
        _add_ponytail(meta)
        bpy.ops.wm.save_as_mainfile(filepath=os.path.join(folder, _META_FILE), copy=True)
        bpy.context.view_layer.objects.active = meta
        meta.select_set(True)
        bpy.ops.pose.rigify_generate()
        rig = bpy.data.objects.get(RIG) or next(o for o in bpy.data.objects
                                                if o.type == "ARMATURE" and o is not meta)
        rig.name = RIG
        tmp = os.path.join(folder, _RIG_FILE + ".part")
        bpy.ops.wm.save_as_mainfile(filepath=tmp, copy=True)
        os.replace(tmp, os.path.join(folder, _RIG_FILE))
    finally:
        import addon_utils
        addon_utils.disable(name, default_set=False)
        sys.stdout.flush()
        sys.stderr.flush()
    os._exit(0)  # leave without Blender's exit (it may crash with add-ons registered)


def _append(path, name, scene):
    scene = scene or bpy.context.scene
    with bpy.data.libraries.load(path, link=False) as (src, dst):
        if name not in src.objects:
            raise RuntimeError(f"{path} has no object {name!r}")
        dst.objects = [name]
    obj = dst.objects[0]
    scene.collection.objects.link(obj)
    for child in obj.children:  # none on Rigify's rigs; kept for a rig that carries meshes
        if child.name not in scene.objects:
            scene.collection.objects.link(child)
    bpy.context.view_layer.objects.active = obj
    bpy.context.view_layer.update()
    return obj


def load_metarig(scene=None):
    """Append Rigify's human meta-rig (with its ponytail) to the open file; return the object."""
    return _append(metarig_path(), METARIG, scene)


def load_generated_rig(scene=None):
    """Append Rigify's generated human control rig to the open file; return the object."""
    return _append(generated_rig_path(), RIG, scene)


def load_jumping_rig(scene=None):
    """The generated rig with the jump panel's default jump written on it (``torso`` as the body
    bone, the IK feet), the scene's range from the jump's start to 10 frames after it; the rig."""
    from scene_probe import addon

    rig = load_generated_rig(scene)
    scene = bpy.context.scene
    s = scene.leapwright_plan
    s.rig, s.com_bone, s.foot_left, s.foot_right = rig, "torso", "foot_ik.L", "foot_ik.R"
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    plan, _ = addon().plan.link.plan_for(scene)
    scene.frame_start, scene.frame_end = s.start_frame, s.start_frame + int(plan.duration_s * scene.render.fps) + 10
    return rig
