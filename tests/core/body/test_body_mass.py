"""Bones to segments and the whole-body COM, on a mannequin-like skeleton built here.

The mannequin (invented data, metres, Z up, facing -Y, left on +X as in Blender's front
view, proportions roughly those of a 1.78 m adult) has a ground root bone, a collar bone,
two fingers per hand, a toe, and one loose control bone outside the main tree, as
production rigs do. test_flight_correction.py loads it from this file.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from scipy.spatial.transform import Rotation

from leapwright.core.body import mass as bm
from leapwright.core.base.errors import InvalidGoalError, InvalidTrajectoryError, LeapwrightError

# ---- the mannequin -------------------------------------------------------------------
_BONES = [  # name, parent, head, tail
    ("root", None, (0, 0, 0), (0, 0.3, 0)),
    ("hips", "root", (0, 0, 0.95), (0, 0, 1.05)),
    ("spine", "hips", (0, 0, 1.05), (0, 0, 1.25)),
    ("chest", "spine", (0, 0, 1.25), (0, 0, 1.45)),
    ("neck", "chest", (0, 0, 1.45), (0, 0, 1.55)),
    ("head", "neck", (0, 0, 1.55), (0, 0, 1.78)),
]
for s, x in (("L", 1.0), ("R", -1.0)):
    _BONES += [
        (f"clavicle.{s}", "chest", (0.02 * x, 0, 1.42), (0.18 * x, 0, 1.42)),
        (f"upper_arm.{s}", f"clavicle.{s}", (0.18 * x, 0, 1.42), (0.48 * x, 0, 1.42)),
        (f"forearm.{s}", f"upper_arm.{s}", (0.48 * x, 0, 1.42), (0.73 * x, 0, 1.42)),
        (f"hand.{s}", f"forearm.{s}", (0.73 * x, 0, 1.42), (0.83 * x, 0, 1.42)),
        (f"finger_a1.{s}", f"hand.{s}", (0.83 * x, -0.02, 1.42), (0.875 * x, -0.02, 1.42)),
        (f"finger_a2.{s}", f"finger_a1.{s}", (0.875 * x, -0.02, 1.42), (0.92 * x, -0.02, 1.42)),
        (f"finger_b1.{s}", f"hand.{s}", (0.83 * x, 0.02, 1.42), (0.87 * x, 0.02, 1.42)),
        (f"finger_b2.{s}", f"finger_b1.{s}", (0.87 * x, 0.02, 1.42), (0.90 * x, 0.02, 1.42)),
        (f"thigh.{s}", "hips", (0.09 * x, 0, 0.93), (0.09 * x, 0, 0.50)),
        (f"shin.{s}", f"thigh.{s}", (0.09 * x, 0, 0.50), (0.09 * x, 0, 0.08)),
        (f"foot.{s}", f"shin.{s}", (0.09 * x, 0, 0.08), (0.09 * x, -0.14, 0.02)),
        (f"toe.{s}", f"foot.{s}", (0.09 * x, -0.14, 0.02), (0.09 * x, -0.20, 0.0)),
    ]
_BONES.append(("foot_control.L", None, (0.09, 0.1, 0.08), (0.09, 0.2, 0.08)))

NAMES = tuple(b[0] for b in _BONES)
PARENTS = tuple(NAMES.index(b[1]) if b[1] else -1 for b in _BONES)
HEADS = np.array([b[2] for b in _BONES], float)
TAILS = np.array([b[3] for b in _BONES], float)
#: Where each landmark is on this mannequin, written out by hand.
LANDMARKS_BY_HAND = {
    "vertex": "head@tail", "skull_base": "head", "neck_base": "neck",
    "hip_mid": "thigh.L+thigh.R", "shoulder_mid": "upper_arm.L+upper_arm.R",
    **{k: v for s in "LR" for k, v in {
        f"shoulder.{s}": f"upper_arm.{s}", f"elbow.{s}": f"forearm.{s}", f"wrist.{s}": f"hand.{s}",
        f"knuckles.{s}": f"hand.{s}@tail", f"hip.{s}": f"thigh.{s}", f"knee.{s}": f"shin.{s}",
        f"ankle.{s}": f"foot.{s}", f"ball.{s}": f"foot.{s}@tail", f"toe_tip.{s}": f"toe.{s}@tail"}.items()},
}


def arm_bones(side):
    """Indices of the bones that turn with the upper arm of one side."""
    return [i for i, n in enumerate(NAMES) if n.endswith("." + side) and
            n.split(".")[0] in ("upper_arm", "forearm", "hand", "finger_a1", "finger_a2", "finger_b1", "finger_b2")]


def pose(root, arm_angle):
    """Posed heads and tails (n_frames, n_bones, 3): the whole body moved by ``root``
    (n_frames, 3) [m], each arm turned about the front-back axis through its shoulder by
    ``arm_angle`` (n_frames,) [rad] from the T pose (positive raises it)."""
    root = np.asarray(root, float)
    ang = np.asarray(arm_angle, float)
    heads = np.repeat(HEADS[None], len(root), axis=0)
    tails = np.repeat(TAILS[None], len(root), axis=0)
    for side, sign in (("L", 1.0), ("R", -1.0)):
        idx = arm_bones(side)
        pivot = HEADS[NAMES.index(f"upper_arm.{side}")]
        c, s = np.cos(ang)[:, None], np.sin(ang)[:, None] * sign
        for arr in (heads, tails):
            rel = arr[:, idx] - pivot
            x, z = rel[..., 0].copy(), rel[..., 2].copy()
            arr[:, idx, 0] = pivot[0] + c * x - s * z
            arr[:, idx, 2] = pivot[2] + s * x + c * z
    return heads + root[:, None], tails + root[:, None]


def mannequin():
    return bm.RigData(NAMES, PARENTS, HEADS, TAILS)


# ---- mapping ---------------------------------------------------------------------------

def test_topology_finds_the_landmarks_written_by_hand():
    # The mapper must find the joints a person reads off the skeleton (common practice:
    # shoulder at the upper-arm head past the collar bone, hand where the fingers fan out).
    auto = bm.map_by_topology(mannequin()).as_text()
    by_hand = bm.map_by_hand(mannequin(), LANDMARKS_BY_HAND).as_text()
    assert auto == by_hand


def test_renamed_and_shuffled_bones_map_the_same():
    rng = np.random.default_rng(5)
    order = rng.permutation(len(NAMES))
    new_names = {n: "b" + "".join(rng.choice(list("qwxz0123"), 8)) for n in NAMES}
    inverse = np.argsort(order)
    rig = bm.RigData([new_names[NAMES[i]] for i in order],
                     [-1 if PARENTS[i] < 0 else int(inverse[PARENTS[i]]) for i in order],
                     HEADS[order], TAILS[order])
    back = {v: k for k, v in new_names.items()}
    renamed = {k: "+".join(back[p.split("@")[0]] + "@" + p.split("@")[1] for p in v.split("+"))
               for k, v in bm.map_by_topology(rig).as_text().items()}
    assert renamed == bm.map_by_topology(mannequin()).as_text()
    # Same body, same COM (a pose with the arms turned, bones in the shuffled order).
    heads, tails = pose(np.zeros((3, 3)), np.array([-0.5, 0.2, 1.0]))
    com = bm.whole_body_com(bm.mass_model(bm.map_by_topology(mannequin())), heads, tails)
    com_shuffled = bm.whole_body_com(bm.mass_model(bm.map_by_topology(rig)), heads[:, order], tails[:, order])
    np.testing.assert_allclose(com_shuffled, com, atol=1e-12)


def _chain_rig(n=6):
    heads = np.array([(0, 0, 0.3 * i) for i in range(n)], float)
    return bm.RigData([f"seg{i}" for i in range(n)], [-1] + list(range(n - 1)), heads, heads + (0, 0, 0.3))


def _rig_from(bones, up=(0, 0, 1), left=(1, 0, 0)):
    names = [b[0] for b in bones]
    return bm.RigData(names, [names.index(b[1]) if b[1] else -1 for b in bones],
                      [b[2] for b in bones], [b[3] for b in bones], up, left)


def _split(bones, names):
    """Twist bones: each named bone cut in two at its middle, its children moved to the second half."""
    out = []
    for name, parent, head, tail in bones:
        parent = parent + ".001" if parent in names else parent
        if name in names:
            mid = tuple(0.5 * (np.array(head) + tail))
            out += [(name, parent, head, mid), (name + ".001", name, mid, tail)]
        else:
            out.append((name, parent, head, tail))
    return out


def _a_pose(bones):
    heads, tails = pose(np.zeros((1, 3)), np.array([-math.pi / 4]))
    return [(b[0], b[1], tuple(heads[0, i]), tuple(tails[0, i])) for i, b in enumerate(bones)]


def _turned(bones, rot):
    return [(b[0], b[1], tuple(rot @ b[2]), tuple(rot @ b[3])) for b in bones]


_EXPECTED_L = {"shoulder.L": "upper_arm.L@head", "elbow.L": "forearm.L@head", "wrist.L": "hand.L@head",
               "hip.L": "thigh.L@head", "knee.L": "shin.L@head", "ankle.L": "foot.L@head",
               "vertex": "head@tail", "neck_base": "neck@head"}
_TURN = Rotation.from_euler("xyz", [30, -50, 110], degrees=True).as_matrix()


@pytest.mark.parametrize("variant", ["A pose", "twist bones", "no collar bones or fingers", "turned space",
                                     "end bones"])
def test_common_rig_layouts_map_to_the_same_joints(variant):
    # Rig layouts seen in production (common practice): arms at 45 degrees, upper arm /
    # forearm / thigh / shin split for twist, no collar bone and mitten hands, other axes.
    bones = list(_BONES)
    kw = {}
    if variant == "A pose":
        bones = _a_pose(bones)
    elif variant == "twist bones":
        bones = _split(bones, {f"{n}.{s}" for n in ("upper_arm", "forearm", "thigh", "shin") for s in "LR"})
    elif variant == "no collar bones or fingers":
        bones = [(n, "chest" if n.startswith("upper_arm") else p, h, t) for n, p, h, t in bones
                 if not n.startswith(("clavicle", "finger"))]
    elif variant == "end bones":  # short leaf bones past the skull and the toes, as exporters add
        bones = bones + [("head_end", "head", (0, 0, 1.78), (0, 0, 1.83))] + [
            (f"toe_end.{s}", f"toe.{s}", (0.09 * x, -0.20, 0.0), (0.09 * x, -0.24, 0.0)) for s, x in (("L", 1), ("R", -1))]
    else:
        bones = _turned(bones, _TURN)
        kw = {"up": _TURN @ (0, 0, 1), "left": _TURN @ (1, 0, 0)}
    marks = bm.map_by_topology(_rig_from(bones, **kw)).as_text()
    assert {k: marks[k] for k in _EXPECTED_L} == _EXPECTED_L
    assert marks["shoulder.R"] == "upper_arm.R@head" and marks["knee.R"] == "shin.R@head"


def test_unreadable_topology_says_how_to_map_by_hand():
    # A snake (one chain of bones) has no arms or legs to find.
    # how to map it, in the panel's words (issue: no Python API names in what a panel user reads)
    with pytest.raises(LeapwrightError, match="map the bones by hand: in Body in the Air, Edit Bone Map") as err:
        bm.map_by_topology(_chain_rig())
    assert "give each bone a mass for a creature" in str(err.value)
    # A humanoid without its right leg cannot be read either.
    keep = [i for i, n in enumerate(NAMES) if not n.endswith(".R") or "arm" in n or "hand" in n
            or "finger" in n or "clavicle" in n or "forearm" in n]
    keep = [i for i in keep if NAMES[i] not in ("thigh.R", "shin.R", "foot.R", "toe.R")]
    remap = {old: new for new, old in enumerate(keep)}
    rig = bm.RigData([NAMES[i] for i in keep], [remap.get(PARENTS[i], -1) for i in keep],
                     HEADS[keep], TAILS[keep])
    with pytest.raises(LeapwrightError, match="map the bones by hand"):
        bm.map_by_topology(rig)


def test_map_by_hand_rejects_unknown_names_with_the_choices():
    with pytest.raises(InvalidGoalError, match="no bone 'tibia'"):
        bm.map_by_hand(mannequin(), {"knee.L": "tibia"})
    with pytest.raises(InvalidGoalError, match="shoulder.L"):
        bm.map_by_hand(mannequin(), {"shoulder": "upper_arm.L"})


# ---- whole-body COM ----------------------------------------------------------------------

def _rest_com_by_hand():
    # de Leva 1996 male (shared/reference-values.md), each segment COM at its fraction from
    # the published first landmark, on the mannequin's own joint positions; x and y are 0
    # by symmetry except the feet (toe tips at y = -0.20).
    z = (0.0694 * (1.78 + 0.5976 * (1.55 - 1.78)) + 0.4346 * (1.45 + 0.5138 * (0.93 - 1.45))
         + 2 * (0.0271 * 1.42 + 0.0162 * 1.42 + 0.0061 * 1.42 + 0.1416 * (0.93 - 0.4095 * 0.43)
                + 0.0433 * (0.50 - 0.4395 * 0.42) + 0.0137 * (0.08 - 0.4415 * 0.08)))
    y = 2 * 0.0137 * 0.4415 * -0.20
    return np.array([0.0, y, z])


def test_standing_com_lands_where_the_table_says():
    model = bm.mass_model(bm.map_by_topology(mannequin()), "de_leva_male")
    com = bm.whole_body_com(model, HEADS[None], TAILS[None])
    np.testing.assert_allclose(com[0], _rest_com_by_hand(), atol=1e-12)
    # Arm segments by hand: upper arm from the shoulder (x = 0.18) at 0.5772 of 0.30 m
    # (de Leva 1996), left side.
    seg = bm.segment_coms(model, HEADS[None], TAILS[None])[0]
    assert math.isclose(seg[model.segment_names.index("upper_arm.L"), 0], 0.18 + 0.5772 * 0.30, abs_tol=1e-12)
    assert math.isclose(seg[model.segment_names.index("upper_arm.R"), 0], -(0.18 + 0.5772 * 0.30), abs_tol=1e-12)


def test_dempster_trunk_sits_halfway_between_hips_and_shoulders():
    # Winter 2009 Table 4.1 (Dempster): trunk COM 0.50 from greater trochanter to
    # glenohumeral joint (COM position from memory); arms at 0.028 + 0.016 + 0.006.
    model = bm.mass_model(bm.map_by_topology(mannequin()), "dempster_winter")
    seg = bm.segment_coms(model, HEADS[None], TAILS[None])[0]
    assert math.isclose(seg[model.segment_names.index("trunk"), 2], 0.5 * (0.93 + 1.42), abs_tol=1e-12)
    assert math.isclose(model.group_fraction("arms"), 2 * 0.050, abs_tol=1e-9)


def test_mirrored_pose_keeps_the_com_on_the_midline():
    # Left and right segments use the same table rows: a left-right symmetric pose has
    # its COM on the symmetry plane x = 0 (symmetry).
    model = bm.mass_model(bm.map_by_topology(mannequin()))
    heads, tails = pose(np.zeros((4, 3)), np.linspace(-1.2, 1.2, 4))
    assert np.abs(bm.whole_body_com(model, heads, tails)[:, 0]).max() < 1e-12
    shares = dict(zip(model.segment_names, model.fractions))
    for name in ("upper_arm", "forearm", "hand", "thigh", "shank", "foot"):
        assert shares[name + ".L"] == shares[name + ".R"]


def test_arm_raise_moves_the_com_by_the_arms_share():
    # Raising both straight arms from down to up moves the whole-body COM by
    # (m_arms / M) x the arm COM's rise (definition of the COM); de Leva 1996 male.
    model = bm.mass_model(bm.map_by_topology(mannequin()))
    heads, tails = pose(np.zeros((2, 3)), np.array([-math.pi / 2, math.pi / 2]))
    com = bm.whole_body_com(model, heads, tails)
    arm = (0.0271 * 0.5772 * 0.30 + 0.0162 * (0.30 + 0.4574 * 0.25) + 0.0061 * (0.55 + 0.79 * 0.10)) \
        / (0.0271 + 0.0162 + 0.0061)
    assert math.isclose(com[1, 2] - com[0, 2], 2 * (0.0271 + 0.0162 + 0.0061) * 2 * arm, rel_tol=1e-9)


def test_per_bone_masses_match_numpy_weighted_average():
    rig = mannequin()
    rng = np.random.default_rng(2)
    masses = rng.uniform(0, 3, len(NAMES))
    frac = rng.uniform(0, 1, len(NAMES))
    model = bm.mass_model_from_bone_masses(rig, masses, frac)
    expected = np.average(HEADS + frac[:, None] * (TAILS - HEADS), axis=0, weights=masses)  # numpy reference
    np.testing.assert_allclose(bm.whole_body_com(model, HEADS[None], TAILS[None])[0], expected, atol=1e-12)
    with pytest.raises(InvalidGoalError, match="masses"):
        bm.mass_model_from_bone_masses(rig, -masses)


def test_wrong_array_shape_names_the_expected_shape():
    model = bm.mass_model(bm.map_by_topology(mannequin()))
    with pytest.raises(InvalidTrajectoryError, match=f"\\(n_frames, {len(NAMES)}, 3\\)"):
        bm.whole_body_com(model, HEADS[None, :-1], TAILS[None, :-1])


def test_bone_points_from_pose_matrices_match_scipy_rotations():
    # Blender bone matrices: Y axis head -> tail, translation at the head; foreach_get
    # writes them column-major (shared/blender-facts.md). Reference: scipy Rotation.
    rng = np.random.default_rng(3)
    rot = Rotation.random(6, random_state=4).as_matrix().reshape(2, 3, 3, 3)
    pos = rng.normal(size=(2, 3, 3))
    mats = np.zeros((2, 3, 4, 4))
    mats[..., :3, :3], mats[..., :3, 3], mats[..., 3, 3] = rot, pos, 1.0
    lengths = np.array([0.3, 0.2, 0.1])
    world = np.eye(4)
    world[:3, :3] = Rotation.from_euler("z", 90, degrees=True).as_matrix()
    world[:3, 3] = (1.0, 2.0, 3.0)
    flat = mats.swapaxes(-1, -2).reshape(2, 3, 16)  # column-major, as foreach_get fills it
    heads, tails = bm.bone_points_from_matrices(flat, lengths, world)
    want_tail = pos + np.einsum("fbij,j->fbi", rot, [0, 1, 0]) * lengths[:, None]
    np.testing.assert_allclose(heads, pos @ world[:3, :3].T + world[:3, 3], atol=1e-12)
    np.testing.assert_allclose(tails, want_tail @ world[:3, :3].T + world[:3, 3], atol=1e-12)
    h2, t2 = bm.bone_points_from_matrices(mats, lengths, world)
    np.testing.assert_allclose(t2, tails, atol=1e-12)


# ---- properties ----------------------------------------------------------------------------

@settings(max_examples=60, deadline=None)
@given(st.integers(0, 2 ** 32 - 1), st.floats(0.01, 20.0))
def test_random_poses_give_a_finite_com_inside_the_bones(seed, spread):
    # Segment COMs are convex combinations of bone ends with positive masses, so the
    # whole-body COM lies inside the bounding box of all bone ends (convexity).
    rng = np.random.default_rng(seed)
    heads = rng.normal(scale=spread, size=(5, len(NAMES), 3))
    tails = heads + rng.normal(scale=spread, size=heads.shape)
    for model in (bm.mass_model(bm.map_by_topology(mannequin()), "de_leva_female"),
                  bm.mass_model_from_bone_masses(mannequin(), rng.uniform(0, 1, len(NAMES)))):
        com = bm.whole_body_com(model, heads, tails)
        pts = np.concatenate([heads, tails], axis=1)
        assert np.isfinite(com).all()
        assert (com >= pts.min(axis=1) - 1e-9).all() and (com <= pts.max(axis=1) + 1e-9).all()


@settings(max_examples=150, deadline=None)
@given(st.integers(0, 2 ** 32 - 1), st.integers(1, 40))
def test_random_trees_map_or_raise_the_cores_error(seed, n):
    # Whatever tree comes in, the mapper answers with landmarks or with its own error.
    rng = np.random.default_rng(seed)
    parents = [-1] + [int(rng.integers(-1, i)) if rng.random() < 0.1 else int(rng.integers(0, i))
                      for i in range(1, n)]
    heads = rng.normal(size=(n, 3))
    tails = heads + rng.normal(scale=0.3, size=(n, 3)) * (rng.random((n, 1)) > 0.05)
    rig = bm.RigData([f"b{i}" for i in range(n)], parents, heads, tails)
    try:
        marks = bm.map_by_topology(rig)
    except LeapwrightError:
        return
    model = bm.mass_model(marks)
    assert np.isfinite(bm.whole_body_com(model, heads[None], tails[None])).all()
