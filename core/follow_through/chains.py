"""Drag and follow-through of bone chains, driven by the apparent weight they feel.

The add-on samples the evaluated rig once per frame, in world space and scene
time, and calls :func:`bake_chains`; it gets back, per frame and bone, the rotation
to multiply onto the bone's animated local rotation (key it as a delta).

Calling from the add-on (F samples, B chosen bones)::

    bake = bake_chains(
        times,        # (F,) scene seconds of each sample (NLA offsets already applied)
        heads,        # (F, B, 3) world head positions [m] (matrix_world @ pose head)
        rotations,    # (F, B, 3, 3) world rotation of each bone (matrix_world @ pose matrix,
                      #   3x3 part; scale is removed here); the bone points along column 1 (+Y)
        parents,      # (B,) index of the nearest chosen ancestor, -1 for a chain's first bone
        chain_preset("hair"),            # or ChainParameters(...), or one per bone
        gravity=(0, 0, -9.80665),        # scene gravity [m/s^2], world axes
        options=BakeOptions(cyclic=False, resets=(), key_tolerance=0.0, on_twos=False),
        colliders=None,  # or Colliders(starts, ends, radii, ground, lengths): tips kept out (.contacts)
    )
    bake.quaternions  # (F, B, 4) w, x, y, z: key pose_bone basis' = basis @ delta
    bake.rotvecs      # (F, B, 3) the same as rotation vectors [rad], bone-local axes
    bake.key_mask     # (F, B) which samples to key; bake.stepped -> CONSTANT interpolation
    bake.peak_offsets # (B,) largest delta angle [rad], for the readout

With the NLA COMBINE blend, quaternions multiply on the right (``lower @ delta``),
which is the convention of the deltas here.

Model (details in :mod:`.spring_integrator`): every chosen bone is a point mass on
a rigid link held by a damped rotational spring to its chain parent. It feels the
effective gravity ``g_eff = g - a_head`` (``|g_eff| = W/m``, zero in flight) and the
animated turning of its own bone. The animated pose is the loaded shape at 1 g, so

* a rig standing still gets exactly zero offset;
* in free fall each joint floats up to its unloaded shape: ``-sag`` for a bone
  whose loaded direction is horizontal (``-sag * sin(angle from straight down)``
  in general, as a pendulum's lever gives);
* on landing the extra weight bends it further, in proportion to the force.

The parameters are defined operationally, on one bone:

* ``frequency`` f_n [Hz] and ``damping_ratio`` zeta of the spring alone (gravity off);
* ``sag`` [rad]: static bend at standard gravity, standing still, of a bone held
  horizontal, measured from its unloaded shape. It fixes the swing length
  ``l = g0 / (sag * omega_n^2)`` (``g0`` standard gravity): sag is a property of
  the object, so under moon gravity the same hair swings slower and sags less;
* ``angle_limit`` [rad]: largest bend of a joint away from its animated rotation;
* ``transmission`` mu in [0, 1]: the share of a joint's damping that works across
  the joint, against the parent's swing rate, and so carries the parent's motion
  into the child; the rest works against the world, as still air would. 1 is
  internal friction only (a loose whip); lower values make the chain trail in
  space (drag). Statics do not depend on it, so the sag stays the sag.

Simplifications, each kept on purpose: a bone carries only its own weight (so
each joint sags by the same ``sag``), and the offsets do not move the heads below
them (the drive is the animated motion; the coupling runs parent to child only).
"""

import math
from dataclasses import dataclass

import numpy as np

from ..base.constants import STANDARD_GRAVITY
from .chain_keys import hold_on_twos, reduce_keys
from .parameters import ChainParameters, LinkCoefficients, coefficient_arrays
from ..base.blocks import blocks_along
from .samples import chain_drive, check_drive, check_samples, frame_accelerations, split_segments
from ..base.errors import InvalidGoalError
from ..base.rotation_vectors import (quaternion_conjugate, quaternion_multiply, quaternion_to_rotvec,
    rotvec_to_quaternion)
from .contacts import Colliders, contact_arrays, contact_nodes
from .chain_steps import integrate_chains
from .integrator import ChainSlots, drive_nodes, integrate

__all__ = ["BakeOptions", "ChainBake", "ChainMotion", "ChainParameters", "Colliders", "LinkCoefficients", "bake_chains",
           "bake_motion", "chain_motion", "drive_options"]

