"""Every core entry point with a hypothesis strategy of its inputs, for fuzzing.

Each entry is ``(name, strategy, call)``: ``call(example)`` returns an iterable of
numpy arrays / floats that must all be finite, or raises one of the core's own
errors (a rejection). Anything else is a crash.
"""

import functools

import numpy as np
from hypothesis import strategies as st

from core.errors import LeapwrightError
from core.goals import JumpGoals
from core.keys import held_pose_keys, hermite_keys
from core.planner import plan_jump

FINITE = dict(allow_nan=False, allow_infinity=False)
# Wild values as well as sensible ones: fuzzing is for what users type by mistake.
wild = st.one_of(st.floats(), st.floats(-5.0, 5.0, **FINITE), st.none())


@st.composite
def sensible_goal_dicts(draw):
    """Goals an animator might type: mostly valid, some infeasible combinations."""
    kind = draw(st.sampled_from(["height", "flight_time", "takeoff_speed"]))
    kw = {kind: draw(st.floats(0.02, 2.5, **FINITE))}
    kw["distance"] = draw(st.floats(-1.5, 2.5, **FINITE))
    kw["landing_height"] = draw(st.floats(-1.0, 0.8, **FINITE))
    kw["gravity"] = draw(st.sampled_from([9.80665, 9.81, 1.62, 3.71, 24.8]))
    kw["hops"] = draw(st.integers(1, 3))
    kw["standing_com_height"] = draw(st.floats(0.3, 2.5, **FINITE))
    for name, lo, hi in (("depth", 0.05, 0.7), ("dip_duration", 0.15, 1.2), ("push_duration", 0.1, 0.6),
                         ("landing_depth", 0.15, 0.7), ("fall_gravity_scale", 0.5, 3.0), ("apex_hang", 0.0, 0.3)):
        if draw(st.integers(0, 3)) == 0:
            kw[name] = draw(st.floats(lo, hi, **FINITE))
    return kw


def goal_dicts():
    return st.one_of(sensible_goal_dicts(), wild_goal_dicts())


class CliRejected(LeapwrightError):
    """The command line refused the input with exit code 2 (counted as a rejection)."""


@st.composite
def wild_goal_dicts(draw):
    kw = {}
    for name in ("height", "flight_time", "takeoff_speed"):
        if draw(st.booleans()):
            kw[name] = draw(st.one_of(st.floats(0.01, 3.0, **FINITE), st.floats()))
    for name in ("distance", "landing_height", "depth", "dip_duration", "push_duration", "landing_depth",
                 "landing_duration", "takeoff_extension", "recovery_duration", "standing_com_height",
                 "fall_gravity_scale", "apex_hang", "mass"):
        if draw(st.integers(0, 3)) == 0:
            kw[name] = draw(wild)
    if draw(st.booleans()):
        kw["gravity"] = draw(st.one_of(st.sampled_from([9.80665, 1.62, 3.71]), st.floats()))
    if draw(st.integers(0, 4)) == 0:
        kw["hops"] = draw(st.one_of(st.integers(-2, 4), st.floats(0, 3)))
    return kw


def _plan(kw):
    plan = plan_jump(JumpGoals(**kw))
    t = np.linspace(0.0, plan.duration_s, 512)
    r = plan.report
    return [plan.height(t), plan.forward(t), plan.vertical_speed(t), plan.force_bw(t),
            r.peak_push_force_bw, r.peak_landing_force_bw, r.takeoff_speed_m_s, plan.duration_s]


def _keys(example):
    kw, tol, step = example
    plan = plan_jump(JumpGoals(**kw))
    # The held poses first: a bad step is refused before the costlier spline search.
    out = [held_pose_keys(plan, channel, 24.0, step).values for channel in ("height", "forward")]
    for channel in ("height", "forward"):
        k = hermite_keys(plan, channel, tol)
        out += [k.times, k.values, k.slopes]
    return out


