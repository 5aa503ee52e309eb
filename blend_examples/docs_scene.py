"""What the README pictures share: the demo scene with the extension on, the character set in the
panel, and Blender's printed reports.
"""

import contextlib
import os
import sys
import tempfile

import bpy

import mannequin
from demo_session import MODULE

FPS = 24


def enable_extension():
    """Enable the installed extension again (a new file disables add-ons)."""
    import addon_utils

    if MODULE not in bpy.context.preferences.addons:
        addon_utils.enable(MODULE, default_set=True)


def demo_scene(height):
    """A new file with the demo set and mannequin, the extension on and the panel's character set.

    Parameters
    ----------
    height : float
        The panel's jump goal: apex rise of the COM [m].

    Returns
    -------
    (scene, objects, settings)  ``objects`` as ``mannequin.build_demo_scene`` returns them,
    ``settings`` the panel's ``scene.leapwright_plan``
    """
    o = mannequin.build_demo_scene(fps=FPS)
    enable_extension()
    scene = bpy.context.scene
    s = scene.leapwright_plan
    s.rig, s.com_bone = o["rig"], o["body_bone"]
    s.foot_left, s.foot_right = o["foot_controllers"]
    s.standing_com_height = o["standing_com_height"]
    s.goal, s.height = "HEIGHT", height
    s.forward, s.start_frame = "RIG", 1
    bpy.context.view_layer.objects.active = o["rig"]
    return scene, o, s


@contextlib.contextmanager
def captured_output(lines):
    """Collect what Blender prints (operator reports, in background mode) into ``lines``."""
    sys.stdout.flush()
    sys.stderr.flush()
    saved = os.dup(1), os.dup(2)
    with tempfile.TemporaryFile(mode="w+") as tmp:
        os.dup2(tmp.fileno(), 1)
        os.dup2(tmp.fileno(), 2)
        try:
            yield
        finally:
            sys.stdout.flush()
            sys.stderr.flush()
            os.dup2(saved[0], 1)
            os.dup2(saved[1], 2)
            os.close(saved[0])
            os.close(saved[1])
            tmp.seek(0)
            lines.extend(tmp.read().splitlines())


def report_lines(printed):
    """The ``Info:`` / ``Warning:`` / ``Error:`` lines of captured output."""
    return [line for line in printed if line.split(":")[0] in ("Info", "Warning", "Error")]