@dataclass(frozen=True)
class BakeOptions:
    """How to run and thin a bake.

    Parameters
    ----------
    cyclic : bool
        Loop the samples: the last sample is the same moment of the cycle as the
        first (frames ``start..end`` with ``end`` keyed like ``start``). The chains
        start in their periodic steady state, so the first and last frames agree.
    resets : tuple of int
        Sample indices where the chains start over from the animated pose at rest
        (camera cuts, markers). Motion is never differenced across a reset.
    substeps : int
        Exact steps per frame interval (1 is enough for stability at any stiffness;
        more refines large, fast swings).
    key_tolerance : float
        Drop keys whose removal changes no rotation by more than this [rad]; 0
        keeps every frame.
    on_twos : bool
        Hold each result for two samples (keys on samples 0, 2, 4, ... relative to
        each segment's start, interpolation constant).
    multi_link : bool
        Simulate each chain as a multi-link pendulum stepped frame by frame
        (:mod:`.chain_steps`: a child pulls on its parent); False runs the single-link
        model, where each bone only follows its parent (:mod:`.integrator`).
    """

    cyclic: bool = False
    resets: tuple = ()
    substeps: int = 1
    key_tolerance: float = 0.0
    on_twos: bool = False
    multi_link: bool = False


@dataclass(frozen=True)
class ChainBake:
    """Result of :func:`bake_chains`; F samples, B bones, in the order given.

    Parameters
    ----------
    times : numpy.ndarray, shape (F,)
        Sample times [s].
    rotvecs : numpy.ndarray, shape (F, B, 3)
        Delta rotation of each bone in its own local axes [rad]: the baked local
        rotation is ``R_animated_local @ R(delta)`` (multiply on the right).
    quaternions : numpy.ndarray, shape (F, B, 4)
        The same deltas as unit quaternions ``(w, x, y, z)``, ``w >= 0``.
    world_offsets : numpy.ndarray, shape (F, B, 3)
        Simulated world rotation of each bone is ``R(world_offset) @ W_animated`` [rad].
    key_mask : numpy.ndarray of bool, shape (F, B)
        Samples to key per bone (all True unless reduced or on twos).
    stepped : bool
        Key with constant interpolation (on twos); otherwise linear between keys.
    peak_offsets : numpy.ndarray, shape (B,)
        Largest delta angle of each bone over the bake [rad].
    cyclic_mismatch : float
        Largest first/last frame difference of a cyclic bake [rad] (0 otherwise).
    passes : int
        Sweeps over the whole range the integrator ran (the most of any segment).
    """

    times: np.ndarray
    rotvecs: np.ndarray
    quaternions: np.ndarray
    world_offsets: np.ndarray
    key_mask: np.ndarray
    stepped: bool
    peak_offsets: np.ndarray
    cyclic_mismatch: float
    passes: int


@dataclass(frozen=True)
class ChainMotion:
    """The chosen bones' sampled motion made ready to bake, whatever the chain settings.

    Checking the samples and turning them into the drive the chains feel (head and
    angular accelerations, apparent gravity, the values halfway between samples) is a
    fixed share of every bake that no chain setting changes. A tool that bakes the
    same motion again with other settings (tuning) makes this once with
    :func:`chain_motion` and gives it to :func:`bake_motion` each time. Treat it as
    read-only: the arrays are shared by every bake made from it.

    Parameters
    ----------
    times, heads, rotations, parents, gravity
        The checked samples as :func:`bake_chains` takes them (rotations with scale
        removed, gravity as a (3,) array [m/s^2]).
    options : BakeOptions
        The options the motion was made for (cyclic, resets and the model decide the drive).
    slots : ChainSlots
        The chains laid out in padded trees.
    padding : numpy.ndarray of int
        The slots no bone uses.
    segments : tuple of (int, int, dict)
        Each stretch between resets of two or more samples, ``(first, end, drive)``, with
        the integrator's drive over it (:func:`.integrator.integrate`).
    tolerance : float
        The options' key tolerance, checked [rad].
    """

    times: np.ndarray
    heads: np.ndarray
    rotations: np.ndarray
    parents: np.ndarray
    gravity: np.ndarray
    options: BakeOptions
    slots: ChainSlots
    padding: np.ndarray
    segments: tuple
    tolerance: float