def _cli(argv):
    import contextlib
    import io

    from cli.main import main

    err, out = io.StringIO(), io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(out):
        try:
            code = main(argv)
        except SystemExit as exc:  # argparse's own exit on bad flags
            code = exc.code
    if code not in (0, 1, 2):
        raise AssertionError(f"exit code {code!r} for {argv}")
    if code == 2 and (len(err.getvalue().strip().splitlines()) != 1 or "Traceback" in err.getvalue()):
        raise AssertionError(f"bad-input message is not one line for {argv}: {err.getvalue()!r}")
    if code == 2:
        raise CliRejected(err.getvalue().strip())
    return [float(code)]


_cli_values = st.one_of(st.sampled_from(["0", "0/0", "nan", "-1", "1e308", "inf", "24000/1001", "x", "",
                                         "23.976", "1/0", "moon", "pluto"]),
                        st.floats().map(repr), st.integers(-10, 10**6).map(str))
_cli_flags = st.sampled_from(["--height", "--flight-time", "--flight-frames", "--takeoff-speed", "--fps",
                              "--gravity", "--hops", "--distance", "--landing-height", "--depth",
                              "--tolerance", "--start-frame", "--mass"])


@st.composite
def cli_argv(draw):
    if draw(st.booleans()):
        argv = ["plan", "--height", str(draw(st.floats(0.05, 1.5, **FINITE))), "--fps", draw(
            st.sampled_from(["24", "23.976", "24000/1001", "30", "60"]))]
        argv += draw(st.sampled_from([[], ["--hops", "2"], ["--distance", "0.8"], ["--landing-height", "0.2"]]))
        return argv + [draw(st.sampled_from(["--json", "--csv"]))]
    argv = ["plan"]
    for _ in range(draw(st.integers(0, 4))):
        argv += [draw(_cli_flags), draw(_cli_values)]
    argv.append(draw(st.sampled_from(["--json", "--csv", "--fps=24"])))
    return argv


ENTRY_POINTS = [
    ("planner", goal_dicts(), _plan),
    # Mostly usable goals and tolerances, so that the key search itself is what gets fuzzed.
    ("keys", st.tuples(st.one_of(sensible_goal_dicts(), sensible_goal_dicts(), wild_goal_dicts()),
                       st.one_of(st.floats(1e-5, 0.05, **FINITE), st.floats(1e-5, 0.05, **FINITE), st.floats()),
                       st.one_of(st.integers(1, 5), st.integers(-1, 13))), _keys),
    ("cli plan", cli_argv(), _cli),
]


def all_finite(values):
    for v in values:
        a = np.asarray(v, dtype=float)
        if not np.all(np.isfinite(a)):
            return False
    return True


# --- analysis, chains, body mass, in-air correction, arm swing -----------------------

def _track_of(plan, fps):
    s = plan.sample(fps)
    return s.times, np.column_stack([np.zeros_like(s.forward), -s.forward, s.height + 1.0])


def _drive_goals(count=240, seed=20261202):
    """Goals drawn once from the ranges of :func:`sensible_goal_dicts`, for tracks that drive other entry points.

    Analysis, chains and the in-air correction need a realistic jump to work
    on, not a new plan per example: planning is most of an example's cost and
    is fuzzed in its own right ("planner", "keys", "arm swing").
    """
    rng = np.random.default_rng(seed)
    out = []
    for _ in range(count):
        kind = str(rng.choice(["height", "flight_time", "takeoff_speed"]))
        kw = {kind: float(rng.uniform(0.02, 2.5)), "distance": float(rng.uniform(-1.5, 2.5)),
              "landing_height": float(rng.uniform(-1.0, 0.8)),
              "gravity": float(rng.choice([9.80665, 9.81, 1.62, 3.71, 24.8])), "hops": int(rng.integers(1, 4)),
              "standing_com_height": float(rng.uniform(0.3, 2.5))}
        for name, lo, hi in (("depth", 0.05, 0.7), ("dip_duration", 0.15, 1.2), ("push_duration", 0.1, 0.6),
                             ("landing_depth", 0.15, 0.7), ("fall_gravity_scale", 0.5, 3.0), ("apex_hang", 0.0, 0.3)):
            if rng.integers(0, 4) == 0:
                kw[name] = float(rng.uniform(lo, hi))
        out.append(kw)
    return out


