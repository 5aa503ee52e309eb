"""Reading a rig's facing from its rest pose: turned rigs map, and weigh, the same."""

import math

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from leapwright.core.body import mass as bm
from leapwright.core.base.errors import LeapwrightError
from leapwright.core.rig.facing import faced_rig
from tests.core.body.test_body_mass import _BONES, _EXPECTED_L, _rig_from, _turned


def _rest_com(rest, marks):
    model = bm.mass_model(marks, "de_leva_male")
    return bm.whole_body_com(model, rest.heads[None], rest.tails[None])[0]


@pytest.mark.parametrize("yaw", [0.0, 90.0, 180.0, -90.0, 30.0])
def test_a_rig_turned_inside_its_armature_finds_its_own_left(yaw):
    # The mannequin built facing -Y, then turned about the up axis (a rig built facing +Y,
    # or sideways): its left is its own turned +X, and the landmarks are the same joints.
    turn = Rotation.from_euler("z", yaw, degrees=True).as_matrix()
    rest, marks = faced_rig(_rig_from(_turned(_BONES, turn)))
    np.testing.assert_allclose(rest.left, turn @ (1.0, 0.0, 0.0), atol=1e-9)
    text = marks.as_text()
    assert {k: text[k] for k in _EXPECTED_L} == _EXPECTED_L
    assert text["shoulder.R"] == "upper_arm.R@head" and text["knee.R"] == "shin.R@head"


def test_turned_rig_weighs_the_same():
    # The centre of mass is a mass-weighted mean of positions, so turning every bone turns
    # it with them (Newtonian mechanics); de Leva 1996 fractions on both.
    turn = Rotation.from_euler("z", 180.0, degrees=True).as_matrix()
    upright = faced_rig(_rig_from(_BONES))
    turned = faced_rig(_rig_from(_turned(_BONES, turn)))
    np.testing.assert_allclose(_rest_com(*turned), turn @ _rest_com(*upright), atol=1e-12)


def test_the_default_axes_mistake_a_rig_built_facing_plus_y():
    # Why the facing is read: the default left (+X) on a rig facing +Y swaps its sides
    # (or does not map at all), while the found left maps it as built.
    turn = Rotation.from_euler("z", 180.0, degrees=True).as_matrix()
    rig = _rig_from(_turned(_BONES, turn))
    try:
        swapped = bm.map_by_topology(rig).as_text()["shoulder.L"] != "upper_arm.L@head"
    except LeapwrightError:
        swapped = True
    assert swapped
    assert faced_rig(rig)[1].as_text()["shoulder.L"] == "upper_arm.L@head"


def test_feet_that_point_sideways_are_refused_with_what_was_found():
    # Feet and toes turned out along the shoulders' line: front and back cannot be told.
    bones = []
    for n, p, h, t in _BONES:
        if n.startswith(("foot.", "toe.")):
            out = math.copysign(0.14 if n.startswith("foot.") else 0.06, h[0])
            start = h if n.startswith("foot.") else bones[-1][3]
            h, t = start, (start[0] + out, start[1], max(start[2] - 0.03, 0.0))
        bones.append((n, p, h, t))
    with pytest.raises(LeapwrightError, match="feet point along the shoulders"):
        faced_rig(_rig_from(bones))


@pytest.mark.parametrize("yaw", [0.0, 37.0, 180.0, -120.0])
def test_a_production_size_rig_finds_its_left_from_its_probe_ends(yaw):
    # The mannequin with 250 mirrored helper bones (face, fingers, correctives: common
    # practice in production rigs) on the chest: the plane is scored from the ends
    # farthest from the up axis, and still lands on the character's own left.
    rng = np.random.default_rng(7)
    bones = list(_BONES)
    for i in range(125):
        head = np.abs(rng.normal(0.0, 0.3, 3)) * (1.0, 1.0, 0.0) + (0.0, rng.normal(0.0, 0.1), 1.2)
        tail = head + rng.normal(0.0, 0.03, 3)
        tail[0] = abs(tail[0])
        for side, x in (("L", 1.0), ("R", -1.0)):
            bones.append((f"helper{i}.{side}", "chest", (x * head[0], head[1], head[2]), (x * tail[0], tail[1], tail[2])))
    turn = Rotation.from_euler("z", yaw, degrees=True).as_matrix()
    rest, marks = faced_rig(_rig_from(_turned(bones, turn)))
    np.testing.assert_allclose(rest.left, turn @ (1.0, 0.0, 0.0), atol=1e-9)
    assert marks.as_text()["shoulder.L"] == "upper_arm.L@head"
