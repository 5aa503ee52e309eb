"""The checker's flight analysis against the law of fall and the planner's own jumps.

Sources named beside each check:
- law of fall z = z0 + v0 t - g t^2/2 and the odd-number spacing 1:3:5:7 of a fall from
  rest (Galileo 1638, Two New Sciences; textbook mechanics); at 24 fps the spacing is
  common practice for animators;
- standard gravity 9.80665 m/s^2 (3rd CGPM 1901); Blender's default 9.81 (common practice);
- time scales as sqrt(length / g) for ballistic motion (dimensional analysis, textbook);
- force-plate phase names and boundaries (McMahon et al. 2018, Strength Cond J 40(4):96-106).
"""

import numpy as np
import pytest

from leapwright.core.check.analysis import analyse_trajectory
from leapwright.core.base.constants import BLENDER_DEFAULT_GRAVITY, STANDARD_GRAVITY
from leapwright.core.base.errors import InvalidGoalError, InvalidTrajectoryError
from leapwright.core.plan.goals import JumpGoals
from leapwright.core.base.keys import evaluate_hermite, hermite_keys
from leapwright.core.plan.planner import plan_jump

PLANNED = [
    JumpGoals(height=0.4, distance=0.5),
    JumpGoals(height=0.2),
    JumpGoals(height=0.1),
    JumpGoals(height=0.6, hops=2),
    JumpGoals(height=0.5, landing_height=0.3),
    JumpGoals(flight_time=0.8),
]
FRAME_RATES = [23.976, 24.0, 25.0, 30.0, 60.0]


def planned_samples(goals, fps, standing=1.0):
    """A plan sampled on frames 1, 2, ...: (plan, frames, positions)."""
    plan = plan_jump(goals)
    s = plan.sample(fps)
    frames = np.arange(len(s.times)) + 1.0
    pos = np.stack([s.forward, np.zeros_like(s.times), standing + s.height], axis=1)
    return plan, frames, pos


def frame_of(t, fps):
    return 1.0 + t * fps


@pytest.mark.parametrize("fps", FRAME_RATES)
@pytest.mark.parametrize("goals", PLANNED, ids=lambda g: f"h{g.height}-ft{g.flight_time}-hops{g.hops}")
def test_planner_jumps_give_back_gravity_and_phase_boundaries(goals, fps):
    plan, frames, pos = planned_samples(goals, fps)
    result = analyse_trajectory(frames, pos, fps, gravity=plan.gravity)
    # One flight per hop, each with the plan's gravity within 0.1% (issue's bound).
    assert len(result.flights) == len(plan.hops)
    for flight, hop in zip(result.flights, plan.hops):
        assert flight.gravity_m_s2 == pytest.approx(plan.gravity, rel=1e-3)
        assert abs(flight.first_frame - frame_of(hop.takeoff_time_s, fps)) <= 1.0
        assert abs(flight.last_frame - frame_of(hop.touchdown_time_s, fps)) <= 1.0
    # Every phase of the plan is found, its start within one frame (McMahon et al. 2018 names).
    found = {(p.name, p.hop): p for p in result.phases}
    for phase in plan.phases:
        ours = found[(phase.name, phase.hop - 1)]
        assert abs(ours.start_estimate_frame - frame_of(phase.start_s, fps)) <= 1.0, phase
    # A physical plan raises no problem.
    assert not result.has_problems, [f.message for f in result.findings]


def test_classic_falling_spacing_at_24_fps_implies_11_52():
    # Drops 1:3:5:7... cm per frame from rest (common practice; Galileo's odd numbers):
    # second difference 2 cm per frame^2, g = 2 * 0.01 * 24^2 = 11.52 m/s^2.
    drops = 0.01 * np.arange(1, 17, 2)
    z = 1.0 - np.concatenate([np.zeros(4), np.cumsum(drops)])
    frames = np.arange(len(z)) + 1.0
    pos = np.stack([np.zeros_like(z), np.zeros_like(z), z], axis=1)
    result = analyse_trajectory(frames, pos, 24)
    assert result.implied_gravity_m_s2 == pytest.approx(2 * 0.01 * 24 ** 2, rel=1e-9)
    flight = result.longest_flight
    assert (flight.first_frame, flight.last_frame) == (4.0, frames[-1])  # from the last still frame
    assert [f.kind for f in result.findings] == ["heavy_gravity"]  # 11.52 is 17% above 9.81


