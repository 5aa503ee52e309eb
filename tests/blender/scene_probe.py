"""Read a file's animation back: byte-exact snapshots and evaluated world positions."""

import os
import sys

import bpy
import numpy as np

MODULE = "bl_ext.user_default.leapwright"


def addon():
    """The installed add-on package."""
    return sys.modules[MODULE]


def _fcurve_record(fc):
    keys = addon().blender.key_writer.read_keys(fc)
    mods = tuple(m.type for m in fc.modifiers)
    return (fc.data_path, fc.array_index, fc.group.name if fc.group else None, fc.extrapolation, fc.mute,
            fc.lock, fc.hide, mods, tuple((k, v.tobytes()) for k, v in sorted(keys.items())))


def _props(idblock):
    out = []
    for key in sorted(idblock.keys()):
        value = idblock[key]
        out.append((key, repr(value.to_dict() if hasattr(value, "to_dict") else
                               (value.to_list() if hasattr(value, "to_list") else value))))
    return tuple(out)


def snapshot(scene=None):
    """Everything animation-related in the file, as comparable plain data.

    Every action's F-curves (every key attribute as raw bytes), every object's
    custom properties and animation data (action, slot, blend, NLA tracks and
    strips), the scene's markers and frame range.
    """
    scene = scene or bpy.context.scene
    compat = addon().blender.compat
    objects = []
    for obj in sorted(bpy.data.objects, key=lambda o: o.name):
        ad = obj.animation_data
        anim = None
        if ad is not None:
            tracks = tuple((t.name, t.mute, tuple((s.name, s.action.name if s.action else None, s.frame_start,
                                                   s.frame_end, s.blend_type, s.extrapolation,
                                                   compat.strip_slot_handle(s)) for s in t.strips))
                           for t in ad.nla_tracks)
            anim = (ad.action.name if ad.action else None, compat.active_slot_handle(obj), ad.action_blend_type,
                    ad.action_influence, ad.action_extrapolation, tracks)
        curves = []
        for action in sorted(bpy.data.actions, key=lambda a: a.name):
            fcs = compat.fcurves(action, obj)
            curves.append((action.name, tuple(sorted(_fcurve_record(fc) for fc in fcs)),
                           tuple(g.name for g in compat.groups(action, obj))))
        pose = None
        if obj.pose is not None:
            pose = tuple((pb.name, tuple(pb.location), tuple(pb.rotation_quaternion)) for pb in obj.pose.bones)
        objects.append((obj.name, _props(obj), anim, tuple(curves), tuple(obj.location), pose))
    markers = tuple(sorted((m.name, m.frame, m.select) for m in scene.timeline_markers))
    return {"objects": tuple(objects), "markers": markers, "actions": tuple(sorted(a.name for a in bpy.data.actions)),
            "range": (scene.frame_start, scene.frame_end, scene.frame_current)}


def world_head(rig, bone, frame):
    """World position [BU] of ``bone``'s head at a (fractional) frame, as Blender evaluates it."""
    scene = bpy.context.scene
    whole = int(np.floor(frame))
    scene.frame_set(whole, subframe=float(frame - whole))
    depsgraph = bpy.context.evaluated_depsgraph_get()
    ev = rig.evaluated_get(depsgraph)
    if not bone:
        return np.array(ev.matrix_world.translation)
    return np.array(ev.matrix_world @ ev.pose.bones[bone].head)


def world_path(rig, bone, frames):
    """:func:`world_head` at each frame, shape (n, 3) [BU]."""
    return np.array([world_head(rig, bone, f) for f in frames])


def written_fcurves(rig):
    """F-curves of the rig's active (or pushed) action in leapwright's blocking group."""
    a = addon()
    action = a.blender.ownership.user_action(rig)
    return [fc for fc in a.blender.compat.fcurves(action, rig) if fc.group and fc.group.name == "lw:plan"]


