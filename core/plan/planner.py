"""The jump planner: goals in, a ballistic centre-of-mass path and its force story out.

Vertical path z(t) of the centre of mass (COM), relative to the standing COM on
the take-off ground, Z up:

* weighing: standing still, force 1 BW;
* a contact stretch of two C2 quintics (:mod:`.contact_shapes`): the dip
  (unweighting, then braking, to the bottom) and the push (propulsion), ending
  at take-off with acceleration exactly -g, so the force fades to 0;
* flight: the exact parabola z = z0 + v0 t - g t^2 / 2;
* landing: from touchdown (acceleration -g: the force starts from 0) down to the
  bottom, then back to standing (or straight into the next push for hops).

Phase names follow the force-plate convention of McMahon et al. 2018 (Strength
Cond J 40(4):96-106): weighing, unweighting, braking, propulsion, flight, landing.

Every push ends with a release (:mod:`.release`): the force falls from body weight
to 0 over a set time, so the peak COM speed comes that long before take-off.

Forward path x(t) (:mod:`.forward_path`): no travel in the dip; in propulsion the
horizontal force is a ramp times the vertical force, so it starts at 0 and fades
with Fz at take-off; constant speed in flight; on landing the mirror ramp absorbs
it. The required friction coefficient is the largest Fx/Fz.
"""

from dataclasses import dataclass, field
import math

import numpy as np
from numpy.polynomial import Polynomial

from .contact_shapes import (ABSORPTION, DIP, PROPULSION, RECOVERY, EndState, StretchShape, StretchSpec, build_pieces,
    choose_shape)
from ..base.errors import InfeasibleJumpError
from .flight_path import flight_for_speed, flight_for_time
from .forward_path import landing_unit_path, push_unit_paths
from .goals import resolved, similarity
from ..base.piecewise import PiecewisePolynomial
from ..base.quadratic import quadratic_roots
from .plausibility import plausibility_report
from .refusals import landing_refusal, start_refusal
from .release import release_duration, release_path, release_start

PHASE_NAMES = ("weighing", "unweighting", "braking", "propulsion", "flight", "landing")
_FREE_DURATION_RANGE = (0.04, 3.0)  # s at human scale, bounds for a chosen duration


@dataclass(frozen=True)
class Phase:
    """One force-plate phase: ``name`` from :data:`PHASE_NAMES`, hop number from 1, times [s]."""

    name: str
    hop: int
    start_s: float
    end_s: float


@dataclass(frozen=True)
class HopFigures:
    """Ballistic figures of one hop: times [s], speeds [m/s], apex rise [m]."""

    takeoff_time_s: float
    touchdown_time_s: float
    takeoff_speed_m_s: float
    flight_time_s: float
    apex_rise_m: float
    forward_speed_m_s: float
    friction_needed: float  # largest |Fx| / Fz in the push and its landing [-]


@dataclass(frozen=True)
class PlanSamples:
    """The plan sampled at a frame rate: times [s], height [m], forward [m], speed [m/s], force [BW]."""

    times: np.ndarray
    height: np.ndarray
    forward: np.ndarray
    vertical_speed: np.ndarray
    force_bw: np.ndarray


