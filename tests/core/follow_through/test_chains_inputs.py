"""Bad input is refused with the core's own errors; any valid input gives finite keys."""

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from leapwright.core.follow_through.presets import CHAIN_PRESETS, chain_preset
from leapwright.core.follow_through.chains import BakeOptions, ChainParameters, LinkCoefficients, bake_chains
from leapwright.core.base.errors import InvalidGoalError, InvalidTrajectoryError, LeapwrightError
from leapwright.core.base.rotation_vectors import rotvec_to_matrix


def still(frames=10, bones=2):
    t = np.arange(frames) / 24.0
    heads = np.zeros((frames, bones, 3))
    rot = np.broadcast_to(np.eye(3), (frames, bones, 3, 3)).copy()
    return t, heads, rot, [-1] + list(range(bones - 1))


GOOD = dict(frequency=2.0, damping_ratio=0.3, sag=0.3)


@pytest.mark.parametrize(
    "field, value, words",
    [
        ("damping_ratio", -0.1, "0 or more"),
        ("frequency", 0.0, "greater than 0"),
        ("frequency", -3.0, "greater than 0"),
        ("frequency", float("nan"), "finite"),
        ("frequency", 5000.0, "lower frequency"),
        ("sag", math.radians(90.0), "below pi/2"),
        ("sag", 2.0, "below pi/2"),
        ("sag", -0.1, "0 or more"),
        ("sag", float("inf"), "finite"),
        ("angle_limit", 0.0, "greater than 0"),
        ("angle_limit", 4.0, "at most pi"),
        ("transmission", 1.5, "from 0 to 1"),
        ("transmission", "lots", "must be a number"),
        ("damping_ratio", 1e4, "e.g. 0.1-1"),
    ],
)
def test_bad_parameters_name_the_value_and_the_fix(field, value, words):
    params = ChainParameters(**{**GOOD, field: value})
    with pytest.raises(InvalidGoalError) as err:
        bake_chains(*still(), params)
    text = str(err.value)
    assert field in text and words in text
    assert str(value)[:3].lower() in text.lower() or f"{value:g}"[:3] in text


@pytest.mark.parametrize("field", ["spring_rate", "damping_rate", "gravity_gain"])
def test_bad_physical_coefficients(field):
    values = dict(spring_rate=0.0, damping_rate=0.0, gravity_gain=2.0)
    with pytest.raises(InvalidGoalError, match=field):
        bake_chains(*still(), LinkCoefficients(**{**values, field: -1.0}))


def test_bad_samples_raise_trajectory_errors():
    t, heads, rot, parents = still()
    params = chain_preset("hair")
    with pytest.raises(InvalidTrajectoryError, match="increase"):
        bake_chains(t[::-1], heads, rot, parents, params)
    with pytest.raises(InvalidTrajectoryError, match="shape"):
        bake_chains(t, heads[:, :, :2], rot, parents, params)
    bad = heads.copy()
    bad[3, 1, 2] = np.nan
    with pytest.raises(InvalidTrajectoryError, match=r"heads\[3, 1, 2\]"):
        bake_chains(t, bad, rot, parents, params)
    mirrored = rot.copy()
    mirrored[:, 0, :, 0] *= -1
    with pytest.raises(InvalidTrajectoryError, match="mirrored"):
        bake_chains(t, heads, mirrored, parents, params)
    jump = heads.copy()
    jump[5:] += 100.0  # a teleport between samples 4 and 5
    with pytest.raises(InvalidTrajectoryError, match="reset"):
        bake_chains(t, jump, rot, parents, params)
    bake_chains(t, jump, rot, parents, params, options=BakeOptions(resets=(5,)))  # a reset there is fine
    with pytest.raises(InvalidTrajectoryError, match="at least 2"):
        bake_chains(t[:1], heads[:1], rot[:1], parents, params)


@pytest.mark.parametrize(
    "kwargs, words",
    [
        (dict(parents=[0, -1, 5]), "parents"),
        (dict(parents=[1, 0, -1]), "loop"),
        (dict(parents=[-1, 0]), "one parent"),
        (dict(gravity=(0, 0, float("nan"))), "gravity"),
        (dict(options=BakeOptions(substeps=0)), "substeps"),
        (dict(options=BakeOptions(key_tolerance=-1.0)), "key_tolerance"),
        (dict(options=BakeOptions(resets=(99,))), "reset index 99"),
        (dict(options=BakeOptions(cyclic=True, resets=(3,))), "cyclic"),
        (dict(parameters=[ChainParameters(**GOOD)] * 2), "2 parameter sets for 3 bones"),
        (dict(parameters="hair"), "parameters"),
    ],
)
def test_bad_layout_and_options(kwargs, words):
    t, heads, rot, parents = still(bones=3)
    call = dict(parents=parents, parameters=chain_preset("tail"))
    call.update(kwargs)
    with pytest.raises(InvalidGoalError, match=words):
        bake_chains(t, heads, rot, **call)


