"""Open the demo's .blend with Blender (the ``bpy`` module) and print what it holds, as JSON.

Run in a subprocess by test_demo_outputs.py, so the test process never loads
Blender::

    python probe_blend.py jump_demo.blend jump_demo.json

The add-on is not enabled here: everything read is plain Blender data (keys,
markers, custom properties), as a user opening the file without leapwright sees it.
"""

import json
import os
import sys

import bpy
import numpy as np
from mathutils import Vector

SUBSTEPS = 4  # samples per frame


def _fcurve_paths(action):
    """Data paths of every F-curve of an action, legacy (4.2) or layered (4.4+)."""
    if "fcurves" in action.bl_rna.properties:
        return [fc.data_path for fc in action.fcurves]
    paths = []
    for layer in action.layers:
        for strip in layer.strips:
            for bag in strip.channelbags:
                paths += [fc.data_path for fc in bag.fcurves]
    return paths


def main(blend, manifest):
    with open(manifest, encoding="utf-8") as f:
        info = json.load(f)
    bpy.ops.wm.open_mainfile(filepath=os.path.abspath(blend))
    scene = bpy.context.scene
    rig = bpy.data.objects[info["rig"]]
    m = scene.unit_settings.scale_length
    pb = rig.pose.bones[info["body_bone"]]
    feet = [rig.pose.bones[n] for n in info["foot_controllers"]]
    frames = np.arange(scene.frame_start * SUBSTEPS, scene.frame_end * SUBSTEPS + 1) / SUBSTEPS
    com, weight, balls = [], [], []
    for f in frames:
        whole = int(np.floor(f))
        scene.frame_set(whole, subframe=float(f - whole))
        com.append(list(rig.matrix_world @ pb.head))
        weight.append(float(rig["lw_weight_bw"]) if "lw_weight_bw" in rig else None)
        balls.append([list(rig.matrix_world @ b.head) for b in feet])
    crate = bpy.data.objects[info["crate"]]
    corners = np.array([list(crate.matrix_world @ Vector(c)) for c in crate.bound_box])
    ad = rig.animation_data
    # with a leapwright layer (NLA) the animator's action plays from a track below it
    actions = ([ad.action] if ad is not None and ad.action is not None else []) + (
        [st.action for tr in ad.nla_tracks for st in tr.strips if st.action is not None] if ad is not None else [])
    out = {
        "version": bpy.app.version_string,
        "objects": sorted(o.name for o in bpy.data.objects),
        "fps": scene.render.fps / scene.render.fps_base,
        "metres_per_unit": m,
        "frames": frames.tolist(),
        "com": (np.array(com) * m).tolist(),
        "weight_bw": weight,
        "balls": (np.array(balls) * m).tolist(),
        "markers": sorted([m_.frame, m_.name] for m_ in scene.timeline_markers),
        "has_weight_property": "lw_weight_bw" in rig,
        "fcurve_paths": [p for a in actions for p in _fcurve_paths(a)],
        "crate_min": (corners.min(axis=0) * m).tolist(),
        "crate_max": (corners.max(axis=0) * m).tolist(),
    }
    sys.stdout.write("PROBE " + json.dumps(out) + "\n")
    sys.stdout.flush()


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2])
    os._exit(0)
