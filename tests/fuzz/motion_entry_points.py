"""Fuzzed entry points that read motion: analysis, chain dynamics, segment COM, the rig's
facing and body map, the in-air correction, the body arc check and the path overlay, driven by planned jumps,
random walks and raw wild numbers.

Each entry is ``(name, strategy, call)`` (see :mod:`tests.fuzz.entry_points`).
"""

import functools

import numpy as np
from hypothesis import strategies as st

from leapwright.core.base.errors import LeapwrightError
from leapwright.core.plan.goals import JumpGoals
from leapwright.core.plan.planner import plan_jump

from tests.fuzz.planning_entry_points import FINITE

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
    from leapwright.core.check.analysis import analyse_trajectory

    frames, xyz, fps = example
    a = analyse_trajectory(frames, xyz, fps)
    out = [a.height_m, a.vertical_speed_m_s, a.force_bw, a.noise_m]
    if a.implied_gravity_m_s2 is not None:
        out.append(a.implied_gravity_m_s2)
    return out


@st.composite
def chain_drives(draw):
    """One or two hanging chains driven by a planned jump's COM, or by random motion."""
    from leapwright.core.follow_through.presets import CHAIN_PRESETS

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
    # half the examples keep the chains out of a ball beside them and off a ground below
    contact = (draw(st.floats(-0.5, 0.2, **FINITE)), draw(st.floats(0.01, 0.3, **FINITE)), length) if draw(st.booleans()) else None
    return times, heads, rotations, parents, preset, cyclic, contact


def _chains(example):
    from leapwright.core.follow_through.presets import chain_preset
    from leapwright.core.follow_through.chains import BakeOptions, Colliders, bake_chains

    times, heads, rotations, parents, preset, cyclic, contact = example
    colliders = None
    if contact is not None:
        ground, radius, length = contact
        ball = heads[:, :1] + [0.0, 0.5 * length, -length]
        colliders = Colliders(starts=ball, ends=ball + [0.0, 0.0, 0.1], radii=[radius],
                              ground=float(heads[:, 0, 2].min()) + ground, lengths=[length] * len(parents))
    bake = bake_chains(times, heads, rotations, parents, chain_preset(preset),
                       options=BakeOptions(cyclic=cyclic), colliders=colliders)
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
    from leapwright.core.body.mass import RigData, mass_model_from_bone_masses, whole_body_com

    parents, masses, heads, tails = example
    names = [f"b{i}" for i in range(len(parents))]
    rig = RigData(names, parents, heads[0], tails[0])
    model = mass_model_from_bone_masses(rig, masses)
    return [whole_body_com(model, heads, tails)]


@st.composite
def turned_mannequins(draw):
    """The test mannequin turned any way about any up axis, its bones jittered, some dropped."""
    from scipy.spatial.transform import Rotation

    from tests.core.body.test_body_mass import _BONES

    seed = draw(st.integers(0, 2**31 - 1))
    rng = np.random.default_rng(seed)
    turn = Rotation.random(random_state=seed).as_matrix() if draw(st.booleans()) else \
        Rotation.from_euler("z", draw(st.floats(-360.0, 360.0, **FINITE)), degrees=True).as_matrix()
    jitter = draw(st.sampled_from([0.0, 1e-9, 1e-3, 0.02, 0.2]))
    drop = set(draw(st.lists(st.sampled_from([b[0] for b in _BONES]), max_size=3)))
    scale = draw(st.sampled_from([1.0, 0.01, 100.0, 1e-6]))
    bones = []
    for name, parent, head, tail in _BONES:
        if name in drop:
            continue
        while parent in drop:  # a dropped bone's children hang from its parent
            parent = next(b[1] for b in _BONES if b[0] == parent)
        h, t = (scale * (turn @ np.asarray(v, float) + rng.normal(0.0, jitter, 3)) for v in (head, tail))
        bones.append((name, parent, h, t))
    return bones, turn @ (0.0, 0.0, 1.0)


def _faced_body(example):
    from leapwright.core.body.mass import RigData, mass_model, whole_body_com
    from leapwright.core.rig.facing import faced_rig

    bones, up = example
    names = [b[0] for b in bones]
    rig = RigData(names, [names.index(b[1]) if b[1] else -1 for b in bones], [b[2] for b in bones],
                  [b[3] for b in bones], up=tuple(up))
    rest, marks = faced_rig(rig)
    com = whole_body_com(mass_model(marks), rest.heads[None], rest.tails[None])
    return [np.asarray(rest.left), com]


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
    from leapwright.core.body.arc import correct_flight

    com, stretches, fps = example
    c = correct_flight(com, stretches, fps)
    return [c.offsets, c.velocities, c.largest]


