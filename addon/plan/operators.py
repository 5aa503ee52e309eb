"""Operators: validate, ask the core, write, report.

Every check and every number is done before the first key is written, so a
refused run leaves the file as it was. No ``bpy.ops`` inside ``execute``.
"""

from dataclasses import replace

import numpy as np

import bpy
from bpy.props import EnumProperty

from ..blender import scene_units
from . import blocking_pass as bp
from ..blender import ownership
from ..blender.write_guard import in_object_or_pose_mode
from ..blender.curves import MEASURED_PROPERTY, Timeline
from . import hands, link as plan_link, reach, root_motion
from ..rig import space as rig_space, verify, profile as rig_profile, skeleton as rig_skeleton
from ..core.base.errors import LeapwrightError

CAPABILITY = "plan"
#: Rig name -> lines of the last played-back comparison (shown in the panel; not saved).
LAST_PLAYED: dict = {}

CONFLICT_ITEMS = (
    ("ASK", "Ask", "Stop and say which channels already have your keys"),
    ("REPLACE", "Replace my keys",
     "Write over your keys on those channels (they come back with Remove Leapwright Keys)"),
    ("LAYER", "Layer on top", "Keep your keys untouched and add the jump on an NLA layer above them"),
)


def _settings(context):
    return getattr(context.scene, "leapwright_plan", None)


def _markers_clear(scene):
    for m in [m for m in scene.timeline_markers if m.name.startswith(bp.MARKER_PREFIX)]:
        scene.timeline_markers.remove(m)


#: Properties leapwright adds to the rig (the blocking pass's plan, the checker's measurement).
OWN_PROPERTIES = (bp.WEIGHT_PROPERTY, MEASURED_PROPERTY)


def _remove_blocking(scene, rig):
    ownership.clear(rig, CAPABILITY)
    _markers_clear(scene)
    for name in OWN_PROPERTIES:
        if name in rig:
            del rig[name]


def _unanimated(channels, rig):
    """The channels' values before this add-on animated them (re-runs must not stack)."""
    before = ownership.static_values(rig, CAPABILITY)
    base = np.array([before.get((channels.data_path, i), channels.base[i]) for i in range(3)])
    return replace(channels, base=base)


def _channel_label(path, index):
    return f"{path}[{index}]"


