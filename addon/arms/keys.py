"""A placed arm swing as curves: the arms, the character's facing, and every key computed first.

Input: the panel's arm bones, the rig's rest pose and the core's plan. Output:
:class:`blocking_pass.CurveSpec` records on each arm bone's own rotation channels
(quaternion, or Euler in the bone's order), plus what the panel reports. Nothing here
writes Blender data, so a refused run changes nothing.

The swing plane is the character's sagittal plane found from the rest pose, in
armature space: the character's left is the line from the right shoulder to the left
one (the heads of the two upper-arm bones, or of the bones the bone tree maps to the
shoulders), up is the armature's Z made square to it (Blender's armature convention,
as :mod:`core.rig.landmarks` reads rigs), and forward is left x up. So a rig turned in
the world, or built facing another way, swings towards its own front. With a forearm
both pieces are laid in that plane and the elbow bends on the swing's timing
(:mod:`core.arms.elbow`), the shoulder-to-hand line keeping the planned elevation.
"""

from dataclasses import dataclass
import math

import numpy as np
from mathutils import Quaternion

from ..body import com as body_com
from ..blender.curves import CurveSpec, Timeline
from ..core.arms.swing import SwingAmplitudes, place_swing
from ..core.arms.elbow import BentArmSwing, elbow_bend_keys, elbow_rotations
from ..core.base.errors import LeapwrightError
from ..rig import profile as rig_profile
from . import switch as arm_switch
from ..core.arms.plane import bone_local_rotations, quaternion_keys, swing_plane, swing_rotations

CAPABILITY = "arms"
SIDES = ("left", "right")
_ARMATURE_UP = np.array([0.0, 0.0, 1.0])
#: Half step of the central differences that give Euler slopes [s] (well below a frame).
_EULER_STEP = 1e-4
#: Largest change of the elbow bend between two forearm keys [rad] (so the component-wise
#: Bezier between them stays within a fraction of a degree of the exact bend).
_BEND_STEP = math.radians(5.0)


class SwingError(Exception):
    """The swing cannot be placed or re-timed as set; the message says how to fix it; nothing was written."""


@dataclass(frozen=True)
class Arm:
    """One arm as chosen: bone names and rest points [BU, armature space]."""

    side: str
    upper: str
    forearm: str
    shoulder: np.ndarray
    hand: np.ndarray

    @property
    def end_bone(self):
        """The bone whose tail is the hand end of the arm."""
        return self.forearm or self.upper

    @property
    def bones(self):
        return tuple(b for b in (self.upper, self.forearm) if b)


def bone_path(name):
    """RNA path prefix of a pose bone's channels on the rig object."""
    return 'pose.bones["' + name.replace("\\", "\\\\").replace('"', '\\"') + '"]'


