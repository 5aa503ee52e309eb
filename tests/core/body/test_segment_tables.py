"""Segment tables against their sources: sums, composites, and a hand-computed body."""

import math

import pytest

from leapwright.core.base.errors import InvalidGoalError
from leapwright.core.body.segment_tables import (DE_LEVA_FEMALE, DE_LEVA_MALE, DE_LEVA_SHANK_DEFINITIONS,
    DEMPSTER_WINTER, LANDMARKS, SEGMENT_GROUPS, TABLES, get_table)


@pytest.mark.parametrize("table", list(TABLES.values()), ids=list(TABLES))
def test_each_table_sums_to_one(table):
    # de Leva 1996 Table 4 and Winter 2009 Table 4.1 give fractions of the whole body:
    # head + trunk + 2 x (arm and leg segments) = 1 within their printed rounding (4th digit).
    assert math.isclose(table.total_fraction, 1.0, abs_tol=0.001)


def test_dempster_arm_segments_add_up_to_the_printed_whole_arm():
    # Winter 2009 Table 4.1 prints hand 0.006 + forearm 0.016 + upper arm 0.028 and a
    # "whole arm" row of 0.050: the transcribed parts must reproduce the printed total.
    (name, parts, printed), = DEMPSTER_WINTER.composites
    assert name == "whole arm"
    assert math.isclose(sum(DEMPSTER_WINTER.entry(p).mass_fraction for p in parts), printed, abs_tol=5e-4)


def test_de_leva_sexes_differ_where_the_paper_says():
    # de Leva 1996: women carry a larger share in the thighs (0.1478 vs 0.1416) and a
    # smaller one in the trunk (0.4257 vs 0.4346); the COM of the female thigh lies nearer
    # the hip (0.3612 vs 0.4095). A swapped transcription would flip these.
    assert DE_LEVA_FEMALE.entry("thigh").mass_fraction > DE_LEVA_MALE.entry("thigh").mass_fraction
    assert DE_LEVA_FEMALE.entry("trunk").mass_fraction < DE_LEVA_MALE.entry("trunk").mass_fraction
    assert DE_LEVA_FEMALE.entry("thigh").com_fraction < DE_LEVA_MALE.entry("thigh").com_fraction


@pytest.mark.parametrize("table", list(TABLES.values()), ids=list(TABLES))
def test_entries_are_well_formed(table):
    # Every segment names landmarks the rig side knows, lies within its segment and
    # limbs (and only limbs) are bilateral: anatomy (common practice).
    names = [e.name for e in table.entries]
    assert sorted(names) == sorted(SEGMENT_GROUPS)
    for e in table.entries:
        assert e.start in LANDMARKS and e.end in LANDMARKS
        assert 0.0 <= e.com_fraction <= 1.0 and 0.0 < e.mass_fraction < 0.5
        assert e.bilateral == (e.group in ("arms", "legs"))
    assert table.source


def test_standing_body_com_by_hand():
    # Hand computation on a standing figure (heights [m] of the landmarks below), with
    # the de Leva 1996 male numbers (shared/reference-values.md): each segment COM at its
    # fraction from the published first landmark; sum of mass x height.
    z = {"vertex": 1.78, "skull_base": 1.55, "neck_base": 1.45, "hip_mid": 0.93, "shoulder": 1.42,
         "elbow": 1.12, "wrist": 0.87, "knuckles": 0.77, "hip": 0.93, "knee": 0.50, "ankle": 0.08,
         "toe_tip": 0.0, "ball": 0.02, "shoulder_mid": 1.42}
    by_hand = (0.0694 * (1.78 + 0.5976 * (1.55 - 1.78)) + 0.4346 * (1.45 + 0.5138 * (0.93 - 1.45))
               + 2 * (0.0271 * (1.42 - 0.5772 * 0.30) + 0.0162 * (1.12 - 0.4574 * 0.25)
                      + 0.0061 * (0.87 - 0.79 * 0.10) + 0.1416 * (0.93 - 0.4095 * 0.43)
                      + 0.0433 * (0.50 - 0.4395 * 0.42) + 0.0137 * (0.08 - 0.4415 * 0.08)))
    t = DE_LEVA_MALE
    from_table = sum(e.mass_fraction * (2 if e.bilateral else 1)
                     * (z[e.start] + e.com_fraction * (z[e.end] - z[e.start])) for e in t.entries)
    assert math.isclose(from_table, by_hand, rel_tol=1e-12)
    # About 0.56 of stature for an adult (constants.STANDING_COM_HEIGHT note, from memory).
    assert 0.53 < from_table / 1.78 < 0.59


