"""Body segment tables: mass fractions and centre-of-mass (COM) positions along segments.

Each table is data with its source on it. A segment's COM lies on the straight line
between two landmarks, at ``com_fraction`` of the way from ``start`` to ``end``.
``start`` and ``end`` name rig landmarks (joints and tips a rig can supply, see
:data:`LANDMARKS`); the published landmark names are kept beside them, so the
approximation made by each rig landmark is visible where it is made.

Bilateral segments (arms, legs) appear once in a table and count twice in a body.

References
----------
de Leva P. (1996) Adjustments to Zatsiorsky-Seluyanov's segment inertia parameters.
J Biomech 29(9):1223-1230, Table 4 (mass fractions and COM positions: values as read,
listed in shared/reference-values.md; the shank's three definitions as read from a
public transcription of Table 4, R. Gurchiek 2018; other landmark names from memory).
Winter D.A. (2009) Biomechanics and Motor Control of Human Movement, 4th ed., Wiley,
anthropometric table (Table 4.1, table number from memory), after Dempster W.T.
(1955) Space requirements of the seated operator, WADC TR 55-159 (report number from
memory). Mass fractions as read; COM positions from memory.
"""

from dataclasses import dataclass

from ..base.errors import InvalidGoalError
from ..rig.landmark_names import LANDMARKS, SIDED_LANDMARKS  # noqa: F401  (part of the tables' API)

#: Which body part each segment belongs to; "trunk" is the torso the limbs move against.
SEGMENT_GROUPS = {
    "head": "head", "trunk": "trunk",
    "upper_arm": "arms", "forearm": "arms", "hand": "arms",
    "thigh": "legs", "shank": "legs", "foot": "legs",
}


@dataclass(frozen=True)
class SegmentEntry:
    """One segment of a table.

    Attributes
    ----------
    name : str  segment name, a key of :data:`SEGMENT_GROUPS`
    mass_fraction : float  share of the whole-body mass [-]
    com_fraction : float  COM position from ``start`` towards ``end`` [-]
    start, end : str  rig landmarks, keys of :data:`LANDMARKS`
    published : str  the landmarks as the source names them, with any approximation
    bilateral : bool  True for a segment present on both sides
    """

    name: str
    mass_fraction: float
    com_fraction: float
    start: str
    end: str
    published: str
    bilateral: bool = False

    @property
    def group(self):
        """Body part of the segment: "head", "trunk", "arms" or "legs"."""
        return SEGMENT_GROUPS[self.name]


@dataclass(frozen=True)
class SegmentTable:
    """A published set of segment parameters.

    Attributes
    ----------
    key : str  short name used in settings ("de_leva_male", ...)
    source : str  full citation
    entries : tuple of SegmentEntry
    composites : tuple of (str, tuple of str, float)
        Published sums of segments (name, parts, mass fraction) the table also prints.
    """

    key: str
    source: str
    entries: tuple
    composites: tuple = ()

    def entry(self, name):
        """The entry called ``name``; raises InvalidGoalError naming the choices."""
        for e in self.entries:
            if e.name == name:
                return e
        raise InvalidGoalError(f"table {self.key!r} has no segment {name!r}; "
                               f"choose one of {', '.join(e.name for e in self.entries)}")

    @property
    def total_fraction(self):
        """Sum of the mass fractions, bilateral segments counted twice [-]."""
        return sum(e.mass_fraction * (2 if e.bilateral else 1) for e in self.entries)


_DE_LEVA = "de Leva 1996, J Biomech 29(9):1223-1230, Table 4"


def _de_leva(sex, head, trunk, upper_arm, forearm, hand, thigh, shank, foot):
    # Each argument: (mass fraction, COM fraction from the published first landmark).
    return SegmentTable(
        key=f"de_leva_{sex}",
        source=f"{_DE_LEVA} ({sex})",
        entries=(
            # The published head runs vertex -> gonion midpoint; the top of the neck
            # stands in for the gonion midpoint (rigs have no jaw-angle landmark).
            SegmentEntry("head", *head, "vertex", "skull_base", "VERT -> MIDG (gonion midpoint ~ top of neck)"),
            # The rig's neck base is where the neck leaves the spine, the cervicale's level, so the
            # trunk is de Leva's CERV -> MIDH row (not the SUPR -> MIDH one, which starts at the sternum).
            SegmentEntry("trunk", *trunk, "neck_base", "hip_mid", "CERV (C7) -> MIDH (mid hip joints)"),
            SegmentEntry("upper_arm", *upper_arm, "shoulder", "elbow", "SJC -> EJC", True),
            SegmentEntry("forearm", *forearm, "elbow", "wrist", "EJC -> WJC", True),
            SegmentEntry("hand", *hand, "wrist", "knuckles", "WJC -> MET3 (third knuckle)", True),
            SegmentEntry("thigh", *thigh, "hip", "knee", "HJC -> KJC", True),
            # de Leva prints the shank three ways (see DE_LEVA_SHANK_DEFINITIONS); a rig's
            # ankle landmark is the ankle joint, so the KJC -> AJC row is the one used.
            SegmentEntry("shank", *shank, "knee", "ankle", "KJC -> AJC (ankle joint centre)", True),
            # Published heel -> toe tip; rigs have no heel joint, so the ankle stands in.
            SegmentEntry("foot", *foot, "ankle", "toe_tip", "HEEL -> TTIP (ankle stands in for the heel)", True),
        ),
    )