def suggested_arms(rig, switches=None):
    """``{'left': (upper arm, forearm), 'right': (...)}``: the bones to key to swing each arm.

    The arms are found on the deform skeleton from the bone tree (names never read; sides
    from the rest pose, :func:`rig.skeleton.read_body`), then the controls that turn them
    from the rig's profile (:mod:`rig.profile`): on a rig of controls those are keyed,
    never the deform bones a constraint sets. An arm that follows an IK hand is given its
    FK controls when the rig's IK-FK switch turns it over (:func:`switch.fk_arms`); the
    switch, as text, goes into ``switches[side]`` (for Place Arm Swing to key).

    Raises
    ------
    SwingError  when the tree does not read as a humanoid, or an arm follows an IK hand
        and no switch turns it over (no control turns it); the message says what to do.
    """
    name = getattr(rig, "name", rig)
    try:
        rest, marks = body_com.read_body(rig)
    except body_com.BodyError as exc:
        raise SwingError(f"no arms found from the bone tree of '{name}' ({exc}); "
                         "pick the upper-arm bones by hand") from None
    names = rest.names
    out, in_ik = {}, {}
    for side, s in zip(SIDES, "LR"):
        upper, fore = (names[marks.points[f"{j}.{s}"][0][0]] for j in ("shoulder", "elbow"))
        if not (rig.pose.bones[upper].constraints or rig.pose.bones[fore].constraints):
            out[side] = (upper, fore)  # the arm's own bones are posed directly
            continue
        profile = rig_profile.known(rig)
        if not profile.get(f"upper_arm.{s}"):
            profile = rig_profile.refind(rig)  # the arm may have been switched to FK since
        if profile.get(f"upper_arm.{s}"):
            out[side] = (profile[f"upper_arm.{s}"], profile.get(f"forearm.{s}", ""))
        else:
            in_ik[s] = (side, upper, profile.get(f"hand.{s}"))
    thrown = arm_switch.fk_arms(rig, rest, marks, tuple(in_ik)) if in_ik else {}
    for s, (side, upper, hand) in in_ik.items():
        if s in thrown:
            upper_fk, fore_fk, text = thrown[s]
            out[side] = (upper_fk, fore_fk)
            if switches is not None:
                switches[side] = text
            continue
        how = (f"it follows its IK hand control '{hand}'" if hand else
               f"no control found turns it (its bone '{upper}' is set by a constraint)")
        raise SwingError(f"the {side} arm cannot be swung by turning bones: {how}, and no IK-FK switch "
                         f"leapwright found turns it over to FK; switch the {side} arm to FK in the rig's own "
                         "settings (its IK-FK switch), then press Find Arm Bones again")
    return out


def chosen_arms(rig, settings):
    """The arms named in ``scene.leapwright_arms``, checked against the rig.

    Raises
    ------
    SwingError  no armature, no arm chosen, a missing bone, a forearm without its upper
        arm, a bone chosen twice, or a forearm that is not below its upper arm.
    """
    if rig is None:
        raise SwingError("no rig chosen: pick the character's armature under Character")
    if rig.type != "ARMATURE":
        raise SwingError(f"'{rig.name}' is a {rig.type.lower()}, not an armature, so it has no arm bones; "
                         "pick the character's armature under Character")
    named = {side: (getattr(settings, f"upper_arm_{side}"), getattr(settings, f"forearm_{side}")) for side in SIDES}
    if not any(u for u, _ in named.values()):
        raise SwingError("no upper-arm bone chosen: name them under Arm Swing (or press Find Arm Bones)")
    bones = rig.data.bones
    seen, out = set(), []
    for side, (upper, fore) in named.items():
        if fore and not upper:
            raise SwingError(f"the {side} forearm '{fore}' is chosen without its upper arm; name the {side} "
                             "upper-arm bone too, or clear the forearm")
        for name in (upper, fore):
            if name and bones.get(name) is None:
                raise SwingError(f"armature '{rig.name}' has no bone named '{name}' (the {side} arm); "
                                 "check the spelling under Arm Swing")
            if name and name in seen:
                raise SwingError(f"bone '{name}' is chosen twice; each arm needs its own bones")
            seen.add(name)
        if not upper:
            continue
        if fore and bones[upper] not in bones[fore].parent_recursive:
            raise SwingError(f"forearm '{fore}' does not hang from upper arm '{upper}'; pick the {side} arm's "
                             "forearm (a child of the upper arm)")
        end = bones[fore or upper]
        out.append(Arm(side, upper, fore, np.array(bones[upper].head_local), np.array(end.tail_local)))
    return out