def key_count(rig):
    """Keys leapwright wrote on the rig: its groups plus any layer tracks' actions."""
    a = addon()
    n = sum(len(fc.keyframe_points) for fc in written_fcurves(rig))
    ad = rig.animation_data
    for track in (ad.nla_tracks if ad else ()):
        if track.name.startswith("lw:") and track.name != a.blender.ownership.USER_TRACK:
            for s in track.strips:
                n += sum(len(fc.keyframe_points) for fc in a.blender.compat.fcurves(s.action, rig))
    return n


def run_write(rig, **props):
    """``bpy.ops.leapwright.write_plan`` with ``rig`` active; returns the operator's result."""
    bpy.context.view_layer.objects.active = rig
    return bpy.ops.leapwright.write_plan(**props)


def run_remove(rig):
    bpy.context.view_layer.objects.active = rig
    return bpy.ops.leapwright.remove_plan()


# --- The whole file's animation-related data, for "nothing changed" checks ------------------------


def _all_fcurve_sets(action):
    """Every (slot or '', fcurves, groups) of an action, whatever its layout.

    Layered actions (Blender 4.4+) keep curves in one channelbag per slot and
    strip; :func:`snapshot` looks only at the bag an object plays, so a write
    into another slot would slip past it. This walks them all.
    """
    if not addon().blender.compat.LAYERED:
        return [("", action.fcurves, action.groups)]
    out = []
    for layer in action.layers:
        for strip in layer.strips:
            for bag in strip.channelbags:
                out.append((f"{layer.name}/{bag.slot.identifier if bag.slot else ''}", bag.fcurves, bag.groups))
    return out


def library_path(idblock):
    """The absolute library file of a linked ID, or None (saving makes library paths relative)."""
    lib = idblock.library
    return None if lib is None else os.path.normpath(bpy.path.abspath(lib.filepath, library=lib.parent))


def _action_record(action):
    sets = []
    for label, fcs, grps in _all_fcurve_sets(action):
        sets.append((label, tuple(sorted(_fcurve_record(fc) for fc in fcs)),
                     tuple((g.name, g.lock, g.mute) for g in grps)))
    slots = ()
    if addon().blender.compat.LAYERED:
        slots = tuple((s.handle, s.identifier) for s in action.slots)
    return (action.name, library_path(action), action.use_fake_user,
            _props(action), slots, tuple(sets))


def _strip_record(strip):
    return (strip.name, strip.action.name if strip.action else None, strip.frame_start, strip.frame_end,
            strip.action_frame_start, strip.action_frame_end, strip.scale, strip.repeat, strip.blend_type,
            strip.extrapolation, strip.influence, strip.mute, addon().blender.compat.strip_slot_handle(strip))


def _pose_record(obj):
    if obj.pose is None:
        return None
    out = []
    for pb in obj.pose.bones:
        out.append((pb.name, pb.rotation_mode, tuple(pb.location), tuple(pb.rotation_quaternion),
                    tuple(pb.rotation_euler), tuple(pb.rotation_axis_angle), tuple(pb.scale),
                    tuple(pb.lock_location), tuple(pb.lock_rotation), _props(pb)))
    return tuple(out)


