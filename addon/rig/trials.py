"""Trial moves of a rig's controls: which control moves which part of the deform skeleton.

Each candidate control (a bone the animator can pose: no constraints; on a rig with
control shapes, only the shaped bones) is moved or turned a little through its own
channels, the rig is evaluated, and what the body's landmarks on the deform skeleton
(:func:`rig.skeleton.read_body`) did says what the control is (the roles of
:data:`ROLES`, described in :mod:`.profile`). The channels are put back exactly.
"""

import numpy as np
from mathutils import Matrix, Vector

ROLES = ("body", "whole", "foot.L", "foot.R", "heel.L", "heel.R", "upper_arm.L", "upper_arm.R",
         "forearm.L", "forearm.R", "hand.L", "hand.R", "legs")
#: Value of the ``legs`` role when the body control lifted off planted feet stretches the deform
#: legs (their IK scales bones), so the heels must be lifted to keep them in reach.
STRETCHY = "stretch"
#: Trial move, as a fraction of the rig's height (design choice: large enough to read
#: above float32 noise, small enough to stay inside IK reach and limits).
TRIAL_MOVE = 0.05
#: Trial turn [rad] (design choice, 20 deg).
TRIAL_TURN = np.radians(20.0)
#: A landmark "follows" a move when it moves by at least this share of it, and "stays"
#: when it moves by less than :data:`STAYS` of it (design choice).
FOLLOWS, STAYS = 0.9, 0.1


def _points(rig, marks):
    """Landmark name -> armature-space point of the evaluated pose (heads, or tails for ``@tail``)."""
    out = {}
    names = marks.bone_names
    for key, pairs in marks.points.items():
        pts = []
        for bone, end in pairs:
            pb = rig.pose.bones[names[bone]]
            pts.append(np.array(pb.tail if end else pb.head))
        out[key] = np.mean(pts, axis=0)
    return out


_CHANNELS = ("location", "rotation_quaternion", "rotation_euler", "rotation_axis_angle", "scale")


class _Trial:
    """Moves one pose bone through its channels, evaluates, and puts the channels back.

    Every trial is computed from the rest-of-the-rig state read once at the start (the
    map from a location change to an armature-space move, and the rotation as it is), so
    a restored bone needs no evaluation before the next trial.
    """

    def __init__(self, rig, marks):
        self.rig, self.marks = rig, marks
        self.layer = None
        for scene in _scenes_of(rig):
            self.layer = scene.view_layers[0]
            break
        rig.update_tag()  # a switch changed from a script is evaluated too
        self.update()
        self.base = _points(rig, marks)

    def update(self):
        if self.layer is not None:
            self.layer.update()

    def location_map(self, pb):
        """3x3 armature-space move of the bone's head per unit change of its location channels."""
        basis = pb.matrix_basis.copy()
        origin = self.rig.convert_space(pose_bone=pb, matrix=basis, from_space="LOCAL",
                                        to_space="POSE").translation
        cols = []
        for i in range(3):
            m = basis.copy()
            m.translation = basis.translation + Vector([1.0 if j == i else 0.0 for j in range(3)])
            moved = self.rig.convert_space(pose_bone=pb, matrix=m, from_space="LOCAL", to_space="POSE").translation
            cols.append(np.array(moved - origin))
        return np.column_stack(cols)

    def moved(self, pb, change):
        """Landmark displacements [BU, armature space] after ``change(pb)`` sets its channels."""
        saved = [tuple(getattr(pb, a)) for a in _CHANNELS]
        try:
            change(pb)
            self.update()
            now = _points(self.rig, self.marks)
        finally:
            for a, v in zip(_CHANNELS, saved):
                setattr(pb, a, v)
        return {k: now[k] - self.base[k] for k in now}


def _shift(delta):
    """A channel change moving the location by ``delta`` (bone channel space)."""
    def change(pb):
        pb.location = Vector(pb.location) + Vector(delta)
    return change


def _turn_x(angle):
    """A channel change turning the bone about its own X axis by ``angle`` [rad], in any rotation mode."""
    def change(pb):
        turn = Matrix.Rotation(angle, 3, "X")
        mode = pb.rotation_mode
        if mode == "QUATERNION":
            pb.rotation_quaternion = (pb.rotation_quaternion.to_matrix() @ turn).to_quaternion()
        elif mode == "AXIS_ANGLE":
            w, x, y, z = pb.rotation_axis_angle
            q = (Matrix.Rotation(w, 3, Vector((x, y, z))) @ turn).to_quaternion()
            axis, ang = q.to_axis_angle()
            pb.rotation_axis_angle = (ang, *axis)
        else:
            pb.rotation_euler = (pb.rotation_euler.to_matrix() @ turn).to_euler(mode, pb.rotation_euler)
    return change


