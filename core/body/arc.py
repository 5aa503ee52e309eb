"""In the air the whole-body centre of mass (COM) follows one parabola, whatever the limbs do.

Between take-off and touchdown the only external force is gravity, so the COM obeys
``c(t) = c0 + v0 t - g t^2 / 2 up`` exactly. When limbs move relative to the torso the
rest of the body has to move the other way: with the torso rigid, raising limbs of mass
``m_limbs`` by ``dz_rel`` relative to it moves the torso by
``dz_torso = -(m_limbs / M) dz_rel``. Animators key limbs and hips separately, so this
is easy to miss. :func:`correct_flight` gives the root offset per frame that puts the
COM back on its arc while the limbs move as animated; :func:`check_flight` also lists
where the animation leaves the arc, with the torso drop it implies.

Frames here are indices into the arrays (0 for the first sample); ``first_frame``
turns them into the timeline's frame numbers for messages.

Take-off state
--------------
The arc is fixed by the COM's position and velocity at take-off, read from the contact
side, because the arm swing of a jump often carries on after the feet leave: a fit on
the flight side would take that swing as the launch. The position is the COM at the
take-off frame itself (so the correction starts at zero, without a pop); the velocity
is the slope at that frame of a quadratic through it, least-squares fitted to the
``fit_frames`` frames ending there. With 3 frames this is the second-order backward
difference ``(3 c0 - 4 c-1 + c-2) / (2 dt)``, exact while the acceleration is constant
over the window (a push that ends at a constant force, or one already over); otherwise
its error is about ``dt^2 / 3`` times the jerk. Pass ``takeoff_velocities`` when the
take-off speed is known exactly (e.g. from the planner).

References
----------
Newton's second law for a system of particles: the COM accelerates as the external
force over the total mass, here gravity alone (textbook mechanics).
"""

from dataclasses import dataclass, field, replace

import numpy as np

from ..base import constants as C
from .mass import group_coms, whole_body_com
from ..base.errors import InvalidGoalError, InvalidTrajectoryError, require_finite
from ..base.timebase import MAX_FPS, MIN_FPS

#: COM departure from the arc above which a warning is given [m] (design choice: one
#: centimetre, a clearly visible torso drift on a human-sized character).
ARC_TOLERANCE = 0.01
#: Body parts whose motion is the push itself (see :func:`takeoff_motion`).
PUSHING_PARTS = ("legs",)
#: A part whose speed relative to the torso over the frame before the take-off is under
#: this share of its speed over the frame after it starts moving in the air (design
#: choice: a quarter tells a start from rest apart from a swing slowing through the take-off).
START_RATIO = 0.25
#: Contact frames used to read the take-off velocity (3: the shortest window giving a
#: second-order estimate).
TAKEOFF_FIT_FRAMES = 3


@dataclass(frozen=True)
class FlightStretch:
    """Frames ``first..last`` (inclusive indices) on one arc; ``first`` is the take-off
    frame, the last whose pose the contact sets, ``last`` the last frame in the air."""

    first: int
    last: int


@dataclass(frozen=True, eq=False)
class FlightCorrection:
    """Root offsets that keep the COM on its arcs.

    Attributes
    ----------
    offsets : ndarray, shape (n_frames, 3)  world-space root offset per frame [m], 0 outside flights
    arcs : tuple of ndarray  the arc of each stretch, shape (last - first + 1, 3) [m]
    velocities : ndarray, shape (n_stretches, 3)  take-off COM velocity of each stretch [m/s]
    largest : float  largest offset length [m]
    largest_frame : int  frame index where it occurs (-1 without flights)
    """

    offsets: np.ndarray
    arcs: tuple
    velocities: np.ndarray
    largest: float
    largest_frame: int


@dataclass(frozen=True, eq=False)
class ArcDeparture:
    """Frames of one flight where the COM leaves its arc by more than the tolerance.

    Attributes
    ----------
    stretch : FlightStretch
    frames : ndarray of int  frame indices concerned
    deviation : ndarray, shape (n, 3)  animated COM minus arc [m]
    torso_drop_cm : ndarray, shape (n,)  vertical root offset restoring the arc [cm] (negative: down)
    limb_rise_cm : dict  body part -> (n,) rise of its COM relative to the torso since take-off [cm]
    limb_drop_cm : dict  body part -> (n,) torso drop it implies, -(m_part/M) rise [cm]
    mass_shares : dict  body part -> share of the whole-body mass [-]
    message, suggestion : str  for the panel and the command line
    """

    stretch: FlightStretch
    frames: np.ndarray
    deviation: np.ndarray
    torso_drop_cm: np.ndarray
    limb_rise_cm: dict = field(default_factory=dict)
    limb_drop_cm: dict = field(default_factory=dict)
    mass_shares: dict = field(default_factory=dict)
    message: str = ""
    suggestion: str = ""


