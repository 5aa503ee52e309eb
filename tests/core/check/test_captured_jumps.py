"""The checker on captured motion: real flights found, nothing invented, honest uncertainty.

Sources named beside each check:
- force-plate recordings of real countermovement jumps, PyPI package jumpmetrics 0.2.0 (MIT,
  tests/data/jumpmetrics), integrated to COM paths by impulse-momentum (capture_paths.py);
- jumps simulated from independent physics with scipy (capture_paths.simulated_jump);
- capture noise of 0.5-2.6 mm RMS around real flights at 120 fps (reference-values.md);
- acceptance from the issue: every flight found with implied g within 5 % of 9.81 at
  24-240 fps, standing and walking never a flight;
- work-energy landing law: mean force = BW (1 + h / stop) (textbook mechanics);
- Moon gravity 1.62 m/s^2 (NASA planetary fact sheet).
"""

import zlib

import numpy as np
import pytest

from leapwright.core.check.analysis import analyse_trajectory
from leapwright.core.plan.goals import JumpGoals
from leapwright.core.plan.planner import plan_jump
from tests.core.check import capture_paths as cp

FRAME_RATES = (24.0, 30.0, 60.0, 120.0, 240.0)


def _check(t, pos, fps, gravity=cp.G):
    return analyse_trajectory(np.round(t * fps, 9), pos, fps, gravity=gravity)


@pytest.mark.parametrize("name", cp.PLATE_FILES)
@pytest.mark.parametrize("fps", FRAME_RATES)
def test_recorded_jumps_give_one_flight_under_earth_gravity(name, fps):
    t, z, truth = cp.plate_com_path(name)
    rng = np.random.default_rng(zlib.crc32(f"{name}{fps}".encode()))
    ts, zs = cp.sampled(t, z, fps, phase=rng.uniform())
    result = _check(ts, cp.captured(ts, zs, rng), fps)
    assert result.measured
    assert len(result.flights) == 1, [(f.first_frame, f.last_frame, f.gravity_m_s2) for f in result.flights]
    flight = result.flights[0]
    assert flight.gravity_m_s2 == pytest.approx(cp.G, rel=0.05)  # the acceptance
    # The flight is the recorded one: take-off and touchdown within 0.05 s of the plate's.
    assert abs(flight.takeoff_frame / fps - truth["t_off"]) < 0.05
    assert abs(flight.touchdown_frame / fps - truth["t_td"]) < 0.05
    assert not [f for f in result.findings if f.kind in ("floaty_gravity", "heavy_gravity",
                                                           "forward_speed_changes_in_flight")]


@pytest.mark.parametrize("fps", FRAME_RATES)
@pytest.mark.parametrize("seed", range(4))
def test_simulated_captures_give_one_flight_and_an_interval(fps, seed):
    rng = np.random.default_rng(seed * 1000 + int(fps))
    t, z, truth = cp.simulated_jump(v0=rng.uniform(1.8, 3.0))
    ts, zs = cp.sampled(t, z, fps, phase=rng.uniform())
    result = _check(ts, cp.captured(ts, zs, rng, forward_m_s=0.4), fps)
    assert len(result.flights) == 1
    f = result.flights[0]
    assert f.gravity_m_s2 == pytest.approx(cp.G, rel=0.05)
    assert f.gravity_low_m_s2 < f.gravity_m_s2 < f.gravity_high_m_s2
    # A fit over the flight: travel at a steady 0.4 m/s is no finding (the false alarm).
    assert "forward_speed_changes_in_flight" not in [x.kind for x in result.findings]


@pytest.mark.parametrize("fps", FRAME_RATES)
@pytest.mark.parametrize("seed", range(3))
def test_standing_walking_and_shifting_weight_are_never_flights(fps, seed):
    rng = np.random.default_rng(seed + int(fps))
    for t, pos in (cp.walking(fps, rng), cp.standing(fps), cp.shifting_weight(fps)):
        noisy = pos + cp.captured(t, np.zeros_like(t), rng) - np.array([0, 0, 0])
        result = _check(t, noisy, fps)
        assert result.flights == ()
        assert not [f for f in result.findings if f.kind in ("floaty_gravity", "not_ballistic",
                                                               "dip_faster_than_free_fall", "landing_too_hard")]


def test_a_moon_jump_capture_is_floaty_and_sure_of_it():
    rng = np.random.default_rng(7)
    t, z, _ = cp.simulated_jump(v0=1.6, g=1.62, after_s=1.0)  # Moon gravity (NASA fact sheet)
    ts, zs = cp.sampled(t, z, 60.0, phase=0.37)
    result = _check(ts, cp.captured(ts, zs, rng), 60.0)
    assert len(result.flights) == 1
    f = result.flights[0]
    assert f.gravity_high_m_s2 < cp.G and f.gravity_low_m_s2 <= 1.62 * 1.05
    assert "floaty_gravity" in [x.kind for x in result.findings]