@dataclass(frozen=True)
class JumpPlan:
    """A planned jump. Times in seconds from the start of weighing.

    Attributes
    ----------
    goals : JumpGoals
        As given. ``resolved_goals`` holds them with every default filled in.
    gravity : float
        [m/s^2]
    phases : tuple of Phase
    hops : tuple of HopFigures
    shapes : tuple of contact_shapes.StretchShape
        The free values chosen for each contact stretch (for inspection).
    report : plausibility.PlausibilityReport
    """

    goals: object
    resolved_goals: object
    gravity: float
    phases: tuple
    hops: tuple
    shapes: tuple
    report: object
    z_path: PiecewisePolynomial
    x_path: PiecewisePolynomial

    @property
    def duration_s(self):
        return self.z_path.end

    def height(self, t):
        """COM height relative to the standing COM on the take-off ground [m]."""
        return self.z_path.evaluate(t, 0)

    def vertical_speed(self, t):
        """[m/s]"""
        return self.z_path.evaluate(t, 1)

    def vertical_acceleration(self, t):
        """[m/s^2]"""
        return self.z_path.evaluate(t, 2)

    def forward(self, t):
        """Forward COM travel from the standing position [m]."""
        return self.x_path.evaluate(t, 0)

    def forward_speed(self, t):
        """[m/s]"""
        return self.x_path.evaluate(t, 1)

    def force_bw(self, t):
        """Vertical ground force in body weights, 1 + z''/g; exactly 0 in flight."""
        force = 1.0 + self.vertical_acceleration(t) / self.gravity
        t_arr = np.asarray(t, dtype=float)
        in_flight = np.zeros(np.shape(t_arr), dtype=bool)
        for hop in self.hops:
            in_flight |= (t_arr > hop.takeoff_time_s) & (t_arr < hop.touchdown_time_s)
        return np.where(in_flight, 0.0, force) if np.ndim(force) else (0.0 if in_flight else force)

    def sample(self, fps):
        """Samples at ``fps`` [frames/s] from time 0 through the end of the plan."""
        n = int(math.floor(self.duration_s * fps + 1e-9)) + 1
        t = np.arange(n) / fps
        return PlanSamples(t, self.height(t), self.forward(t), self.vertical_speed(t), self.force_bw(t))


def _flight_for(goals, gravity, rise):
    """The flight that meets whichever of height, flight time or take-off speed was given."""
    style = dict(fall_scale=goals.fall_gravity_scale, hang=goals.apex_hang)
    if goals.height is not None:
        return flight_for_speed(math.sqrt(2.0 * gravity * goals.height), gravity, rise,
                                what=f"height {goals.height:g} m", **style)
    if goals.flight_time is not None:
        return flight_for_time(goals.flight_time, gravity, rise, **style)
    return flight_for_speed(goals.takeoff_speed, gravity, rise, **style)


def _const(value):
    return Polynomial([float(value)])


def plan_jump(goals):
    """Plan a jump (or hop sequence) that meets ``goals``.

    Parameters
    ----------
    goals : JumpGoals

    Returns
    -------
    JumpPlan

    Raises
    ------
    InfeasibleJumpError
        When no physical jump meets the goals together (a ledge above the apex,
        a dip faster than free fall, a landing too short to stop in).

    References
    ----------
    McMahon J J, Suchomel T J, Lake J P, Comfort P (2018). Understanding the key
    phases of the countermovement jump force-time curve. Strength Cond J 40(4):96-106.
    """
    G = resolved(goals)
    _, time_scale = similarity(G)
    release = release_duration(time_scale, G.push_duration)
    push = None if G.push_duration is None else G.push_duration - release  # the push before its release
    choose = _ShapeChooser(tuple(x * time_scale for x in _FREE_DURATION_RANGE), release, push)
    flight = _flight_for(G, G.gravity, G.landing_height)
    _require_landing_below_standing(G)
    pieces = _PathPieces()
    if G.weighing_duration > 0:
        pieces.phases.append(Phase("weighing", 1, 0.0, G.weighing_duration))
        pieces.add(G.weighing_duration, _const(0.0), _const(0.0))
    x_now, landing, hops, shapes = 0.0, None, [], []
    for hop in range(1, G.hops + 1):
        x_now, landing = _add_hop(pieces, G, hop, flight, choose, x_now, landing, hops, shapes)
    _add_last_landing(pieces, landing, x_now, shapes)

    z_path = PiecewisePolynomial(tuple(pieces.starts), pieces.t, tuple(pieces.z))
    x_path = PiecewisePolynomial(tuple(pieces.starts), pieces.t, tuple(pieces.x))
    phases = tuple(sorted(pieces.phases, key=lambda p: p.start_s))
    report = plausibility_report(G, phases, z_path, tuple(hops), flight)
    return JumpPlan(goals, G, G.gravity, phases, tuple(hops), tuple(shapes), report, z_path, x_path)


@dataclass
class _PathPieces:
    """The plan's pieces as they are laid end to end: start times [s], height and forward
    polynomials of local time, the phases, and the time reached so far [s]."""

    starts: list = field(default_factory=list)
    z: list = field(default_factory=list)
    x: list = field(default_factory=list)
    phases: list = field(default_factory=list)
    t: float = 0.0

    def add(self, duration, z_poly, x_poly):
        self.starts.append(self.t)
        self.z.append(z_poly)
        self.x.append(x_poly)
        self.t += duration


