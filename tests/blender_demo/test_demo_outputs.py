"""The demo's outputs: the .blend opens and holds a physically consistent jump; the pictures are real.

Run after ``make demo`` (reads ``blend_examples/out``, or ``$LW_DEMO_OUT``)::

    .venv/bin/python -m pytest tests/blender_demo -q

When the outputs are missing, the demo is run first (in a subprocess) with
the newest ``dist/leapwright-*.zip`` (or ``$LW_DEMO_ZIP``). Blender is only
ever loaded in subprocesses, so this process needs numpy and matplotlib only.
"""

import glob
import json
import os
import subprocess
import sys

import numpy as np
import pytest

from leapwright.core.base.phase_words import marker_name, phase_of_marker

REPO = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.environ.get("LW_DEMO_OUT", os.path.join(REPO, "blend_examples", "out"))
#: Standard gravity [m/s^2] (CGPM 1901, 3rd General Conference on Weights and Measures).
STANDARD_GRAVITY = 9.80665
PHASES = ("weighing", "unweighting", "braking", "propulsion", "flight", "landing")
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"

pytestmark = pytest.mark.slow  # opens Blender; may run the whole demo (about two minutes)


def _newest_zip():
    given = os.environ.get("LW_DEMO_ZIP")
    if given:
        return given
    zips = sorted(glob.glob(os.path.join(REPO, "dist", "leapwright-*.zip")), key=os.path.getmtime)
    if not zips:
        pytest.fail("no demo outputs and no dist/leapwright-*.zip: run `make demo` (or `make build`) first")
    return zips[-1]


@pytest.fixture(scope="module")
def outputs():
    """Paths of the demo's files, running the demo first when they are missing."""
    names = ("jump_demo.blend", "jump_demo.json", "jump_demo_force.png", "jump_demo_strip.png")
    paths = {n: os.path.join(OUT, n) for n in names}
    if not all(os.path.isfile(p) for p in paths.values()):
        cmd = [sys.executable, os.path.join(REPO, "blend_examples", "run_demo.py"), "--zip", _newest_zip(),
               "--out", OUT]
        res = subprocess.run(cmd, capture_output=True, text=True, cwd=REPO)
        assert res.returncode == 0, f"the demo failed:\n{res.stdout[-3000:]}\n{res.stderr[-3000:]}"
    with open(paths["jump_demo.json"], encoding="utf-8") as f:
        paths["info"] = json.load(f)
    return paths


@pytest.fixture(scope="module")
def probe(outputs):
    """What the .blend holds, read by Blender in a fresh process."""
    cmd = [sys.executable, os.path.join(HERE, "probe_blend.py"), outputs["jump_demo.blend"],
           outputs["jump_demo.json"]]
    res = subprocess.run(cmd, capture_output=True, text=True)
    assert res.returncode == 0, f"opening the .blend failed:\n{res.stderr[-3000:]}"
    line = next((ln for ln in res.stdout.splitlines() if ln.startswith("PROBE ")), None)
    assert line is not None, f"the probe printed nothing:\n{res.stdout[-2000:]}\n{res.stderr[-2000:]}"
    data = json.loads(line[len("PROBE "):])
    for key in ("frames", "com", "weight_bw", "balls"):
        data[key] = np.array(data[key], dtype=float)
    return data


def _marker_frames(probe):
    found = ((phase_of_marker(name), frame) for frame, name in probe["markers"])
    return {p[0]: frame for p, frame in found if p is not None}


def _png_size(path):
    with open(path, "rb") as f:
        head = f.read(24)
    assert head[:8] == PNG_SIGNATURE, f"{path} is not a PNG"
    return int.from_bytes(head[16:20], "big"), int.from_bytes(head[20:24], "big")


def _distinct_colours(path):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    px = plt.imread(path)
    rgb = np.round(px[..., :3] * 255).astype(np.int64).reshape(-1, 3)
    return np.unique(rgb[:, 0] * 65536 + rgb[:, 1] * 256 + rgb[:, 2]).size


def test_blend_opens_with_rig_set_and_camera(probe, outputs):
    info = outputs["info"]
    for name in (info["rig"], info["crate"], "ground", "side_camera"):
        assert name in probe["objects"], f"{name} missing from the .blend ({probe['objects'][:10]}…)"


def test_markers_are_the_six_phases_in_order(probe):
    names = [name for _, name in probe["markers"] if name.startswith("lw:")]
    assert names == [marker_name(p) for p in PHASES]  # in the animator's words: lw:anticipation, lw:take-off


def test_weight_property_is_animated(probe):
    assert probe["has_weight_property"]
    assert '["lw_weight_bw"]' in probe["fcurve_paths"]