def chain_motion(times, heads, rotations, parents, gravity=(0.0, 0.0, -STANDARD_GRAVITY), options=BakeOptions()):
    """The samples checked and turned into the chains' drive, for :func:`bake_motion`.

    Parameters are those of :func:`bake_chains` (without the chain parameters and
    colliders, which the drive does not depend on).

    Returns
    -------
    ChainMotion

    Raises
    ------
    InvalidGoalError
        For bad options or parents (the value and a fix in the message).
    InvalidTrajectoryError
        For samples of the wrong shape, non-finite, non-increasing or mirrored, or
        accelerations no rig could mean (a teleport, a flipped rotation).
    """
    times, heads, rots, parents, g_ref = check_samples(times, heads, rotations, parents, gravity)
    frames = heads.shape[0]
    _, tolerance = _check_options(options, frames)
    slots = ChainSlots.from_parents(parents)
    padding = np.setdiff1d(np.arange(slots.trees * slots.size), slots.slot)
    segments = []
    for lo, hi in split_segments(frames, options.resets):
        if hi - lo < 2:
            continue  # a lone sample after a cut is the animated pose itself
        seg_times = times[lo:hi]
        accel, alpha = frame_accelerations(seg_times, heads[lo:hi], rots[lo:hi], options.cyclic)
        check_drive(accel, alpha, seg_times, lo)
        levers = _levers(heads[lo:hi], parents) if options.multi_link else None
        drive = chain_drive(slots, seg_times, rots[lo:hi, :, :, 1], accel, alpha, g_ref, options.cyclic, padding, levers)
        if not options.multi_link and options.substeps == 1:
            drive = {"nodes": drive_nodes(drive)}  # all the sweeps read; the rest would double the memory kept
        segments.append((lo, hi, drive))
    return ChainMotion(times, heads, rots, parents, g_ref, options, slots, padding, tuple(segments), tolerance)


def bake_chains(times, heads, rotations, parents, parameters, gravity=(0.0, 0.0, -STANDARD_GRAVITY), options=BakeOptions(),
                colliders=None):
    """Simulate drag and follow-through for the chosen bones.

    Parameters
    ----------
    times : array_like, shape (F,)
        Scene time of each sample [s], strictly increasing (F >= 2). Non-uniform
        steps are fine (a sample per frame, or per subframe).
    heads : array_like, shape (F, B, 3)
        World position of each bone's head [m], from the evaluated rig.
    rotations : array_like, shape (F, B, 3, 3)
        Animated world rotation of each bone (its world matrix's 3x3 part; scale is
        removed here). The bone points along its local +Y axis (column 1).
    parents : sequence of int, length B
        Index (into these B bones) of each bone's nearest simulated ancestor, or -1
        when its parent is not simulated (a chain's first bone). Children must
        inherit their parent's rotation.
    parameters : ChainParameters or LinkCoefficients, or a sequence of B of them
        One set for all bones, or one per bone.
    gravity : array_like, shape (3,)
        Scene gravity [m/s^2], world frame; the animated pose is the loaded shape
        under it.
    options : BakeOptions
    colliders : Colliders, optional
        Body capsules and ground the bones' tips stay out of (:mod:`.contacts`);
        needs ``substeps`` 1. None (the default) simulates without contact.

    Returns
    -------
    ChainBake

    Raises
    ------
    InvalidGoalError
        For bad parameters or options (the value and a fix in the message).
    InvalidTrajectoryError
        For samples of the wrong shape, non-finite, non-increasing or mirrored.
    """
    return bake_motion(chain_motion(times, heads, rotations, parents, gravity, options), parameters, colliders)