def file_state():
    """Every action, F-curve, NLA strip, marker, pose and custom property in the file.

    Plain, comparable data (key attributes as raw float32/int32 bytes through
    :func:`_fcurve_record`), independent of which object plays which action:
    every channelbag of every action, every object's animation data, pose
    channels and custom properties (object, pose bone, bone, armature, scene,
    action), every scene's markers, frame range, frame rate and unit scale.
    """
    compat = addon().blender.compat
    objects = []
    for obj in sorted(bpy.data.objects, key=lambda o: (o.name, library_path(o) or "")):
        ad = obj.animation_data
        anim = None
        if ad is not None:
            tracks = tuple((t.name, t.mute, t.is_solo, tuple(_strip_record(s) for s in t.strips))
                           for t in ad.nla_tracks)
            anim = (ad.action.name if ad.action else None, compat.active_slot_handle(obj), ad.action_blend_type,
                    ad.action_influence, ad.action_extrapolation, ad.use_tweak_mode, tracks,
                    len(ad.drivers))
        objects.append((obj.name, library_path(obj), obj.mode if obj.library is None
                        else None, _props(obj), anim, tuple(obj.location), tuple(obj.rotation_euler),
                        tuple(obj.scale), _pose_record(obj)))
    armatures = tuple((a.name, _props(a), tuple((b.name, _props(b)) for b in a.bones))
                      for a in sorted(bpy.data.armatures, key=lambda a: a.name))
    # The add-on's own settings (scene.leapwright_plan*) are registered properties,
    # which 4.2 also lists among a scene's custom properties: they are not data.
    scenes = tuple((sc.name, tuple(p for p in _props(sc) if not p[0].startswith("leapwright")), tuple(sorted((m.name, m.frame, m.select) for m in sc.timeline_markers)),
                    (sc.frame_start, sc.frame_end, sc.frame_current, sc.render.fps, sc.render.fps_base),
                    sc.unit_settings.scale_length) for sc in bpy.data.scenes)
    actions = tuple(_action_record(a) for a in sorted(bpy.data.actions, key=lambda a: a.name))
    return {"objects": tuple(objects), "armatures": armatures, "scenes": scenes, "actions": actions}


def reports(text):
    """``(level, message)`` of every operator report in captured output.

    In background mode Blender prints each report as ``Info:``, ``Warning:``
    or ``Error:`` followed by the message.
    """
    out = []
    for line in text.splitlines():
        for level in ("Info", "Warning", "Error"):
            if line.startswith(level + ": "):
                out.append((level.upper(), line[len(level) + 2:]))
    return out


def first_difference(a, b, path="state"):
    """Where two :func:`file_state` results first differ (for assertion messages), or None."""
    if type(a) is not type(b):
        return f"{path}: {a!r} != {b!r}"
    if isinstance(a, dict):
        for key in sorted(set(a) | set(b), key=str):
            if key not in a or key not in b:
                return f"{path}[{key!r}] only on one side"
            d = first_difference(a[key], b[key], f"{path}[{key!r}]")
            if d:
                return d
        return None
    if isinstance(a, (tuple, list)):
        for i, (x, y) in enumerate(zip(a, b)):
            d = first_difference(x, y, f"{path}[{i}]")
            if d:
                return d
        return f"{path}: lengths {len(a)} != {len(b)}" if len(a) != len(b) else None
    if a == b:
        return None
    sa, sb = str(a), str(b)
    i = next((k for k, (x, y) in enumerate(zip(sa, sb)) if x != y), min(len(sa), len(sb)))
    return f"{path} at char {i}: ...{sa[max(0, i - 120):i + 80]} != ...{sb[max(0, i - 120):i + 80]}"


# --- Bad input: a clear refusal and nothing changed; unusual input: the planned jump ---------------


def refused(match, run=None):
    """Run the write (or ``run``), expect an ERROR naming the problem, and the file unchanged.

    A refusal reaches Python as the RuntimeError ``bpy.ops`` raises with the
    operator's ERROR report; :func:`file_state` before and after must be equal.
    """
    import pytest

    run = run or (lambda: run_write(bpy.context.scene.leapwright_plan.rig))
    before = file_state()
    with pytest.raises(RuntimeError, match=match):
        run()
    assert file_state() == before, first_difference(file_state(), before)


def scene_plan():
    """The plan the panel's settings give for the current scene."""
    return addon().plan.link.plan_for(bpy.context.scene)[0]