def test_flight_implies_standard_gravity(probe):
    # Free flight: the COM's height is a parabola z(t) = z0 + v t - g t^2 / 2 (Newton; projectile motion).
    marks = _marker_frames(probe)
    f = probe["frames"]
    inside = (f > marks["flight"]) & (f < marks["landing"])
    assert inside.sum() >= 20, f"only {inside.sum()} samples in flight"
    t = f[inside] / probe["fps"]
    z = probe["com"][inside, 2]
    coef = np.polyfit(t, z, 2)
    g = -2.0 * coef[0]
    assert abs(g - STANDARD_GRAVITY) / STANDARD_GRAVITY < 0.005, f"g from the flight = {g:.4f} m/s^2"
    residual = z - np.polyval(coef, t)
    assert np.max(np.abs(residual)) < 1e-4, f"flight is not a parabola: residual {np.max(np.abs(residual)):.2e} m"


def test_weight_is_zero_in_flight(probe):
    # Free fall carries no ground force (Newton's second law with gravity the only force).
    marks = _marker_frames(probe)
    f, w = probe["frames"], probe["weight_bw"]
    inside = (f > marks["flight"] + 0.5) & (f < marks["landing"] - 0.5)
    assert inside.sum() > 20
    assert np.all(np.abs(w[inside]) < 1e-6), w[inside]


def test_weight_is_one_standing_before_the_jump(probe):
    # Standing still, the ground carries exactly the body weight (statics).
    marks = _marker_frames(probe)
    f, w = probe["frames"], probe["weight_bw"]
    still = f < marks["unweighting"]
    assert np.all(np.abs(w[still] - 1.0) < 1e-6), w[still]


def test_weight_is_one_standing_after_the_jump(probe):
    # Standing still on the crate after the landing: the body weight again (statics).
    w = probe["weight_bw"]
    assert abs(w[-1] - 1.0) < 1e-3, w[-1]


def test_net_impulse_is_zero_from_rest_to_rest(probe):
    # Impulse-momentum: from rest to rest the mean ground force over the whole movement equals the
    # body weight, the force-plate integration check of Linthorne (2001), Am. J. Phys. 69, 1198.
    f, w = probe["frames"], probe["weight_bw"]
    mean = np.trapezoid(w, f) / (f[-1] - f[0]) if hasattr(np, "trapezoid") else np.trapz(w, f) / (f[-1] - f[0])
    # The property is keyed on whole frames (plus take-off and touchdown) and linear in between, so
    # its integral carries the trapezoid rule's error over the sharp push and landing peaks: about
    # 1 % at 24 fps for this jump. A wrong curve (scaled, a phase missing) is off by far more.
    assert abs(mean - 1.0) < 0.02, f"mean force {mean:.4f} BW"


def test_feet_start_on_the_ground_and_end_on_the_crate(probe, outputs):
    lo, hi = np.array(probe["crate_min"]), np.array(probe["crate_max"])
    start, end = probe["balls"][0], probe["balls"][-1]
    assert np.all(start[:, 2] < 0.05), start
    for ball in end:
        assert lo[0] < ball[0] < hi[0] and lo[1] < ball[1] < hi[1], (ball, lo, hi)
        assert abs(ball[2] - (start[0, 2] + hi[2])) < 1e-3, (ball, hi)


def test_body_ends_raised_by_the_crate_height(probe, outputs):
    # Rest to rest, the COM rises by the ground's rise. Outside flight the spline keys follow the
    # plan within the extension's key tolerance (0.5 mm), hence 1 mm for the two ends together.
    rise = probe["com"][-1, 2] - probe["com"][0, 2]
    assert abs(rise - outputs["info"]["goals"]["landing_height_m"]) < 1e-3, rise


def test_chart_is_a_real_picture(outputs):
    w, h = _png_size(outputs["jump_demo_force.png"])
    assert (w, h) == (800, 500)  # the chart's figure: 8 x 5 in at 100 dpi
    assert _distinct_colours(outputs["jump_demo_force.png"]) > 50


