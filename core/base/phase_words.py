"""The jump's phases in an animator's words, and their force-plate names.

The core, the JSON output and the README's force charts name a jump's phases as a
force plate does (weighing, unweighting, braking, propulsion, flight, landing:
McMahon et al. 2018). An animator calls the same stretches by the trade's names:
the dip is the anticipation (its first half lets the body drop, its second half
catches it in the crouch), then the push-off, the take-off into the flight, the
touchdown and the settle (common practice). Panels, timeline markers, operator
reports and the command line's text use the animator's word; tooltips and the
README's table give both. This module is the only place either list is written,
so the add-on and the command line cannot drift apart.

A timeline marker stands where a phase starts, so it is named after the moment
there (``take-off`` starts the flight, ``touchdown`` the landing).

References
----------
McMahon JJ, Suchomel TJ, Lake JP, Comfort P (2018). Understanding the key phases
of the countermovement jump force-time curve. Strength Cond J 40(4):96-106.
"""

from dataclasses import dataclass


@dataclass(frozen=True)
class PhaseWords:
    """One phase of a jump, as a force plate and as an animator name it.

    Attributes
    ----------
    force_plate : str
        The name in the core, the JSON output and force charts.
    animator : str
        The phase in the trade's words (panels, reports, text output).
    marker : str
        The moment the phase starts, the timeline marker's word.
    meaning : str
        One line for tooltips and the README: what happens, both names.
    """

    force_plate: str
    animator: str
    marker: str
    meaning: str


#: Every phase a plan, a check or a force trace can report, in the order they happen.
PHASES = (
    PhaseWords("weighing", "stand", "stand", "standing still before the jump (force plate: weighing)"),
    PhaseWords("unweighting", "anticipation", "anticipation",
               "the anticipation's drop: the body starts down, lighter than its weight (force plate: unweighting)"),
    PhaseWords("braking", "crouch", "crouch",
               "the anticipation's catch: the fall slows to a stop in the crouch (force plate: braking)"),
    PhaseWords("propulsion", "push-off", "push-off",
               "from the crouch up to the take-off, the legs pushing (force plate: propulsion)"),
    PhaseWords("flight", "flight", "take-off",
               "take-off to touchdown, over the apex, no force on the ground (force plate: flight)"),
    PhaseWords("landing", "settle", "touchdown",
               "touchdown, absorbing the fall, and settling to standing (force plate: landing)"),
)

_BY_FORCE_PLATE = {p.force_plate: p for p in PHASES}
_BY_MARKER = {p.marker: p for p in PHASES}
#: The marker prefix the extension gives everything it puts on the timeline.
MARKER_PREFIX = "lw:"


def words_for(phase):
    """The :class:`PhaseWords` of a force-plate phase name (``KeyError`` for an unknown one)."""
    return _BY_FORCE_PLATE[phase]


def animator_word(phase):
    """The trade's word for a force-plate phase name; an unknown name comes back as it is."""
    p = _BY_FORCE_PLATE.get(phase)
    return p.animator if p is not None else phase


def marker_name(phase, hop=None):
    """The timeline marker at the start of ``phase``: ``lw:take-off``, ``lw:push-off 2``.

    Parameters
    ----------
    phase : str
        Force-plate phase name.
    hop : int, optional
        The hop's number, added when a plan has several hops.
    """
    return MARKER_PREFIX + words_for(phase).marker + ("" if hop is None else f" {hop}")


def phase_of_marker(name):
    """``(force-plate phase, hop or None)`` of a phase marker, else ``None``.

    Reads the markers this version writes (``lw:take-off 2``) and those earlier
    versions wrote with force-plate names (``lw:flight 2``), so files written
    before still re-time, keep the arc and remove alike.
    """
    if not name.startswith(MARKER_PREFIX):
        return None
    word, _, hop = name[len(MARKER_PREFIX):].partition(" ")
    if hop and not hop.isdigit():
        return None
    p = _BY_MARKER.get(word) or _BY_FORCE_PLATE.get(word)
    if p is None:
        return None
    return p.force_plate, (int(hop) if hop else None)


#: The plan's and the check's figures (their force-plate names, kept in the JSON) in the trade's words.
FIGURES = {
    "take-off speed": "take-off speed",
    "peak push force": "hardest push-off",
    "lowest unweighting force": "lightest in the anticipation",
    "peak landing force": "hardest touchdown",
}


def figure_label(name):
    """The animator's label of a figure named the force-plate way; an unknown name comes back as it is."""
    return FIGURES.get(name, name)
