"""The checker's ground checks: feet, legs, dips, forward travel, landings, forces.

Sources named beside each check:
- apparent weight F/(m g) = 1 + a_z/g (Newton's second law), checked against the plan's
  own force curve;
- mean landing force BW (1 + h / dh) over a stopping distance dh after a fall of h
  (work-energy theorem, textbook mechanics);
- a free body keeps its horizontal speed (Newton's first law, no air resistance);
- grades from core.base.constants (LANDING_FORCE_GRADES, PUSH_FORCE_GRADES: from memory).
"""

import numpy as np
import pytest

from leapwright.core.check.analysis import FootTrack, analyse_trajectory
from leapwright.core.base.errors import InvalidTrajectoryError
from leapwright.core.plan.feet import foot_ball_path
from leapwright.core.plan.goals import JumpGoals
from leapwright.core.plan.planner import plan_jump

FPS = 24.0


def planned(goals=None, fps=FPS):
    plan = plan_jump(goals or JumpGoals(height=0.4, distance=0.3))
    s = plan.sample(fps)
    frames = np.arange(len(s.times)) + 1.0
    pos = np.stack([s.forward, np.zeros_like(s.times), 1.0 + s.height], axis=1)
    return plan, s, frames, pos


def foot_track(plan, t, side=0.1):
    fx, fz = foot_ball_path(plan, t)
    return np.stack([fx, np.full_like(fx, side), fz], axis=1)


def kinds(result):
    return [f.kind for f in result.findings]


def test_planted_feet_of_a_planned_jump_raise_nothing():
    plan, s, frames, pos = planned()
    feet = [FootTrack("foot.L", foot_track(plan, s.times, 0.1)),
            FootTrack("foot.R", foot_track(plan, s.times, -0.1))]
    result = analyse_trajectory(frames, pos, FPS, gravity=plan.gravity, feet=feet)
    assert not result.has_problems, [f.message for f in result.findings]


def test_a_foot_sliding_two_centimetres_while_planted_is_flagged():
    plan, s, frames, pos = planned()
    foot = foot_track(plan, s.times)
    before = s.times < plan.hops[0].takeoff_time_s
    # 2 cm of drift along x during the first contact, growing linearly.
    foot[before, 0] += 0.02 * s.times[before] / s.times[before][-1]
    result = analyse_trajectory(frames, pos, FPS, gravity=plan.gravity,
                                feet=[FootTrack("foot.L", foot)])
    slides = [f for f in result.findings if f.kind == "foot_slides_in_contact"]
    assert len(slides) == 1
    assert slides[0].first_frame == 1.0
    assert slides[0].last_frame < 1 + plan.hops[0].takeoff_time_s * FPS
    assert "foot.L" in slides[0].message and "slides 2.0 cm" in slides[0].message


def test_a_leg_five_percent_past_its_rest_length_is_flagged():
    plan, s, frames, pos = planned()
    foot = foot_track(plan, s.times)
    hip = pos - np.array([0.0, 0.0, 0.1])
    ground = (s.times < plan.hops[0].takeoff_time_s) | (s.times > plan.hops[0].touchdown_time_s)
    longest = np.max(np.linalg.norm(foot - hip, axis=1)[ground])
    fine = analyse_trajectory(frames, pos, FPS, feet=[FootTrack("leg", foot, longest, hip)])
    assert "leg_overstretched" not in kinds(fine)  # at rest length exactly: a straight leg
    stretched = analyse_trajectory(frames, pos, FPS, feet=[FootTrack("leg", foot, longest / 1.05, hip)])
    found = [f for f in stretched.findings if f.kind == "leg_overstretched"]
    assert found and any("5.0% longer" in f.message for f in found)


def test_a_dip_faster_than_free_fall_is_flagged():
    # Still, then 4 frames accelerating down at 1.5 g, then braking to a stop at 0.5 g.
    g = 9.81
    t = np.arange(40) / FPS
    t1 = 10 / FPS
    t2 = t1 + 4 / FPS
    v2 = -1.5 * g * (t2 - t1)
    t3 = t2 + abs(v2) / (0.5 * g)
    z = np.where(t < t1, 0.0, -0.75 * g * (t - t1) ** 2)
    z2 = -0.75 * g * (t2 - t1) ** 2
    z = np.where(t >= t2, z2 + v2 * (t - t2) + 0.25 * g * (t - t2) ** 2, z)
    z3 = z2 + v2 * (t3 - t2) + 0.25 * g * (t3 - t2) ** 2
    z = np.where(t >= t3, z3, z)
    pos = np.stack([np.zeros_like(t), np.zeros_like(t), 1.0 + z], axis=1)
    result = analyse_trajectory(np.arange(40) + 1, pos, FPS, gravity=g)
    dips = [f for f in result.findings if f.kind == "dip_faster_than_free_fall"]
    assert len(dips) == 1
    assert dips[0].first_frame <= 13 and dips[0].last_frame >= 12  # the 1.5 g frames 11-15