class _ShapeChooser:
    """The contact shape of a stretch, chosen once: a rebound stretch is both a hop's landing
    and the next hop's push. Holds the plan's release duration [s] and the given push's
    duration before its release [s] (None: chosen)."""

    def __init__(self, free_range, release, push):
        self.free_range, self.release, self.push = free_range, release, push
        self.chosen = {}

    def __call__(self, spec, first, second):
        key = (spec, first, second)
        if key not in self.chosen:
            self.chosen[key] = choose_shape(spec, first, second, self.free_range)
        return self.chosen[key]


@dataclass(frozen=True)
class _Landing:
    """A hop's landing stretch, laid down when the next push (or the recovery) is."""

    spec: StretchSpec
    shape: StretchShape
    absorption: Polynomial  # height over the absorption [m] of local time [s]
    hop: int
    forward_speed: float  # [m/s]
    forward_unit: Polynomial  # forward travel per m/s of touchdown speed [m per m/s]


def _require_landing_below_standing(G):
    e = G.takeoff_extension
    if G.landing_depth <= e:
        raise InfeasibleJumpError(
            f"landing depth {G.landing_depth:.3g} m must exceed the take-off extension {e:.3g} m: the COM "
            "has to come down below standing height to absorb; deepen the landing")


def _push_stretch(G, hop, flight, choose):
    """The contact stretch that launches hop ``hop``: the dip and push (first hop) or a
    rebound from the last landing. Returns ``(spec, shape)``."""
    g, e, ground = G.gravity, G.takeoff_extension, (hop - 1) * G.landing_height
    takeoff_state = EndState(ground + e, flight.takeoff_speed, -g)
    if hop == 1:
        release = release_start(takeoff_state, g, choose.release)
        spec = StretchSpec(EndState(0.0, 0.0, 0.0), -G.depth, release, DIP, PROPULSION, g)
        shape = choose(spec, G.dip_duration, choose.push)
        if shape is None:
            raise InfeasibleJumpError(start_refusal(G, spec, choose, flight.takeoff_speed))
        return spec, shape
    spec = StretchSpec(EndState(ground + e, flight.touchdown_speed, -g), ground + e - G.landing_depth,
                       takeoff_state, ABSORPTION, PROPULSION, g)
    shape = choose(spec, G.landing_duration, G.push_duration)
    if shape is None:
        raise InfeasibleJumpError(landing_refusal(G, spec, choose))
    return spec, shape


def _landing_after(G, hop, flight, choose):
    """The landing stretch after hop ``hop`` with its absorption piece and forward unit path.

    Returns ``(spec, shape, absorption, x_unit, k)`` (see :func:`.forward_path.landing_unit_path`)."""
    spec = _landing_spec(G, hop, flight)
    shape = choose(spec, G.landing_duration,
                   G.push_duration if spec.second_kind == PROPULSION else G.recovery_duration)
    if shape is None:
        raise InfeasibleJumpError(landing_refusal(G, spec, choose))
    absorption, _ = build_pieces(spec, shape.bottom_acceleration, shape.first_duration, shape.second_duration)
    x_unit, k = landing_unit_path(absorption, shape.first_duration, G.gravity)
    return spec, shape, absorption, x_unit, k


