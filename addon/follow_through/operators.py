"""Operators for drag and follow-through: bake it, take it back.

Everything (checks, sampling, simulation, curves) is done before the first key
is written, so a refused or cancelled bake leaves the file as it was. No
``bpy.ops`` inside ``execute``. Pressed in the panel (invoke), a bake that is
not done within :data:`FIRST_STEP` goes on as a modal operator: a progress bar,
and Esc cancels with nothing written. A bake that reuses the motion kept from
the last one (changing only chain settings) finishes in that first step.
"""

import json
import math

import bpy
from bpy.props import EnumProperty, StringProperty

from . import bake as follow_bake
from . import live_tuning
from .bake_job import BakeJob
from ..blender.write_guard import in_object_or_pose_mode
from ..rig import verify
from ..core.base.errors import LeapwrightError
from ..core.follow_through import presets
from .settings import PRESET_ITEMS

#: Longest first step before the bake shows a progress bar and listens for Esc [s].
FIRST_STEP = 0.1
#: Work done between two looks at the events while a long bake runs [s].
MODAL_STEP = 0.05
PROGRESS_STEPS = 1000

PRESET_CHOICES = (("SETTINGS", "As set in the panel", "The panel's preset or values"),) + PRESET_ITEMS


def _lag(context):
    return getattr(context.scene, "leapwright_follow_through", None)


def _rig(context):
    obj = context.active_object
    if obj is not None:
        return obj
    jump = getattr(context.scene, "leapwright_plan", None)
    return jump.rig if jump is not None else None


def _request(context, op, rig):
    named = tuple(n.strip() for n in op.bones.split(",") if n.strip())
    return follow_bake.request_from_panel(context, rig, named or None, op.preset)


def _can_run(cls, context):
    """Poll of both operators: object or pose mode, and the settings registered."""
    return in_object_or_pose_mode(cls, context, "follow-through is baked") and _lag(context) is not None


class LEAPWRIGHT_OT_bake_follow_through(bpy.types.Operator):
    """Bake drag and follow-through on the chosen bones, as keys on a layer above yours"""

    bl_idname = "leapwright.bake_follow_through"
    bl_label = "Bake Follow-Through"
    bl_options = {"REGISTER", "UNDO"}
    lw_rig = staticmethod(_rig)  # the rig the write guard checks: the active object first, as here

    bones: StringProperty(name="Bones", description="Comma-separated bone names; empty uses the panel's choice")
    preset: EnumProperty(name="Behaves like", items=PRESET_CHOICES, default="SETTINGS")

    @classmethod
    def poll(cls, context):
        return _can_run(cls, context)

    def execute(self, context):
        rig = _rig(context)
        try:
            job = BakeJob(context.scene, rig, _request(context, self, rig))
            job.run()
        except (follow_bake.LagError, LeapwrightError) as exc:
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        return self._write(context, job)

    def invoke(self, context, event):
        if context.window is None:
            return self.execute(context)
        rig = _rig(context)
        try:
            self._job = BakeJob(context.scene, rig, _request(context, self, rig), threaded=True)
            done = self._job.step(FIRST_STEP)
        except (follow_bake.LagError, LeapwrightError) as exc:
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        if done:  # a tuning re-bake, or a small one: no bar, nothing to cancel
            return self._write(context, self._job)
        wm = context.window_manager
        self._timer = wm.event_timer_add(0.001, window=context.window)
        wm.progress_begin(0, PROGRESS_STEPS)
        wm.modal_handler_add(self)
        context.workspace.status_text_set("Baking follow-through: Esc to cancel (nothing is written)")
        return {"RUNNING_MODAL"}

    def modal(self, context, event):
        if event.type == "ESC":
            self.cancel(context)
            self.report({"WARNING"}, "Follow-through bake cancelled; nothing was written")
            return {"CANCELLED"}
        if event.type != "TIMER":
            return {"RUNNING_MODAL"}  # the scene stays as it is while the bake reads it
        try:
            done = self._job.step(MODAL_STEP)
        except (follow_bake.LagError, LeapwrightError) as exc:
            self._end_modal(context)
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        context.window_manager.progress_update(int(self._job.progress * PROGRESS_STEPS))
        if not done:
            return {"RUNNING_MODAL"}
        self._end_modal(context)
        return self._write(context, self._job)

    def cancel(self, context):
        self._job.cancel()
        self._end_modal(context)

    def _end_modal(self, context):
        wm = context.window_manager
        if getattr(self, "_timer", None) is not None:
            wm.event_timer_remove(self._timer)
            self._timer = None
        wm.progress_end()
        context.workspace.status_text_set(None)

    def _write(self, context, job):
        try:
            job.write()
        except follow_bake.ownership.LayerError as exc:
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        work = job.work
        peaks = follow_bake.degrees(work.peaks)
        context.scene.leapwright_follow_through.readout = json.dumps(peaks)
        context.scene.leapwright_follow_through.body_readout = work.body
        top = max(peaks, key=peaks.get)
        kept = " (motion kept from the last bake)" if job.reused else ""
        unplayed = _unplayed(context.scene, job, list(peaks))
        played = [b for b in peaks if not any(f"'{b}'" in u for u in unplayed)]
        self.report({"INFO"} if played else {"WARNING"},
                    f"Baked {len(peaks)} bones, {work.keys} keys on {follow_bake.TRACK}{kept}; " +
                    (f"largest swing {peaks[top]:.1f}° ({top})" if played else "none of them plays"))
        for problem in unplayed:
            self.report({"WARNING"}, problem)
        return {"FINISHED"}