#: de Leva 1996 Table 4 prints the shank with three distal landmarks: the lateral
#: malleolus (LMAL, the main rows), the ankle joint centre (AJC) and the sphyrion (SPHY,
#: the alternative rows). Landmark -> (length [mm], COM fraction from the knee [-]) for
#: (male, female). The COM is the same point in all three, so length x fraction agrees
#: (193.5 mm male, 190.9 mm female) within the printed rounding.
DE_LEVA_SHANK_DEFINITIONS = {
    "LMAL": ((434.0, 0.4459), (432.3, 0.4416)),
    "AJC": ((440.3, 0.4395), (438.6, 0.4352)),
    "SPHY": ((427.7, 0.4524), (426.0, 0.4481)),
}

#: de Leva 1996, male: values as in shared/reference-values.md (shank: the KJC -> AJC row; trunk: CERV -> MIDH).
DE_LEVA_MALE = _de_leva(
    "male", head=(0.0694, 0.5976), trunk=(0.4346, 0.5138), upper_arm=(0.0271, 0.5772),
    forearm=(0.0162, 0.4574), hand=(0.0061, 0.7900), thigh=(0.1416, 0.4095),
    shank=(0.0433, 0.4395), foot=(0.0137, 0.4415))
#: de Leva 1996, female: values as in shared/reference-values.md (shank: the KJC -> AJC row; trunk: CERV -> MIDH).
DE_LEVA_FEMALE = _de_leva(
    "female", head=(0.0668, 0.5894), trunk=(0.4257, 0.4964), upper_arm=(0.0255, 0.5754),
    forearm=(0.0138, 0.4559), hand=(0.0056, 0.7474), thigh=(0.1478, 0.3612),
    shank=(0.0481, 0.4352), foot=(0.0129, 0.4014))

#: Dempster 1955 as tabulated by Winter 2009. Mass fractions as read; every COM
#: fraction below is from memory of Winter's table (verify before relying on it).
DEMPSTER_WINTER = SegmentTable(
    key="dempster_winter",
    source=("Winter 2009, Biomechanics and Motor Control of Human Movement, 4th ed., "
            "Table 4.1 (number from memory), after Dempster 1955, WADC TR 55-159"),
    entries=(
        # COM "1.000 from C7-T1 towards the ear canal": at the ear canal (from memory);
        # the top of the neck stands in for the ear canal.
        SegmentEntry("head", 0.081, 1.000, "neck_base", "skull_base", "C7-T1 -> ear canal (~ top of neck)"),
        SegmentEntry("trunk", 0.497, 0.50, "hip_mid", "shoulder_mid", "greater trochanter -> glenohumeral joint"),
        SegmentEntry("upper_arm", 0.028, 0.436, "shoulder", "elbow", "glenohumeral axis -> elbow axis", True),
        SegmentEntry("forearm", 0.016, 0.430, "elbow", "wrist", "elbow axis -> ulnar styloid", True),
        SegmentEntry("hand", 0.006, 0.506, "wrist", "knuckles", "wrist axis -> knuckle II middle finger", True),
        SegmentEntry("thigh", 0.100, 0.433, "hip", "knee", "greater trochanter -> femoral condyles", True),
        SegmentEntry("shank", 0.0465, 0.433, "knee", "ankle", "femoral condyles -> medial malleolus", True),
        SegmentEntry("foot", 0.0145, 0.50, "ankle", "ball", "lateral malleolus -> head metatarsal II", True),
    ),
    composites=(("whole arm", ("upper_arm", "forearm", "hand"), 0.050),),
)

#: Every table by key.
TABLES = {t.key: t for t in (DE_LEVA_MALE, DE_LEVA_FEMALE, DEMPSTER_WINTER)}


def get_table(key):
    """The table called ``key`` (one of :data:`TABLES`).

    Raises
    ------
    InvalidGoalError
        For an unknown key, listing the known ones.
    """
    try:
        return TABLES[key]
    except (KeyError, TypeError):
        raise InvalidGoalError(f"unknown segment table {key!r}; choose one of {', '.join(TABLES)}") from None
