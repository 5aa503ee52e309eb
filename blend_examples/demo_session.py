"""The demo's shared pieces: its jump, the extension installed as a user would, the scene's
objects, calling an operator on the rig, and the blocking pass (the first pass of every demo).

``run_demo.py`` runs the passes; ``demo_arms.py``, ``demo_follow_through.py`` and the picture scripts use
these pieces, so none of them imports ``run_demo``.
"""

import os
import sys
from dataclasses import dataclass, field

HERE = os.path.dirname(os.path.abspath(__file__))
MODULE = "bl_ext.user_default.leapwright"

#: The default jump onto the crate: apex rise of the COM above its take-off
#: height, forward travel (take-off spot to landing spot) and the crate's top [m].
JUMP_HEIGHT = 0.7
JUMP_DISTANCE = 1.0
FOOT_TUCK = 0.1
FPS = 24
START_FRAME = 1
HOLD_FRAMES = 6  # frames shown after the plan ends, standing on the crate
STRIP_COLUMNS = 4


def private_user_dirs(root):
    """Point Blender's user directories at ``root`` before ``import bpy``."""
    for name in ("BLENDER_USER_RESOURCES", "HOME", "XDG_CACHE_HOME"):
        path = os.path.join(root, name.lower())
        os.makedirs(path, exist_ok=True)
        os.environ[name] = path


@dataclass
class Demo:
    """What the passes share: the scene, the demo objects and a log."""

    scene: object
    objects: dict
    log: list = field(default_factory=list)


def install_extension(zip_path):
    """Install the zip into the user repository and enable it, as Install from Disk does."""
    import bpy

    res = bpy.ops.extensions.package_install_files(filepath=zip_path, repo="user_default",
                                                   enable_on_install=True)
    if res != {"FINISHED"} or MODULE not in bpy.context.preferences.addons:
        raise SystemExit(f"installing {zip_path} did not enable {MODULE} ({res})")


def operator_call(op, rig, **props):
    """Run an operator on the rig as the active object; raise with Blender's report on failure."""
    import bpy

    with bpy.context.temp_override(active_object=rig, object=rig):
        res = op(**props)
    if res != {"FINISHED"}:
        raise SystemExit(f"{op.idname_py()} returned {res}")


def blocking_pass(demo):
    """Plan the default jump onto the crate and write the blocking pass with the extension."""
    import bpy

    scene, o = demo.scene, demo.objects
    s = scene.leapwright_plan
    s.rig = o["rig"]
    s.com_bone = o["body_bone"]
    s.foot_left, s.foot_right = o["foot_controllers"]
    s.standing_com_height = o["standing_com_height"]
    s.goal = "HEIGHT"
    s.height = JUMP_HEIGHT
    s.distance = JUMP_DISTANCE
    s.landing_height = o["crate_top"]
    s.foot_tuck = FOOT_TUCK
    s.forward = "RIG"
    s.key_style = "SPLINE"
    s.start_frame = START_FRAME
    bpy.context.view_layer.objects.active = o["rig"]
    operator_call(bpy.ops.leapwright.write_plan, o["rig"], on_conflict="ASK")
    action = o["rig"].animation_data.action
    scene.frame_start = START_FRAME
    scene.frame_end = int(round(action.frame_range[1])) + HOLD_FRAMES
    markers = sorted((m.frame, m.name) for m in scene.timeline_markers)
    return (f"blocking: {JUMP_HEIGHT} m rise, {JUMP_DISTANCE} m forward onto a {o['crate_top']} m crate; "
            f"frames {scene.frame_start}-{scene.frame_end}; markers {[n for _, n in markers]}")