def rest_facing(rig, arms):
    """``(forward, up)`` unit vectors of the character in armature space, from its rest shoulders.

    Raises
    ------
    SwingError  when the shoulders cannot be found or sit one above the other.
    """
    sides = {a.side: a.shoulder for a in arms}
    if len(sides) < 2:
        try:
            found = suggested_arms(rig)
        except SwingError as exc:
            raise SwingError(f"with one arm chosen the other shoulder comes from the bone tree, but {exc}; "
                             "name both upper arms (their heads fix which way the character faces)") from None
        for side, (upper, _) in found.items():
            sides.setdefault(side, np.array(rig.data.bones[upper].head_local))
    left = sides["left"] - sides["right"]
    up = _ARMATURE_UP - (left @ _ARMATURE_UP) / max(left @ left, 1e-300) * left
    if np.linalg.norm(left) < 1e-9 or np.linalg.norm(up) < 0.5:
        raise SwingError(f"the shoulders of '{rig.name}' sit at {np.round(sides['left'], 3).tolist()} (left) and "
                         f"{np.round(sides['right'], 3).tolist()} (right): they do not span the character's width; "
                         "check which bones are left and right")
    left, up = left / np.linalg.norm(left), up / np.linalg.norm(up)
    return np.cross(left, up), up


def amplitudes_from(settings):
    """:class:`core.arms.swing.SwingAmplitudes` from the panel (radians -> degrees)."""
    try:
        return SwingAmplitudes(backswing_deg=round(math.degrees(settings.backswing), 4),
                               upswing_deg=round(math.degrees(settings.upswing), 4),
                               landing_reach_deg=round(math.degrees(settings.landing_reach), 4),
                               flight_deg=round(math.degrees(settings.flight), 4) if settings.use_flight_pose else None,
                               upswing_start_share=round(float(settings.upswing_start_share), 6))
    except LeapwrightError as exc:
        raise SwingError(str(exc)) from None


def _rotation_channel(rig, bone):
    mode = rig.pose.bones[bone].rotation_mode
    if mode == "AXIS_ANGLE":
        raise SwingError(f"bone '{bone}' uses axis-angle rotation, whose keys do not blend into a swing; "
                         "set its rotation mode to quaternion or Euler (Bone properties > Transform)")
    return mode, bone_path(bone) + (".rotation_quaternion" if mode == "QUATERNION" else ".rotation_euler")


def _euler_curves(path, mode, timeline, t, q_of):
    """Euler keys at ``t`` [s] of the rotations ``q_of(t)`` (n, 4), continuous from key to key."""
    prev, values, slopes = None, [], []
    for ti in t:
        q = q_of(np.array([ti - _EULER_STEP, ti, ti + _EULER_STEP]))
        e0 = Quaternion(q[1]).to_euler(mode, prev) if prev is not None else Quaternion(q[1]).to_euler(mode)
        lo, hi = Quaternion(q[0]).to_euler(mode, e0), Quaternion(q[2]).to_euler(mode, e0)
        values.append(tuple(e0))
        slopes.append((np.array(hi) - np.array(lo)) / (2.0 * _EULER_STEP))
        prev = e0
    values, slopes = np.array(values), np.array(slopes) / timeline.fps
    return [CurveSpec(path, i, timeline.frames(t), values[:, i], slopes[:, i], "BEZIER") for i in range(3)]


def _upper_arm_curves(rig, arm, forward, up, placed, timeline, end):
    """The upper arm's rotation curves: its rest line from the shoulder to ``end`` swung to ``placed``."""
    plane = swing_plane(forward, up, arm.shoulder, end)
    rest = np.array(rig.data.bones[arm.upper].matrix_local.to_3x3())
    mode, path = _rotation_channel(rig, arm.upper)
    quat_keys = quaternion_keys(placed, plane, rest)
    if mode == "QUATERNION":
        out = []
        for i, k in enumerate(quat_keys):
            slope = (k.right_handles[:, 1] - k.values) / (k.right_handles[:, 0] - k.times) / timeline.fps
            out.append(CurveSpec(path, i, timeline.frames(k.times), np.array(k.values), slope, "BEZIER"))
        return out, plane

    def q_of(t):
        return bone_local_rotations(swing_rotations(plane, placed.elevation(t)), rest)

    return _euler_curves(path, mode, timeline, quat_keys[0].times, q_of), plane