def _turn_z(angle):
    def change(pb):
        turn = Matrix.Rotation(angle, 3, "Z")
        mode = pb.rotation_mode
        if mode == "QUATERNION":
            pb.rotation_quaternion = (pb.rotation_quaternion.to_matrix() @ turn).to_quaternion()
        elif mode != "AXIS_ANGLE":
            pb.rotation_euler = (pb.rotation_euler.to_matrix() @ turn).to_euler(mode, pb.rotation_euler)
    return change


def _scenes_of(rig):
    import bpy
    return [s for s in bpy.data.scenes if rig.name in s.objects]


def candidates(rig):
    """Bones the animator poses: no constraints; only shaped bones when the rig shapes its controls."""
    shaped = any(pb.custom_shape is not None for pb in rig.pose.bones)
    return [pb for pb in rig.pose.bones
            if not pb.constraints and (pb.custom_shape is not None or not shaped)]


def _rise(d, up):
    return float(np.asarray(d) @ up)


#: Pairs of landmarks whose distance a carrying control keeps (no stretch), per role family.
_SPANS = {"upper": (("hip_mid", "neck_base"), ("neck_base", "vertex")),
          "leg": (("hip.{s}", "knee.{s}"), ("knee.{s}", "ankle.{s}")),
          "arm": (("shoulder.{s}", "elbow.{s}"), ("elbow.{s}", "wrist.{s}"))}
#: Largest change of such a distance [share] for a control to count as carrying (design choice:
#: Rigify's IK legs, measured here, give 2 % under a foot raised by 5 % of the height, as its IK
#: lets the chain scale; a tweak control that stretches the shin gives 20 %).
KEPT_LENGTH = 0.05


def _kept(base, d, family, side=""):
    """Whether the trial kept every span of ``family`` (on ``side``) at its rest length."""
    for a, b in _SPANS[family]:
        a, b = a.format(s=side), b.format(s=side)
        before = np.linalg.norm(base[a] - base[b])
        after = np.linalg.norm(base[a] + d[a] - base[b] - d[b])
        if abs(after - before) > KEPT_LENGTH * before:
            return False
    return True


def _classify_move(base, d, step, up):
    """Roles a vertical trial move of ``step`` [BU] gives, from landmark displacements ``d``."""
    def follows(k):
        return k in d and np.linalg.norm(d[k] - step * up) <= (1 - FOLLOWS) * step

    def stays(k):
        return k in d and np.linalg.norm(d[k]) <= STAYS * step
    upper = all(follows(k) for k in ("neck_base", "vertex", "hip_mid", "shoulder_mid")) and \
        _kept(base, d, "upper")
    feet = [follows(f"ankle.{s}") for s in "LR"]
    roles = []
    if upper:
        roles.append("whole" if all(feet) else "body")
    for s in "LR":
        if follows(f"ankle.{s}") and stays("hip_mid") and _kept(base, d, "leg", s):
            roles.append(f"foot.{s}")
        if follows(f"wrist.{s}") and stays(f"shoulder.{s}") and stays("hip_mid") and _kept(base, d, "arm", s):
            roles.append(f"hand.{s}")
    return roles


def _classify_turn(base, d, scale):
    """Arm roles a trial turn gives: the elbow (or only the wrist) swings about a still shoulder,
    the arm keeping its lengths."""
    roles = []
    for s in "LR":
        if np.linalg.norm(d[f"shoulder.{s}"]) <= STAYS * scale and np.linalg.norm(d["hip_mid"]) <= STAYS * scale \
                and _kept(base, d, "arm", s):
            if np.linalg.norm(d[f"elbow.{s}"]) > STAYS * scale:
                roles.append(f"upper_arm.{s}")
            elif np.linalg.norm(d[f"wrist.{s}"]) > STAYS * scale:
                roles.append(f"forearm.{s}")
    return roles


def _heel_sign(trial, pb, side, scale, up):
    """+1 or -1 when turning ``pb`` about its X axis lifts the ankle with the ball kept, else 0."""
    for sign in (1.0, -1.0):
        d = trial.moved(pb, _turn_x(sign * TRIAL_TURN))
        lift = _rise(d[f"ankle.{side}"], up)
        if lift > STAYS * scale and np.linalg.norm(d[f"ball.{side}"]) < 0.5 * lift \
                and np.linalg.norm(d["hip_mid"]) <= STAYS * scale:
            return int(sign)
    return 0