DRIVE_GOALS = _drive_goals()


@functools.lru_cache(maxsize=None)
def _drive_plan(index):
    """The plan of ``DRIVE_GOALS[index]``, or None where those goals are infeasible."""
    try:
        return plan_jump(JumpGoals(**DRIVE_GOALS[index]))
    except LeapwrightError:
        return None


_drive_index = st.integers(0, len(DRIVE_GOALS) - 1)


@st.composite
def trajectories(draw):
    """A planned jump with noise, a random walk, or raw wild numbers, as (frames, xyz, fps)."""
    fps = draw(st.sampled_from([12.0, 24.0, 24000 / 1001, 30.0, 60.0]))
    kind = draw(st.integers(0, 2))
    seed = draw(st.integers(0, 2**31 - 1))
    rng = np.random.default_rng(seed)
    if kind == 0:
        plan = _drive_plan(draw(_drive_index))
        if plan is not None:
            times, xyz = _track_of(plan, fps)
        else:
            times = np.arange(40) / fps
            xyz = np.zeros((40, 3))
        xyz = xyz + rng.normal(0.0, draw(st.sampled_from([0.0, 1e-4, 1e-3, 1e-2])), xyz.shape)
        return times * fps + 1.0, xyz, fps
    n = draw(st.integers(0, 80))
    if kind == 1:
        return np.arange(n, dtype=float), np.cumsum(rng.normal(0, 0.05, (n, 3)), axis=0), fps
    values = draw(st.lists(st.floats(), min_size=3 * n, max_size=3 * n))
    return np.arange(n, dtype=float), np.array(values, dtype=float).reshape(n, 3), draw(st.floats())


def _analysis(example):
    from core.analysis import analyse_trajectory

    frames, xyz, fps = example
    a = analyse_trajectory(frames, xyz, fps)
    out = [a.height_m, a.vertical_speed_m_s, a.force_bw, a.noise_m]
    if a.implied_gravity_m_s2 is not None:
        out.append(a.implied_gravity_m_s2)
    return out


@st.composite
def chain_drives(draw):
    """One or two hanging chains driven by a planned jump's COM, or by random motion."""
    from core.chain_presets import CHAIN_PRESETS

    fps = draw(st.sampled_from([24.0, 30.0, 60.0]))
    n_bones = draw(st.integers(1, 4))
    rng = np.random.default_rng(draw(st.integers(0, 2**31 - 1)))
    plan = _drive_plan(draw(_drive_index))
    if plan is not None:
        times, root = _track_of(plan, fps)
    else:
        times = np.arange(30) / fps
        root = np.cumsum(rng.normal(0, 0.01, (30, 3)), axis=0)
    tilt = draw(st.floats(0.0, 1.4, **FINITE))
    direction = np.array([0.0, np.sin(tilt), -np.cos(tilt)])
    length = draw(st.floats(0.02, 0.5, **FINITE))
    heads = root[:, None, :] + (np.arange(n_bones) * length)[None, :, None] * direction[None, None, :]
    # Bone +Y along the hanging direction: a rotation whose second column is `direction`.
    y = direction
    x = np.array([1.0, 0.0, 0.0])
    z = np.cross(x, y)
    rot = np.stack([x, y, z], axis=1)
    rotations = np.broadcast_to(rot, (len(times), n_bones, 3, 3)).copy()
    parents = np.arange(n_bones) - 1
    preset = draw(st.sampled_from(sorted(CHAIN_PRESETS)))
    cyclic = draw(st.booleans()) and len(times) < 200
    return times, heads, rotations, parents, preset, cyclic


def _chains(example):
    from core.chain_presets import chain_preset
    from core.chains import BakeOptions, bake_chains

    times, heads, rotations, parents, preset, cyclic = example
    bake = bake_chains(times, heads, rotations, parents, chain_preset(preset),
                       options=BakeOptions(cyclic=cyclic))
    return [bake.quaternions, bake.rotvecs, bake.peak_offsets]