def _bend_times(bend):
    """The bend's key times [s] with even subdivisions, so no span bends more than ``_BEND_STEP``."""
    times = [bend.times[:1]]
    for t0, t1, v0, v1 in zip(bend.times[:-1], bend.times[1:], bend.values[:-1], bend.values[1:]):
        times.append(np.linspace(t0, t1, max(1, int(math.ceil(abs(v1 - v0) / _BEND_STEP))) + 1)[1:])
    return np.concatenate(times)


def _forearm_curves(rig, arm, planes, bent, timeline):
    """The forearm laid in the swing plane, bent on the swing's timing (:mod:`core.arms.elbow`)."""
    mode, path = _rotation_channel(rig, arm.forearm)
    rest = np.array(rig.data.bones[arm.forearm].matrix_local.to_3x3())

    def q_of(t):
        return bone_local_rotations(elbow_rotations(*planes, bent.bend_at(t)), rest)

    t = _bend_times(bent.bend)
    if mode != "QUATERNION":
        return _euler_curves(path, mode, timeline, t, q_of)
    values = q_of(t)
    slopes = (q_of(t + _EULER_STEP) - q_of(t - _EULER_STEP)) / (2.0 * _EULER_STEP) / timeline.fps
    return [CurveSpec(path, i, timeline.frames(t), values[:, i], slopes[:, i], "BEZIER") for i in range(4)]


def _elbow(rig, arm):
    return np.array(rig.data.bones[arm.forearm].head_local)


def _bent_swing(rig, arm, placed, amplitude_deg):
    """:class:`core.arms.elbow.BentArmSwing` of an arm with a forearm (straight for 0 deg)."""
    elbow = _elbow(rig, arm)
    return BentArmSwing(placed, elbow_bend_keys(placed, amplitude_deg), float(np.linalg.norm(elbow - arm.shoulder)),
                        float(np.linalg.norm(arm.hand - elbow)))


@dataclass(frozen=True, eq=False)
class PlacedWork:
    """Everything the place operator writes, computed before anything changes.

    specs : list of CurveSpec  rotation curves of every chosen bone
    placed : core.arms.swing.PlacedSwing  the elevation curve (plan time [s])
    planes : dict side -> core.arms.plane.SwingPlane  of the upper arm (shoulder to elbow, or to hand)
    forward, up : (3,) armature-space facing
    timeline : blocking_pass.Timeline
    """

    arms: list
    specs: list
    placed: object
    planes: dict
    forward: np.ndarray
    up: np.ndarray
    timeline: Timeline


def place(rig, settings, plan, start_frame, fps):
    """The swing's curves for ``plan`` on the chosen arms; raises :class:`SwingError`, writes nothing."""
    arms = chosen_arms(rig, settings)
    forward, up = rest_facing(rig, arms)
    amplitudes = amplitudes_from(settings)
    amplitudes_bend = round(math.degrees(settings.forearm_bend), 4)
    timeline = Timeline(float(start_frame), float(fps))
    try:
        placed = place_swing(plan, amplitudes)
        specs, planes = [], {}
        for arm in arms:
            if not arm.forearm:
                curves, planes[arm.side] = _upper_arm_curves(rig, arm, forward, up, placed, timeline, arm.hand)
                specs += curves
                continue
            bent = _bent_swing(rig, arm, placed, amplitudes_bend)
            elbow = _elbow(rig, arm)
            curves, planes[arm.side] = _upper_arm_curves(rig, arm, forward, up, bent, timeline, elbow)
            forearm_plane = swing_plane(forward, up, elbow, arm.hand)
            specs += curves + _forearm_curves(rig, arm, (planes[arm.side], forearm_plane), bent, timeline)
    except LeapwrightError as exc:
        raise SwingError(str(exc)) from None
    return PlacedWork(arms, specs, placed, planes, forward, up, timeline)
