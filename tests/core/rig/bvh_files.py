"""BVH files for the tests, written here from a plain T-pose skeleton and a root path.

The skeleton is an adult of 1.75 m in a T pose (segment lengths after Drillis & Contini's
fractions of height, from memory); its motion comes from outside data (the callers pass
the jumpmetrics force-plate COM paths, tests/core/check/capture_paths.py). The format is
the Biovision hierarchy as public captures write it (common practice: Y up, degrees).
"""

import numpy as np

# name, parent, offset (x left, y up, z forward) [m], end site offset or None
SKELETON = (
    ("Hips", None, (0, 0, 0), None),
    ("Spine", "Hips", (0, 0.10, 0), None),
    ("Chest", "Spine", (0, 0.18, 0), None),
    ("Neck", "Chest", (0, 0.22, 0), None),
    ("Head", "Neck", (0, 0.08, 0), (0, 0.22, 0)),
    ("LeftCollar", "Chest", (0.03, 0.18, 0), None),
    ("LeftShoulder", "LeftCollar", (0.15, 0, 0), None),
    ("LeftElbow", "LeftShoulder", (0.30, 0, 0), None),
    ("LeftWrist", "LeftElbow", (0.25, 0, 0), None),
    ("LeftFinger1", "LeftWrist", (0.08, 0, 0.03), (0.08, 0, 0)),
    ("LeftFinger2", "LeftWrist", (0.08, 0, -0.03), (0.08, 0, 0)),
    ("RightCollar", "Chest", (-0.03, 0.18, 0), None),
    ("RightShoulder", "RightCollar", (-0.15, 0, 0), None),
    ("RightElbow", "RightShoulder", (-0.30, 0, 0), None),
    ("RightWrist", "RightElbow", (-0.25, 0, 0), None),
    ("RightFinger1", "RightWrist", (-0.08, 0, 0.03), (-0.08, 0, 0)),
    ("RightFinger2", "RightWrist", (-0.08, 0, -0.03), (-0.08, 0, 0)),
    ("LeftHip", "Hips", (0.09, -0.05, 0), None),
    ("LeftKnee", "LeftHip", (0, -0.43, 0), None),
    ("LeftAnkle", "LeftKnee", (0, -0.42, 0), None),
    ("LeftToe", "LeftAnkle", (0, -0.06, 0.14), (0, 0, 0.06)),
    ("RightHip", "Hips", (-0.09, -0.05, 0), None),
    ("RightKnee", "RightHip", (0, -0.43, 0), None),
    ("RightAnkle", "RightKnee", (0, -0.42, 0), None),
    ("RightToe", "RightAnkle", (0, -0.06, 0.14), (0, 0, 0.06)),
)
#: Hips above the floor in the rest pose [m] (0.05 + 0.43 + 0.42 + 0.06).
HIPS_HEIGHT_M = 0.96


def write_bvh(path, root_m, fps, scale=100.0, z_up=False, rotations=None, skeleton=SKELETON, order="ZXY"):
    """Write a BVH: ``root_m`` (n, 3) the hips' path [m] in (x left, y forward, z up).

    ``scale`` file units per metre (100: centimetres); ``z_up`` writes Z up instead of Y;
    ``rotations`` (n, n_joints, 3) Euler angles [deg] in ``order`` (zeros by default).
    """
    names = [s[0] for s in skeleton]
    n = len(root_m)
    rot = np.zeros((n, len(names), 3)) if rotations is None else np.asarray(rotations, float)

    def axes(v):  # (left, up, forward) -> file axes
        x, y, z = v
        return (x, -z, y) if z_up else (x, y, z)

    def line(v):
        return " ".join(f"{c * scale:.6f}" for c in axes(v))

    out = ["HIERARCHY"]
    rot_ch = " ".join(f"{a}rotation" for a in order)

    def joint(i, depth):
        name, parent, offset, end = skeleton[i]
        pad = "  " * depth
        out.append(f"{pad}{'ROOT' if parent is None else 'JOINT'} {name}")
        out.append(pad + "{")
        out.append(f"{pad}  OFFSET {line(offset)}")
        chans = f"6 Xposition Yposition Zposition {rot_ch}" if parent is None else f"3 {rot_ch}"
        out.append(f"{pad}  CHANNELS {chans}")
        for k, s in enumerate(skeleton):
            if s[1] == name:
                joint(k, depth + 1)
        if end is not None:
            out.extend([f"{pad}  End Site", pad + "  {", f"{pad}    OFFSET {line(end)}", pad + "  }"])
        out.append(pad + "}")

    joint(0, 0)
    out += ["MOTION", f"Frames: {n}", f"Frame Time: {1.0 / fps:.9f}"]
    # root_m is (x left, y forward, z up); in (left, up, forward) order for axes():
    for f in range(n):
        x, y, z = root_m[f]
        vals = [line((x, z, y))] + [" ".join(f"{a:.6f}" for a in rot[f, j]) for j in range(len(names))]
        out.append(" ".join(vals))
    with open(path, "w") as fh:
        fh.write("\n".join(out) + "\n")
    return path