def _stretches(stretches, n_frames, fit_frames, need_contact):
    out = []
    for s in stretches:
        first, last = (s.first, s.last) if isinstance(s, FlightStretch) else tuple(s)
        first, last = int(first), int(last)
        if not 0 <= first < last < n_frames:
            raise InvalidGoalError(f"flight stretch {first}..{last} must satisfy 0 <= first < last < {n_frames} "
                                   f"(frame indices into the {n_frames} samples)")
        if need_contact and first - fit_frames + 1 < 0:
            raise InvalidTrajectoryError(
                f"flight stretch {first}..{last} needs {fit_frames} frames up to its take-off frame to read the "
                f"take-off velocity, but starts at index {first}; start the frame range "
                f"{fit_frames - 1 - first} frame(s) earlier or pass the take-off velocity")
        if out and first < out[-1].last:
            raise InvalidGoalError(f"flight stretches {out[-1].first}..{out[-1].last} and {first}..{last} overlap; "
                                   f"give them in time order without overlap")
        out.append(FlightStretch(first, last))
    return out


def takeoff_velocity(com, first, fps, fit_frames=TAKEOFF_FIT_FRAMES):
    """COM velocity at frame index ``first`` from the frames up to it [m/s], shape (3,).

    A quadratic through ``com[first]``, least-squares fitted to ``com[first-fit_frames+1 .. first]``,
    differentiated at ``first``; two frames give the backward difference.
    """
    c = np.asarray(com, float)
    k = int(fit_frames)
    if k < 2 or first - k + 1 < 0:
        raise InvalidGoalError(f"fit_frames must be 2 or more and fit before index {first}, got {fit_frames}")
    tau = (np.arange(first - k + 1, first) - first) / fps
    d = c[first - k + 1:first] - c[first]
    design = np.stack([tau, tau ** 2], axis=1) if k >= 3 else tau[:, None]
    coef = np.linalg.lstsq(design, d, rcond=None)[0]
    return coef[0]


def correct_flight(com, stretches, fps, gravity=C.STANDARD_GRAVITY, up=(0.0, 0.0, 1.0),
                   fit_frames=TAKEOFF_FIT_FRAMES, takeoff_velocities=None, settle_frames=0):
    """Root offsets per frame that put the whole-body COM on the exact arc of each flight.

    Parameters
    ----------
    com : array_like, shape (n_frames, 3)  whole-body COM [m] (:func:`body_mass.whole_body_com`)
    stretches : sequence of FlightStretch or (first, last)  flights, frame indices, in time order
    fps : float  frames per second [1/s]
    gravity : float  magnitude of gravity [m/s^2]
    up : 3-vector  the up direction
    fit_frames : int  contact frames used for the take-off velocity (see module notes)
    takeoff_velocities : array_like, shape (n_stretches, 3), optional  known take-off COM velocities [m/s]
    settle_frames : int  frames after each landing over which the offset eases back to 0
        (0: it stops at the last flight frame)

    Returns
    -------
    FlightCorrection
        Adding ``offsets[f]`` to every bone at frame ``f`` moves the COM onto the arc.
    """
    c = np.asarray(com, float)
    if c.ndim != 2 or c.shape[1] != 3 or not np.isfinite(c).all():
        raise InvalidTrajectoryError(f"the COM track must be a finite (n_frames, 3) array [m], got shape {c.shape}"
                                     f"{'' if np.isfinite(c).all() else ' with NaN or infinity'}")
    fps = require_finite("fps", fps, positive=True)
    if not MIN_FPS <= fps <= MAX_FPS:
        raise InvalidGoalError(f"fps {fps:g} is outside {MIN_FPS:g} to {MAX_FPS:g}; give the scene's frame rate, "
                               "e.g. 24")
    g = require_finite("gravity", gravity, non_negative=True, unit=" m/s^2")
    upv = np.asarray(up, float).reshape(3)
    if not np.isfinite(upv).all() or np.linalg.norm(upv) == 0:
        raise InvalidGoalError(f"up {tuple(upv)} must be a non-zero finite vector, e.g. (0, 0, 1)")
    upv = upv / np.linalg.norm(upv)
    known = None if takeoff_velocities is None else np.asarray(takeoff_velocities, float).reshape(-1, 3)
    st = _stretches(stretches, len(c), int(fit_frames), known is None)
    if known is not None and (len(known) != len(st) or not np.isfinite(known).all()):
        raise InvalidGoalError(f"give one finite take-off velocity [m/s] per stretch: {len(st)} stretches, "
                               f"{len(known)} velocities {known.tolist()}")
    settle = int(require_finite("settle_frames", settle_frames, non_negative=True))
    offsets = np.zeros_like(c)
    arcs, velocities = [], []
    for i, s in enumerate(st):
        v0 = known[i] if known is not None else takeoff_velocity(c, s.first, fps, fit_frames)
        tau = (np.arange(s.first, s.last + 1) - s.first)[:, None] / fps
        arc = c[s.first] + v0 * tau - 0.5 * g * tau ** 2 * upv
        offsets[s.first:s.last + 1] = arc - c[s.first:s.last + 1]
        end = min(len(c), s.last + 1 + settle, st[i + 1].first if i + 1 < len(st) else len(c))
        if end > s.last + 1:  # smoothstep back to zero so the landing does not pop
            x = np.arange(1, end - s.last) / (settle + 1)
            offsets[s.last + 1:end] = offsets[s.last] * (1 - x * x * (3 - 2 * x))[:, None]
        arcs.append(arc)
        velocities.append(v0)
    size = np.linalg.norm(offsets, axis=1)
    worst = int(np.argmax(size)) if st else -1
    return FlightCorrection(offsets, tuple(arcs), np.array(velocities).reshape(-1, 3),
                            float(size[worst]) if st else 0.0, worst)


