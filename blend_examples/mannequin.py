"""A procedural mannequin of our own, built headless, and the demo scene around it.

The armature faces -Y (Blender's front view), its left side on +X, Z up, in
metres. The hips bone is the body (COM) bone: its head stands at
``STANDING_COM_HEIGHT`` above the ground. Each leg is a two-bone IK chain
aimed at an ankle pivot that hangs off a foot controller placed at the ball of
the foot; the controllers are children of the root, not of the hips, so the
feet stay planted while the body moves. When the body rises past the leg's
reach (toes extended at take-off) the foot tilts towards the ball, heel up.
The body is primitives parented to bones (no skinning).

Usage (inside Blender or with the ``bpy`` module)::

    import mannequin
    objects = mannequin.build_demo_scene()
"""

import math

import bpy
from mathutils import Vector

import demo_set
from primitives import limb, material, parent_to_bone, slab_along, sphere

#: Height of the hips bone's head above the ground when standing [m].
STANDING_COM_HEIGHT = 1.0
BODY_BONE = "hips"
FOOT_CONTROLLERS = ("foot_ctrl.L", "foot_ctrl.R")
PONYTAIL = tuple(f"ponytail_{i}" for i in range(1, 4))

_HIP_X, _SHOULDER_X = 0.1, 0.2
#: Rest angle of each ponytail bone from straight down [deg]: held out behind the head, the
#: way a tied ponytail springs from its band. In free fall a bone floats up by
#: sag * sin(this angle), so a hanging (0 deg) tail would barely move in the air.
PONY_TILT_DEG = (50.0, 45.0, 40.0)
_PONY_LENGTH = 0.11


def _pony_points():
    at = [(0.0, 0.10, 1.80)]
    for tilt in PONY_TILT_DEG:
        a = math.radians(tilt)
        x, y, z = at[-1]
        at.append((x, y + _PONY_LENGTH * math.sin(a), z - _PONY_LENGTH * math.cos(a)))
    return tuple(at)


_PONY_POINTS = _pony_points()
#: The skirt's flaps flare out (an A-line) by this much from vertical [deg], for the same
#: reason; the hem stays inside the hands' reach (the rig is read by topology: the bones
#: reaching furthest sideways are taken for the hands).
SKIRT_FLARE_DEG = (30.0, 34.0)
# Skirt flaps: name, hanging direction at the hem (unit-ish), the width direction.
_SKIRT = (("front", (0.0, -1.0), (1, 0, 0)), ("back", (0.0, 1.0), (1, 0, 0)),
          ("left", (1.0, 0.0), (0, 1, 0)), ("right", (-1.0, 0.0), (0, 1, 0)))


def _side_bones(side, sx):
    """Bones of one side: (name, head, tail, parent, connected); ``sx`` = +1 left, -1 right."""
    x, xs = _HIP_X * sx, _SHOULDER_X * sx
    s = side
    return [
        (f"upper_arm.{s}", (xs, 0.0, 1.46), (xs + 0.04 * sx, 0.02, 1.19), "chest", False),
        (f"forearm.{s}", (xs + 0.04 * sx, 0.02, 1.19), (xs + 0.06 * sx, -0.05, 0.95), f"upper_arm.{s}", True),
        (f"hand.{s}", (xs + 0.06 * sx, -0.05, 0.95), (xs + 0.065 * sx, -0.07, 0.84), f"forearm.{s}", True),
        (f"thigh.{s}", (x, 0.0, 0.92), (x, -0.035, 0.5), BODY_BONE, False),
        (f"shin.{s}", (x, -0.035, 0.5), (x, 0.0, 0.08), f"thigh.{s}", True),
        (f"foot.{s}", (x, 0.0, 0.08), (x, -0.13, 0.02), f"shin.{s}", True),
        (f"foot_ctrl.{s}", (x, -0.13, 0.02), (x, -0.25, 0.02), "root", False),
        (f"ankle_pivot.{s}", (x, 0.0, 0.08), (x, 0.07, 0.08), f"foot_ctrl.{s}", False),
        (f"knee_pole.{s}", (x, -0.8, 0.5), (x, -0.9, 0.5), BODY_BONE, False),
    ]


def _skirt_bones():
    out = []
    for name, (dx, dy), _ in _SKIRT:
        r0, z0, drop = 0.125, 0.93, 0.09
        r1 = r0 + drop * math.tan(math.radians(SKIRT_FLARE_DEG[0]))
        r2 = r1 + drop * math.tan(math.radians(SKIRT_FLARE_DEG[1]))
        p0, p1, p2 = ((dx * r, dy * r, z) for r, z in ((r0, z0), (r1, z0 - drop), (r2, z0 - 2 * drop)))
        out.append((f"skirt_{name}_1", p0, p1, BODY_BONE, False))
        out.append((f"skirt_{name}_2", p1, p2, f"skirt_{name}_1", True))
    return out


