"""``leapwright check FILE.bvh``: a motion capture's path for the checker.

The BVH is read (:mod:`leapwright.core.rig.bvh`), posed by forward kinematics, turned to
metres and Z up, and the path checked is the whole-body centre of mass: the skeleton's
rest pose is read as a body by the same bone-tree reading the add-on uses
(``map_by_topology``) and weighted by a published segment table. A skeleton that does not
read as a body (a creature, a partial rig) falls back to its root joint (the hips), and
the report says so. Units are found from the rest height (a person is 1.0-2.3 m tall) unless
given, and the up axis is Y by BVH convention unless the skeleton stands along Z.
"""

import numpy as np

from leapwright.core.base.errors import InvalidTrajectoryError, LeapwrightError
from leapwright.core.body.mass import mass_model, whole_body_com
from leapwright.core.rig import bvh as core_bvh
from leapwright.core.rig.landmarks import RigData, map_by_topology

FOLLOW_CHOICES = ("auto", "body", "bone")


def _units(height, given, path):
    if given:
        return given, f"units {given} (as given)"
    unit = core_bvh.detect_units(height)
    if unit is None:
        raise InvalidTrajectoryError(
            f"{path}: the skeleton stands {height:.4g} file units tall, which is no person's height in "
            f"metres, centimetres, inches or millimetres; give the units with --bvh-units (m, cm, mm, in)")
    return unit, f"units {unit} (the skeleton stands {height * core_bvh.UNITS[unit]:.2f} m tall)"


def bvh_track(path, units=None, up=None, follow="auto", table="de_leva_male", bone=None):
    """Frames, positions [m, Z up], fps and a ``checked`` dict (``follows``, ``text``, ``note``).

    Parameters
    ----------
    path : str  the BVH file
    units : str or None  one of :data:`core.rig.bvh.UNITS`; None finds them from the rest height
    up : str or None  ``"y"`` or ``"z"``; None: Y (the convention) unless the skeleton stands along Z
    follow : str  ``auto``/``body``: the whole-body COM (``auto`` falls back to the root);
        ``bone``: the joint ``bone`` (default the root)
    """
    try:
        with open(path, encoding="utf-8", errors="replace") as fh:
            text = fh.read()
    except OSError as exc:
        raise InvalidTrajectoryError(f"{path}: cannot read it ({exc.strerror})") from None
    motion = core_bvh.read_bvh(text, path)
    if len(motion.values) < 5:
        raise InvalidTrajectoryError(f"{path}: only {len(motion.values)} frames of motion; a check needs 5 or more")
    heads, tails = core_bvh.rest_points(motion)
    found_up = core_bvh.up_axis(heads, tails)
    axis = up or found_up
    turn = core_bvh.Y_UP_TO_Z_UP if axis == "y" else np.eye(3)
    up_text = f"{axis.upper()} up ({'as given' if up else 'BVH convention' if axis == 'y' else 'the skeleton stands along Z'})"
    h_up, t_up = heads @ turn.T, tails @ turn.T
    pts = np.concatenate([h_up, t_up])
    unit, unit_text = _units(float(np.ptp(pts[:, 2])), units, path)
    scale = core_bvh.UNITS[unit]
    rot, pos = core_bvh.forward_kinematics(motion)
    heads_f = np.einsum("ij,fbj->fbi", turn, pos) * scale
    frames = np.arange(len(motion.values), dtype=float) + 1.0
    note = None
    if follow == "bone":
        name = bone or motion.names[0]
        if name not in motion.names:
            raise InvalidTrajectoryError(f"{path}: no joint {name!r}; joints are {', '.join(motion.names[:20])}")
        j = motion.names.index(name)
        return frames, heads_f[:, j], motion.fps, {
            "follows": "bone", "text": f"checked: joint {name} ({unit_text}, {up_text})", "note": None}
    try:
        rig = RigData(motion.names, motion.parents, h_up * scale, t_up * scale)
        model = mass_model(map_by_topology(rig), table)
    except LeapwrightError as exc:
        if follow == "body":
            raise InvalidTrajectoryError(f"{path}: the skeleton does not read as a body ({exc})") from None
        note = (f"the skeleton does not read as a body ({str(exc).split(';')[0]}); "
                f"its root joint {motion.names[0]} (the hips) is checked instead")
        return frames, heads_f[:, 0], motion.fps, {
            "follows": "bone", "text": f"checked: joint {motion.names[0]} ({unit_text}, {up_text}); {note}",
            "note": note}
    # Tails ride with their joint: the rest offset head -> tail turned by the joint's rotation.
    local_tail = (tails - heads)
    tails_f = pos + np.einsum("fbij,bj->fbi", rot, local_tail)
    tails_f = np.einsum("ij,fbj->fbi", turn, tails_f) * scale
    com = whole_body_com(model, heads_f, tails_f)
    return frames, com, motion.fps, {
        "follows": "body",
        "text": f"checked: the whole-body centre of mass ({table}; {unit_text}, {up_text})", "note": note}