@pytest.mark.parametrize("phase", np.round(np.linspace(0.0, 0.9, 10), 1))
def test_planned_moon_jump_with_millimetre_noise_does_not_start_early(phase):
    # The planner's jump under Moon gravity, +-1 mm uniform noise at 24 fps, sampled at every
    # sub-frame phase (the case: the flight started 2 frames early).
    plan = plan_jump(JumpGoals(height=0.4, gravity=1.62))
    fine = plan.sample(960.0)
    t, z = cp.sampled(fine.times, 1.0 + fine.height, 24.0, phase=phase)
    rng = np.random.default_rng(int(phase * 100))
    pos = np.stack([np.zeros_like(t), np.zeros_like(t), z], axis=1) + rng.uniform(-1e-3, 1e-3, (len(t), 3))
    result = _check(t, pos, 24.0, gravity=1.62)
    assert len(result.flights) == 1
    f = result.flights[0]
    hop = plan.hops[0]
    first_airborne = np.ceil(hop.takeoff_time_s * 24.0 - phase) + phase  # frame of the first sample in the air
    # Never the 2+ frames early of the issue; within a frame at most phases (the push fades
    # to zero, so its last frame lies within the noise of the parabola).
    assert f.first_frame >= first_airborne - 1.5
    assert abs(f.takeoff_frame / 24.0 - hop.takeoff_time_s) <= 1.5 / 24.0
    # The same at the other end: the last sample in the air, never 2+ frames late.
    last_airborne = np.floor(hop.touchdown_time_s * 24.0 - phase) + phase
    assert f.last_frame <= last_airborne + 1.5


@pytest.mark.parametrize("phase", np.linspace(0.0, 0.9, 10))
def test_landing_stop_and_force_hold_under_millimetre_noise(phase):
    # A landing stopping in ~12 cm at ~3.5 BW mean (the case), +-1 mm noise at 24 fps.
    rng = np.random.default_rng(int(phase * 100) + 1)
    t, z, truth = cp.simulated_jump(v0=2.6, static_m=0.06)
    ts, zs = cp.sampled(t, z, 24.0, phase=phase)
    pos = np.stack([np.zeros_like(ts), np.zeros_like(ts), zs], axis=1) + rng.uniform(-1e-3, 1e-3, (len(ts), 3))
    result = _check(ts, pos, 24.0)
    hop = result.hops[0]
    # work-energy law: mean force = 1 + fall / stop; the stop within 2 cm and its stated spread
    assert hop.stopping_distance_m == pytest.approx(truth["stop_m"], abs=0.02 + 2 * hop.stopping_distance_sd_m)
    assert hop.mean_landing_bw == pytest.approx(truth["mean_bw"], rel=0.25)
    assert "landing_too_hard" not in [f.kind for f in result.findings]


@pytest.mark.parametrize("fps", (24.0, 120.0))
def test_dip_depth_comes_with_its_uncertainty(fps):
    # Simulated countermovement (capture_paths.simulated_jump, scipy): the depth is the standing
    # height less the lowest point before take-off, read off the fine path here.
    t, z, truth = cp.simulated_jump(v0=2.6)
    depth = float(z[0] - z[t < truth["t_off"]].min())
    ts, zs = cp.sampled(t, z, fps, phase=0.3)
    keyed = _check(ts, np.stack([0 * ts, 0 * ts, zs], axis=1), fps).hops[0]
    assert keyed.dip_depth_sd_m == 0.0 and keyed.unweighting_sd_bw == 0.0
    assert keyed.dip_depth_m == pytest.approx(depth, abs=2e-3)
    rng = np.random.default_rng(int(fps))
    hop = _check(ts, cp.captured(ts, zs, rng), fps).hops[0]
    assert hop.dip_depth_sd_m > 0 and hop.unweighting_sd_bw > 0
    # The stated spread covers the error (soft-tissue wobble adds a bias of up to its 2.6 mm).
    assert abs(hop.dip_depth_m - depth) <= 2.6e-3 + 2 * hop.dip_depth_sd_m


@pytest.mark.parametrize("fps", (24.0, 60.0, 240.0))
def test_stated_force_noise_matches_a_monte_carlo_of_white_jitter(fps):
    from leapwright.core.check import capture_flights

    # numpy Monte Carlo: the smoothed acceleration of pure jitter, over many samples.
    rng = np.random.default_rng(7)
    t = np.arange(20000) / fps
    noise = 1e-3
    _, accel = capture_flights.measured_acceleration(t, rng.normal(0, noise, len(t)))
    empirical = float(np.std(accel[100:-100])) / cp.G
    assert capture_flights.force_noise_bw(t, noise, cp.G) == pytest.approx(empirical, rel=0.05)
