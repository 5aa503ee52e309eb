"""The arms' IK-FK switch: found on the rig, keyed to FK while a placed swing plays, taken back with it.

A production rig's arm often follows an IK hand control, and its FK controls then move
nothing; the rig's own IK-FK property (a number on a control near the shoulder, named
for it: Rigify puts ``IK_FK`` on ``upper_arm_parent``, 1 = FK; a common practice of
rigs) says which. Find Arm Bones looks for that property on the control nearest each
shoulder, tries it at 1 and then 0 (the pose and the property are put back), and keeps
the value at which the arm's FK controls move the deform arm; Place Arm Swing keys the
property to that value over the swing's frames, with the rig's own value on the frames
just before and after (constant keys), and removal takes those keys back with the swing.
"""

import re

import bpy
import numpy as np

from ..blender.curves import CurveSpec
from ..rig import profile as rig_profile

#: How a switch is shown and kept in the panel: ``bone["property"] = value``.
_TEXT = re.compile(r'^(?P<bone>.+)\["(?P<key>[^"]+)"\] = (?P<value>-?[0-9.]+)$')
#: Values tried, FK first as on Rigify (its documentation: 1 is FK).
_TRIED = (1.0, 0.0)


class SwitchError(Exception):
    """A switch written in the panel does not name a number on the rig; nothing was written."""


def _is_switch(key):
    return re.sub(r"[^a-z]", "", key.lower()) in ("ikfk", "fkik")


def _nearest_switch(rig, point):
    """``(bone, property)`` of the IK-FK number on the bone whose rest head is nearest ``point``."""
    found = [(pb.name, key) for pb in rig.pose.bones for key in pb.keys()
             if _is_switch(key) and isinstance(pb[key], (int, float))]
    if not found:
        return None
    return min(found, key=lambda f: float(np.linalg.norm(np.array(rig.data.bones[f[0]].head_local) - point)))


def as_text(bone, key, value):
    return f'{bone}["{key}"] = {value:g}'


def parse(rig, text):
    """``(bone, property, value)`` of a switch written as ``bone["property"] = value``.

    Raises
    ------
    SwitchError  when the text is not of that form or the rig has no such number.
    """
    match = _TEXT.match(text.strip())
    pb = rig.pose.bones.get(match["bone"]) if match else None
    if pb is None or match["key"] not in pb.keys() or not isinstance(pb[match["key"]], (int, float)):
        raise SwitchError(f"the IK-FK switch '{text}' is not a number on '{rig.name}'; press Find Arm Bones "
                          "again, or clear the switch under Arm Swing")
    return match["bone"], match["key"], float(match["value"])


def fk_arms(rig, rest, marks, sides):
    """The FK controls of arms that follow IK hands, found with the rig's IK-FK switches thrown.

    Parameters
    ----------
    sides : sequence of ``"L"``/``"R"``  the arms that follow an IK hand now

    Returns
    -------
    dict  side -> (upper-arm control, forearm control, switch text) for each arm found
    """
    switches = {}
    for s in sides:
        i = marks.points[f"shoulder.{s}"][0][0]
        near = _nearest_switch(rig, np.asarray(rest.heads[i], float))
        if near is not None:
            switches[s] = near
    out = {}
    for value in _TRIED:
        todo = {s: sw for s, sw in switches.items() if s not in out}
        if not todo:
            break
        old = {sw: rig.pose.bones[sw[0]][sw[1]] for sw in todo.values()}
        try:
            for bone, key in old:
                rig.pose.bones[bone][key] = value
        except (TypeError, AttributeError, RuntimeError):
            return out  # a rig that cannot be changed (linked): its switches are not tried
        try:
            rig.update_tag()
            bpy.context.view_layer.update()
            found = rig_profile.find_profile(rig, rest, marks)
        finally:
            for (bone, key), was in old.items():
                rig.pose.bones[bone][key] = was
            rig.update_tag()
            bpy.context.view_layer.update()
        for s, (bone, key) in todo.items():
            if found.get(f"upper_arm.{s}"):
                out[s] = (found[f"upper_arm.{s}"], found.get(f"forearm.{s}", ""), as_text(bone, key, value))
    return out


def switch_specs(rig, texts, first, last):
    """Constant keys holding each switch at its FK value over frames ``first``-``last``.

    The rig's own value is keyed on the frames just outside, so the arm is as the animator
    set it before and after the swing. ``texts``: the panel's switches ("" skipped).
    """
    specs = []
    for text in texts:
        if not text:
            continue
        bone, key, value = parse(rig, text)
        now = float(rig.pose.bones[bone][key])
        path = 'pose.bones["' + bone.replace("\\", "\\\\").replace('"', '\\"') + f'"]["{key}"]'
        frames = np.array([first - 1.0, first, last, last + 1.0])
        values = np.array([now, value, value, now])
        specs.append(CurveSpec(path, 0, frames, values, np.zeros(4), "CONSTANT"))
    return specs
