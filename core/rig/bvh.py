"""BVH motion capture: the joint tree, its motion, forward kinematics, units and up axis.

A BVH file holds a HIERARCHY (joints with an OFFSET from their parent, the CHANNELS that
move them, End Sites at the tips) and a MOTION block (frame count, frame time, one line of
channel values per frame). A joint's rotation channels are Euler angles in degrees applied
in the order they are listed (``Zrotation Xrotation Yrotation`` is R = Rz Rx Ry); position
channels place the joint (as Blender's bundled importer reads them: the position replaces
the offset). Positions come out in metres, Z up, as the rest of the core expects.

References
----------
BVH: the Biovision hierarchy format as documented with the CMU and other public captures
(common practice: Y up, rotations in degrees, channel order as listed).
"""

from dataclasses import dataclass

import numpy as np

from ..base.errors import InvalidTrajectoryError

#: Units a BVH may be written in [m per unit].
UNITS = {"m": 1.0, "cm": 0.01, "mm": 0.001, "in": 0.0254}
#: A standing adult's rest height [m] that unit detection accepts: 1.0-2.3 m (children to
#: tall adults; common practice).
HUMAN_HEIGHT_RANGE_M = (1.0, 2.3)
#: Y-up (BVH convention) to Z-up: (x, y, z) -> (x, -z, y), as Blender's BVH importer does
#: with its default axes (forward -Z, up Y).
Y_UP_TO_Z_UP = np.array([[1.0, 0.0, 0.0], [0.0, 0.0, -1.0], [0.0, 1.0, 0.0]])


@dataclass(frozen=True, eq=False)
class BvhMotion:
    """One BVH file, as written (file units, file axes).

    Attributes
    ----------
    names : tuple of str  joint names, parents before children
    parents : tuple of int  parent index, -1 for the root
    offsets : ndarray (n_joints, 3)  offset from the parent [file units]
    end_sites : dict  joint index -> End Site offset (n=3) [file units]
    channels : tuple of tuple of str  each joint's channel names, in file order
    frame_time_s : float  seconds per frame
    values : ndarray (n_frames, n_channels)  the MOTION block
    """

    names: tuple
    parents: tuple
    offsets: np.ndarray
    end_sites: dict
    channels: tuple
    frame_time_s: float
    values: np.ndarray

    @property
    def fps(self):
        """Frames per second [1/s]; a rate within 1e-5 of a whole number is that number
        (files write the frame time to a few digits: 0.008333 s is 120 fps)."""
        fps = 1.0 / self.frame_time_s
        return float(round(fps)) if abs(fps - round(fps)) <= 1e-5 * fps else fps


def _bad(path, what):
    return InvalidTrajectoryError(f"{path}: {what}; is it a BVH file (HIERARCHY ... MOTION)?")


def _number(tok, path, what):
    try:
        x = float(tok)
    except ValueError:
        raise _bad(path, f"{what} {tok!r} is not a number") from None
    if not np.isfinite(x):
        raise _bad(path, f"{what} is {tok}")
    return x


def _hierarchy(tokens, path):
    """Joints from the HIERARCHY tokens; returns (names, parents, offsets, ends, channels, next index)."""
    names, parents, offsets, channels, ends = [], [], [], [], {}
    stack, i, site = [], 0, False
    if not tokens or tokens[0].upper() != "HIERARCHY":
        raise _bad(path, "it does not start with HIERARCHY")
    i = 1
    while i < len(tokens):
        tok = tokens[i].upper()
        if tok in ("ROOT", "JOINT"):
            if i + 2 >= len(tokens) or tokens[i + 2] != "{":
                raise _bad(path, f"{tokens[i]} needs a name and '{{'")
            names.append(tokens[i + 1])
            parents.append(stack[-1] if stack else -1)
            offsets.append(np.zeros(3))
            channels.append(())
            stack.append(len(names) - 1)
            i += 3
        elif tok == "END":
            site, i = True, i + 3  # End Site {
        elif tok == "OFFSET":
            xyz = [_number(t, path, "an OFFSET value") for t in tokens[i + 1:i + 4]]
            if len(xyz) != 3 or not stack:
                raise _bad(path, "an OFFSET needs three numbers inside a joint")
            if site:
                ends[stack[-1]] = np.array(xyz)
            else:
                offsets[stack[-1]] = np.array(xyz)
            i += 4
        elif tok == "CHANNELS":
            count = int(_number(tokens[i + 1], path, "the channel count"))
            names_c = tuple(tokens[i + 2:i + 2 + count])
            if not stack or len(names_c) != count or any(c.lower()[1:] not in ("position", "rotation")
                                                         or c.lower()[0] not in "xyz" for c in names_c):
                raise _bad(path, f"CHANNELS {' '.join(names_c)} are not Xposition ... Zrotation")
            channels[stack[-1]] = names_c
            i += 2 + count
        elif tok == "}":
            if site:
                site = False
            elif stack:
                stack.pop()
            else:
                raise _bad(path, "a '}' closes nothing")
            i += 1
        elif tok == "MOTION":
            break
        else:
            raise _bad(path, f"unexpected {tokens[i]!r} in the HIERARCHY")
    if not names or stack:
        raise _bad(path, "the HIERARCHY has no ROOT or its braces do not close")
    return names, parents, offsets, ends, channels, i