@st.composite
def bone_clouds(draw):
    """Random rigs (a chain tree) with random per-bone masses and random poses."""
    n_bones = draw(st.integers(1, 8))
    n_frames = draw(st.integers(1, 20))
    parents = [-1] + [draw(st.integers(0, i - 1)) for i in range(1, n_bones)]
    # Half the rigs get only usable masses: one wild number already refuses the whole rig.
    mass = st.floats(0.0, 50.0, **FINITE) if draw(st.booleans()) else st.one_of(st.floats(0.0, 50.0, **FINITE),
                                                                                 st.floats())
    masses = draw(st.lists(mass, min_size=n_bones, max_size=n_bones))
    rng = np.random.default_rng(draw(st.integers(0, 2**31 - 1)))
    heads = rng.normal(0, 0.5, (n_frames, n_bones, 3))
    tails = heads + rng.normal(0, 0.2, (n_frames, n_bones, 3))
    return parents, masses, heads, tails


def _body_mass(example):
    from core.body_mass import RigData, mass_model_from_bone_masses, whole_body_com

    parents, masses, heads, tails = example
    names = [f"b{i}" for i in range(len(parents))]
    rig = RigData(names, parents, heads[0], tails[0])
    model = mass_model_from_bone_masses(rig, masses)
    return [whole_body_com(model, heads, tails)]


@st.composite
def com_tracks(draw):
    fps = draw(st.sampled_from([24.0, 30.0, 60.0, draw(st.floats())]))
    plan = _drive_plan(draw(_drive_index))
    com = _track_of(plan, 24.0)[1] if plan is not None else np.zeros((30, 3))
    n = len(com)
    if n >= 2 and draw(st.booleans()):  # a stretch inside the track, so the correction itself runs
        first = draw(st.integers(0, n - 2))
        last = draw(st.integers(first + 1, n - 1))
    else:
        first = draw(st.integers(-2, n + 2))
        last = draw(st.integers(-2, n + 2))
    return com, [(first, last)], fps


def _flight_correction(example):
    from core.flight_correction import correct_flight

    com, stretches, fps = example
    c = correct_flight(com, stretches, fps)
    return [c.offsets, c.velocities, c.largest]


@st.composite
def swing_inputs(draw):
    from core.arm_swing import SwingAmplitudes

    kw = draw(sensible_goal_dicts())
    amps = dict(backswing_deg=draw(st.one_of(st.floats(0, 90, **FINITE), st.floats())),
                upswing_deg=draw(st.one_of(st.floats(10, 180, **FINITE), st.floats())))
    return kw, amps, SwingAmplitudes


def _arm_swing(example):
    from core.arm_swing import place_swing
    from core.swing_timing import detect_swing

    kw, amps, cls = example
    plan = plan_jump(JumpGoals(**kw))
    swing = place_swing(plan, cls(**amps))
    t, elevation = swing.sample(24.0, plan.duration_s)
    found = detect_swing(t, elevation)
    return [swing.keys.values, swing.keys.slopes, found.peak_s, found.upswing_start_s]


ENTRY_POINTS += [
    ("analysis", trajectories(), _analysis),
    ("chain dynamics", chain_drives(), _chains),
    ("segment COM", bone_clouds(), _body_mass),
    ("in-air correction", com_tracks(), _flight_correction),
    ("arm swing", swing_inputs(), _arm_swing),
]


# --- the other commands through the same parser -------------------------------------------

_CSV_DIR = None


def _csv_path(text):
    """A CSV file holding ``text``, in a directory kept for the whole fuzz run."""
    import hashlib
    import tempfile

    global _CSV_DIR
    if _CSV_DIR is None:
        _CSV_DIR = tempfile.mkdtemp(prefix="lw-fuzz-")
    path = f"{_CSV_DIR}/{hashlib.sha1(text.encode()).hexdigest()[:16]}.csv"
    with open(path, "w", encoding="utf-8") as fh:
        fh.write(text)
    return path