def flight_error(rig, bone="hips"):
    """Largest gap [m] between Blender's evaluated rise and the plan's, across the first flight.

    Frames come from the scene's true rate (fps / fps_base); in flight the
    spline keys are exact (Hermite through a parabola), so what is left is
    float32 key rounding, far below the 2e-4 m :func:`works` allows.
    """
    scene = bpy.context.scene
    plan = scene_plan()
    m = scene.unit_settings.scale_length
    fps = scene.render.fps / scene.render.fps_base
    start = float(scene.leapwright_plan.start_frame)
    hop = plan.hops[0]
    t = np.linspace(hop.takeoff_time_s, hop.touchdown_time_s, 9)
    rest = world_head(rig, bone, start)[2]
    got = np.array([(world_head(rig, bone, start + ti * fps)[2] - rest) * m for ti in t])
    want = plan.height(t) - plan.height(0.0)
    return float(np.max(np.abs(got - want)))


def apex_rise_m(plan):
    """Apex rise above take-off [m] from the take-off speed: v0^2 / (2 g) (projectile motion)."""
    hop = plan.hops[0]
    return hop.takeoff_speed_m_s ** 2 / (2.0 * plan.gravity)


def works(rig, height=0.4, **props):
    """The write succeeds, the plan reaches ``height`` [m] and Blender plays the planned flight."""
    assert run_write(rig, **props) == {"FINISHED"}
    # Panel values are float32: the goal comes back to ~1e-7 of itself.
    assert abs(apex_rise_m(scene_plan()) - height) < 1e-6 * height
    assert flight_error(rig) < 2e-4


# --- A stand-in for the panel layout ---------------------------------------------------------------


class PanelLayout:
    """Stands in for bpy.types.UILayout (headless Blender draws no panels): records, checks names.

    Every label, property and operator is logged as ``(kind, text or name)``,
    or ``(kind, text, icon)`` with ``icons``; property names are checked
    against the data's RNA (or its custom properties for ``'["name"]'``) and
    operators against ``bpy.ops``, which is what a real layout rejects.
    """

    def __init__(self, log, icons=False):
        self.log, self.icons = log, icons
        self.use_property_split = self.use_property_decorate = self.alert = False
        self.enabled = self.active = True
        self.scale_y = 1.0

    def _child(self, *args, **kw):
        return PanelLayout(self.log, self.icons)

    box = column = row = split = _child

    def _record(self, kind, text, icon=None):
        self.log.append((kind, text, icon) if self.icons else (kind, text))

    def label(self, text="", icon="NONE"):
        self._record("label", text, icon)

    def prop(self, data, name, **kw):
        assert (name[2:-2] in data) if name.startswith('["') else (name in data.bl_rna.properties), name
        self._record("prop", name)

    def prop_search(self, data, name, search_data, search_name, **kw):
        assert name in data.bl_rna.properties and search_name in search_data.bl_rna.properties
        self._record("prop", name)

    def operator(self, idname, **kw):
        module, name = idname.split(".")
        assert name in dir(getattr(bpy.ops, module)), idname
        self._record("operator", idname)
        return OperatorProperties(getattr(getattr(bpy.ops, module), name).get_rna_type())


class OperatorProperties:
    """What ``UILayout.operator`` returns: the button's operator properties; only real ones can be set."""

    def __init__(self, rna):
        object.__setattr__(self, "_rna", rna)

    def __setattr__(self, name, value):
        assert name in self._rna.properties, f"{self._rna.identifier} has no property {name!r}"
        object.__setattr__(self, name, value)


def draw_panel(panel_name, icons=False):
    """The log of :class:`PanelLayout` after the registered panel ``panel_name`` draws."""
    log = []
    holder = type("PanelStandIn", (), {"layout": PanelLayout(log, icons)})()
    getattr(bpy.types, panel_name).draw(holder, bpy.context)
    return log


def peak_frame(frames, values):
    """Frame of the highest sample, refined by the vertex of a parabola through it and its neighbours."""
    i = int(np.argmax(values))
    if 0 < i < len(values) - 1:
        a, b, _ = np.polyfit(frames[i - 1:i + 2] - frames[i], values[i - 1:i + 2], 2)
        return float(frames[i] - b / (2 * a)) if a < 0 else float(frames[i])
    return float(frames[i])
