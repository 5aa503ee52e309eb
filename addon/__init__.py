"""Leapwright: physically consistent jumps written as keys on your own rig.

Install: Edit > Preferences > Get Extensions > Install from Disk (or drag the
``leapwright-<version>.zip`` onto Blender). The panel is in the 3D viewport's
sidebar (N), tab "Leapwright".

Scripting reference
-------------------
Settings live on the scene, ``scene.leapwright_plan`` (lengths in scene units, shown
in the scene's unit system; metres = value × ``unit_settings.scale_length``)::

    goal                 'HEIGHT' | 'FLIGHT_TIME' | 'TAKEOFF_SPEED'
    height               apex rise of the centre of mass [scene length]
    flight_time          [s]
    takeoff_speed        [m/s]
    distance             forward travel, take-off spot to landing spot [scene length]
    landing_height       landing ground above the take-off ground [scene length]
    hops                 int, 1..50
    gravity              [m/s^2]
    standing_com_height  [scene length]
    weighing_duration    standing still before the dip [s]
    custom_timing        bool; when True depth [scene length], dip_duration,
                         push_duration, landing_duration [s] are used
    rig                  Object (armature, or any object moved as a whole)
    com_bone             body bone name ("" = move the rig object itself)
    foot_left, foot_right  foot controller bone names ("" = none); must not be
                         children of com_bone
    foot_tuck            lift of the feet in the air [scene length]
    forward              'RIG' (the rig's -Y) | 'NEG_Y' | 'POS_Y' | 'POS_X' | 'NEG_X'
    key_style            'POSES' | 'SPLINE' | 'EVERY_FRAME'
    start_frame          frame of the plan's time 0 (start of weighing)

Operators (``bpy.ops.leapwright.*``; the rig is ``scene.leapwright_plan.rig``, or
the active object when that is empty):

``write_plan(on_conflict='ASK'|'REPLACE'|'LAYER')``
    Plans the jump with the core and writes, at the scene's ``fps / fps_base``:
    the body bone's (or object's) location curves and the foot controllers'
    location curves in the rig's active action, group ``lw:plan`` (the
    action and animation data are made if missing); ``lw_weight_bw`` (a custom
    property on the rig, animated: ground force in body weights, 0 in the air);
    scene timeline markers at each phase start in the animator's words
    (``lw:anticipation``, ``lw:push-off 2`` for hops; ``core.base.phase_words``). Re-running replaces what the previous run wrote. If the
    animator already keys one of those channels: 'ASK' writes nothing and
    warns (in the UI a dialog offers the choice); 'REPLACE' writes over those
    keys (saved, and restored by ``remove_plan``); 'LAYER' leaves them
    untouched and writes the jump as offsets on the NLA track ``lw:plan``
    (blend COMBINE), pushing the active action into the track
    ``lw:your animation`` while the layer exists. Without a clash every mode
    writes into the action. Bad input is reported as an error (a RuntimeError
    from ``bpy.ops``) and changes nothing. Markers are per scene: a run
    replaces every ``lw:`` marker. The body's base is its pose before
    leapwright first animated it, so re-runs from any frame do not stack.
``remove_plan()``
    Removes every curve, layer, marker and ``lw_`` property leapwright wrote on
    the rig and restores replaced keys and the pushed action exactly.
``use_active_bone()``
    Sets ``rig`` to the active armature and ``com_bone`` to its active bone.

``bake_follow_through(bones='', preset='SETTINGS'|'hair'|'cloth'|'tail'|'heavy prop'|'custom')``
    Drag and follow-through on the chosen bones (the active armature): the
    named bones (comma-separated), else ``scene.leapwright_follow_through``'s choice
    (selected pose bones, or a bone collection). The rig is sampled once per
    frame in scene time, the chains simulated, and each bone's rotation delta
    keyed in its own rotation mode (quaternion or Euler; axis-angle is refused)
    on the NLA track ``lw:follow_through`` (blend COMBINE, above your keys, which stay
    untouched). Re-baking replaces the previous bake. Peak offsets [deg] go to
    ``scene.leapwright_follow_through.readout`` (JSON).
``remove_follow_through()``
    Removes the bake and restores the bones and animation data exactly.

Follow-through settings, ``scene.leapwright_follow_through``::

    source            'SELECTED' | 'COLLECTION'; collection  bone collection name
    preset            'hair' | 'cloth' | 'tail' | 'heavy prop' | 'custom'
    frequency [Hz], damping_ratio, sag [rad], angle_limit [rad], transmission (0..1)
                      used when preset is 'custom'
    use_scene_range   bool; else frame_start, frame_end
    key_tolerance     [rad], 0 keeps every frame; on_twos, cyclic  bool
    reset_marker      markers whose name contains it restart the chains
                      (camera-switch markers always do)

In the air (settings ``scene.leapwright_body``: ``table`` 'de_leva_male' |
'de_leva_female' | 'dempster_winter'; ``flights`` 'AUTO' | 'MARKERS' |
'BALLISTIC'; ``carrier_bone`` ("" = the bone every body bone hangs from, or the
object); ``tolerance`` [scene length]; ``settle_frames``). Bones map to body
segments by the bone tree, or by the rig's ``lw_body_map`` text
(``landmark=bone[@tail][+bone]; ...``), or by its ``lw_bone_masses`` text
(``bone=kg [group]; ...``, for creatures):

``check_body_arc()``
    Samples the whole-body centre of mass over the scene's frame range and
    lists (in the panel and as warnings) the flight frames where it leaves its
    falling arc by more than ``tolerance``, with the torso drop they imply.
    Writes nothing.
``keep_body_on_arc()``
    Offsets the carrier so the centre of mass follows, in each flight (the
    ``lw:take-off`` markers, or its own free-fall stretches), the arc fixed at
    take-off, limbs as animated; written as deltas on the NLA track ``lw:body``
    (blend COMBINE). Re-running replaces it. Reports the largest correction.
``remove_body_arc()``
    Removes the ``lw:body`` layer and restores the file as it was.
``edit_body_map()``
    Copies the map found from the bone tree into ``lw_body_map`` to edit it.

``check_jump()``
    Samples what ``scene.leapwright_check.follow`` chooses (``AUTO``: the
    whole-body COM of a rig with ``lw_body_map``, ``lw_bone_masses`` or the
    ``lw:body`` layer, else the body bone; ``BONE``; ``BODY``) once per frame over
    the scene range, in scene time, and runs the core's analysis: findings on
    ``scene.leapwright_check.findings`` (kind, first_frame, last_frame,
    message, suggestion), ``implied_gravity`` and ``summary`` (it begins with
    what was checked, e.g. "checked the body bone 'hips'"); the measured
    apparent weight as the animated property ``lw_weight_measured_bw`` (group
    ``lw:check``); ``lw:measured <phase>`` markers when ``add_markers`` is on.
    ``show_overlay`` draws the path with a tick per frame, the arc its timing
    implies and the planned arc (geometry: ``path_overlay.overlay_geometry``).
``go_to_finding(index=0)`` / ``clear_check()``
    Jump to a finding's first frame; remove what the check wrote.
``check_export(snap_keys=False)`` / ``split_clips()``
    Export checks (unit scale, object scale, keys between frames, root axes,
    bone scale keys; optionally snap leapwright's keys to whole frames) and the
    jump split into ``<rig>-leap-start`` / ``-air`` / ``-land`` actions per hop
    (``<rig>-leap<k>-start`` ... for hop k >= 2).

Arm swing (settings ``scene.leapwright_arms``: ``upper_arm_left``/``_right``,
``forearm_left``/``_right`` bone names; ``backswing``, ``upswing`` (elevation at
take-off), ``landing_reach``, ``flight`` (with ``use_flight_pose``), ``forearm_bend`` [rad];
``upswing_start_share``; ``on_conflict`` 'ASK' | 'REPLACE'; ``contact_from``
'AUTO' | 'MARKERS' | 'BODY' | 'FEET'; ``hop``). Elevation is the shoulder-to-hand
line's angle in the character's side view (0 hanging, 90° level forward); the
side view comes from the rest shoulders (left) and the armature's Z (up):

``find_arm_bones()``
    Fills in the arm bones from the bone tree and the rest pose (names and the
    armature's axes are not read: left and right come from the mirror plane, the
    shoulders and the feet).
``place_arm_swing()``
    Keys the upper arms (their own rotation mode; axis-angle is refused) with a
    swing timed to the plan: back in the dip, up through the push to peak at
    take-off, reach at touchdown; chosen forearms are laid in the swing plane,
    bent by ``forearm_bend`` at the bottom of the backswing and straight at
    take-off. Group ``lw:arms`` in the active action; re-running replaces it.
``check_arm_swing()``
    Reads the arms' evaluated motion and the contact (``lw:`` markers, the body
    bone's free fall, or the foot heights) and warns of a swing peaking after
    take-off (frames, implied torso drop) or outside contact. Writes nothing.
``retime_arm_swing()``
    Moves the times of your own keys on the arm bones (every channel; values
    kept; in the active action or your own NLA strip, whose offset, scale and
    repeat are mapped) with a monotone time warp so the upswing fills the push
    and peaks at take-off; first keeps the action as ``lw:before <action>``, which
    ``remove_plan`` / ``remove_arm_swing()`` write back byte for byte.

Bookkeeping for removal is kept in the rig's ``lw_state`` custom property.
"""

