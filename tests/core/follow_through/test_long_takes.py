"""Long takes are simulated window by window: the checks against outside references hold cut up.

A take longer than a window (a few hundred frames at production size) is swept to convergence a
window at a time, each window starting from the state the last one ended in. A step depends only
on earlier ones, so the converged path is the same; these tests cut the takes of the accuracy
checks into 8-frame windows and run those checks again.
"""

import math

import numpy as np
import pytest

import leapwright.core.follow_through.integrator as integrator
import test_chain_contacts as contacts
import test_chains_dynamics as dynamics
import test_chains_weight as weight
from leapwright.core.follow_through.chains import BakeOptions, bake_chains


@pytest.fixture
def windows(monkeypatch):
    """Windows of 8 frame intervals; yields the list of window lengths swept (in frames)."""
    monkeypatch.setattr(integrator, "_WINDOW_VALUES", 1)
    monkeypatch.setattr(integrator, "_MIN_WINDOW", 8)
    swept = []
    sweep = integrator._sweep_window

    def counted(slots, coefficients, times, *rest):
        swept.append(len(times))
        return sweep(slots, coefficients, times, *rest)

    monkeypatch.setattr(integrator, "_sweep_window", counted)
    return swept


@pytest.mark.parametrize("check, args", [
    (dynamics.test_large_swing_matches_solve_ivp, ()),  # scipy solve_ivp, 60 deg swing
    (dynamics.test_small_angle_pendulum_period, ()),  # T = 2 pi sqrt(l / g)
    (dynamics.test_moon_gravity_slows_the_swing, ()),
    (dynamics.test_free_fall_step_matches_the_damped_oscillator, (0.3, 0.3723)),  # analytic step response
    (dynamics.test_frame_rates_agree, (1.5,)),
    (dynamics.test_stiff_springs_stay_bounded_and_track_the_static_bend, (300.0,)),
    (weight.test_free_fall_settles_at_minus_sag, ("hair",)),
    (weight.test_landing_droops_more_for_a_bigger_spike, ()),
    (weight.test_held_extra_weight_gives_the_static_bend, (2.0,)),
    (weight.test_reset_starts_over_from_the_animated_pose, ()),
    (contacts.test_dropped_chain_stays_outside_within_a_millimetre, ("sphere",)),
    (contacts.test_energy_never_grows_in_a_contact, ()),
], ids=lambda value: getattr(value, "__name__", None))
def test_the_accuracy_checks_hold_on_a_take_cut_into_windows(windows, check, args):
    check(*args)
    assert len(windows) > 3 and max(windows) == 9  # really cut: 8 intervals, 9 frames each


def test_windows_stop_within_the_sweeps_error_estimate(windows, monkeypatch):
    # The strand of the sweeps' own stopping test (a head bouncing hard, the tip past the
    # 80 deg limit): cut into windows, each stopped by the same a-posteriori bound of a
    # linearly converging fixed-point iteration (Banach; Kreyszig 1978, sec. 5.1), the kept
    # path must still be within ERROR_TOLERANCE of the whole take iterated to 1e-10 rad.
    t, heads, rot, parents, params = dynamics.bouncing_strand()
    kept = bake_chains(t, heads, rot, parents, params)
    assert len(windows) == math.ceil((len(t) - 1) / 8)
    tolerance = integrator.ERROR_TOLERANCE
    monkeypatch.setattr(integrator, "_WINDOW_VALUES", 10 ** 9)  # one window
    monkeypatch.setattr(integrator, "SWEEP_TOLERANCE", 1e-10)
    monkeypatch.setattr(integrator, "ERROR_TOLERANCE", 1e-10)
    converged = bake_chains(t, heads, rot, parents, params)
    assert np.degrees(np.abs(converged.world_offsets).max()) > 60.0  # a violent swing
    assert np.abs(kept.world_offsets - converged.world_offsets).max() <= tolerance
    # converged window by window, it is the whole take's converged path
    monkeypatch.setattr(integrator, "_WINDOW_VALUES", 1)
    cut = bake_chains(t, heads, rot, parents, params)
    assert np.abs(cut.world_offsets - converged.world_offsets).max() < 1e-8


@pytest.mark.parametrize("options", [BakeOptions(substeps=2), BakeOptions(resets=(50,)), BakeOptions(cyclic=True)],
                         ids=["substeps", "reset", "cyclic"])
def test_converged_window_by_window_the_path_is_the_whole_takes(windows, monkeypatch, options):
    # A step depends only on earlier ones, so iterated to 1e-10 rad the path cut into windows is
    # the path of the whole take, on a finer grid (substeps), across a reset and for a loop (which
    # is solved whole: its start is the periodic state of every step's product).
    t, heads, rot, parents, params = dynamics.bouncing_strand(seconds=4.0)
    monkeypatch.setattr(integrator, "SWEEP_TOLERANCE", 1e-10)
    monkeypatch.setattr(integrator, "ERROR_TOLERANCE", 1e-10)
    cut = bake_chains(t, heads, rot, parents, params, options=options)
    assert (len(windows) == 1) if options.cyclic else (len(windows) > 3)
    monkeypatch.setattr(integrator, "_WINDOW_VALUES", 10 ** 9)  # one window
    whole = bake_chains(t, heads, rot, parents, params, options=options)
    assert np.abs(whole.world_offsets).max() > 0.5
    assert np.abs(cut.world_offsets - whole.world_offsets).max() < 1e-8