def test_shank_uses_de_leva_s_ankle_joint_row_to_the_printed_digits():
    # de Leva 1996 Table 4 (as transcribed by R. Gurchiek 2018): shank KJC -> LMAL 44.59 % (male)
    # / 44.16 % (female); KJC -> AJC 43.95 / 43.52; KJC -> SPHY 45.24 / 44.81. The rig's ankle
    # landmark is the ankle joint (the foot bone's head), so the AJC row applies.
    assert DE_LEVA_MALE.entry("shank").end == "ankle"
    assert (DE_LEVA_MALE.entry("shank").com_fraction, DE_LEVA_FEMALE.entry("shank").com_fraction) == (0.4395, 0.4352)
    assert "AJC" in DE_LEVA_MALE.entry("shank").published
    assert [DE_LEVA_SHANK_DEFINITIONS[k][0][1] for k in ("LMAL", "AJC", "SPHY")] == [0.4459, 0.4395, 0.4524]
    assert [DE_LEVA_SHANK_DEFINITIONS[k][1][1] for k in ("LMAL", "AJC", "SPHY")] == [0.4416, 0.4352, 0.4481]


@pytest.mark.parametrize("sex", [0, 1], ids=["male", "female"])
def test_the_three_shank_definitions_place_one_and_the_same_com(sex):
    # The COM is one point of the shank whichever distal landmark the length runs to, so
    # length x fraction must agree across de Leva's three rows within the printed rounding
    # (length to 0.05 mm, fraction to 0.00005: at most ~0.05 mm each). A fraction taken from
    # the wrong row (0.4459 with the AJC length) is off by 2.8 mm.
    distances = [length * fraction for length, fraction in
                 (DE_LEVA_SHANK_DEFINITIONS[k][sex] for k in ("LMAL", "AJC", "SPHY"))]
    assert max(distances) - min(distances) < 0.1
    assert abs(DE_LEVA_SHANK_DEFINITIONS["AJC"][sex][0] * DE_LEVA_SHANK_DEFINITIONS["LMAL"][sex][1]
               - distances[0]) > 2.0


def test_unknown_table_names_the_choices():
    with pytest.raises(InvalidGoalError, match="de_leva_male"):
        get_table("zatsiorsky")
    assert get_table("dempster_winter") is DEMPSTER_WINTER


def test_trunk_uses_de_leva_s_cervicale_row_to_the_printed_digits():
    # de Leva 1996 Table 4 gives the trunk COM from two proximal landmarks: SUPR (suprasternale)
    # -> MIDH 44.86 % (male) / 41.51 % (female), and CERV (C7) -> MIDH 51.38 / 49.64 (two
    # independent transcriptions agree: R. Gurchiek's 2018 MATLAB table and the PyPI package
    # biobuddy; shared/reference-values.md). The rig's trunk starts at the neck base, where the
    # neck leaves the spine (the cervicale's level), so the CERV row applies; the SUPR fractions
    # on the C7 segment put the trunk COM 6.5 % of its length too high.
    for table, fraction in ((DE_LEVA_MALE, 0.5138), (DE_LEVA_FEMALE, 0.4964)):
        trunk = table.entry("trunk")
        assert (trunk.start, trunk.end) == ("neck_base", "hip_mid")
        assert "CERV" in trunk.published and "MIDH" in trunk.published
        assert trunk.com_fraction == fraction
    # The trunk's mass share does not depend on the landmark: 43.46 % / 42.57 %.
    assert (DE_LEVA_MALE.entry("trunk").mass_fraction, DE_LEVA_FEMALE.entry("trunk").mass_fraction) == (0.4346, 0.4257)