def bone_table():
    """Every bone as (name, head, tail, parent, connected), heads and tails in metres."""
    bones = [
        ("root", (0.0, 0.0, 0.0), (0.0, 0.3, 0.0), None, False),
        (BODY_BONE, (0.0, 0.0, STANDING_COM_HEIGHT), (0.0, 0.0, 1.1), "root", False),
        ("spine_01", (0.0, 0.0, 1.05), (0.0, 0.0, 1.22), BODY_BONE, False),
        ("spine_02", (0.0, 0.0, 1.22), (0.0, 0.0, 1.38), "spine_01", True),
        ("chest", (0.0, 0.0, 1.38), (0.0, 0.0, 1.52), "spine_02", True),
        ("neck", (0.0, 0.0, 1.52), (0.0, 0.0, 1.62), "chest", True),
        ("head", (0.0, 0.0, 1.62), (0.0, 0.0, 1.86), "neck", True),
    ]
    for i, name in enumerate(PONYTAIL):
        bones.append((name, _PONY_POINTS[i], _PONY_POINTS[i + 1], "head" if i == 0 else PONYTAIL[i - 1], i > 0))
    bones += _side_bones("L", 1.0) + _side_bones("R", -1.0) + _skirt_bones()
    return bones


def _build_armature(collection):
    data = bpy.data.armatures.new("mannequin_rig")
    rig = bpy.data.objects.new("mannequin", data)
    collection.objects.link(rig)
    view_layer = bpy.context.view_layer
    view_layer.objects.active = rig
    rig.select_set(True)
    bpy.ops.object.mode_set(mode="EDIT")
    edit = data.edit_bones
    for name, head, tail, parent, connected in bone_table():
        eb = edit.new(name)
        eb.head, eb.tail = head, tail
        eb.use_deform = False
        if parent is not None:
            eb.parent = edit[parent]
            eb.use_connect = connected
    bpy.ops.object.mode_set(mode="OBJECT")
    for side in ("L", "R"):
        ik = rig.pose.bones[f"shin.{side}"].constraints.new("IK")
        ik.target, ik.subtarget = rig, f"ankle_pivot.{side}"
        ik.pole_target, ik.pole_subtarget = rig, f"knee_pole.{side}"
        ik.pole_angle = math.radians(-90.0)
        ik.chain_count = 2
        aim = rig.pose.bones[f"foot.{side}"].constraints.new("DAMPED_TRACK")
        aim.target, aim.subtarget, aim.track_axis = rig, f"foot_ctrl.{side}", "TRACK_Y"
    # Helpers the animator never keys are hidden, so the rig shows only its controls.
    for name in ("ankle_pivot.L", "ankle_pivot.R", "knee_pole.L", "knee_pole.R"):
        data.bones[name].hide = True
    data.display_type = "STICK"
    rig.show_in_front = True
    return rig


def _materials():
    return {
        "body": material("lw_demo_body", (0.08, 0.25, 0.55)),
        "limb": material("lw_demo_limb", (0.72, 0.70, 0.66)),
        "joint": material("lw_demo_joint", (0.12, 0.12, 0.13)),
        "skin": material("lw_demo_skin", (0.80, 0.56, 0.40)),
        "hair": material("lw_demo_hair", (0.75, 0.18, 0.04)),
        "cloth": material("lw_demo_cloth", (0.85, 0.60, 0.05)),
        "visor": material("lw_demo_visor", (0.02, 0.02, 0.03), roughness=0.2),
    }


def _side_body(side, sx, m, coll):
    """Arm and leg shapes of one side: (object, bone) pairs."""
    heads = {n: (h, t) for n, h, t, _, _ in bone_table()}
    s = side
    parts = []
    ua, fa, hd = heads[f"upper_arm.{s}"], heads[f"forearm.{s}"], heads[f"hand.{s}"]
    th, sh = heads[f"thigh.{s}"], heads[f"shin.{s}"]
    parts.append((sphere(f"shoulder.{s}", ua[0], (0.055,) * 3, m["joint"], coll), f"upper_arm.{s}"))
    parts.append((limb(f"upper_arm_shape.{s}", ua[0], ua[1], 0.045, 0.038, m["limb"], coll), f"upper_arm.{s}"))
    parts.append((sphere(f"elbow.{s}", ua[1], (0.04,) * 3, m["joint"], coll), f"forearm.{s}"))
    parts.append((limb(f"forearm_shape.{s}", fa[0], fa[1], 0.037, 0.03, m["limb"], coll), f"forearm.{s}"))
    mid = (Vector(hd[0]) + Vector(hd[1])) / 2.0
    parts.append((sphere(f"hand_shape.{s}", mid, (0.03, 0.045, 0.06), m["skin"], coll), f"hand.{s}"))
    parts.append((sphere(f"hip_joint.{s}", th[0], (0.07,) * 3, m["joint"], coll), f"thigh.{s}"))
    parts.append((limb(f"thigh_shape.{s}", th[0], th[1], 0.072, 0.052, m["limb"], coll), f"thigh.{s}"))
    parts.append((sphere(f"knee.{s}", th[1], (0.055,) * 3, m["joint"], coll), f"shin.{s}"))
    parts.append((limb(f"shin_shape.{s}", sh[0], sh[1], 0.05, 0.034, m["limb"], coll), f"shin.{s}"))
    x = _HIP_X * sx
    parts.append((sphere(f"ankle.{s}", sh[1], (0.038,) * 3, m["joint"], coll), f"foot.{s}"))
    # The sole's bottom is on the ground at rest: heel behind the ankle, toes past the ball.
    parts.append((sphere(f"foot_shape.{s}", (x, -0.06, 0.04), (0.05, 0.13, 0.04), m["body"], coll), f"foot.{s}"))
    return parts