class LEAPWRIGHT_OT_write_plan(bpy.types.Operator):
    """Write the planned jump as keys on the character: body, feet, phase markers and weight"""

    bl_idname = "leapwright.write_plan"
    bl_label = "Write Jump Keys"
    bl_options = {"REGISTER", "UNDO"}

    on_conflict: EnumProperty(name="Where you already have keys", items=CONFLICT_ITEMS, default="ASK")

    @classmethod
    def poll(cls, context):
        return in_object_or_pose_mode(cls, context, "the jump is written") and _settings(context) is not None

    def _prepare(self, context):
        """Everything to write, or a message saying why not: ``(work, error)``."""
        scene = context.scene
        s = scene.leapwright_plan
        rig = rig_space.chosen_rig(context)
        try:
            body, feet = rig_space.resolve(rig, s.com_bone, (s.foot_left, s.foot_right))
            forward = rig_space.forward_axis(rig, s.forward)
            split = root_motion.resolve(rig, s, [f for f in (s.foot_left, s.foot_right) if f])
        except rig_space.SelectionError as exc:
            return None, str(exc)
        if rig.animation_data is not None and rig.animation_data.use_tweak_mode:
            return None, f"'{rig.name}' is in NLA tweak mode; leave it (Tab in the NLA editor) and run again"
        body = _unanimated(body, rig)
        feet = [_unanimated(f, rig) for f in feet]
        if split.root is not None:
            split = replace(split, root=_unanimated(split.root, rig))
        # the rig's profile first: whether its legs stretch shapes the plan (plan_link.leg_limit)
        profile = rig_profile.known(rig) if any((s.foot_left, s.foot_right)) else {}
        plan, readout = plan_link.plan_for(scene)
        if plan is None:
            return None, readout["error"]
        m = scene_units.metres_per_unit(scene)
        timeline = Timeline(float(s.start_frame), scene_units.scene_fps(scene))
        try:
            probe = root_motion.curves(split, plan, body, feet, forward, m, timeline, s.key_style,
                                       s.foot_tuck * m, as_delta=False)
        except LeapwrightError as exc:
            return None, str(exc)
        heels, reach_notes = reach.heel_specs(rig, plan, timeline, forward, m, s.foot_tuck * m,
                                              (s.foot_left, s.foot_right), profile, CAPABILITY)
        hand_ch = [_unanimated(h, rig) for h in hands.hand_channels(rig, profile, s.com_bone)]
        probe = probe + heels + hands.hand_curves(rig, split, plan, hand_ch, forward, m, timeline, s.key_style,
                                                  as_delta=False)
        clashes = ownership.conflicts(rig, probe)
        work = {"profile": profile, "reach_notes": reach_notes, "hands": hand_ch, "rig": rig, "plan": plan, "body": body, "feet": feet, "forward": forward, "m": m,
                "timeline": timeline, "style": s.key_style, "tuck": s.foot_tuck * m, "clashes": clashes,
                "specs": probe, "readout": readout, "split": split}
        return work, ""

    def invoke(self, context, event):
        work, error = self._prepare(context)
        if work is None:
            self.report({"ERROR"}, error)
            return {"CANCELLED"}
        if work["clashes"] and self.on_conflict == "ASK":
            self.on_conflict = "LAYER"
            self._clash_text = ", ".join(_channel_label(*c) for c in work["clashes"][:4])
            return context.window_manager.invoke_props_dialog(self, width=420)
        return self.execute(context)

    def draw(self, context):
        col = self.layout.column()
        col.label(text="You already have keys on: " + getattr(self, "_clash_text", ""))
        col.prop(self, "on_conflict", expand=True)

    def execute(self, context):
        work, error = self._prepare(context)
        if work is None:
            self.report({"ERROR"}, error)
            return {"CANCELLED"}
        rig, plan, clashes = work["rig"], work["plan"], work["clashes"]
        if clashes and self.on_conflict == "ASK":
            shown = ", ".join(_channel_label(*c) for c in clashes[:4]) + (" …" if len(clashes) > 4 else "")
            self.report({"WARNING"}, f"'{rig.name}' already has your keys on {shown}; nothing was written. "
                                     "Choose 'Replace my keys' or 'Layer on top'")
            return {"CANCELLED"}
        layered = bool(clashes) and self.on_conflict == "LAYER"
        specs = work["specs"]
        if layered:
            specs = root_motion.curves(work["split"], plan, work["body"], work["feet"], work["forward"],
                                       work["m"], work["timeline"], work["style"], work["tuck"], as_delta=True)
            s = context.scene.leapwright_plan
            specs += reach.heel_specs(rig, plan, work["timeline"], work["forward"], work["m"], work["tuck"],
                                      (s.foot_left, s.foot_right), work["profile"], CAPABILITY, as_delta=True)[0]
            specs += hands.hand_curves(rig, work["split"], plan, work["hands"], work["forward"], work["m"],
                                       work["timeline"], work["style"], as_delta=True)
        weight = bp.weight_curve(plan, work["timeline"])
        markers = bp.phase_markers(plan, work["timeline"])

        # Nothing above wrote anything; from here on the run changes the file.
        scene = context.scene
        _remove_blocking(scene, rig)
        rig[bp.WEIGHT_PROPERTY] = 1.0
        ui = rig.id_properties_ui(bp.WEIGHT_PROPERTY)
        ui.update(description="Apparent weight from the jump plan, in body weights (0 in the air)",
                  min=0.0, soft_max=8.0)
        if layered:
            ownership.write_layer(rig, CAPABILITY, specs)
            ownership.write_into_action(rig, CAPABILITY, [weight], replace=False)
        else:
            ownership.write_into_action(rig, CAPABILITY, specs + [weight], replace=bool(clashes))
        for name, frame in markers:
            scene.timeline_markers.new(name, frame=frame)
        n_keys = sum(len(x.frames) for x in specs) + len(weight.frames)
        hops = plan.hops
        how = " as a layer over your keys" if layered else (" over your keys" if clashes else "")
        self.report({"INFO"}, f"wrote {n_keys} keys on '{rig.name}'{how}: {len(hops)} hop(s), "
                              f"{hops[0].flight_time_s * work['timeline'].fps:.1f} frames in the air")
        for w in list(work["readout"]["warnings"]) + work["reach_notes"]:
            self.report({"WARNING"}, w)
        for note in work["readout"].get("stylisations", ()):
            self.report({"INFO"}, "stylised on purpose: " + note)
        self._report_played(context, work)
        return {"FINISHED"}

    def _report_played(self, context, work):
        """Play what was written and say where it differs from the plan (:mod:`rig.verify`)."""
        rig = work["rig"]
        problems, summary = verify.played_plan(context.scene, rig, work["plan"], work["timeline"],
                                               work["forward"], context.scene.leapwright_plan.com_bone,
                                               work["profile"])
        LAST_PLAYED[rig.name] = [summary] + problems
        self.report({"INFO"}, summary)
        for p in problems:
            self.report({"WARNING"}, p)