def bake_motion(motion, parameters, colliders=None, options=None):
    """:func:`bake_chains` on motion made ready by :func:`chain_motion` (the same result, bit for bit).

    Parameters
    ----------
    motion : ChainMotion
    parameters : ChainParameters or LinkCoefficients, or a sequence of them (one per bone)
    colliders : Colliders, optional
    options : BakeOptions, optional
        Other keying (``key_tolerance``, ``on_twos``) than the motion was made with; what
        decides the drive (``cyclic``, ``resets``, ``substeps``, ``multi_link``) must be the
        motion's own. None keeps the motion's options.

    Returns
    -------
    ChainBake

    Raises
    ------
    InvalidGoalError
        For bad parameters, or options the motion was not made for.
    """
    if not isinstance(motion, ChainMotion):
        raise InvalidGoalError(f"a bake of prepared motion needs the motion prepared from the samples, got a "
                               f"{type(motion).__name__}; prepare it from the times, heads, rotations and parents first")
    times, heads, rots, parents = motion.times, motion.heads, motion.rotations, motion.parents
    frames, bones = heads.shape[:2]
    tolerance, given, options = motion.tolerance, options, motion.options
    if given is not None and given is not motion.options:
        options = given
        _, tolerance = _check_options(given, frames)
        if drive_options(given) != drive_options(motion.options):
            raise InvalidGoalError(f"this motion was made for {drive_options(motion.options)} (cyclic, resets, "
                                   f"substeps, multi-link), not {drive_options(options)}; prepare the motion again "
                                   "with these options")
    coeffs = coefficient_arrays(parameters, bones)
    substeps = options.substeps
    contact = contact_arrays(colliders, frames, bones, substeps, motion.gravity)
    slots = motion.slots
    slot_coeffs = {name: slots.to_slots(value[:, None], 0.0)[:, 0] for name, value in coeffs.items()}
    slot_coeffs["limit"] = slots.to_slots(coeffs["limit"][:, None], math.pi)[:, 0]
    world = np.zeros((frames, bones, 3))
    mismatch, passes = 0.0, 1
    simulate = integrate_chains if options.multi_link else integrate
    for lo, hi, drive in motion.segments:
        seg_times = times[lo:hi]
        here = None if contact is None else contact_nodes(contact, lo, hi, slots, seg_times, heads[lo:hi],
                                                          rots[lo:hi, :, :, 1], options.cyclic)
        offsets, sweeps, _ = simulate(slots, slot_coeffs, seg_times, drive, motion.gravity, options.cyclic, substeps,
                                      here)
        passes = max(passes, sweeps)
        world[lo:hi] = offsets[:, slots.slot]
    rotvecs, quats = np.empty(world.shape), np.empty(world.shape[:2] + (4,))
    for cut in blocks_along(frames, 16 * bones):  # frame by frame, a block at a time
        rotvecs[cut], quats[cut] = _joint_rotations(world[cut], rots[cut], parents)
    if options.cyclic:
        mismatch = float(np.max(np.linalg.norm(rotvecs[-1] - rotvecs[0], axis=-1)))
    stepped = bool(options.on_twos)
    mask = np.ones((frames, bones), dtype=bool)
    if stepped:
        rotvecs, quats, mask = hold_on_twos(rotvecs, quats, split_segments(frames, options.resets))
    if tolerance > 0.0:
        mask = reduce_keys(quats, tolerance, mask, stepped, split_segments(frames, options.resets))
    peaks = np.max(np.linalg.norm(rotvecs, axis=-1), axis=0) if bones else np.zeros(0)
    return ChainBake(times, rotvecs, quats, world, mask, stepped, peaks, mismatch, passes)


def _joint_rotations(world, rots, parents):
    """Each bone's simulated offset from its parent's, in its own axes: rotation vectors [rad]
    and unit quaternions, from world offsets ``world`` (F, B, 3) and bone axes ``rots``."""
    # joint rotation in world axes, R(psi_p)^T R(psi_c), then in the bone's own axes
    q_world = rotvec_to_quaternion(world)
    q_parent = np.where((parents >= 0)[None, :, None], q_world[:, np.maximum(parents, 0)], np.array([1.0, 0, 0, 0]))
    joint = quaternion_to_rotvec(quaternion_multiply(quaternion_conjugate(q_parent), q_world))
    rotvecs = np.einsum("fbji,fbj->fbi", rots, joint)
    return rotvecs, rotvec_to_quaternion(rotvecs)


def drive_options(options):
    """What of the options decides a bake's drive: ``(cyclic, resets, substeps, multi_link)``."""
    return (bool(options.cyclic), tuple(int(r) for r in options.resets), int(options.substeps), bool(options.multi_link))


def _levers(heads, parents):
    """Each head's offset from its chain parent's head [m], zero for a chain's first bone."""
    return np.where((parents >= 0)[None, :, None], heads - heads[:, np.maximum(parents, 0)], 0.0)


def _check_options(options, frames):
    if not isinstance(options, BakeOptions):
        raise InvalidGoalError(f"the bake's options are a {type(options).__name__}, not bake options: give the "
                               "substeps, the resets and the key tolerance as bake options")
    substeps = options.substeps
    if isinstance(substeps, bool) or not isinstance(substeps, (int, np.integer)) or not 1 <= substeps <= 64:
        raise InvalidGoalError(f"substeps must be a whole number from 1 to 64, got {substeps!r}; 1 is stable at any stiffness")
    try:
        tolerance = float(options.key_tolerance)
    except (TypeError, ValueError):
        tolerance = math.nan
    if not (0.0 <= tolerance <= math.pi):
        raise InvalidGoalError(
            f"key_tolerance must be from 0 to pi rad, got {options.key_tolerance!r}; e.g. 0.0017 rad (0.1 deg), or 0 to keep all"
        )
    if options.cyclic and len(tuple(options.resets)):
        raise InvalidGoalError(
            f"a cyclic bake cannot also reset at {tuple(options.resets)}; bake the loop without resets, or turn cyclic off"
        )
    if options.cyclic and frames < 3:
        raise InvalidGoalError(f"a cyclic bake needs at least 3 samples, got {frames}; sample the whole cycle")
    split_segments(frames, options.resets)  # validates the indices
    return int(substeps), tolerance