def test_unknown_preset_lists_the_known_ones():
    with pytest.raises(InvalidGoalError) as err:
        chain_preset("feathers")
    assert all(name in str(err.value) for name in CHAIN_PRESETS)
    assert chain_preset("Heavy_Prop") is CHAIN_PRESETS["heavy prop"]


finite = st.floats(allow_nan=True, allow_infinity=True, width=64)
maybe_bad = st.one_of(st.floats(-1.0, 200.0), finite)


@st.composite
def rigs(draw):
    frames = draw(st.integers(2, 30))
    bones = draw(st.integers(1, 5))
    fps = draw(st.sampled_from([12.0, 24.0, 30.0, 60.0, 240.0]))
    parents = [draw(st.integers(-1, i - 1)) for i in range(bones)]
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    scale = draw(st.sampled_from([0.0, 0.01, 0.3]))
    heads = np.cumsum(rng.normal(scale=scale, size=(frames, bones, 3)), axis=0)
    spin = draw(st.sampled_from([0.0, 0.05, 0.5]))
    rot = rotvec_to_matrix(np.cumsum(rng.normal(scale=spin, size=(frames, bones, 3)), axis=0) + rng.normal(size=(1, bones, 3)))
    return np.arange(frames) / fps, heads, rot, parents


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    rig=rigs(),
    frequency=st.floats(0.05, 2000.0),
    zeta=st.floats(0.0, 3.0),
    sag=st.floats(0.0, 1.56),
    limit=st.floats(0.01, math.pi),
    mu=st.floats(0.0, 1.0),
    cyclic=st.booleans(),
    on_twos=st.booleans(),
    tolerance=st.sampled_from([0.0, 0.001, 0.05]),
    substeps=st.integers(1, 3),
)
def test_any_valid_bake_is_finite(rig, frequency, zeta, sag, limit, mu, cyclic, on_twos, tolerance, substeps):
    # Property: valid input never crashes and never gives NaN/inf (numpy.isfinite), and
    # every key is a unit quaternion; only the core's own errors may come out.
    t, heads, rot, parents = rig
    params = ChainParameters(frequency, zeta, sag, limit, mu)
    opts = BakeOptions(cyclic=cyclic and len(t) >= 3, on_twos=on_twos, key_tolerance=tolerance, substeps=substeps)
    try:
        bake = bake_chains(t, heads, rot, parents, params, options=opts)
    except LeapwrightError as err:
        # the only refusals valid-looking values may meet: a too-stiff spring, or random
        # samples so jumpy they read as a teleport
        assert frequency > 1000.0 or "jumps there" in str(err)
        return
    for arr in (bake.rotvecs, bake.quaternions, bake.world_offsets, bake.peak_offsets):
        assert np.all(np.isfinite(arr))
    assert np.allclose(np.linalg.norm(bake.quaternions, axis=-1), 1.0)
    assert bake.key_mask[0].all()


@settings(max_examples=60, deadline=None)
@given(frequency=maybe_bad, zeta=maybe_bad, sag=maybe_bad, limit=maybe_bad, mu=maybe_bad)
def test_any_parameters_give_a_bake_or_our_error(frequency, zeta, sag, limit, mu):
    # Property: whatever numbers come in, the result is a finite bake or an InvalidGoalError.
    t, heads, rot, parents = still(frames=6)
    heads[3:, :, 2] = 0.05
    try:
        bake = bake_chains(t, heads, rot, parents, ChainParameters(frequency, zeta, sag, limit, mu))
    except InvalidGoalError as err:
        text = str(err)
        assert any(f in text for f in ("frequency", "damping_ratio", "sag", "angle_limit", "transmission"))
        assert "give" in text  # says how to fix it
        return
    assert np.all(np.isfinite(bake.rotvecs))


def test_near_orthogonal_rotations_are_their_svd_polar_factor():
    """float32-rounded world matrices are cleaned to the nearest rotation: the polar factor
    U V^T of numpy's SVD (Higham 1986, "Computing the polar decomposition", SIAM J. Sci.
    Stat. Comput. 7(4)), whichever path (iteration or SVD) the cleaning takes."""
    from leapwright.core.follow_through.samples import _rotation_parts

    rng = np.random.default_rng(7)
    rots = rotvec_to_matrix(rng.normal(size=(50, 3)))
    for noise in (3e-6, 1e-4, 5e-2):  # float32 rounding through a hierarchy, a little more, shear
        m = 1.7 * (rots + noise * rng.normal(size=rots.shape))
        u, _, vt = np.linalg.svd(m)
        assert np.max(np.abs(_rotation_parts(m) - u @ vt)) < 1e-10
