"""Key extraction: exact flight spans, the tolerance, and a minimal key list."""

import numpy as np
import pytest

from leapwright.core.plan.goals import JumpGoals
from leapwright.core.base.keys import HermiteKeys, evaluate_hermite, hermite_keys, phase_pose_keys
from leapwright.core.plan.feet import foot_ball_path
from leapwright.core.plan.planner import plan_jump

TOL = 5e-4
DEFAULT_HEIGHT_KEYS = 16  # stated in README: the default 0.4 m jump needs at most 16 height keys


@pytest.fixture(scope="module")
def jump():
    return plan_jump(JumpGoals(height=0.4, distance=0.9, landing_height=0.2))


def test_flight_span_reproduces_the_parabola(jump):
    # A cubic Hermite span with the exact end values and slopes reproduces any
    # quadratic exactly (a parabola is a cubic Bezier with handles at thirds).
    keys = hermite_keys(jump, "height", TOL)
    hop = jump.hops[0]
    assert np.any(np.isclose(keys.times, hop.takeoff_time_s, atol=0, rtol=0))
    assert np.any(np.isclose(keys.times, hop.touchdown_time_s, atol=0, rtol=0))
    t = np.linspace(hop.takeoff_time_s, hop.touchdown_time_s, 1001)
    assert np.max(np.abs(evaluate_hermite(keys, t) - jump.height(t))) < 1e-9


@pytest.mark.parametrize("channel", ["height", "forward"])
def test_keys_follow_the_plan_within_tolerance(jump, channel):
    keys = hermite_keys(jump, channel, TOL)
    t = np.linspace(0, jump.duration_s, 100001)
    f = jump.height if channel == "height" else jump.forward
    assert np.max(np.abs(evaluate_hermite(keys, t) - f(t))) <= TOL


@pytest.mark.parametrize("channel", ["height", "forward"])
def test_key_list_is_minimal(jump, channel):
    keys = hermite_keys(jump, channel, TOL)
    f = jump.height if channel == "height" else jump.forward
    t = np.linspace(0, jump.duration_s, 40001)
    for k in range(len(keys)):
        keep = np.arange(len(keys)) != k
        fewer = HermiteKeys(keys.times[keep], keys.values[keep], keys.slopes[keep])
        assert np.max(np.abs(evaluate_hermite(fewer, t) - f(t))) > TOL, f"key {k} was not needed"


def test_default_jump_key_count():
    keys = hermite_keys(plan_jump(JumpGoals(height=0.4)), "height", TOL)
    assert len(keys) <= DEFAULT_HEIGHT_KEYS


def test_phase_pose_keys_sit_on_phase_starts(jump):
    poses = phase_pose_keys(jump, "height")
    starts = sorted({p.start_s for p in jump.phases} | {jump.duration_s})
    assert np.allclose(poses.times, starts)
    assert np.allclose(poses.values, jump.height(np.array(starts)))


def test_feet_stay_planted_in_contact_and_lift_in_flight(jump):
    t = np.linspace(0, jump.duration_s, 20001)
    x, z = foot_ball_path(jump, t)
    hop = jump.hops[0]
    before, after = t <= hop.takeoff_time_s, t >= hop.touchdown_time_s
    assert np.ptp(x[before]) == 0 and np.all(z[before] == 0)
    assert np.ptp(x[after]) < 1e-12 and np.allclose(z[after], 0.2)
    assert x[after][0] == pytest.approx(0.9, abs=1e-9)
    assert np.all(z[~before & ~after] >= -1e-9)


@pytest.mark.parametrize("step", [2, 3])
def test_held_poses_on_twos_and_threes_keep_takeoff_and_touchdown_frames(jump, step):
    # Animating on twos: each drawing held two frames (common practice).
    from leapwright.core.base.keys import held_pose_keys

    fps = 24.0
    keys = held_pose_keys(jump, "height", fps, step)
    frames = np.rint(keys.times * fps).astype(int)
    assert np.allclose(keys.times * fps, frames)
    forced = {int(round(t * fps)) for h in jump.hops for t in (h.takeoff_time_s, h.touchdown_time_s)}
    assert forced <= set(frames.tolist())
    holds = np.diff(frames)
    for start, hold in zip(frames[:-1], holds):
        nxt = start + hold
        assert hold == step or nxt in forced or nxt == frames[-1]
        assert 1 <= hold <= step
    assert np.allclose(keys.values, jump.height(keys.times))


@pytest.mark.parametrize("tolerance", [1e-300, 5e-324, 1e-10])
def test_tolerance_finer_than_a_nanometre_is_refused(jump, tolerance):
    # Below float resolution the key search could never finish; the message repeats the value.
    from leapwright.core.base.errors import InvalidGoalError
    with pytest.raises(InvalidGoalError, match=f"key tolerance {tolerance:g} m"):
        hermite_keys(jump, "height", tolerance)


def test_nanometre_tolerance_still_follows_the_plan(jump):
    keys = hermite_keys(jump, "height", 1e-9)
    t = np.linspace(0, jump.duration_s, 20001)
    assert np.max(np.abs(evaluate_hermite(keys, t) - jump.height(t))) <= 1e-9
