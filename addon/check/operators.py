"""Checking the jump on the rig: sample it in scene time, ask the core, show the findings.

The check reads what ``scene.leapwright_check.follow`` chooses (:mod:`checked_path`:
the whole-body centre of mass, the body bone or the object) once per frame over the
scene's range, through scene time, so actions in NLA strips with offsets play as they
do in the shot.
It writes only its own results: the findings on ``scene.leapwright_check``, the
measured apparent weight as the animated property ``lw_weight_measured_bw`` (F-curve
group ``lw:check``), and ``lw:measured`` markers on request.
"""

import numpy as np

import bpy
from bpy.props import IntProperty

from ..blender import scene_units
from . import path as checked_path, overlay as path_overlay
from ..blender import ownership
from ..rig import space as rig_space, verify
from ..body.com import BodyError
from ..blender.curves import MEASURED_PROPERTY, CurveSpec
from ..core.check.analysis import analyse_trajectory
from ..core.base.phase_words import words_for
from ..core.base.errors import LeapwrightError

CAPABILITY = "check"
MARKER_PREFIX = "lw:measured "


def _table(scene):
    air = getattr(scene, "leapwright_body", None)
    return air.table if air is not None else "de_leva_male"


def clear_check(scene, rig):
    """Remove what the check wrote: its curve and property, its markers, the list."""
    if rig is not None:
        ownership.clear(rig, CAPABILITY)
        if MEASURED_PROPERTY in rig:
            del rig[MEASURED_PROPERTY]
    for marker in [m for m in scene.timeline_markers if m.name.startswith(MARKER_PREFIX)]:
        scene.timeline_markers.remove(marker)
    settings = getattr(scene, "leapwright_check", None)
    if settings is not None:
        settings.findings.clear()
        settings.summary = ""
        settings.implied_gravity = float("nan")
    path_overlay.forget_check()


class LEAPWRIGHT_OT_check_jump(bpy.types.Operator):
    """Check the rig's jump over the scene range: flights, implied gravity, apparent weight, mistakes"""

    bl_idname = "leapwright.check_jump"
    bl_label = "Check Jump"
    bl_options = {"REGISTER", "UNDO"}

    @classmethod
    def poll(cls, context):
        return rig_space.chosen_rig(context) is not None and hasattr(context.scene, "leapwright_check")

    def execute(self, context):
        scene = context.scene
        rig = rig_space.chosen_rig(context)
        bone = scene.leapwright_plan.com_bone if rig.type == "ARMATURE" else ""
        if bone and bone not in rig.pose.bones:
            self.report({"ERROR"}, f"'{rig.name}' has no bone '{bone}'; pick the body bone under Character")
            return {"CANCELLED"}
        if scene.frame_end - scene.frame_start + 1 < 5:
            self.report({"ERROR"}, f"the scene range {scene.frame_start}-{scene.frame_end} is too short to "
                                   "check; give it at least 5 frames")
            return {"CANCELLED"}
        fps = scene_units.scene_fps(scene)
        # the jump's own gravity (the panel's, as planned and corrected), not Blender's physics
        # setting: a moon jump is right for the moon
        gravity = scene_units.exact_gravity(scene.leapwright_plan.gravity)
        try:
            path = checked_path.checked_path(scene, rig, bone, scene.leapwright_check.follow, _table(scene))
            frames, points = path.frames, path.points
            result = analyse_trajectory(frames, points, fps, gravity=gravity)
        except BodyError as exc:
            self.report({"ERROR"}, checked_path.body_refusal(exc, "set Follow to Body bone"))
            return {"CANCELLED"}
        except LeapwrightError as exc:
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        stretched = verify.limb_stretch_findings(scene, rig, np.arange(scene.frame_start, scene.frame_end + 1))
        weight = CurveSpec(f'["{MEASURED_PROPERTY}"]', 0, np.asarray(result.frames, float),
                           np.asarray(result.force_bw, float), np.zeros(len(result.frames)), "LINEAR")

        # Everything is known; from here on the check writes its results.
        settings = scene.leapwright_check
        clear_check(scene, rig)
        rig[MEASURED_PROPERTY] = 1.0
        rig.id_properties_ui(MEASURED_PROPERTY).update(
            description="Apparent weight measured from the animation, in body weights (0 in the air)",
            min=0.0, soft_max=8.0)
        ownership.write_into_action(rig, CAPABILITY, [weight], replace=False)
        for f in result.findings:
            item = settings.findings.add()
            item.kind, item.message, item.suggestion = f.kind, f.message, f.suggestion
            item.first_frame, item.last_frame = int(round(f.first_frame)), int(round(f.last_frame))
        for kind, first, last, message, suggestion in stretched:  # read from the deform bones
            item = settings.findings.add()
            item.kind, item.message, item.suggestion = kind, message, suggestion
            item.first_frame, item.last_frame = int(round(first)), int(round(last))
        if settings.add_markers:
            for p in result.phases:
                scene.timeline_markers.new(MARKER_PREFIX + words_for(p.name).marker, frame=int(p.first_frame))
        g = result.implied_gravity_m_s2
        settings.implied_gravity = float("nan") if g is None else g
        settings.summary = (f"{path.text}: {len(result.flights)} flight(s), implied g "
                            + (f"{g:.3f} m/s²" if g is not None else "none (nothing ballistic)")
                            + f" against the jump's {gravity:.4g} m/s², "
                            f"{len(result.findings) + len(stretched)} finding(s)"
                            + (f"; {path.reason}" if path.reason else ""))
        path_overlay.remember_check(frames, points, result, fps, scene_units.metres_per_unit(scene))
        if path_overlay.is_drawing():
            path_overlay.refresh(scene)
        self.report({"INFO"}, settings.summary)
        for f in result.findings:
            self.report({"WARNING"}, f"{f.kind} frames {f.first_frame:.0f}-{f.last_frame:.0f}: {f.message}")
        for kind, first, last, message, _fix in stretched:
            self.report({"WARNING"}, f"{kind} frames {first:.0f}-{last:.0f}: {message}")
        return {"FINISHED"}


class LEAPWRIGHT_OT_go_to_finding(bpy.types.Operator):
    """Go to the first frame of this finding"""

    bl_idname = "leapwright.go_to_finding"
    bl_label = "Go to Finding"
    lw_settings_only = True  # fills in settings only: allowed on a linked rig (write_guard)
    bl_options = {"REGISTER", "UNDO"}

    index: IntProperty(name="Finding", default=0, min=0)

    @classmethod
    def poll(cls, context):
        return hasattr(context.scene, "leapwright_check")

    def execute(self, context):
        findings = context.scene.leapwright_check.findings
        if self.index >= len(findings):
            self.report({"ERROR"}, f"there is no finding {self.index + 1}; run Check Jump again")
            return {"CANCELLED"}
        context.scene.leapwright_check.active_finding = self.index
        context.scene.frame_set(findings[self.index].first_frame)
        return {"FINISHED"}


class LEAPWRIGHT_OT_clear_check(bpy.types.Operator):
    """Remove the check's findings, its measured-weight curve and its markers"""

    bl_idname = "leapwright.clear_check"
    bl_label = "Clear Check"
    bl_options = {"REGISTER", "UNDO"}

    @classmethod
    def poll(cls, context):
        return hasattr(context.scene, "leapwright_check")

    def execute(self, context):
        clear_check(context.scene, rig_space.chosen_rig(context))
        return {"FINISHED"}


classes = (LEAPWRIGHT_OT_check_jump, LEAPWRIGHT_OT_go_to_finding, LEAPWRIGHT_OT_clear_check)
