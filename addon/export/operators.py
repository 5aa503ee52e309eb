"""Operators for getting a jump into a game engine: export checks (and the key snap).

``leapwright.split_clips()`` bakes the written jump into three actions per hop,
``<rig>-leap-start`` / ``-leap-air`` / ``-leap-land`` for the first and
``<rig>-leap<k>-start`` / ``-air`` / ``-land`` for hop k >= 2 (see :mod:`jump_clips`).

``leapwright.check_export(snap_keys=False)`` lists what would break the export
(see ``core.export.game_checks``) as warnings and in the panel; with ``snap_keys``
it first moves leapwright's own keys between frames onto whole frames (each by
at most half a frame, so take-off and touchdown stay within half a frame of
the plan). It never changes the animator's keys. A number the checks refuse
(a NaN or inf key time, scale or axis) is reported as an error and moves no key.
"""

import bpy
from bpy.props import BoolProperty

from ..plan import blocking_pass as bp
from . import checks as export_checks, clips as jump_clips
from ..blender import ownership
from ..plan import link as plan_link, root_motion
from ..rig import space as rig_space
from ..core.base.errors import LeapwrightError

#: Last check per scene pointer: (rig name, tuple of ExportIssue), for the panel.
LAST_CHECK: dict = {}


class LEAPWRIGHT_OT_check_export(bpy.types.Operator):
    """Check the rig for what breaks game exports: unit scale, object scale, keys between frames, root axes, bone scale keys"""

    bl_idname = "leapwright.check_export"
    bl_label = "Check Export"
    bl_options = {"REGISTER", "UNDO"}

    snap_keys: BoolProperty(name="Snap keys to frames", default=False,
                            description="First move leapwright's keys between frames onto whole frames "
                                        "(each by at most half a frame)")

    @classmethod
    def poll(cls, context):
        return getattr(context.scene, "leapwright_plan", None) is not None and rig_space.chosen_rig(context) is not None

    def execute(self, context):
        rig = rig_space.chosen_rig(context)
        s = context.scene.leapwright_plan
        root = s.root_bone if s.root_motion == "ROOT_BONE" else (
            s.root_bone if rig.type == "ARMATURE" and s.root_bone in rig.data.bones else "")
        try:
            moved, found = export_checks.check(context.scene, context.view_layer, rig, root, self.snap_keys)
        except LeapwrightError as exc:  # refused before any key moved
            LAST_CHECK.pop(context.scene.as_pointer(), None)  # an older finding no longer holds
            self.report({"ERROR"}, f"'{rig.name}': {exc}")
            return {"CANCELLED"}
        LAST_CHECK[context.scene.as_pointer()] = (rig.name, found)
        for issue in found:
            self.report({"WARNING"}, issue.message)
        snapped = f"moved {moved} key(s) onto whole frames; " if self.snap_keys else ""
        self.report({"INFO"}, f"'{rig.name}': {snapped}" + (f"{len(found)} export issue(s)" if found
                                                            else "ready to export"))
        return {"FINISHED"}


class LEAPWRIGHT_OT_split_clips(bpy.types.Operator):
    """Bake the written jump into game clips, three per hop: start (to take-off), air (a loop), land (from touchdown)"""

    bl_idname = "leapwright.split_clips"
    bl_label = "Split into Clips"
    bl_options = {"REGISTER", "UNDO"}

    @classmethod
    def poll(cls, context):
        rig = rig_space.chosen_rig(context)
        return getattr(context.scene, "leapwright_plan", None) is not None and rig is not None

    def execute(self, context):
        scene = context.scene
        s = scene.leapwright_plan
        rig = rig_space.chosen_rig(context)
        if "plan" not in ownership.capabilities_written(rig):
            self.report({"ERROR"}, f"'{rig.name}' has no jump written by leapwright; write the jump first")
            return {"CANCELLED"}
        plan, readout = plan_link.plan_for(scene)
        if plan is None:
            self.report({"ERROR"}, readout["error"])
            return {"CANCELLED"}
        feet_names = [f for f in (s.foot_left, s.foot_right) if f]
        try:
            body, feet = rig_space.resolve(rig, s.com_bone, feet_names)
            split = root_motion.resolve(rig, s, feet_names)
        except rig_space.SelectionError as exc:
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        carriers = [(body, split.body_parts)]
        if split.root is not None:
            carriers.append((split.root, split.root_parts))
        for foot, riding in zip(feet, split.feet_riding):
            carriers.append((foot, tuple(p for p in bp.BOTH if not (riding and p in split.root_parts))))
        clips = jump_clips.split(scene, rig, plan, carriers, float(s.start_frame))
        shown = ", ".join(f"{a.name} ({a.frame_range[0]:.0f}-{a.frame_range[1]:.0f})" for a in clips.values())
        self.report({"INFO"}, f"made {shown}")
        return {"FINISHED"}


classes = (LEAPWRIGHT_OT_check_export, LEAPWRIGHT_OT_split_clips)