def test_fall_at_standard_gravity_is_compared_with_both_references():
    fps = 24.0
    t = np.arange(12) / fps
    z = 2.0 + 1.5 * t - 0.5 * STANDARD_GRAVITY * t ** 2  # law of fall
    pos = np.stack([0.8 * t, np.zeros_like(t), z], axis=1)
    result = analyse_trajectory(np.arange(12) + 1, pos, fps)
    assert result.implied_gravity_m_s2 == pytest.approx(STANDARD_GRAVITY, rel=1e-12)
    by_name = {c.name: c for c in result.gravity_comparisons}
    assert by_name["scene"].reference_m_s2 == BLENDER_DEFAULT_GRAVITY
    assert by_name["standard"].ratio == pytest.approx(1.0, rel=1e-12)
    assert by_name["scene"].ratio == pytest.approx(9.80665 / 9.81, rel=1e-12)
    assert result.findings == ()  # 0.03% from Blender's 9.81 is no finding


@pytest.mark.parametrize("amplitude, period", [(0.3, 1.0), (0.1, 1.0), (0.5, 1.5)])
def test_sine_wave_hop_is_not_ballistic(amplitude, period):
    # z = A sin(wt) has z'' = -w^2 (z - z_mid): no stretch of constant acceleration (calculus).
    fps = 24.0
    t = np.arange(0, 3.0, 1 / fps)
    z = 1.0 + amplitude * np.sin(2 * np.pi * t / period)
    pos = np.stack([np.zeros_like(t), np.zeros_like(t), z], axis=1)
    result = analyse_trajectory(np.arange(len(t)) + 1, pos, fps)
    assert result.implied_gravity_m_s2 is None
    arcs = [f for f in result.findings if f.kind == "not_ballistic"]
    crests = [1 + fps * period * (k + 0.25) for k in range(int(3.0 / period + 0.75))
              if period * (k + 0.25) < 3.0 - period / 4]
    assert len(arcs) == len(crests)
    for arc, crest in zip(arcs, crests):
        assert arc.first_frame < crest < arc.last_frame


def stretched_flight(plan, t, factor):
    """The plan with its flight played ``factor`` times slower, heights unchanged."""
    hop = plan.hops[0]
    t_off, t_air = hop.takeoff_time_s, hop.flight_time_s
    src = np.where(t < t_off, t, np.where(t < t_off + factor * t_air,
                                          t_off + (t - t_off) / factor, t - (factor - 1) * t_air))
    return plan.height(src), plan.forward(src)


def test_hang_time_doubled_reads_as_quarter_gravity_and_four_times_the_size():
    # Same heights over twice the time: g' = g/4, real for a character 4x the size
    # (t ~ sqrt(L/g), textbook dimensional analysis).
    fps = 24.0
    plan = plan_jump(JumpGoals(height=0.4))
    t = np.arange(0, plan.duration_s + plan.hops[0].flight_time_s, 1 / fps)
    z, x = stretched_flight(plan, t, 2.0)
    pos = np.stack([x, np.zeros_like(t), 1.0 + z], axis=1)
    result = analyse_trajectory(np.arange(len(t)) + 1, pos, fps, gravity=plan.gravity)
    assert result.implied_gravity_m_s2 == pytest.approx(plan.gravity / 4, rel=1e-3)
    assert result.character_scale == pytest.approx(4.0, rel=1e-3)
    floaty = [f for f in result.findings if f.kind == "floaty_gravity"]
    assert len(floaty) == 1 and "4.00 times this size" in floaty[0].message
    flight = result.longest_flight
    assert flight.hang_time_s / flight.expected_hang_time_s == pytest.approx(2.0, rel=0.05)


@pytest.mark.parametrize("seed", range(5))
def test_one_millimetre_noise_still_finds_the_flight_within_a_frame(seed):
    fps = 24.0
    plan, frames, pos = planned_samples(JumpGoals(height=0.4), fps)
    rng = np.random.default_rng(seed)  # fixed seeds
    noisy = pos + rng.uniform(-1e-3, 1e-3, pos.shape)
    result = analyse_trajectory(frames, noisy, fps, gravity=plan.gravity)
    hop = plan.hops[0]
    assert len(result.flights) == 1
    flight = result.flights[0]
    assert abs(flight.first_frame - frame_of(hop.takeoff_time_s, fps)) <= 1.0
    assert abs(flight.last_frame - frame_of(hop.touchdown_time_s, fps)) <= 1.0
    # Reference: numpy's least-squares parabola through the samples truly airborne.
    air = (frames >= frame_of(hop.takeoff_time_s, fps)) & (frames <= frame_of(hop.touchdown_time_s, fps))
    reference = -2 * np.polyfit(frames[air] / fps, noisy[air, 2], 2)[0]
    assert flight.gravity_m_s2 == pytest.approx(reference, rel=0.03)
    assert flight.gravity_m_s2 == pytest.approx(plan.gravity, rel=0.03)
    assert 0.3e-3 < result.noise_m < 1.2e-3  # uniform +-1 mm has sd 0.577 mm