def check_flight(model, heads, tails, stretches, fps, gravity=C.STANDARD_GRAVITY, up=(0.0, 0.0, 1.0),
                 tolerance=ARC_TOLERANCE, first_frame=0, **correction_options):
    """Correction and warnings for the flights of an animated body.

    Parameters
    ----------
    model : body_mass.MassModel
    heads, tails : array_like, shape (n_frames, n_bones, 3)  posed bone positions [m]
    stretches, fps, gravity, up : see :func:`correct_flight`
    tolerance : float  COM departure from the arc allowed before a warning [m]
    first_frame : int  timeline frame number of index 0, used in messages
    **correction_options : fit_frames, takeoff_velocities, settle_frames (see :func:`correct_flight`)

    Returns
    -------
    (FlightCorrection, list of ArcDeparture)
    """
    tol = require_finite("tolerance", tolerance, non_negative=True, unit=" m")
    com = whole_body_com(model, heads, tails)
    stretches = list(stretches)  # read twice below
    fix = correct_flight(com, stretches, fps, gravity, up, **correction_options)
    upv = np.asarray(up, float) / np.linalg.norm(up)
    parts = group_coms(model, heads, tails)
    trunk = parts.get("trunk")
    found = []
    for s, arc in zip(_stretches(stretches, len(com), 1, False), fix.arcs):
        dev = com[s.first:s.last + 1] - arc
        bad = np.flatnonzero(np.linalg.norm(dev, axis=1) > tol)
        if bad.size == 0:
            continue
        frames = s.first + bad
        drop = -100.0 * (dev[bad] @ upv)
        rise, limb_drop, shares = {}, {}, {}
        if trunk is not None:
            for name, (share, track) in parts.items():
                if name == "trunk":
                    continue
                rel = (track - trunk[1]) @ upv
                rise[name] = 100.0 * (rel[frames] - rel[s.first])
                limb_drop[name] = -share * rise[name]
                shares[name] = share
        dep = _departure(s, frames, dev[bad], drop, rise, limb_drop, shares, first_frame)
        landing = float(np.linalg.norm(dev[-1]))
        if landing > tol:  # the offset stops at touchdown unless eased out
            dep = replace(dep, message=dep.message + f"; at the last frame in the air ({s.last + first_frame}) "
                          f"the body is still {100 * landing:.1f} cm off its arc, so the landing will jump "
                          f"unless the limbs come back or the correction eases out (settle frames)")
        found.append(dep)
    return fix, found


@dataclass(frozen=True, eq=False)
class TakeoffMotion:
    """Body parts that start moving just as a flight begins, where its take-off speed is read.

    Attributes
    ----------
    stretch : FlightStretch  the flight (``first`` is its first frame surely in the air)
    speed_error : ndarray, shape (3,)  what the parts' start adds to the speed read [m/s]
    arc_shift_cm : float  how far that moves the arc by the flight's last frame [cm]
    parts : dict  body part -> length of its share of ``speed_error`` [m/s]
    message : str  for the panel and the command line
    """

    stretch: FlightStretch
    speed_error: np.ndarray
    arc_shift_cm: float
    parts: dict
    message: str