def read_bvh(text, path="BVH"):
    """Parse a BVH file's text into a :class:`BvhMotion`.

    Raises
    ------
    InvalidTrajectoryError
        With the file named and what is wrong in it.
    """
    head, sep, motion = text.partition("MOTION")
    if not sep:
        raise _bad(path, "it has no MOTION block")
    names, parents, offsets, ends, channels, _ = _hierarchy(head.split() + ["MOTION"], path)
    if len(set(names)) != len(names):
        raise _bad(path, "two joints share a name")
    lines = [ln for ln in motion.splitlines() if ln.strip()]
    if len(lines) < 2 or not lines[0].lower().startswith("frames:") or "time:" not in lines[1].lower():
        raise _bad(path, "MOTION needs 'Frames: N' and 'Frame Time: SECONDS'")
    n_frames = int(_number(lines[0].split(":", 1)[1], path, "Frames"))
    frame_time = _number(lines[1].split(":", 1)[1], path, "Frame Time")
    if frame_time <= 0:
        raise _bad(path, f"Frame Time {frame_time:g} s must be above 0")
    n_ch = sum(len(c) for c in channels)
    rows = lines[2:2 + n_frames]
    try:
        values = np.array([np.array(r.split(), float) for r in rows]) if rows else np.zeros((0, n_ch))
    except ValueError:
        raise _bad(path, "a MOTION line holds something that is not a number") from None
    if len(rows) != n_frames or values.ndim != 2 or values.shape[1] != n_ch:
        raise _bad(path, f"MOTION should have {n_frames} lines of {n_ch} numbers (one per channel), "
                         f"found {len(rows)} lines of {values.shape[1] if values.ndim == 2 else 'uneven'}")
    if not np.isfinite(values).all():
        raise _bad(path, "MOTION holds a non-finite value")
    return BvhMotion(tuple(names), tuple(parents), np.array(offsets, float).reshape(-1, 3),
                     ends, tuple(channels), frame_time, values)


def _axis_rotations(axis, degrees):
    """(n, 3, 3) rotations about x, y or z by ``degrees``."""
    a = np.radians(degrees)
    c, s = np.cos(a), np.sin(a)
    m = np.zeros((len(a), 3, 3))
    i, j = {"x": (1, 2), "y": (2, 0), "z": (0, 1)}[axis]
    k = 3 - i - j
    m[:, k, k] = 1.0
    m[:, i, i] = c
    m[:, j, j] = c
    m[:, i, j] = -s
    m[:, j, i] = s
    return m


def forward_kinematics(bvh):
    """World rotations and joint positions of every frame, in file units and axes.

    Returns
    -------
    rotations : ndarray (n_frames, n_joints, 3, 3)
    positions : ndarray (n_frames, n_joints, 3)  each joint's head [file units]
    """
    n_f, n_j = len(bvh.values), len(bvh.names)
    rot = np.zeros((n_f, n_j, 3, 3))
    pos = np.zeros((n_f, n_j, 3))
    col = 0
    for j in range(n_j):
        local = np.broadcast_to(np.eye(3), (n_f, 3, 3)).copy()
        offset = np.broadcast_to(bvh.offsets[j], (n_f, 3)).copy()
        placed = False
        for name in bvh.channels[j]:
            axis, kind = name[0].lower(), name[1:].lower()
            v = bvh.values[:, col]
            col += 1
            if kind == "rotation":
                local = local @ _axis_rotations(axis, v)
            else:
                if not placed:
                    offset[:] = 0.0  # position channels replace the offset (Blender's reading)
                    placed = True
                offset[:, "xyz".index(axis)] = v
        p = bvh.parents[j]
        if p < 0:
            rot[:, j], pos[:, j] = local, offset
        else:
            rot[:, j] = rot[:, p] @ local
            pos[:, j] = pos[:, p] + np.einsum("fij,fj->fi", rot[:, p], offset)
    return rot, pos


def rest_points(bvh):
    """Rest-pose heads and tails [file units]: a joint's tail is its End Site, else the
    mean of its children's heads (a lone leaf with neither gets a stub along its offset)."""
    n = len(bvh.names)
    heads = np.zeros((n, 3))
    for j in range(n):
        p = bvh.parents[j]
        heads[j] = bvh.offsets[j] + (heads[p] if p >= 0 else 0.0)
    tails = heads.copy()
    for j in range(n):
        kids = [c for c in range(n) if bvh.parents[c] == j]
        if j in bvh.end_sites:
            tails[j] = heads[j] + bvh.end_sites[j]
        elif kids:
            tails[j] = heads[kids].mean(axis=0)
        if np.allclose(tails[j], heads[j]):
            tails[j] = heads[j] + 0.1 * (bvh.offsets[j] if np.any(bvh.offsets[j]) else np.array([0, 1.0, 0]))
    return heads, tails


def up_axis(heads, tails):
    """``"y"`` or ``"z"``: the axis along which the rest skeleton is tallest of the two.

    Arms in a T pose span about the body's height, but sideways (x); along the other
    horizontal axis a body is only a foot long, so the taller of y and z is up.
    """
    pts = np.concatenate([heads, tails])
    extent = pts.max(axis=0) - pts.min(axis=0)
    return "z" if extent[2] > extent[1] else "y"


def detect_units(height):
    """The unit [key of :data:`UNITS`] in which a rest height of ``height`` file units is a person's.

    Returns None when no unit gives a height in :data:`HUMAN_HEIGHT_RANGE_M`.
    """
    lo, hi = HUMAN_HEIGHT_RANGE_M
    for unit in ("m", "cm", "in", "mm"):
        if lo <= height * UNITS[unit] <= hi:
            return unit
    return None