def _topmost(rig, names):
    """The names that no other name in the list is an ancestor of (the control above the rest)."""
    bones = rig.pose.bones
    keep = []
    for n in names:
        above = {p.name for p in bones[n].parent_recursive}
        if not above & set(names):
            keep.append(n)
    return keep


def _height(rest):
    z = np.concatenate([rest.heads[:, 2], rest.tails[:, 2]])
    return float(z.max() - z.min())


def find_profile(rig, rest, marks):
    """``{role: bone}`` of the rig found by trial moves (see the module notes); the pose is kept.

    Parameters
    ----------
    rig : bpy.types.Object  the armature
    rest : core.rig.landmarks.RigData  the layout ``marks`` was read on
    marks : core.rig.landmarks.Landmarks  the body's landmarks on the deform skeleton

    Returns
    -------
    dict of str -> str  roles found (heel roles as ``bone@+X`` / ``bone@-X``)
    """
    up = np.array((0.0, 0.0, 1.0))
    step = TRIAL_MOVE * _height(rest)
    trial = _Trial(rig, marks)
    found = {r: [] for r in ROLES}
    stretchy = set()
    pool = candidates(rig)
    maps = {pb.name: trial.location_map(pb) for pb in pool if not all(pb.lock_location)}
    for pb in pool:
        m = maps.get(pb.name)
        if m is not None and abs(np.linalg.det(m)) > 1e-12:
            delta = np.linalg.solve(m, up * step)  # armature space, as the landmarks are read
            d = trial.moved(pb, _shift(delta))
            for role in _classify_move(trial.base, d, step, up):
                found[role].append(pb.name)
                if role == "body" and not all(_kept(trial.base, d, "leg", side) for side in "LR"):
                    stretchy.add(pb.name)
        if not all(pb.lock_rotation):
            for turn in (_turn_x, _turn_z):
                for role in _classify_turn(trial.base, trial.moved(pb, turn(TRIAL_TURN)), step):
                    if pb.name not in found[role]:
                        found[role].append(pb.name)
    profile = {}
    for role in ROLES:
        tops = _topmost(rig, found[role])
        if tops:
            profile[role] = tops[0]
    if profile.get("body") in stretchy:
        profile["legs"] = STRETCHY
    if "body" not in profile and found["whole"]:
        # no control carries the body without the feet (no IK legs): the deepest that carries it all
        profile["body"] = max(found["whole"], key=lambda n: len(rig.pose.bones[n].parent_recursive))
    for side in "LR":
        foot = profile.get(f"foot.{side}")
        if foot is None:
            continue
        below = [pb for pb in pool if foot in {p.name for p in pb.parent_recursive}
                 and not all(pb.lock_rotation)]
        for pb in below:
            sign = _heel_sign(trial, pb, side, step, up)
            if sign:
                profile[f"heel.{side}"] = f"{pb.name}@{'+' if sign > 0 else '-'}X"
                break
    trial.update()
    return profile


def _describe_move(base, d, step):
    """What a trial move did to the upper body, in words."""
    spine = [np.linalg.norm(base[a] - base[b]) for a, b in _SPANS["upper"]]
    moved = [np.linalg.norm(base[a] + d[a] - base[b] - d[b]) for a, b in _SPANS["upper"]]
    head = float(d["vertex"][2]) / step
    return (f"moving it up lifts the head {100 * head:.0f} % as much and makes hips-to-head "
            f"{moved[0] + moved[1]:.2f} long instead of {spine[0] + spine[1]:.2f}")


def carries_upper_body(rig, rest, marks, bone):
    """``(carries, what)``: whether moving ``bone`` up carries the body (or the whole rig),
    and what the move did, in words."""
    pb = rig.pose.bones[bone]
    up = np.array((0.0, 0.0, 1.0))
    step = TRIAL_MOVE * _height(rest)
    trial = _Trial(rig, marks)
    m = trial.location_map(pb) if not all(pb.lock_location) else None
    if m is None or abs(np.linalg.det(m)) < 1e-12:
        return False, "it cannot be moved (its location is locked)"
    d = trial.moved(pb, _shift(np.linalg.solve(m, up * step)))
    trial.update()
    roles = _classify_move(trial.base, d, step, up)
    return ("body" in roles or "whole" in roles), _describe_move(trial.base, d, step)