def test_spline_keys_give_back_gravity():
    # Hermite keys with handles at thirds reproduce a parabola exactly (cubic Bezier algebra).
    fps = 24.0
    plan = plan_jump(JumpGoals(height=0.4))
    t = plan.sample(fps).times
    z = evaluate_hermite(hermite_keys(plan, "height"), t)
    pos = np.stack([np.zeros_like(t), np.zeros_like(t), 1.0 + z], axis=1)
    result = analyse_trajectory(np.arange(len(t)) + 1, pos, fps, gravity=plan.gravity)
    assert result.implied_gravity_m_s2 == pytest.approx(plan.gravity, rel=1e-3)
    assert not result.stepped_keys


@pytest.mark.parametrize("step", [2, 3])
def test_stepped_keys_on_twos_and_threes_give_back_gravity(step):
    fps = 24.0
    plan, frames, pos = planned_samples(JumpGoals(height=0.5), fps)
    held = pos[(np.arange(len(frames)) // step) * step]  # constant interpolation
    result = analyse_trajectory(frames, held, fps, gravity=plan.gravity)
    assert result.stepped_keys
    assert result.implied_gravity_m_s2 == pytest.approx(plan.gravity, rel=1e-3)
    hop = plan.hops[0]
    assert abs(result.flights[0].first_frame - frame_of(hop.takeoff_time_s, fps)) <= step
    assert not any(f.kind == "dip_faster_than_free_fall" for f in result.findings)


@pytest.mark.parametrize("fps", [24.0, 30.0, 60.0])
@pytest.mark.parametrize("style", [dict(fall_gravity_scale=2.0), dict(apex_hang=0.2),
                                   dict(fall_gravity_scale=1.5, apex_hang=0.1),
                                   dict(fall_gravity_scale=0.7)])
def test_stylised_timing_is_a_deviation_with_its_physical_equivalent(style, fps):
    plan, frames, pos = planned_samples(JumpGoals(height=0.5, **style), fps)
    result = analyse_trajectory(frames, pos, fps, gravity=plan.gravity)
    assert len(result.flights) == 1
    flight = result.flights[0]
    scale = style.get("fall_gravity_scale", 1.0)
    hang = style.get("apex_hang", 0.0)
    # Issue 11's bound for rise and fall gravities: 0.5%.
    assert flight.rise_gravity_m_s2 == pytest.approx(plan.gravity, rel=5e-3)
    assert flight.fall_gravity_m_s2 == pytest.approx(scale * plan.gravity, rel=5e-3)
    assert flight.apex_hang_s == pytest.approx(hang, abs=1 / fps)
    kinds = {f.kind for f in result.findings}
    assert ("stylised_fall_gravity" in kinds) == (scale != 1.0)
    assert ("apex_hang" in kinds) == (hang > 0)
    assert not result.has_problems  # reported, not failed
    if scale != 1.0:
        text = next(f.message for f in result.findings if f.kind == "stylised_fall_gravity")
        assert f"falls as if g were {scale:.2f} g" in text


def test_outputs_are_frozen_and_finite():
    plan, frames, pos = planned_samples(JumpGoals(height=0.3), 24.0)
    result = analyse_trajectory(frames, pos, 24.0)
    with pytest.raises(AttributeError):
        result.fps = 30  # frozen dataclass
    assert np.all(np.isfinite(result.force_bw)) and np.all(np.isfinite(result.vertical_speed_m_s))
    # Standing still reads 1 body weight; the air reads 0 under the plan's gravity (Newton's 2nd law).
    assert result.force_bw[0] == pytest.approx(1.0, abs=1e-9)


@pytest.mark.parametrize("frames, positions, fps, needle", [
    (np.arange(4), np.zeros((4, 3)), 24, "only 4 samples"),
    (np.arange(6), np.zeros((6, 2)), 24, "shape (n, 3)"),
    (np.arange(6), np.zeros((5, 3)), 24, "6 frames but 5 positions"),
    (np.array([1, 2, 3, 3, 4, 5]), np.zeros((6, 3)), 24, "frame 3 follows 3"),
    (np.arange(6), np.where(np.arange(18).reshape(6, 3) == 7, np.nan, 0.0), 24, "sample 3"),
])
def test_bad_trajectories_raise_with_the_values(frames, positions, fps, needle):
    with pytest.raises(InvalidTrajectoryError, match=None) as info:
        analyse_trajectory(frames, positions, fps)
    assert needle in str(info.value)


def test_bad_fps_raises_the_goal_error():
    with pytest.raises(InvalidGoalError, match="fps"):
        analyse_trajectory(np.arange(6), np.zeros((6, 3)), 0)