@st.composite
def posed_flights(draw):
    """The test mannequin carried along a planned (or still) root track with its arms
    swinging at random, and a flight stretch, frame rate and tolerance to check."""
    from tests.core.body.test_body_mass import pose

    plan = _drive_plan(draw(_drive_index))
    root = _track_of(plan, 24.0)[1] if plan is not None else np.zeros((30, 3))
    n = len(root)
    rng = np.random.default_rng(draw(st.integers(0, 2**31 - 1)))
    step = draw(st.sampled_from([0.0, 0.05, 0.5, 3.0]))
    arms = np.cumsum(rng.normal(0.0, step, n)) if step else np.zeros(n)
    heads, tails = pose(root, arms)
    if n >= 4 and draw(st.integers(0, 3)):  # mostly a stretch inside the track, so the checks run
        first = draw(st.integers(2, n - 2))
        last = draw(st.integers(first + 1, n - 1))
    else:
        first, last = draw(st.integers(-2, n + 2)), draw(st.integers(-2, n + 2))
    fps = draw(st.sampled_from([24.0, 30.0, 60.0, 24.0, draw(st.floats())]))
    tolerance = draw(st.sampled_from([0.01, 0.0, 0.05, draw(st.floats())]))
    return heads, tails, [(first, last)], fps, tolerance


def _body_arc(example):
    from leapwright.core.body import mass as bm
    from leapwright.core.body.arc import check_flight, takeoff_motion
    from tests.core.body.test_body_mass import mannequin

    heads, tails, stretches, fps, tolerance = example
    model = bm.mass_model(bm.map_by_topology(mannequin()))
    fix, found = check_flight(model, heads, tails, stretches, fps, tolerance=tolerance)
    moving = takeoff_motion(model, heads, tails, stretches, fps, tolerance=tolerance)
    return ([fix.offsets, fix.velocities] + [d.deviation for d in found]
            + [m.speed_error for m in moving] + [m.arc_shift_cm for m in moving])


@st.composite
def overlay_inputs(draw):
    """A track (see :func:`trajectories`) and a tick length [m] for the viewport's path overlay."""
    frames, xyz, fps = draw(trajectories())
    return frames, xyz, fps, draw(st.sampled_from([0.03, 0.0, 1.0]))


def _overlay(example):
    from leapwright.core.check.analysis import analyse_trajectory
    from leapwright.core.check.overlay import implied_flight_arc, spacing_ticks

    frames, xyz, fps, length = example
    out = [spacing_ticks(xyz, length=length)] if len(xyz) else []
    a = analyse_trajectory(frames, xyz, fps)
    for flight in a.flights:
        out.append(implied_flight_arc(frames, xyz, flight, fps))
    return out



@st.composite
def force_traces(draw):
    """A countermovement jump's plate force (standing, dip, push, air, maybe a landing) with noise,
    or raw wild numbers, as (times [s], force [N], mass [kg] or None)."""
    rng = np.random.default_rng(draw(st.integers(0, 2**31 - 1)))
    fs = draw(st.sampled_from([250.0, 1000.0, 2000.0]))
    if draw(st.booleans()):
        weight = draw(st.floats(50.0, 3000.0))
        dip, push, unload = draw(st.floats(0.05, 1.0)), draw(st.floats(0.05, 0.6)), draw(st.floats(0.0, 1.0))
        mass = draw(st.one_of(st.none(), st.none(), st.floats(-10.0, 300.0), st.floats()))
        t = np.arange(0.0, 0.5 + dip + push + draw(st.floats(0.0, 1.0)), 1.0 / fs)
        f = np.full(t.shape, weight)
        d, p = (t >= 0.5) & (t < 0.5 + dip), (t >= 0.5 + dip) & (t < 0.5 + dip + push)
        f[d] -= unload * weight * np.sin(np.pi * (t[d] - 0.5) / dip) ** 2
        f[p] += draw(st.floats(0.0, 4.0)) * weight * np.sin(np.pi * (t[p] - 0.5 - dip) / push) ** 2
        f[t >= 0.5 + dip + push] = 0.0
        f += rng.normal(0.0, draw(st.sampled_from([0.0, 1.0, 5.0])), f.shape)
        return t, f, mass
    n = draw(st.integers(0, 300))
    values = np.array(draw(st.lists(st.floats(), min_size=n, max_size=n)), dtype=float)
    return np.arange(n) / fs, values, draw(st.one_of(st.none(), st.floats()))


def _force_trace(example):
    from leapwright.core.check.force_trace import read_force_trace

    t, f, mass = example
    r = read_force_trace(t, f, mass_kg=mass)
    lead, loss = r.peak_speed_before_takeoff()
    return [r.velocity, r.height, r.takeoff_speed_m_s, r.jump_height_m, r.depth_m, r.peak_push_bw,
            r.lowest_unweighting_bw, lead, loss]


ENTRY_POINTS = [
    ("analysis", trajectories(), _analysis),
    ("chain dynamics", chain_drives(), _chains),
    ("segment COM", bone_clouds(), _body_mass),
    ("rig facing", turned_mannequins(), _faced_body),
    ("in-air correction", com_tracks(), _flight_correction),
    ("body arc check", posed_flights(), _body_arc),
    ("path overlay", overlay_inputs(), _overlay),
    ("force trace", force_traces(), _force_trace),
]