_cell = st.one_of(st.floats(-3.0, 3.0, **FINITE).map(repr), st.sampled_from(["nan", "inf", "", "x", "1e308"]))


_CHECK_OPTIONS = (
    ("--gravity", st.sampled_from(["earth", "moon", "mars", "-9.81", "3.71"]), _cli_values),
    ("--arc-tolerance", st.sampled_from(["0", "1", "2.5"]), _cli_values),
    ("--leg-length", st.sampled_from(["foot=0.9", "foot=1.2"]), st.sampled_from(["foot=nan", "foot=0", "foot", "hand=1"])),
    ("--body-table", st.sampled_from(["de_leva_male", "de_leva_female", "dempster_winter"]), st.just("nobody")),
)


@st.composite
def check_argv(draw):
    """``check`` on a CSV: half sensible (a planned or noisy track, valid options), half wild."""
    sensible = draw(st.booleans())
    if sensible or draw(st.booleans()):
        frames, xyz, _fps = draw(trajectories())
        rows = [",".join(repr(float(v)) for v in (f, x, y, z)) for f, (x, y, z) in zip(frames, xyz)]
    else:
        rows = [",".join(draw(_cell) for _ in range(4)) for _ in range(draw(st.integers(0, 12)))]
    headers = ["frame,x,y,z", "frame,x,y,z,foot_x,foot_y,foot_z"] + ([] if sensible else ["frame,x,y", "t,x,y,z"])
    header = draw(st.sampled_from(headers))
    if header.count(",") == 6:
        rows = [r + ",0,0,0" for r in rows]
    argv = ["check", _csv_path("\n".join([header] + rows) + "\n")]
    if sensible:
        argv += ["--fps", draw(st.sampled_from(["24", "30", "60", "23.976", "24000/1001"]))]
    elif draw(st.integers(0, 4)):
        argv += ["--fps", draw(_cli_values)]
    for flag, good, bad in _CHECK_OPTIONS:
        if draw(st.integers(0, 2)) == 0:
            argv += [flag, draw(good if sensible else st.one_of(good, bad))]
    return argv + draw(st.sampled_from([[], ["--json"]]))


@st.composite
def bake_argv(draw):
    """``bake``'s own checks (preset, key tolerance, files) come before Blender is loaded."""
    argv = ["bake", draw(st.sampled_from(["/nonexistent/a.blend", ""])), "--bones",
            draw(st.sampled_from(["pony.1", "a,b", ","]))]
    if draw(st.booleans()):
        argv += ["--preset", draw(st.one_of(st.sampled_from(["hair", "Heavy_Prop", "cloth ", "moon", ""]),
                                            st.text(max_size=8)))]
    if draw(st.booleans()):
        argv += ["--key-tolerance", draw(_cli_values)]
    if draw(st.booleans()):
        argv += ["--frames", draw(_cli_values), draw(_cli_values)]
    return argv


ENTRY_POINTS += [
    ("cli check", check_argv(), _cli),
    ("cli bake", bake_argv(), _cli),
]


# --- the path overlay ------------------------------------------------------------------


@st.composite
def overlay_inputs(draw):
    """A track (see :func:`trajectories`) and a tick length [m] for the viewport's path overlay."""
    frames, xyz, fps = draw(trajectories())
    return frames, xyz, fps, draw(st.sampled_from([0.03, 0.0, 1.0]))


def _overlay(example):
    from core.analysis import analyse_trajectory
    from core.path_overlay import implied_flight_arc, spacing_ticks

    frames, xyz, fps, length = example
    out = [spacing_ticks(xyz, length=length)] if len(xyz) else []
    a = analyse_trajectory(frames, xyz, fps)
    for flight in a.flights:
        out.append(implied_flight_arc(frames, xyz, flight, fps))
    return out


ENTRY_POINTS += [
    ("path overlay", overlay_inputs(), _overlay),
]
