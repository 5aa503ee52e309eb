"""Fuzzed command lines: ``plan``, ``check`` and ``bake`` through the real argument parser.

Each entry is ``(name, strategy, call)`` (see :mod:`tests.fuzz.entry_points`); exit
code 2 (one line on stderr) counts as a rejection, any other failure as a crash.
"""

from hypothesis import strategies as st

from leapwright.core.base.errors import LeapwrightError

from tests.fuzz.motion_entry_points import trajectories
from tests.fuzz.planning_entry_points import FINITE


class CliRejected(LeapwrightError):
    """The command line refused the input with exit code 2 (counted as a rejection)."""


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
    argv = ["follow-through", draw(st.sampled_from(["/nonexistent/a.blend", ""])), "--bones",
            draw(st.sampled_from(["pony.1", "a,b", ","]))]
    if draw(st.booleans()):
        argv += ["--preset", draw(st.one_of(st.sampled_from(["hair", "Heavy_Prop", "cloth ", "moon", ""]),
                                            st.text(max_size=8)))]
    if draw(st.booleans()):
        argv += ["--key-tolerance", draw(_cli_values)]
    if draw(st.booleans()):
        argv += ["--frames", draw(_cli_values), draw(_cli_values)]
    return argv



ENTRY_POINTS = [
    ("cli plan", cli_argv(), _cli),
    ("cli check", check_argv(), _cli),
    ("cli bake", bake_argv(), _cli),
]
