"""Every core entry point with a hypothesis strategy of its inputs, for fuzzing.

Each entry is ``(name, strategy, call)``: ``call(example)`` returns an iterable of
numpy arrays / floats that must all be finite, or raises one of the core's own
errors (a rejection). Anything else is a crash.
"""

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
    out = []
    for channel in ("height", "forward"):
        k = hermite_keys(plan, channel, tol)
        out += [k.times, k.values, k.slopes]
        out.append(held_pose_keys(plan, channel, 24.0, step).values)
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
    argv = ["plan"]
    for _ in range(draw(st.integers(0, 4))):
        argv += [draw(_cli_flags), draw(_cli_values)]
    argv.append(draw(st.sampled_from(["--json", "--csv", "--fps=24"])))
    return argv


ENTRY_POINTS = [
    ("planner", goal_dicts(), _plan),
    ("keys", st.tuples(goal_dicts(), st.one_of(st.floats(1e-5, 0.05, **FINITE), st.floats()),
                       st.integers(-1, 5)), _keys),
    ("cli plan", cli_argv(), _cli),
]


def all_finite(values):
    for v in values:
        a = np.asarray(v, dtype=float)
        if not np.all(np.isfinite(a)):
            return False
    return True
