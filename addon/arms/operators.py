"""Operators of the arm swing: find the arms, place a swing, check one, re-time one, take it off.

Every check and every number is done before the first key is written, so a refused
run leaves the file as it was. No ``bpy.ops`` inside ``execute``.
"""

from typing import Any

import bpy
import numpy as np

from ..blender import scene_units
from ..blender import ownership
from ..plan import link as plan_link
from ..blender.write_guard import in_object_or_pose_mode
from ..rig import space as rig_space, verify
from . import keys as arm_keys, retime, switch as arm_switch
from ..core.base.errors import LeapwrightError
from ..core.arms.timing import plan_swing_report

#: Rig name -> (line, icon) of the last check, placing or re-timing (shown in the panel; not saved in the file).
LAST: dict = {}
#: A swing whose peak and upswing start are this close to take-off and the push start is left
#: alone [frames]: the detection's own precision from whole-frame samples (design choice), so a
#: second run does not nudge the keys again.
ON_TIME_FRAMES = 0.25


def _ready(context):
    return (getattr(context.scene, "leapwright_arms", None) is not None and context.mode in {"OBJECT", "POSE"}
            and rig_space.chosen_rig(context) is not None)


def _rig_problem(rig):
    linked = rig_space.linked_library_problem(rig)
    if linked:
        return linked
    if rig.animation_data is not None and rig.animation_data.use_tweak_mode:
        return f"'{rig.name}' is in NLA tweak mode; leave it (Tab in the NLA editor) and run again"
    return None


class _ArmOperator:
    """What the arm-swing operators share: when they run, and how they refuse (nothing written)."""

    # Typed Any: Blender's own annotation is an enum literal a plain mixin cannot restate.
    bl_options: Any = {"REGISTER", "UNDO"}

    @classmethod
    def poll(cls, context):
        return in_object_or_pose_mode(cls, context, "the arm swing is found and keyed") and _ready(context)

    def _refuse(self, message):
        self.report({"ERROR"}, message)
        return {"CANCELLED"}


class _KeyWritingOperator(_ArmOperator):
    """An arm-swing operator that changes keys: the rig must take them, else nothing runs."""

    def execute(self, context):
        rig = rig_space.chosen_rig(context)
        problem = _rig_problem(rig)
        if problem:
            return self._refuse(problem)
        return self.run(context.scene, rig, context.scene.leapwright_arms)


def _frames(reading, t):
    return f"{reading.frame(t):.1f}"


def reading_lines(reading):
    """``(line, icon)`` the panel shows of a swing read from the rig: where it is, then its warnings."""
    sw, w = reading.swing, reading.window
    lines = [(f"upswing frames {_frames(reading, sw.upswing_start_s)}-{_frames(reading, sw.peak_s)}; push "
              f"{_frames(reading, w.push_start_s)}-{_frames(reading, w.takeoff_s)} (from {reading.source})", "INFO")]
    return lines + ([(x, "ERROR") for x in reading.warnings]
                    or [("the swing peaks at take-off and rises inside the push", "CHECKMARK")])


class LEAPWRIGHT_OT_find_arm_bones(_ArmOperator, bpy.types.Operator):
    """Fill in the upper-arm and forearm bones found from the rig's bone tree (names are not read)"""

    bl_idname = "leapwright.find_arm_bones"
    bl_label = "Find Arm Bones"
    lw_settings_only = True  # fills in settings only: allowed on a linked rig (write_guard)

    def execute(self, context):
        rig = rig_space.chosen_rig(context)
        switches = {}
        try:
            found = arm_keys.suggested_arms(rig, switches)
        except arm_keys.SwingError as exc:
            return self._refuse(str(exc))
        s = context.scene.leapwright_arms
        for side, (upper, fore) in found.items():
            setattr(s, f"upper_arm_{side}", upper)
            setattr(s, f"forearm_{side}", fore)
            setattr(s, f"ik_fk_{side}", switches.get(side, ""))
        self.report({"INFO"}, "arms: " + "; ".join(f"{side} {u} + {f}" for side, (u, f) in found.items()))
        for side, text in switches.items():
            self.report({"INFO"}, f"the {side} arm follows its IK hand: {text} (FK) is keyed while the swing plays")
        return {"FINISHED"}