#: rig pointer -> (take key, problems): whether the keys play, found at the last bake that sampled.
_PLAYED: dict = {}


def _unplayed(scene, job, bones):
    """What :func:`verify.unplayed_keys` says, reused for a re-bake of kept motion.

    A re-bake from kept motion has the same bones, range and animation (the kept take was
    confirmed), so the same constraints and drivers hold the same bones: only the layer's
    values changed, and whether keys play does not depend on them. Playing the rig twice
    more would cost more than the rest of such a re-bake.
    """
    slot = job.rig.as_pointer()
    known = _PLAYED.get(slot)
    if job.reused and known is not None and known[0] == job.key:
        return known[1]
    problems = verify.unplayed_keys(scene, job.rig, bones, job.request.frame_start, job.request.frame_end)
    _PLAYED[slot] = (job.key, problems)
    return problems


class LEAPWRIGHT_OT_remove_follow_through(bpy.types.Operator):
    """Remove the baked follow-through and put the bones back as they were"""

    bl_idname = "leapwright.remove_follow_through"
    bl_label = "Remove Follow-Through"
    bl_options = {"REGISTER", "UNDO"}
    lw_rig = staticmethod(_rig)  # the rig the write guard checks: the active object first, as here

    @classmethod
    def poll(cls, context):
        return _can_run(cls, context)

    def execute(self, context):
        rig = _rig(context)
        if not follow_bake.remove(rig):
            self.report({"WARNING"}, "nothing to remove: this object has no baked follow-through")
            return {"CANCELLED"}
        context.scene.leapwright_follow_through.readout = ""
        context.scene.leapwright_follow_through.body_readout = ""
        self.report({"INFO"}, f"Removed the follow-through from {rig.name}")
        return {"FINISHED"}


def described_parameters(settings, unit_scale):
    """The chain parameters of the panel's physical description (``settings.describe_as`` and its
    values; ``unit_scale`` the scene's metres per unit), from the core's hanging-chain presets."""
    length = settings.hanging_length * unit_scale
    if settings.describe_as == "skirt":
        return presets.skirt_parameters(length, settings.fabric_weight / 1000.0)  # g/m^2 -> kg/m^2
    if settings.describe_as == "tail":
        return presets.tail_parameters(length, 1, tip_mass_ratio=settings.tip_weight)[0]  # the same for every bone
    return presets.hair_parameters(length)


class LEAPWRIGHT_OT_describe_chain(bpy.types.Operator):
    """Set springiness, damping, sag, angle limit and carry-through from the description: how long it hangs and what it is made of"""

    bl_idname = "leapwright.describe_chain"
    bl_label = "Set Values from Description"
    bl_options = {"REGISTER", "UNDO"}
    lw_rig = staticmethod(_rig)  # with "re-bake as you tune" on it re-bakes this rig: guarded as the bake is

    @classmethod
    def poll(cls, context):
        return _lag(context) is not None

    def execute(self, context):
        s = _lag(context)
        try:
            params = described_parameters(s, context.scene.unit_settings.scale_length or 1.0)
        except LeapwrightError as exc:
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        live, s.live_rebake = s.live_rebake, False  # one re-bake for the whole set, not one per value
        try:
            s.preset = "custom"
            s.frequency, s.damping_ratio, s.sag = params.frequency, params.damping_ratio, params.sag
            s.angle_limit, s.transmission = params.angle_limit, params.transmission
        finally:
            s.live_rebake = live
        live_tuning.retune(s, context)
        self.report({"INFO"}, f"Springiness {params.frequency:.2f} Hz, damping {params.damping_ratio:.2f}, sag "
                              f"{math.degrees(params.sag):.0f}°, carry-through {params.transmission:.2f}")
        return {"FINISHED"}


classes = (LEAPWRIGHT_OT_bake_follow_through, LEAPWRIGHT_OT_remove_follow_through, LEAPWRIGHT_OT_describe_chain)
