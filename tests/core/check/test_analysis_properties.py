"""Property tests: any trajectory gives a finite analysis or one of the core's own errors.

Reference for the structured case: the law of fall z = z0 + v0 t - g t^2/2 (textbook
mechanics): a pure arc of at least five samples is found as one flight with its g.
"""

import dataclasses
import math

import numpy as np
import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from leapwright.core.check.analysis import FootTrack, analyse_trajectory
from leapwright.core.base.errors import LeapwrightError

FPS = st.sampled_from([12.0, 23.976, 24.0, 25.0, 30.0, 60.0])
coordinate = st.floats(-50.0, 50.0, allow_nan=False, allow_infinity=False)


def assert_finite(value, path="result"):
    """Every float reachable from the result is finite (None is allowed)."""
    if value is None or isinstance(value, (str, bool)):
        return
    if dataclasses.is_dataclass(value):
        for f in dataclasses.fields(value):
            assert_finite(getattr(value, f.name), f"{path}.{f.name}")
    elif isinstance(value, (tuple, list)):
        for i, v in enumerate(value):
            assert_finite(v, f"{path}[{i}]")
    elif isinstance(value, np.ndarray):
        assert np.all(np.isfinite(value)), path
    elif isinstance(value, (float, np.floating, int, np.integer)):
        assert math.isfinite(float(value)), path


def checked(frames, pos, fps, **kw):
    try:
        result = analyse_trajectory(frames, pos, fps, **kw)
    except LeapwrightError:
        return None
    assert_finite(result)
    for f in result.findings:
        assert f.first_frame <= f.last_frame
        assert frames[0] <= f.first_frame and f.last_frame <= frames[-1]
    return result


# Found by hypothesis: a rise and a fall joined into one stylised flight, whose rise a
# trim then refitted flat (gravity 0): division by zero, and NaN against each gravity.
_FLAT_RISE = np.array([[20, 0, 3.5], [3.5, 3.5, 3.5], [3.5, 3.5, 3.5], [3.5, 3.5, 3.5], [2, 3.5, 3.5], [3.5, 3.5, 3],
                       [3.5, 3.5, 3.5], [3.5, 3.5, 3.5], [9, 3.5, 3.5], [1, 3.5, 3.5], [3.5, 3.5, 3.5], [3.5, 3.5, 3.5],
                       [3.5, 3.5, 3.5], [3.5, 3.5, 3.5], [3.5, 3.5, 7], [3, 1, 3.5], [3.5, 3.5, 3.5], [1, 3.5, 3.5],
                       [3.5, 3.5, 3.5], [3.5, 3.5, 3.5], [3.5, 3.5, 3.5], [3.5, 3.5, 3.5], [40, 3.5, 3.5],
                       [3.5, 3.5, 4], [3.5, 3.5, 3.5], [3.5, 3.5, 3], [3.5, 3.5, 3.5]], dtype=float)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(pos=hnp.arrays(np.float64, st.tuples(st.integers(1, 70), st.just(3)), elements=coordinate),
       fps=FPS, gravity=st.floats(0.5, 40.0))
@example(pos=_FLAT_RISE, fps=60.0, gravity=40.0)
def test_random_trajectories_never_crash_nor_give_nan(pos, fps, gravity):
    frames = np.arange(len(pos)) + 1.0
    result = checked(frames, pos, fps, gravity=gravity)
    # projectile motion: a flight's height curve bends down, so every fitted gravity is positive
    for f in (result.flights if result is not None else ()):
        assert f.rise_gravity_m_s2 > 0 and f.fall_gravity_m_s2 > 0


@settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(n_still=st.integers(0, 12), n_air=st.integers(5, 40), n_after=st.integers(0, 12),
       g=st.floats(1.0, 30.0), v0=st.floats(0.5, 5.0), fps=FPS,
       holds=st.sampled_from([1, 2, 3]), seed=st.integers(0, 2 ** 31 - 1),
       noise=st.sampled_from([0.0, 1e-4, 1e-3]))
def test_arcs_with_holds_and_noise_never_crash(n_still, n_air, n_after, g, v0, fps, holds, seed, noise):
    t = np.arange(n_air) / fps
    arc = v0 * t - 0.5 * g * t ** 2
    z = np.concatenate([np.zeros(n_still), arc, np.full(n_after, arc[-1])])
    z = z[(np.arange(len(z)) // holds) * holds]
    rng = np.random.default_rng(seed)
    pos = np.stack([0.3 * np.arange(len(z)) / fps, np.zeros_like(z), 1.0 + z], axis=1)
    pos += rng.uniform(-noise, noise, pos.shape)
    foot = pos - np.array([0.0, 0.0, 0.9])
    result = checked(np.arange(len(z)) + 10.0, pos, fps, gravity=9.81,
                     feet=[FootTrack("foot", foot, 0.9)])
    assert result is not None


@pytest.mark.parametrize("fps", [24.0, 30.0])
@settings(max_examples=40, deadline=None)
@given(g=st.floats(2.0, 25.0), v0=st.floats(1.5, 4.0))
def test_a_clean_arc_is_one_flight_with_its_gravity(fps, g, v0):
    flight_time = 2 * v0 / g
    n_air = int(flight_time * fps)
    if n_air < 6:
        return
    t = np.arange(n_air + 1) / fps
    z = np.concatenate([np.zeros(5), v0 * t - 0.5 * g * t ** 2, np.zeros(5) + (v0 * t[-1] - 0.5 * g * t[-1] ** 2)])
    pos = np.stack([np.zeros_like(z), np.zeros_like(z), 1.0 + z], axis=1)
    result = analyse_trajectory(np.arange(len(z)) + 1.0, pos, fps)
    assert len(result.flights) == 1
    assert result.implied_gravity_m_s2 == pytest.approx(g, rel=1e-6)