def _add_hop(pieces, G, hop, flight, choose, x_now, landing, hops, shapes):
    """Lay down hop ``hop``: its push (after the dip, or the last landing), its flight.

    The forward speed makes each hop travel ``G.distance`` from foot spot to foot spot (the
    COM sits over the feet at each bottom). Returns ``(x_now, landing)``: the forward position
    [m] at touchdown and this hop's :class:`_Landing`, laid down by the next push.
    """
    g = G.gravity
    spec, shape = _push_stretch(G, hop, flight, choose)
    shapes.append(shape)
    first, second = build_pieces(spec, shape.bottom_acceleration, shape.first_duration, shape.second_duration)
    tau = choose.release if hop == 1 else 0.0  # a rebound leaves at the end of its stretch
    x_push, x_release, k_push = push_unit_paths(second, shape.second_duration, tau, g)
    land_spec, land_shape, land_first, x_land, k_land = _landing_after(G, hop, flight, choose)
    per_unit = x_release(tau) + flight.duration + x_land(land_shape.first_duration)
    vx = G.distance / per_unit

    t = pieces.t
    if hop == 1:
        t_turn = _acceleration_zero(first, shape.first_duration)
        pieces.phases.append(Phase("unweighting", 1, t, float(t + t_turn)))
        pieces.phases.append(Phase("braking", 1, float(t + t_turn), t + shape.first_duration))
        pieces.add(shape.first_duration, first, _const(x_now))
    else:
        pieces.phases.append(Phase("landing", landing.hop, t, t + shape.first_duration))
        pieces.add(shape.first_duration, first, x_now + landing.forward_speed * landing.forward_unit)
        x_now = x_now + landing.forward_speed * landing.forward_unit(shape.first_duration)
    pieces.phases.append(Phase("propulsion", hop, pieces.t, pieces.t + shape.second_duration + tau))
    pieces.add(shape.second_duration, second, x_now + vx * x_push)
    if tau > 0.0:
        pieces.add(tau, release_path(spec.end, g, tau), x_now + vx * x_release)
    x_now += vx * x_release(tau)
    takeoff_time = pieces.t
    pieces.phases.append(Phase("flight", hop, takeoff_time, takeoff_time + flight.duration))
    ground = (hop - 1) * G.landing_height
    for duration, z_poly in flight.pieces(ground + G.takeoff_extension):
        pieces.add(duration, z_poly, Polynomial([x_now + vx * (pieces.t - takeoff_time), vx]))
    x_now += vx * flight.duration
    hops.append(HopFigures(takeoff_time, pieces.t, flight.takeoff_speed, flight.duration, flight.apex_rise, vx,
                           abs(vx) * max(k_push, k_land)))
    return x_now, _Landing(land_spec, land_shape, land_first, hop, vx, x_land)


def _add_last_landing(pieces, landing, x_now, shapes):
    """Lay down the last hop's landing and the recovery to standing."""
    _, recovery = build_pieces(landing.spec, landing.shape.bottom_acceleration, landing.shape.first_duration,
                               landing.shape.second_duration)
    shapes.append(landing.shape)
    landing_start = pieces.t
    pieces.add(landing.shape.first_duration, landing.absorption, x_now + landing.forward_speed * landing.forward_unit)
    x_now += landing.forward_speed * landing.forward_unit(landing.shape.first_duration)
    pieces.add(landing.shape.second_duration, recovery, _const(x_now))
    pieces.phases.append(Phase("landing", landing.hop, landing_start, pieces.t))


def _landing_spec(G, hop, flight):
    """The contact stretch that follows hop ``hop``'s flight."""
    g, e, ground = G.gravity, G.takeoff_extension, hop * G.landing_height
    start = EndState(ground + e, flight.touchdown_speed, -g)
    bottom = ground + e - G.landing_depth
    if hop < G.hops:
        return StretchSpec(start, bottom, EndState(ground + e, flight.takeoff_speed, -g), ABSORPTION, PROPULSION, g)
    return StretchSpec(start, bottom, EndState(ground, 0.0, 0.0), ABSORPTION, RECOVERY, G.gravity)


def _acceleration_zero(dip, duration):
    """Local time [s] where the dip's acceleration turns upward (end of unweighting).

    The dip starts at rest with zero acceleration, so 0 is a (numerically split)
    double root; the turn is the last root inside the dip, after which the
    acceleration stays positive up to the bottom.
    """
    c = [float(x) for x in dip.coef[2:]] + [0.0] * max(0, 6 - len(dip.coef))
    acc = [2.0 * c[0], 6.0 * c[1], 12.0 * c[2], 20.0 * c[3]]  # acceleration, a cubic in local time

    def at(t):
        return ((acc[3] * t + acc[2]) * t + acc[1]) * t + acc[0]

    if acc[0] == 0.0:  # from rest: t times a quadratic, whose roots are closed-form
        candidates = quadratic_roots(acc[3], acc[2], acc[1])
    else:
        candidates = [r.real for r in np.polynomial.polynomial.polyroots(acc) if abs(r.imag) < 1e-9]
    roots = [r for r in candidates if 0.0 < r < duration]
    crossing = [r for r in roots if at(min(r + 1e-6 * duration, duration)) > 0.0]
    return max(crossing) if crossing else 0.5 * duration