def _build_body(rig, collection):
    m = _materials()
    c = collection
    parts = [
        (sphere("pelvis", (0.0, 0.0, 0.96), (0.16, 0.11, 0.1), m["body"], c), BODY_BONE),
        (sphere("belly", (0.0, 0.0, 1.15), (0.13, 0.09, 0.11), m["body"], c), "spine_01"),
        (sphere("ribcage", (0.0, 0.0, 1.33), (0.165, 0.105, 0.15), m["body"], c), "spine_02"),
        (sphere("shoulders", (0.0, 0.0, 1.46), (0.21, 0.1, 0.07), m["body"], c), "chest"),
        (limb("neck_shape", (0.0, 0.0, 1.5), (0.0, 0.0, 1.65), 0.045, 0.04, m["skin"], c), "neck"),
        (sphere("head_shape", (0.0, -0.005, 1.74), (0.095, 0.11, 0.12), m["skin"], c), "head"),
        (sphere("hair_cap", (0.0, 0.02, 1.77), (0.1, 0.105, 0.1), m["hair"], c), "head"),
        (sphere("visor", (0.0, -0.085, 1.75), (0.07, 0.04, 0.03), m["visor"], c), "head"),
    ]
    for i, name in enumerate(PONYTAIL):
        a, b = Vector(_PONY_POINTS[i]), Vector(_PONY_POINTS[i + 1])
        r = 0.042 - 0.008 * i
        parts.append((sphere(f"{name}_shape", (a + b) / 2.0, (r, r, (b - a).length * 0.62), m["hair"], c,
                             segments=16), name))
    heads = {n: (h, t) for n, h, t, _, _ in bone_table()}
    for name, _, across in _SKIRT:
        for k in (1, 2):
            h, t = heads[f"skirt_{name}_{k}"]
            width = (0.2 if name in ("front", "back") else 0.16) * (1.0 if k == 1 else 1.25)
            parts.append((slab_along(f"skirt_{name}_{k}_shape", h, t, across, width, 0.02, m["cloth"], c),
                          f"skirt_{name}_{k}"))
    parts += _side_body("L", 1.0, m, c) + _side_body("R", -1.0, m, c)
    for obj, bone in parts:
        parent_to_bone(obj, rig, bone)
    return [obj for obj, _ in parts]


def build_mannequin(collection=None):
    """Build the rig and its body in ``collection`` (the scene's by default).

    Returns
    -------
    rig : bpy.types.Object
        The armature.
    body : list of bpy.types.Object
        The shapes parented to its bones.
    """
    coll = collection or bpy.context.scene.collection
    rig = _build_armature(coll)
    body = _build_body(rig, coll)
    return rig, body


def build_demo_scene(fps=24):
    """Start an empty file and build the mannequin on the demo set.

    Parameters
    ----------
    fps : int
        Scene frame rate [frames/s].

    Returns
    -------
    dict
        ``rig``, ``body`` (list), ``ground``, ``crate``, ``camera``, ``light``,
        plus ``body_bone``, ``foot_controllers`` (bone names),
        ``standing_com_height`` [m] and ``crate_top`` [m].
    """
    bpy.ops.wm.read_factory_settings(use_empty=True)
    scene = bpy.context.scene
    scene.render.fps, scene.render.fps_base = fps, 1.0
    objects = demo_set.build_set(scene, scene.collection)
    rig, body = build_mannequin(scene.collection)
    bpy.context.view_layer.update()
    objects.update(rig=rig, body=body, body_bone=BODY_BONE, foot_controllers=FOOT_CONTROLLERS,
                   standing_com_height=STANDING_COM_HEIGHT, crate_top=demo_set.crate_top())
    return objects
