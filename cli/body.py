"""The body's centre of mass in the air, for ``leapwright check``: does it stay on one arc?

In the air the whole-body centre of mass (COM) follows one parabola whatever the limbs
do; limbs keyed to move in flight while the hips keep their own path break that. The
check reports each stretch where the COM leaves its arc by more than a tolerance, with
the frames and the torso drop that would restore it, in the words of the panel's
Check Body Arc (the messages come from ``core.body.arc.check_flight``).

Two sources:

* a .blend rig: exactly the add-on's check (``addon.body.arc.prepare`` with its
  own layer playing), run on the file opened by :mod:`blend_tracks`;
* a CSV with landmark columns ``LANDMARK_x,LANDMARK_y,LANDMARK_z`` [m] for the joints a
  segment table needs (``vertex``, ``skull_base``, ``neck_base``, ``shoulder.L`` ... ``toe_tip.R``;
  see ``core.body.segment_tables.LANDMARKS``). ``hip_mid`` and ``shoulder_mid`` default to the
  midpoints of the two sides.

Take-off velocity from a CSV
----------------------------
Whole frames are all a CSV has. The arc starts at the second airborne sample (as in the
add-on); the velocity there is read from the two airborne samples before it, with
gravity known: for free fall ``c(t) - c(t - dt) = v(t) dt + g dt^2 / 2 up``, exact
whatever the frame rate (Newton's second law with gravity the only force).
"""

import types

import numpy as np

from leapwright.core.body import arc as fc
from leapwright.core.check.analysis import analyse_trajectory
from leapwright.core.body.mass import Landmarks, group_coms, mass_model, whole_body_com
from leapwright.core.base.errors import InvalidTrajectoryError, LeapwrightError
from leapwright.core.body.segment_tables import LANDMARKS, SIDED_LANDMARKS, get_table

#: Every landmark column name a CSV may carry (``.L``/``.R`` for the sided ones).
LANDMARK_COLUMNS = frozenset(n for base in LANDMARKS
                             for n in ((f"{base}.L", f"{base}.R") if base in SIDED_LANDMARKS else (base,)))
#: Landmarks defaulting to the midpoint of a pair of columns.
_MIDPOINTS = {"hip_mid": ("hip.L", "hip.R"), "shoulder_mid": ("shoulder.L", "shoulder.R")}
STAYS_ON_ARC = "the centre of mass stays on its arc in every flight"


def summary_lines(n_flights, source, how, departures, takeoff_motion=()):
    """The lines the panel shows after Check Body Arc."""
    return ([f"{n_flights} flight(s) from {source}; bones {how}"] + ([d.message for d in departures] or [STAYS_ON_ARC])
            + [t.message for t in takeoff_motion])


def _report(stretches, source, how, departures, tolerance_m, takeoff_motion=(), first_frame=0):
    out = []
    for d in departures:
        worst = int(np.argmax(np.linalg.norm(d.deviation, axis=1)))
        out.append({"frames": [int(d.frames[0]), int(d.frames[-1])], "flight": list(d.stretch_frames),
                    "worst_frame": int(d.frames[worst]),
                    "off_arc_cm": float(100.0 * np.linalg.norm(d.deviation[worst])),
                    "torso_drop_cm": float(d.torso_drop_cm[worst]),
                    "limb_drop_cm": {k: float(v[worst]) for k, v in d.limb_drop_cm.items()},
                    "message": d.message, "suggestion": d.suggestion})
    return {"checked": True, "flights": [list(s) for s in stretches], "flights_from": source, "bones": how,
            "tolerance_cm": 100.0 * tolerance_m, "departures": out,
            "takeoff_motion": [{"flight": [t.stretch.first + first_frame, t.stretch.last + first_frame],
                                "speed_error_m_s": [float(v) for v in t.speed_error],
                                "arc_shift_cm": t.arc_shift_cm, "message": t.message} for t in takeoff_motion],
            "lines": summary_lines(len(stretches), source, how, departures, takeoff_motion)}


def not_checked(reason):
    """The JSON of a body arc that could not be checked (not a failure of the check)."""
    return {"checked": False, "reason": reason, "departures": []}


def _with_frames(departures, first_frame):
    """Departures with timeline frame numbers (the core counts from index 0)."""
    out = []
    for d in departures:
        d = types.SimpleNamespace(**vars(d))
        d.frames = d.frames + first_frame
        d.stretch_frames = (d.stretch.first + first_frame, d.stretch.last + first_frame)
        out.append(d)
    return out


# --- CSV ---------------------------------------------------------------------------------


def landmark_tracks(tracks):
    """The landmark columns among a CSV's column triples: ``{landmark: (n, 3)}``."""
    return {k: v for k, v in tracks.items() if k in LANDMARK_COLUMNS}


