"""Operators of the in-air correction: check the arc, keep the body on it, take it off.

Every check and every number is done before the first key is written, so a refused
run leaves the file as it was. No ``bpy.ops`` inside ``execute``.
"""

import bpy

from ..blender.write_guard import in_object_or_pose_mode
from ..blender import scene_units
from . import arc as ac
from ..rig import space as rig_space
from . import com as body_com

#: Rig name -> lines of the last check (shown in the panel; not saved in the file).
LAST_CHECK: dict = {}


def _gravity(scene):
    return scene_units.exact_gravity(scene.leapwright_plan.gravity)


def _ready(context):
    return (getattr(context.scene, "leapwright_body", None) is not None and context.mode in {"OBJECT", "POSE"}
            and rig_space.chosen_rig(context) is not None)


def _remember(rig, work):
    lines = [f"{len(work.stretches)} flight(s) from {work.source}; bones {work.how}"]
    lines += [d.message for d in work.departures] or ["the centre of mass stays on its arc in every flight"]
    lines += [t.message for t in work.takeoff_motion]
    LAST_CHECK[rig.name] = lines


def _cm(m):
    return 100.0 * m


class LEAPWRIGHT_OT_check_body_arc(bpy.types.Operator):
    """Check whether the body's centre of mass stays on one falling arc in each flight (writes nothing)"""

    bl_idname = "leapwright.check_body_arc"
    bl_label = "Check Body Arc"
    bl_options = {"REGISTER"}

    @classmethod
    def poll(cls, context):
        return _ready(context)

    def execute(self, context):
        rig = rig_space.chosen_rig(context)
        try:
            work = ac.prepare(context.scene, rig, context.scene.leapwright_body, _gravity(context.scene),
                              own_layer=True)
        except ac.AirError as exc:
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        _remember(rig, work)
        for d in work.departures:
            self.report({"WARNING"}, d.message)
        for t in work.takeoff_motion:
            self.report({"WARNING"}, t.message)
        if not work.departures:
            self.report({"INFO"}, f"'{rig.name}': the centre of mass stays on its arc in "
                                  f"{len(work.stretches)} flight(s)")
        return {"FINISHED"}


class LEAPWRIGHT_OT_keep_body_on_arc(bpy.types.Operator):
    """Move the body so its centre of mass follows the falling arc fixed at take-off, limbs as animated"""

    bl_idname = "leapwright.keep_body_on_arc"
    bl_label = "Keep Body on Its Arc"
    bl_options = {"REGISTER", "UNDO"}

    @classmethod
    def poll(cls, context):
        return in_object_or_pose_mode(cls, context, "the body is kept on its arc") and _ready(context)

    def execute(self, context):
        scene, rig = context.scene, rig_space.chosen_rig(context)
        try:
            work = ac.prepare(scene, rig, scene.leapwright_body, _gravity(scene))
            specs = ac.curve_specs(work)
        except ac.AirError as exc:
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        # Nothing above wrote anything; from here on the run changes the file.
        left = ac.write(work, scene)
        _remember(rig, work)
        frame = int(work.frames[0]) + work.fix.largest_frame
        n_keys = sum(len(s.frames) for s in specs)
        self.report({"INFO"}, f"moved '{work.channels.label}' by up to {_cm(work.fix.largest):.1f} cm "
                              f"(frame {frame}) in {len(work.stretches)} flight(s): {n_keys} keys on "
                              f"the layer '{ac.TRACK}'; the centre of mass is now within "
                              f"{1000 * left:.2f} mm of its arc")
        for t in work.takeoff_motion:
            self.report({"WARNING"}, t.message)
        if left > 1e-3:
            self.report({"WARNING"}, f"the centre of mass is still {1000 * left:.1f} mm off its arc: something "
                                     f"on the rig does not follow '{work.channels.label}' (a constraint to "
                                     "another object?); pick another bone under Move bone")
        return {"FINISHED"}


class LEAPWRIGHT_OT_remove_body_arc(bpy.types.Operator):
    """Remove the in-air correction layer, leaving the animation as it was before"""

    bl_idname = "leapwright.remove_body_arc"
    bl_label = "Remove Body Arc Fix"
    bl_options = {"REGISTER", "UNDO"}

    @classmethod
    def poll(cls, context):
        return rig_space.chosen_rig(context) is not None

    def execute(self, context):
        rig = rig_space.chosen_rig(context)
        if not ac.remove(rig):
            self.report({"INFO"}, f"no in-air correction on '{rig.name}'")
            return {"CANCELLED"}
        LAST_CHECK.pop(rig.name, None)
        self.report({"INFO"}, f"removed the in-air correction from '{rig.name}'")
        return {"FINISHED"}


class LEAPWRIGHT_OT_edit_body_map(bpy.types.Operator):
    """Copy the bone-to-body map found from the bone tree into the rig to edit it, or, when the tree
    cannot be read, put a map to fill in there (every joint, its bone blank)"""

    bl_idname = "leapwright.edit_body_map"
    bl_label = "Edit Bone Map"
    bl_options = {"REGISTER", "UNDO"}

    @classmethod
    def poll(cls, context):
        rig = rig_space.chosen_rig(context)
        return rig is not None and rig.type == "ARMATURE"

    def execute(self, context):
        rig = rig_space.chosen_rig(context)
        try:
            _model, marks, _how = body_com.body_model(rig, context.scene.leapwright_body.table)
        except body_com.BodyError as exc:
            if body_com.MAP_PROPERTY in rig or body_com.MASS_PROPERTY in rig:
                self.report({"ERROR"}, str(exc))
                return {"CANCELLED"}
            rig[body_com.MAP_PROPERTY] = body_com.fill_in_text(rig)
            self.report({"INFO"}, f"'{rig.name}': a bone map to fill in is under Bones to body segments: write "
                                  "the bone at each joint")
            return {"FINISHED"}
        if marks is None:
            self.report({"ERROR"}, f"'{rig.name}' uses per-bone masses ({body_com.MASS_PROPERTY}); "
                                   "delete that property to map bones to segments")
            return {"CANCELLED"}
        rig[body_com.MAP_PROPERTY] = body_com.map_text(marks)
        self.report({"INFO"}, f"the bone map of '{rig.name}' is now under Bones to body segments in the "
                              "Leapwright panel, to edit")
        return {"FINISHED"}


classes = (LEAPWRIGHT_OT_check_body_arc, LEAPWRIGHT_OT_keep_body_on_arc, LEAPWRIGHT_OT_remove_body_arc,
           LEAPWRIGHT_OT_edit_body_map)