import sys
from importlib import import_module

# One package per capability, registered in this order: the plan's panel is the parent of every
# sub-panel, and sub-panels show in the order they register. Each part is a module of the package.
CAPABILITIES = (
    ("plan", ("settings", "operators", "panel")),
    ("export", ("operators", "panel")),
    ("follow_through", ("settings", "operators", "panel")),
    ("body", ("settings", "operators", "panel")),
    ("check", ("settings", "operators", "panel")),
    ("arms", ("settings", "operators", "panel")),
)


def _forget_submodules():
    """Drop this package's submodules from ``sys.modules``.

    Installing a new version over an old one in the same Blender session
    imports this file afresh, but ``import_module`` would hand back the old
    version's submodules still held in ``sys.modules``: forgetting them (when
    this file is imported, and when the add-on is turned off) makes the new
    version run its own code.
    """
    prefix = __name__ + "."
    for name in [n for n in sys.modules if n.startswith(prefix)]:
        del sys.modules[name]


_forget_submodules()


def _parts():
    """The capability modules that hold classes, in registration order (imported here, not at module
    import, so ``leapwright.core`` imports without Blender)."""
    return [import_module(f".{cap}.{part}", __name__) for cap, parts in CAPABILITIES for part in parts]


def all_classes():
    """Every class the add-on registers, in registration order."""
    return tuple(cls for module in _parts() for cls in module.classes)


def register():
    import bpy

    parts = _parts()
    guard = import_module(".blender.write_guard", __name__)  # every operator that writes goes through it
    for module in parts:
        for cls in guard.guard_classes(module.classes):
            bpy.utils.register_class(cls)
    for module in parts:
        if hasattr(module, "register_properties"):
            module.register_properties()


def unregister():
    import bpy

    parts = _parts()
    for module in reversed(parts):
        if hasattr(module, "unregister_properties"):
            module.unregister_properties()
    for module in reversed(parts):
        for cls in reversed(module.classes):
            bpy.utils.unregister_class(cls)
    import_module(".plan.link", __name__).clear_cache()
    _forget_submodules()