def takeoff_motion(model, heads, tails, stretches, fps, tolerance=ARC_TOLERANCE, first_frame=0):
    """Flights whose take-off speed, read at their first frame in the air, takes in a limb starting to move.

    The add-on reads a flight's launch speed just before its first frame surely in the
    air (``first``, a frame after the take-off), clear of the push. In the air the body's
    own motion cannot change the COM's speed (momentum), so a limb that starts moving
    relative to the torso between the take-off frame ``first - 1`` and ``first``
    puts its share of that change into the speed read, and the arc bends with it. The
    change is each part's velocity relative to the torso over ``first - 1 .. first`` minus
    that over ``first - 2 .. first - 1`` (backward differences), weighted by its share of
    the mass. Only parts that *start* moving there count (their speed before is under
    :data:`START_RATIO` of the speed after): an arm swing that slows through the take-off,
    as a swing timed to the push does, changes its speed there too, but it is part of the
    launch and the arc read after it is the one the flight keeps. The legs are left out:
    they do the pushing, and their extension stopping as the feet leave is the take-off
    itself (a planned jump's legs add about 0.8 m/s there). A report is made when the
    change moves the arc by more than ``tolerance`` [m] by the flight's last frame.

    Parameters
    ----------
    model : body_mass.MassModel  (needs a ``trunk`` group; none is reported without one)
    heads, tails : array_like, shape (n_frames, n_bones, 3)  posed bone positions [m]
    stretches : sequence of FlightStretch or (first, last)  frame indices
    fps : float  [1/s]
    tolerance : float  [m]
    first_frame : int  timeline frame number of index 0, used in messages

    Returns
    -------
    list of TakeoffMotion
    """
    tol = require_finite("tolerance", tolerance, non_negative=True, unit=" m")
    rate = require_finite("fps", fps, positive=True, unit=" frames/s")
    parts = group_coms(model, heads, tails)
    if "trunk" not in parts:
        return []
    trunk = parts["trunk"][1]
    found = []
    for s in _stretches(stretches, len(trunk), 1, False):
        if s.first < 2:
            continue  # no contact frames before it to compare with
        shares = {}
        for name, (share, track) in parts.items():
            if name not in ("trunk",) + PUSHING_PARTS:
                rel = track[s.first - 2:s.first + 1] - trunk[s.first - 2:s.first + 1]
                before, after = rel[1] - rel[0], rel[2] - rel[1]
                if np.linalg.norm(before) < START_RATIO * np.linalg.norm(after):
                    shares[name] = share * rate * (after - before)
        if not shares:
            continue
        error = sum(shares.values())
        speed = float(np.linalg.norm(error))
        shift = speed * (s.last - s.first) / rate
        if shift <= tol:
            continue
        sizes = {n: float(np.linalg.norm(v)) for n, v in shares.items()}
        names = sorted(sizes, key=lambda n: -sizes[n])
        movers = [n for n in names if sizes[n] >= 0.1 * speed] or names[:1]
        text = (f"the {', '.join(movers)} start moving relative to the torso between the take-off "
                f"(frame {s.first - 1 + first_frame}) and the first frame in the air ({s.first + first_frame}), "
                f"where the take-off speed is read: that adds {speed:.2f} m/s to it and can move "
                f"the arc by {100 * shift:.1f} cm by frame {s.last + first_frame}; start the move during the push "
                f"or a frame later in the air, or check the corrected arc")
        found.append(TakeoffMotion(s, error, 100.0 * shift, sizes, text[0].upper() + text[1:]))
    return found


def _departure(s, frames, dev, drop, rise, limb_drop, shares, first_frame):
    worst = int(np.argmax(np.linalg.norm(dev, axis=1)))
    f0 = first_frame
    text = (f"frames {frames[0] + f0}-{frames[-1] + f0} (in the air {s.first + f0}-{s.last + f0}): the body's "
            f"centre of mass leaves its arc by up to {100 * np.linalg.norm(dev[worst]):.1f} cm "
            f"(frame {frames[worst] + f0}); to keep momentum the torso must move {drop[worst]:+.1f} cm vertically")
    causes = [f"{n} rise {rise[n][worst]:+.1f} cm relative to the torso ({100 * shares[n]:.1f}% of the mass: "
              f"{limb_drop[n][worst]:+.1f} cm)" for n in sorted(rise, key=lambda n: -abs(limb_drop[n][worst]))
              if abs(limb_drop[n][worst]) >= 0.05]
    # What the limbs do not explain is the torso's own path leaving the arc (keyed hips).
    own = drop[worst] - sum(v[worst] for v in limb_drop.values())
    if limb_drop and abs(own) >= 0.05:
        causes.append(f"the torso itself is keyed {-own:+.1f} cm off the arc")
    if causes:
        text += " - " + "; ".join(causes)
    hint = ("apply the in-air correction to offset the root by the drop shown, key the hips by hand, "
            "or move the limb change into the contact frames")
    return ArcDeparture(s, frames, dev, drop, rise, limb_drop, shares, text[0].upper() + text[1:], hint)