def _csv_model(landmarks, table):
    names = sorted(landmarks)
    index = {n: i for i, n in enumerate(names)}
    points = {n: ((i, 0),) for n, i in index.items()}
    for mid, pair in _MIDPOINTS.items():
        if mid not in points and all(p in index for p in pair):
            points[mid] = tuple((index[p], 0) for p in pair)
    t = get_table(table)
    need = sorted({k + s if k in SIDED_LANDMARKS else k for e in t.entries for k in (e.start, e.end)
                   for s in ((".L", ".R") if e.bilateral else ("",))} - set(points))
    if need:
        raise InvalidTrajectoryError(
            f"the CSV has landmark columns ({', '.join(names)}) but the {t.key} table also needs "
            f"{', '.join(need)}; add their _x,_y,_z columns or drop the landmark columns")
    positions = np.stack([landmarks[n] for n in names], axis=1)
    return mass_model(Landmarks(tuple(names), points), t), positions


def _ballistic(frames, track, fps, gravity):
    """(arc start, last frame in the air) as indices: from the second airborne sample on."""
    try:
        flights = analyse_trajectory(frames, track, fps, gravity=gravity).flights
    except LeapwrightError:
        return []
    f0 = frames[0]
    return [(int(round(f.first_frame - f0)) + 1, int(round(f.last_frame - f0))) for f in flights
            if round(f.first_frame) + 1 < round(f.last_frame)]


def csv_body_arc(frames, landmarks, fps, gravity, tolerance_m=fc.ARC_TOLERANCE, table="de_leva_male"):
    """The body-arc report of a CSV's landmark columns (a JSON-ready dict).

    Raises
    ------
    InvalidTrajectoryError
        Landmark columns present but some the table needs missing.
    """
    model, pos = _csv_model(landmarks, table)
    frames = np.asarray(frames, float)
    if frames.size < 4 or np.any(np.diff(frames) != 1.0) or frames[0] != round(frames[0]):
        return not_checked("the body arc needs one row per whole frame, in order")
    com = whole_body_com(model, pos, pos)
    # Limbs moving in the air bend the COM's arc (the thing to find), so a flight may show
    # only in part on the COM; the torso as keyed usually still falls freely. Without
    # markers to say where the flights are, the track showing more airborne frames wins.
    found = [(_ballistic(frames, com, fps, gravity), "the body's free fall")]
    if "trunk" in model.groups:
        trunk = group_coms(model, pos, pos)["trunk"][1]
        found.append((_ballistic(frames, trunk, fps, gravity), "the torso's free fall"))
    stretches, source = max(found, key=lambda f: sum(b - a for a, b in f[0]))
    stretches = [(a, b) for a, b in stretches if a >= 2]
    if not stretches:
        return not_checked("no flight found: neither the body's centre of mass nor its torso falls freely")
    dt, up = 1.0 / fps, np.array([0.0, 0.0, 1.0])
    v0 = [(com[a] - com[a - 1]) / dt - 0.5 * gravity * dt * up for a, _ in stretches]
    f0 = int(frames[0])
    _fix, found = fc.check_flight(model, pos, pos, stretches, fps, gravity, tolerance=tolerance_m,
                                  first_frame=f0, takeoff_velocities=v0)
    return _report([(a + f0, b + f0) for a, b in stretches], source, "from the CSV's landmark columns",
                   _with_frames(found, f0), tolerance_m)


# --- .blend ------------------------------------------------------------------------------


def blend_body_arc(object_name, gravity=None, tolerance_m=fc.ARC_TOLERANCE, table="de_leva_male"):
    """The add-on's Check Body Arc on the rig of the .blend open in this process (a JSON-ready dict).

    ``gravity`` [m/s^2]: None takes the jump panel's gravity saved in the file, as the
    panel's check does.
    """
    import bpy

    from cli.blend import addon_module, jump_gravity

    rig = bpy.data.objects.get(object_name)
    if rig is None or rig.type != "ARMATURE":
        return None
    ac = addon_module("body.arc")
    scene = bpy.context.scene
    if gravity is None:
        gravity = jump_gravity(scene)
    m = scene.unit_settings.scale_length
    settings = types.SimpleNamespace(table=table, flights="AUTO", carrier_bone="", tolerance=tolerance_m / m,
                                     settle_frames=0)
    try:
        work = ac.prepare(scene, rig, settings, gravity, own_layer=True)
    except ac.AirError as exc:
        return not_checked(str(exc))
    first = int(work.frames[0])
    return _report(work.stretches, work.source, work.how, _with_frames(work.departures, first), tolerance_m,
                   work.takeoff_motion, first)