def test_strip_is_a_real_picture(outputs):
    strip = outputs["info"]["strip"]
    (tw, th), cols, n = strip["tile_size"], strip["columns"], len(strip["moments"])
    rows = -(-n // cols)
    w, h = _png_size(outputs["jump_demo_strip.png"])
    assert w == cols * tw
    assert rows * th < h <= rows * th * 1.2  # a label band under each row
    assert _distinct_colours(outputs["jump_demo_strip.png"]) > 2000


def test_strip_moments_follow_the_jump(outputs):
    labels = [label for _, label in outputs["info"]["strip"]["moments"]]
    frames = [frame for frame, _ in outputs["info"]["strip"]["moments"]]
    assert labels[0] == "stand" and "apex" in labels and labels[-1] == "stand on crate"
    assert frames == sorted(frames) and len(set(frames)) == len(frames), frames


@pytest.fixture(scope="module")
def swing_probe(outputs):
    """The demo file's evaluated shoulders and wrists, read by Blender in a fresh process."""
    return _script_probe("demo_arms.py", "SWING", outputs["jump_demo.blend"])


def _script_probe(script, tag, blend):
    """Run ``blend_examples/<script> --probe BLEND`` and return the JSON it prints after ``tag``."""
    cmd = [sys.executable, os.path.join(REPO, "blend_examples", script), "--probe", blend]
    res = subprocess.run(cmd, capture_output=True, text=True)
    line = next((ln for ln in res.stdout.splitlines() if ln.startswith(tag + " ")), None)
    assert res.returncode == 0 and line is not None, f"the {script} probe failed:\n{res.stderr[-3000:]}"
    return json.loads(line[len(tag) + 1:])


def test_arm_swing_peaks_at_takeoff_and_rises_in_the_push(swing_probe):
    # The arms' elevation peaks at take-off and rises during the push (Lees, Vanrenterghem & De Clercq
    # 2004, J Biomech 37:1929-1940). Markers sit on whole frames, so the take-off is within half a frame
    # of lw:flight and the placed peak within one frame of the take-off: 1.5 frames from the marker.
    f = np.array(swing_probe["frames"])
    fwd, up, marks = np.array(swing_probe["forward"]), np.array(swing_probe["up"]), swing_probe["markers"]
    for side, (shoulder, wrist) in swing_probe["arms"].items():
        d = np.array(wrist) - np.array(shoulder)
        elev = np.degrees(np.arctan2(d @ fwd, -(d @ up)))
        before_landing = f < marks["landing"]
        peak = f[np.argmax(np.where(before_landing, elev, -np.inf))]
        assert abs(peak - marks["flight"]) <= 1.5, (side, peak, marks)
        low = f[np.argmin(np.where(f < peak, elev, np.inf))]
        assert marks["propulsion"] - 1.5 <= low < marks["flight"], (side, low, marks)
        assert elev.max() - elev.min() > 90.0, side  # a real swing: back 45 deg, up 90 deg by default


@pytest.fixture(scope="module")
def lag_probe(outputs):
    """The demo file's ponytail tip and skirt hem, with the follow-through layer and without it."""
    return _script_probe("demo_follow_through.py", "LAG", outputs["jump_demo.blend"])


@pytest.mark.parametrize("bone, droop_within", [(0, 0.1), (1, 0.2)])
def test_ponytail_and_skirt_float_in_flight_and_drop_on_landing(lag_probe, bone, droop_within):
    # In flight the apparent weight is zero (|g_eff| = W/m, Newton's second law), so a trailing
    # part floats toward its unloaded shape; at touchdown the force spike loads it past its
    # standing shape. The check for the ponytail tip: it lifts by at least half its sag
    # during flight and droops past its standing angle within 0.1 s after touchdown. The skirt
    # hem (two bones) is checked the same way over 0.2 s.
    f = np.array(lag_probe["frames"])
    baked = np.array(lag_probe["baked_deg"])[:, bone]
    animated = np.array(lag_probe["animated_deg"])[:, bone]
    marks, fps = lag_probe["markers"], lag_probe["fps"]
    assert lag_probe["track_strips"] == 1
    assert np.ptp(animated) < 1.0  # the body does not turn the part: what moves it is the layer
    standing = animated[0]
    lift = baked - animated  # away from straight down
    flight = (f >= marks["flight"]) & (f < marks["landing"])
    assert lift[flight].max() >= 0.5 * lag_probe["sag_deg"], (lift[flight].max(), lag_probe["sag_deg"])
    assert baked[f == marks["landing"] - 1][0] > standing  # still floating just before touchdown
    soon = (f >= marks["landing"]) & (f <= marks["landing"] + droop_within * fps + 1e-9)
    assert baked[soon].min() < standing, (baked[soon], standing)


CHAINS = ("ponytail_1", "skirt_front_1", "skirt_back_1", "skirt_left_1", "skirt_right_1")


@pytest.mark.parametrize("chain", CHAINS)
def test_ponytail_and_skirt_stay_out_of_the_body_and_above_the_ground(lag_probe, chain):
    # The demo bakes with Keep out of the body on: every chain's bone tips, read back through the
    # depsgraph at every frame, stay outside the body capsules the bake used (the radii of its body
    # readout, segments on the evaluated deform bones; plain geometry, Ericson 2005 sec. 5.1.2) and
    # above the ground. Slack 1 mm: keys are float32 and the contact is held at the frames exactly.
    depths = lag_probe["capsule_depth_m"]
    assert set(depths) == set(CHAINS)
    assert depths[chain] < 0.001, (chain, depths[chain], lag_probe["capsule_depth_muted_m"][chain])
