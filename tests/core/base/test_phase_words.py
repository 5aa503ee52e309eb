"""The phase words: one animator's word per force-plate phase, markers read back both ways.

The force-plate phases are those of McMahon et al. 2018 (Strength Cond J 40(4):96-106):
weighing, unweighting, braking, propulsion, flight, landing. The animator's words are
the trade's (anticipation, crouch, push-off, take-off, touchdown, settle: common practice).
"""

import pytest

from leapwright.core.base import phase_words as pw
from leapwright.core.plan.goals import JumpGoals
from leapwright.core.plan.planner import PHASE_NAMES, plan_jump

#: The six phases of a countermovement jump on a force plate (McMahon et al. 2018), in order.
FORCE_PLATE = ("weighing", "unweighting", "braking", "propulsion", "flight", "landing")


def test_every_force_plate_phase_has_one_word_of_each_kind_in_order():
    assert tuple(p.force_plate for p in pw.PHASES) == FORCE_PLATE == PHASE_NAMES
    animator = [p.animator for p in pw.PHASES]
    markers = [p.marker for p in pw.PHASES]
    assert len(set(animator)) == len(animator) and len(set(markers)) == len(markers)
    # no marker word is also a force-plate name, so a marker reads back one way only
    assert not set(markers) & set(FORCE_PLATE)
    for p in pw.PHASES:  # tooltips carry the force-plate name beside the animator's
        assert f"force plate: {p.force_plate}" in p.meaning


def test_the_animators_words_are_the_trades():
    # common practice: the dip is the anticipation, the push from the crouch the push-off,
    # the flight starts at take-off and the landing at touchdown
    assert pw.animator_word("unweighting") == "anticipation"
    assert pw.animator_word("propulsion") == "push-off"
    assert pw.marker_name("flight") == "lw:take-off"
    assert pw.marker_name("landing", 3) == "lw:touchdown 3"
    assert pw.animator_word("no such phase") == "no such phase"


@pytest.mark.parametrize("phase", FORCE_PLATE)
@pytest.mark.parametrize("hop", [None, 1, 12])
def test_markers_read_back_in_the_new_words_and_the_old(phase, hop):
    assert pw.phase_of_marker(pw.marker_name(phase, hop)) == (phase, hop)
    old = "lw:" + phase + ("" if hop is None else f" {hop}")  # how earlier versions named them
    assert pw.phase_of_marker(old) == (phase, hop)


@pytest.mark.parametrize("name", ["beat", "lw:measured take-off", "lw:take-off x", "lw:apex", "take-off",
                                  "lw:", "lw:flight 2 3"])
def test_other_markers_are_not_phases(name):
    assert pw.phase_of_marker(name) is None


def test_a_plans_phases_all_have_words():
    plan = plan_jump(JumpGoals(height=0.4, hops=2))
    for p in plan.phases:
        assert pw.phase_of_marker(pw.marker_name(p.name, p.hop)) == (p.name, p.hop)