class LEAPWRIGHT_OT_place_arm_swing(_KeyWritingOperator, bpy.types.Operator):
    """Key an arm swing timed to the planned jump: back in the dip, up through the push to take-off"""

    bl_idname = "leapwright.place_arm_swing"
    bl_label = "Place Arm Swing"

    def run(self, scene, rig, s):
        plan, readout = plan_link.plan_for(scene)
        if plan is None:
            return self._refuse(f"no plan to time the swing to: {readout['error']}")
        fps = scene_units.scene_fps(scene)
        try:
            work = arm_keys.place(rig, s, plan, scene.leapwright_plan.start_frame, fps)
            lines = plan_swing_report(plan, arm_keys.amplitudes_from(s), fps)
            keyed = [f for spec in work.specs for f in (spec.frames[0], spec.frames[-1])]
            specs = list(work.specs) + arm_switch.switch_specs(rig, (s.ik_fk_left, s.ik_fk_right),
                                                               float(np.floor(min(keyed))), float(np.ceil(max(keyed))))
        except (arm_keys.SwingError, arm_switch.SwitchError, LeapwrightError) as exc:
            return self._refuse(str(exc))
        clashes = ownership.conflicts(rig, specs)
        if clashes and s.on_conflict == "ASK":
            shown = ", ".join(f"{p}[{i}]" for p, i in clashes[:3]) + (" …" if len(clashes) > 3 else "")
            self.report({"WARNING"}, f"'{rig.name}' already has your keys on {shown}; nothing was written. "
                                     "Choose 'Replace my keys' under Arm Swing, or Re-time Arm Swing to keep them")
            return {"CANCELLED"}
        # Nothing above wrote anything; from here on the run changes the file.
        ownership.clear(rig, arm_keys.CAPABILITY)
        ownership.write_into_action(rig, arm_keys.CAPABILITY, specs, replace=bool(clashes))
        frame = work.timeline.frames
        up, off = work.placed.upswing_starts_s[0], work.placed.takeoffs_s[0]
        push = next(p.start_s for p in plan.phases if p.name == "propulsion")
        # The core's first line counts frames from the plan's start; the panel shows scene frames.
        where = f"upswing frames {frame(up):.1f}-{frame(off):.1f}; push {frame(push):.1f}-{frame(off):.1f} (the plan)"
        LAST[rig.name] = ([(f"placed on {', '.join(b for a in work.arms for b in a.bones)}", "INFO"),
                           (where, "INFO")] + [(x, "ERROR" if i > 1 else "INFO") for i, x in enumerate(lines) if i])
        n_keys = sum(len(x.frames) for x in work.specs)
        how = " over your keys" if clashes else ""
        self.report({"INFO"}, f"wrote {n_keys} arm keys in '{ownership.group_name(arm_keys.CAPABILITY)}'{how}; "
                              f"elevation peaks at take-off, frame {frame(off):.1f}")
        for line in lines[1:]:
            self.report({"INFO"}, line)
        frames = [f for spec in work.specs for f in (spec.frames[0], spec.frames[-1])]
        for problem in verify.unplayed_keys(scene, rig, [b for a in work.arms for b in a.bones],
                                            min(frames), max(frames)):
            self.report({"WARNING"}, problem)
            LAST[rig.name].append((problem, "ERROR"))
        return {"FINISHED"}


class LEAPWRIGHT_OT_check_arm_swing(_ArmOperator, bpy.types.Operator):
    """Read the arms' motion and say whether the swing peaks at take-off and rises inside the push (writes nothing)"""

    bl_idname = "leapwright.check_arm_swing"
    bl_label = "Check Arm Swing"
    bl_options = {"REGISTER"}

    def execute(self, context):
        rig = rig_space.chosen_rig(context)
        try:
            reading = retime.read_swing(context.scene, rig, context.scene.leapwright_arms)
        except arm_keys.SwingError as exc:
            return self._refuse(str(exc))
        LAST[rig.name] = reading_lines(reading)
        for w in reading.warnings:
            self.report({"WARNING"}, w)
        if not reading.warnings:
            self.report({"INFO"}, LAST[rig.name][0][0])
        return {"FINISHED"}


class LEAPWRIGHT_OT_retime_arm_swing(_KeyWritingOperator, bpy.types.Operator):
    """Move the times of your arm keys so the upswing fills the push and peaks at take-off (values kept)"""

    bl_idname = "leapwright.retime_arm_swing"
    bl_label = "Re-time Arm Swing"

    def run(self, scene, rig, s):
        try:
            work = retime.prepare_retime(scene, rig, s)
        except arm_keys.SwingError as exc:
            return self._refuse(str(exc))
        rep = work.report
        if max(abs(rep.peak_shift_frames), abs(rep.start_shift_frames)) < ON_TIME_FRAMES:
            LAST[rig.name] = reading_lines(work.reading)
            self.report({"INFO"}, f"the swing on '{rig.name}' is already on time; no key moved")
            return {"FINISHED"}
        # Nothing above wrote anything; from here on the run changes the file.
        backup = retime.write(work)
        moved = (f"moved {rep.keys_moved} keys on {len(work.curves)} curves by up to {rep.max_frames_moved:.1f} "
                 f"frames (peak {rep.peak_shift_frames:+.1f}, upswing start {rep.start_shift_frames:+.1f}); "
                 f"your keys before are kept in the action '{backup}'")
        try:
            after = reading_lines(retime.read_swing(scene, rig, s))
        except arm_keys.SwingError as exc:
            after = [(f"could not read the swing again: {exc}", "ERROR")]
        LAST[rig.name] = [(moved, "INFO")] + after
        self.report({"INFO"}, moved)
        for w in rep.warnings_before:
            self.report({"INFO"}, "before: " + w)
        return {"FINISHED"}


class LEAPWRIGHT_OT_remove_arm_swing(_ArmOperator, bpy.types.Operator):
    """Remove the placed swing and put re-timed arm keys back where you had them"""

    bl_idname = "leapwright.remove_arm_swing"
    bl_label = "Remove Arm Swing"

    @classmethod
    def poll(cls, context):
        return rig_space.chosen_rig(context) is not None

    def execute(self, context):
        rig = rig_space.chosen_rig(context)
        mine = [c for c in (arm_keys.CAPABILITY, retime.CAPABILITY)
                if c in ownership.capabilities_written(rig)]
        if not mine:
            self.report({"INFO"}, f"no arm swing from leapwright on '{rig.name}'")
            return {"CANCELLED"}
        for capability in mine:
            ownership.clear(rig, capability)
        LAST.pop(rig.name, None)
        self.report({"INFO"}, f"removed the arm swing from '{rig.name}'")
        return {"FINISHED"}


classes = (LEAPWRIGHT_OT_find_arm_bones, LEAPWRIGHT_OT_place_arm_swing, LEAPWRIGHT_OT_check_arm_swing,
           LEAPWRIGHT_OT_retime_arm_swing, LEAPWRIGHT_OT_remove_arm_swing)
