"""What the checker can say about a jump: the fixed list of finding kinds and the record of one.

Every finding names the frames it concerns, says what is wrong in the animator's terms
and how to fix it. Kinds marked as stylisations describe a deliberate departure from
physics (a faster fall, a hang at the apex) with its physical equivalent; they are
reported, but they are not failures.
"""

from dataclasses import dataclass

#: Finding kinds and what each means. The list is fixed: tools may switch on ``kind``.
FINDING_KINDS = {
    "not_ballistic": "an arc rises and falls but no stretch of it follows one free-fall parabola",
    "floaty_gravity": "the flight's implied gravity is lower than the scene's (hangs too long)",
    "heavy_gravity": "the flight's implied gravity is higher than the scene's (drops too fast)",
    "stylised_fall_gravity": "stylisation: the fall uses a different gravity from the rise",
    "apex_hang": "stylisation: the body is held near the top longer than free fall allows",
    "dip_faster_than_free_fall": "in contact the body accelerates downward faster than gravity "
                                 "(the ground would have to pull it down)",
    "forward_speed_changes_in_flight": "horizontal speed changes in the air, where nothing can push",
    "foot_slides_in_contact": "a planted foot moves along the ground",
    "leg_overstretched": "in contact a leg is longer than its rest length",
    "push_beyond_human": "the take-off push needs a ground force beyond athletic",
    "landing_too_hard": "the landing stops the fall with a force beyond athletic",
    "landing_too_soft": "the landing gives far more than the fall needs (sinks like a sponge)",
}

#: Kinds that describe a deliberate stylisation rather than a mistake.
STYLISATION_KINDS = frozenset({"stylised_fall_gravity", "apex_hang"})

#: Relative gravity difference still read as the scene's gravity (5%: the gap
#: between Moon-like float and a readable jump is far larger; common practice).
GRAVITY_MATCH_TOLERANCE = 0.05


@dataclass(frozen=True)
class Finding:
    """One thing the checker has to say.

    Attributes
    ----------
    kind : str  one of :data:`FINDING_KINDS`
    first_frame, last_frame : float  frames concerned, inclusive
    message : str  what is wrong, with the numbers
    suggestion : str  how to fix it
    """

    kind: str
    first_frame: float
    last_frame: float
    message: str
    suggestion: str

    def __post_init__(self):
        if self.kind not in FINDING_KINDS:
            raise ValueError(f"unknown finding kind {self.kind!r}")

    @property
    def severity(self):
        """``"stylisation"`` for deliberate departures, otherwise ``"problem"``."""
        return "stylisation" if self.kind in STYLISATION_KINDS else "problem"

    @property
    def frames(self):
        """``(first_frame, last_frame)``, inclusive."""
        return (self.first_frame, self.last_frame)


def frame_text(frame):
    """A frame number as an animator writes it (no ``.0`` for whole frames)."""
    f = float(frame)
    return str(int(round(f))) if abs(f - round(f)) < 1e-9 else f"{f:.2f}"


def grade(value, bounds, *, lower_is_harder=False):
    """``"everyday"``, ``"athletic"`` or ``"beyond human - stylised"`` for a figure.

    Parameters
    ----------
    value : float
    bounds : (float, float)  (everyday up to, athletic up to), as in core.base.constants
    lower_is_harder : bool  for floors such as the unweighting force minimum
    """
    everyday, athletic = bounds
    if lower_is_harder:
        if value >= everyday:
            return "everyday"
        return "athletic" if value >= athletic else "beyond human - stylised"
    if value <= everyday:
        return "everyday"
    return "athletic" if value <= athletic else "beyond human - stylised"


def gravity_findings(flight, scene_gravity):
    """Floaty/heavy gravity and stylised timing of one flight.

    Parameters
    ----------
    flight : analysis.Flight
    scene_gravity : float  [m/s^2]
    """
    out = []
    g = flight.rise_gravity_m_s2
    ratio = g / scene_gravity
    where = (flight.first_frame, flight.last_frame)
    low = flight.gravity_low_m_s2 if flight.gravity_low_m_s2 is not None else g
    high = flight.gravity_high_m_s2 if flight.gravity_high_m_s2 is not None else g
    # Reported only when the fit is sure: the 95 % interval leaves the scene's gravity out.
    sure = not (low <= scene_gravity <= high)
    if abs(ratio - 1.0) > GRAVITY_MATCH_TOLERANCE and sure:
        scale = scene_gravity / g
        retime = (g / scene_gravity) ** 0.5
        if ratio < 1:
            kind, feel = "floaty_gravity", "hangs too long for its height"
        else:
            kind, feel = "heavy_gravity", "drops too fast for its height"
        out.append(Finding(
            kind, *where,
            f"flight frames {frame_text(where[0])}-{frame_text(where[1])} moves as if g were "
            f"{g:.2f} m/s^2 ({ratio:.2f} g of the scene's {scene_gravity:.4g}"
            + (f"; 95% interval {low:.2f}-{high:.2f}" if high - low > 0.005 * g else "")
            + f"): it {feel}; "
            f"this timing is real for a character {scale:.2f} times this size",
            f"keep the heights and make the flight {retime:.2f}x as long "
            f"(hang time {flight.hang_time_s:.3f} s -> {flight.expected_hang_time_s:.3f} s), "
            f"or scale the character by {scale:.2f}"))
    fall_ratio = flight.fall_gravity_m_s2 / g
    if abs(fall_ratio - 1.0) > GRAVITY_MATCH_TOLERANCE:
        out.append(Finding(
            "stylised_fall_gravity", *where,
            f"rises as if g were {g / scene_gravity:.2f} g and falls as if g were "
            f"{flight.fall_gravity_m_s2 / scene_gravity:.2f} g ({fall_ratio:.2f} times the rise)",
            "a stylisation; if it is not wanted, key the fall with the rise's spacing mirrored"))
    if flight.hang_frames_at_apex >= 1:
        out.append(Finding(
            "apex_hang", *where,
            f"held near the top for {flight.hang_frames_at_apex} frame(s) "
            f"({flight.apex_hang_s:.3f} s) beyond free fall, around frame {frame_text(flight.apex_frame)}",
            "a stylisation; if it is not wanted, remove the held frames at the apex"))
    return out


def no_flight_reason(height_m):
    """Why no flight was found in a path of heights [m], in an animator's words, with the fix."""
    rise = float(max(height_m) - min(height_m)) if len(height_m) else 0.0
    if rise < 1e-3:
        return (f"the checked path does not move up or down (within {rise * 1000:.1f} mm); "
                "pick the body bone (--bone) or follow the whole-body centre of mass (--follow body)")
    return (f"the path rises and falls by {rise:.3f} m but no stretch of it falls freely "
            "(the body never leaves the ground, or the arc is not a free-fall curve)")