def test_forward_speed_changing_in_the_air_is_flagged_and_constant_speed_is_not():
    plan, s, frames, pos = planned(JumpGoals(height=0.4, distance=0.6))
    assert "forward_speed_changes_in_flight" not in kinds(analyse_trajectory(frames, pos, FPS))
    hop = plan.hops[0]
    air = (s.times >= hop.takeoff_time_s) & (s.times <= hop.touchdown_time_s)
    ta = s.times[air] - hop.takeoff_time_s
    pushed = pos.copy()
    pushed[air, 0] += 0.5 * 2.0 * ta ** 2  # 2 m/s^2 forward in the air: +1.1 m/s over 0.57 s
    after = s.times > hop.touchdown_time_s
    pushed[after, 0] += 0.5 * 2.0 * hop.flight_time_s ** 2
    result = analyse_trajectory(frames, pushed, FPS, gravity=plan.gravity)
    found = [f for f in result.findings if f.kind == "forward_speed_changes_in_flight"]
    assert len(found) == 1
    assert abs(found[0].first_frame - (1 + hop.takeoff_time_s * FPS)) <= 1


def test_a_landing_that_stops_dead_is_too_hard():
    plan, s, frames, pos = planned(JumpGoals(height=0.4))
    hop = plan.hops[0]
    after = s.times > hop.touchdown_time_s
    frozen = pos.copy()
    frozen[after, 2] = plan.height(np.array([hop.touchdown_time_s]))[0] + 1.0
    result = analyse_trajectory(frames, frozen, FPS, gravity=plan.gravity)
    hard = [f for f in result.findings if f.kind == "landing_too_hard"]
    assert len(hard) == 1
    # Work-energy: a 0.4 m fall stopped within a centimetre or less is tens of BW.
    assert result.hops[0].mean_landing_bw > 8.0
    assert result.hops[0].landing_grade == "beyond human - stylised"


def test_a_landing_that_sinks_six_times_the_fall_is_too_soft():
    plan, s, frames, pos = planned(JumpGoals(height=0.1, landing_depth=0.6))
    result = analyse_trajectory(frames, pos, FPS, gravity=plan.gravity)
    assert "landing_too_soft" in kinds(result)
    # Work-energy: mean force 1 + h/dh; h = 0.1 m apex rise, dh the sink after touchdown.
    hop = result.hops[0]
    assert hop.mean_landing_bw == pytest.approx(1 + hop.fall_height_m / hop.stopping_distance_m)
    assert hop.fall_height_m == pytest.approx(0.1, abs=0.01)
    assert hop.mean_landing_bw < 1.25


def test_apparent_weight_follows_the_plans_force_curve():
    # Newton's second law: the plan's force_bw is 1 + a/g exactly; the checker estimates
    # it from positions only. Away from take-off and touchdown kinks they agree.
    fps = 60.0
    plan, s, frames, pos = planned(JumpGoals(height=0.4), fps)
    result = analyse_trajectory(frames, pos, fps, gravity=plan.gravity)
    far = np.ones(len(frames), bool)
    for hop in plan.hops:
        for t in (hop.takeoff_time_s, hop.touchdown_time_s):
            far &= np.abs(s.times - t) > 3.0 / fps
    err = np.abs(result.force_bw - s.force_bw)[far]
    assert np.median(err) < 0.01
    assert np.max(err) < 0.2
    before = s.times < plan.hops[0].takeoff_time_s
    assert result.hops[0].peak_push_bw == pytest.approx(np.max(s.force_bw[before]), rel=0.1)
    assert result.hops[0].push_grade == "everyday"  # under PUSH_FORCE_GRADES[0] = 2.5 BW
    # In flight the force plate reads 0 (free fall).
    air = (s.times > plan.hops[0].takeoff_time_s + 3 / fps) & (s.times < plan.hops[0].touchdown_time_s - 3 / fps)
    assert np.max(np.abs(result.force_bw[air])) < 1e-6


def test_bad_foot_tracks_raise_with_the_names():
    plan, s, frames, pos = planned()
    with pytest.raises(InvalidTrajectoryError, match="foot 'foot.L' positions has shape"):
        analyse_trajectory(frames, pos, FPS, feet=[FootTrack("foot.L", np.zeros((3, 3)))])
    with pytest.raises(InvalidTrajectoryError, match="rest length"):
        analyse_trajectory(frames, pos, FPS, feet=[FootTrack("foot.L", np.zeros_like(pos), -1.0)])
