"""The benchmark's rigs: a body with hanging chains, animated procedurally (a scenario of our own).

The demo size is the 61-bone rig of earlier benchmarks (a body of 31 bones, six
five-bone hair chains and two four-bone straps; the 30 hair bones are baked);
the large size hangs ``chains`` chains of ``links`` bones from the head (300
chain bones by default). The body bobs and twists the same way at every size.
"""

import math

BODY_BONES = 31


def _body(eb, bone):
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


def _hair(bone, chains, links):
    hair = []
    for c in range(chains):
        angle = math.radians(-50 + 100 * c / max(chains - 1, 1))
        p, at = "head", (0.06 * math.sin(angle), 0.08, 1.72)
        step = 0.225 / links
        for k in range(links):
            to = (at[0] + 0.05 / links * math.sin(angle), at[1] + step, at[2] - step)
            p = bone(f"hair.{c}.{k}", at, to, p)
            hair.append(p)
            at = to
    return hair


def _animate(rig, frames):
    """Keys every 5 frames: the hips bob and sway, the spine twists."""
    hips, spine = rig.pose.bones["hips"], rig.pose.bones["spine.2"]
    for f in range(1, frames + 1, 5):
        t = f / 24.0
        hips.location = (0.05 * math.sin(2.1 * t), 0.3 * abs(math.sin(3.0 * t)), 0.1 * math.sin(1.3 * t))
        hips.keyframe_insert("location", frame=f)
        spine.rotation_quaternion = (math.cos(0.2 * math.sin(2 * t)), 0, 0, math.sin(0.2 * math.sin(2 * t)))
        spine.keyframe_insert("rotation_quaternion", frame=f)


def build_rig(bpy, frames=250, chains=6, links=5, straps=True, name="BenchRig"):
    """An animated rig in the current scene; returns (rig, names of the hair bones).

    Parameters
    ----------
    bpy : module
    frames : int
        Animated frames, 1..frames.
    chains, links : int
        Hair chains hanging from the head and bones per chain.
    straps : bool
        Two four-bone straps on the chest (not baked; the demo rig has them).
    """
    arm = bpy.data.armatures.new(name)
    rig = bpy.data.objects.new(name, arm)
    bpy.context.scene.collection.objects.link(rig)
    bpy.context.view_layer.objects.active = rig
    bpy.ops.object.mode_set(mode="EDIT")
    eb = arm.edit_bones

    def bone(bone_name, head, tail, parent=None):
        b = eb.new(bone_name)
        b.head, b.tail = head, tail
        b.parent = eb[parent] if parent else None
        return bone_name

    _body(eb, bone)
    hair = _hair(bone, chains, links)
    if straps:
        for side, x in (("L", 0.15), ("R", -0.15)):
            p, at = "spine.3", (x, 0.1, 1.45)
            for k in range(4):
                to = (at[0], at[1] + 0.02, at[2] - 0.1)
                p = bone(f"strap.{side}.{k}", at, to, p)
                at = to
    bpy.ops.object.mode_set(mode="OBJECT")
    _animate(rig, frames)
    return rig, hair