class LEAPWRIGHT_OT_remove_plan(bpy.types.Operator):
    """Remove every key, layer, marker and property leapwright wrote on the rig, restoring your keys"""

    bl_idname = "leapwright.remove_plan"
    bl_label = "Remove Leapwright Keys"
    bl_options = {"REGISTER", "UNDO"}

    @classmethod
    def poll(cls, context):
        return rig_space.chosen_rig(context) is not None

    def execute(self, context):
        rig = rig_space.chosen_rig(context)
        written = ownership.capabilities_written(rig)
        has_marks = any(m.name.startswith(bp.MARKER_PREFIX) for m in context.scene.timeline_markers)
        if not written and not any(name in rig for name in OWN_PROPERTIES) and not has_marks:
            self.report({"INFO"}, f"nothing from leapwright on '{rig.name}'")
            return {"CANCELLED"}
        for capability in written:
            ownership.clear(rig, capability)
        _remove_blocking(context.scene, rig)
        self.report({"INFO"}, f"removed what leapwright wrote on '{rig.name}'")
        return {"FINISHED"}


class LEAPWRIGHT_OT_use_active_bone(bpy.types.Operator):
    """Take the active object as the rig and its active bone as the body bone"""

    bl_idname = "leapwright.use_active_bone"
    bl_label = "Use Active Bone"
    lw_settings_only = True  # fills in settings only: allowed on a linked rig (write_guard)
    bl_options = {"REGISTER", "UNDO"}

    @classmethod
    def poll(cls, context):
        obj = context.active_object
        return _settings(context) is not None and obj is not None and obj.type == "ARMATURE"

    def execute(self, context):
        obj = context.active_object
        s = context.scene.leapwright_plan
        s.rig = obj
        bone = obj.data.bones.active
        s.com_bone = bone.name if bone is not None else ""
        if bone is not None:
            carries, better, what = rig_profile.body_check(obj, bone.name)
            if carries is False and better:
                s.com_bone = better
                self.report({"WARNING"}, f"'{bone.name}' does not carry the upper body ({what}); using "
                                         f"'{better}', which does, as the body bone")
            elif carries is False:
                self.report({"WARNING"}, f"'{bone.name}' does not carry the upper body ({what}); choose the "
                                         "control that moves the hips, spine and head together")
        return {"FINISHED"}


class LEAPWRIGHT_OT_find_rig_controls(bpy.types.Operator):
    """Find which of the rig's controls carries the body, plants the feet, rolls the feet and moves the arms,
    by trying each on the rig (the pose is put back); keep the result on the rig, to edit, and fill in
    the body bone and the feet"""

    bl_idname = "leapwright.find_rig_controls"
    bl_label = "Find Rig Controls"
    bl_options = {"REGISTER", "UNDO"}

    @classmethod
    def poll(cls, context):
        s = _settings(context)
        rig = s.rig if s is not None and s.rig is not None else context.active_object
        return rig is not None and rig.type == "ARMATURE"

    def execute(self, context):
        s = context.scene.leapwright_plan
        rig = s.rig or context.active_object
        try:
            profile = rig_profile.refind(rig)
        except rig_skeleton.BodyError as exc:
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        rig_profile.save(rig, profile)
        s.rig = rig
        if profile.get("body"):
            s.com_bone = profile["body"]
        s.foot_left, s.foot_right = profile.get("foot.L", ""), profile.get("foot.R", "")
        found = ", ".join(f"{k} {v}" for k, v in profile.items()) or "nothing"
        self.report({"INFO"}, f"'{rig.name}': {found}")
        return {"FINISHED"}


classes = (LEAPWRIGHT_OT_find_rig_controls, LEAPWRIGHT_OT_write_plan, LEAPWRIGHT_OT_remove_plan, LEAPWRIGHT_OT_use_active_bone)
