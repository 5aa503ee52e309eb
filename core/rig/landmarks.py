"""Rig data and landmarks: which joints and tips of a rig the body-segment tables need.

A rig is plain data (:class:`RigData`): bone names, parent indices (-1 for none) and the
rest-pose head and tail of every bone [m], in one space, plus that space's up axis and
the character's left. :func:`map_by_topology` finds the landmarks from the tree alone:
the highest leaf is the head, the most lateral leaves are the hands, the lowest leaf on
each side is a foot; the legs meet at the pelvis, the arms at the chest. Names are never
read, so renamed or reordered bones map the same. :func:`map_by_hand` takes them
written out. See :mod:`.body_mass` for the masses and the whole-body COM.
"""

from dataclasses import dataclass

import numpy as np

from ..base import constants as C
from ..base.errors import InvalidGoalError, LeapwrightError
from .landmark_names import LANDMARKS, SIDED_LANDMARKS

#: A bone within this angle of the up axis reads as upright (leg bones); the foot bone
#: and a sideways hip bone are further from it. cos(37 deg) = 0.8 (design choice).
UPRIGHT_COSINE = 0.8
#: A hand must reach at least this fraction of the rig's height sideways from the
#: midline in the rest pose (T or A pose) to be read as a hand (design choice).
MIN_ARM_REACH = 0.1
#: A toe bone points within this angle of the foot bone before it: cos(60 deg) (design
#: choice; a heel bone across the foot is at about 90 deg).
TOE_COSINE = 0.5
#: Expected shoulder-elbow-wrist-fingertip proportions (Drillis & Contini, from memory).
_ARM_PROPORTIONS = np.array([C.UPPER_ARM_LENGTH_FRACTION, C.FOREARM_LENGTH_FRACTION,
                             C.HAND_LENGTH_FRACTION])
_ARM_PROPORTIONS = _ARM_PROPORTIONS / _ARM_PROPORTIONS.sum()

HOW_TO_MAP = ("map the bones by hand: in Body in the Air, Edit Bone Map, name the bone at each "
              "body point, e.g. shoulder.L: upperarm_l, knuckles.L: hand_l@tail, hip_mid: "
              "thigh_l+thigh_r (a bare name means the bone's head; add @tail for its tail; join "
              "bones with + to average them), or give each bone a mass for a creature")


def _unit(v, what):
    v = np.asarray(v, float).reshape(3)
    n = np.linalg.norm(v)
    if not np.isfinite(n) or n == 0:
        raise InvalidGoalError(f"{what} axis {tuple(v)} must be a non-zero finite vector, e.g. (0, 0, 1)")
    return v / n


@dataclass(frozen=True, eq=False)
class RigData:
    """A skeleton in its rest pose.

    Parameters
    ----------
    names : sequence of str  unique bone names
    parents : sequence of int  parent index of each bone, -1 for a root
    heads, tails : array_like, shape (n_bones, 3)  rest positions [m]
    up : 3-vector  up direction in the same space (default +Z)
    left : 3-vector  the character's left (default +X, Blender's front view)
    """

    names: tuple
    parents: tuple
    heads: np.ndarray
    tails: np.ndarray
    up: tuple = (0.0, 0.0, 1.0)
    left: tuple = (1.0, 0.0, 0.0)

    def __post_init__(self):
        names, parents = tuple(str(n) for n in self.names), tuple(int(p) for p in self.parents)
        n = len(names)
        if n == 0 or len(set(names)) != n:
            raise InvalidGoalError(f"a rig needs at least one bone and unique names, got {n} names "
                                   f"with {n - len(set(names))} repeated; rename the duplicates")
        heads, tails = (np.array(a, float).reshape(-1, 3) if np.size(a) == 3 * n else None
                        for a in (self.heads, self.tails))
        if heads is None or tails is None or len(parents) != n:
            raise InvalidGoalError(f"rig with {n} bones needs {n} parents and heads/tails of shape ({n}, 3), "
                                   f"got {len(parents)} parents, shapes {np.shape(self.heads)} and "
                                   f"{np.shape(self.tails)}")
        if not (np.isfinite(heads).all() and np.isfinite(tails).all()):
            raise InvalidGoalError("rig rest positions contain NaN or infinity; give finite positions [m]")
        for i in range(n):  # a parent chain longer than n bones must loop
            j, steps = i, 0
            while j >= 0 and steps <= n:
                if not -1 <= parents[j] < n:
                    raise InvalidGoalError(f"bone {names[j]!r} has parent index {parents[j]}; give -1 or "
                                           f"another bone's index (0..{n - 1})")
                j, steps = parents[j], steps + 1
            if j >= 0:
                raise InvalidGoalError(f"bone {names[i]!r} is its own ancestor; break the parent loop")
        up, left = _unit(self.up, "up"), _unit(self.left, "left")
        if abs(up @ left) > 0.5:
            raise InvalidGoalError(f"up {tuple(up)} and left {tuple(left)} must be far from parallel; "
                                   f"give e.g. up (0, 0, 1) and left (1, 0, 0)")
        for attr, value in (("names", names), ("parents", parents), ("heads", heads), ("tails", tails),
                            ("up", tuple(up)), ("left", tuple(left))):
            object.__setattr__(self, attr, value)

    def index(self, name):
        """Index of the bone called ``name``; raises InvalidGoalError naming close choices."""
        try:
            return self.names.index(name)
        except ValueError:
            raise InvalidGoalError(f"the rig has no bone {name!r}; bones are: "
                                   f"{', '.join(self.names[:20])}{' ...' if len(self.names) > 20 else ''}") from None


@dataclass(frozen=True)
class Landmarks:
    """Where each landmark sits on a rig.

    Attributes
    ----------
    bone_names : tuple of str  the rig's bones, in its order
    points : dict  landmark name -> tuple of (bone index, 0 for head / 1 for tail); several
        pairs mean their average
    """

    bone_names: tuple
    points: dict

    def as_text(self):
        """Landmark -> ``"bone@head+bone@tail"``: what :func:`map_by_hand` accepts back."""
        return {k: "+".join(f"{self.bone_names[b]}@{'tail' if e else 'head'}" for b, e in v)
                for k, v in self.points.items()}


def _sided(name):
    return [f"{name}.L", f"{name}.R"] if name in SIDED_LANDMARKS else [name]


def map_by_hand(rig, mapping):
    """Landmarks written out by the user.

    Parameters
    ----------
    rig : RigData
    mapping : dict of str -> str
        Landmark (``"vertex"``, ``"shoulder.L"`` ...; see ``landmark_names.LANDMARKS``) to
        a bone name (its head), ``"name@tail"``, or ``"a@head+b@head"`` for an average.
    """
    points = {}
    for key, spec in dict(mapping).items():
        base = key[:-2] if key[-2:] in (".L", ".R") else key
        if base not in LANDMARKS or (base in SIDED_LANDMARKS) != (base != key):
            raise InvalidGoalError(f"unknown landmark {key!r}; use one of "
                                   f"{', '.join(n for b in LANDMARKS for n in _sided(b))}")
        pairs = []
        for part in str(spec).split("+"):
            name, _, end = part.strip().partition("@")
            if end not in ("", "head", "tail"):
                raise InvalidGoalError(f"landmark {key!r}: {part!r} must end in @head or @tail")
            pairs.append((rig.index(name), 1 if end == "tail" else 0))
        points[key] = tuple(pairs)
    return Landmarks(rig.names, points)


class RigLayoutError(LeapwrightError):
    """The bone tree does not read as a humanoid; ``reason`` says what was not found.

    The message adds how to map the bones in code (:data:`HOW_TO_MAP`); a panel shows
    ``reason`` with its own fill-in bone map instead.
    """

    def __init__(self, reason):
        self.reason = reason
        super().__init__(f"cannot read the rig's layout: {reason}. Check that the rest pose stands "
                         f"upright in a T or A pose with the given up and left axes, or {HOW_TO_MAP}")


def _unreadable(reason):
    return RigLayoutError(reason)


class _BoneTree:
    """Walks of a rig's bone tree: ancestors, descendants, common ancestors, paths."""

    def __init__(self, rig):
        self.rig, self.parents = rig, rig.parents
        self.children = [[] for _ in range(len(rig.names))]
        for i, p in enumerate(rig.parents):
            if p >= 0:
                self.children[p].append(i)

    def chain(self, i):
        """The bone and its ancestors, leaf first."""
        out = [i]
        while self.parents[out[-1]] >= 0:
            out.append(self.parents[out[-1]])
        return out

    def subtree(self, i):
        """The bone and all its descendants."""
        out, stack = [], [i]
        while stack:
            out.append(stack.pop())
            stack.extend(self.children[out[-1]])
        return out

    def best(self, candidates, key):
        """The candidate with the lowest key; deterministic whatever the bone order (ties go by position)."""
        return min(candidates, key=lambda i: (round(float(key(i)), 9), tuple(np.round(self.rig.tails[i], 9))))

    def lca(self, a, b):
        """The lowest common ancestor of two bones."""
        ca = set(self.chain(a))
        return next(i for i in self.chain(b) if i in ca)

    def path(self, top_bone, leaf):
        """The bones below ``top_bone`` down to ``leaf``, top first."""
        c = self.chain(leaf)
        return c[:c.index(top_bone)][::-1]


def map_by_topology(rig):
    """Find the landmarks of a humanoid rig from its tree and rest positions alone.

    The rest pose must stand upright in a T or A pose. Arms: an optional collar bone,
    then shoulder, elbow and wrist chosen so the arm's pieces come closest to human
    proportions (twist bones are absorbed); the hand is the first bone whose children fan
    out (fingers), and the knuckles are its tail (a single mitten bone puts them at the
    fingertips, moving the hand's COM outward). Legs: the thigh is the first upright
    bone, the foot the first bone after the shin that points forward, the knee the joint
    nearest halfway between. The skull is the longest bone above the chest.

    Returns
    -------
    Landmarks

    Raises
    ------
    LeapwrightError
        When no spine with a head, two arms and two legs can be found; the message
        says how to map the bones by hand.
    """
    tree = _BoneTree(rig)
    children = tree.children
    up, left = np.array(rig.up), np.array(rig.left)
    hz, tz, hx, tx = rig.heads @ up, rig.tails @ up, rig.heads @ left, rig.tails @ left
    chain, subtree, best, lca, path = tree.chain, tree.subtree, tree.best, tree.lca, tree.path

    roots = [i for i in range(len(rig.names)) if rig.parents[i] < 0]
    members = subtree(best(roots, lambda r: -len(subtree(r))))
    leaves = [i for i in members if not children[i]]
    allz = np.concatenate([hz[members], tz[members]])
    height = float(allz.max() - allz.min())
    if height <= 0:
        raise _unreadable(f"the rest pose has no height along the up axis {rig.up}")
    allx = np.concatenate([hx[members], tx[members]])
    mid_x = 0.5 * float(allx.max() + allx.min())
    top = best(leaves, lambda i: -tz[i])
    hands = best(leaves, lambda i: -tx[i]), best(leaves, lambda i: tx[i])
    reach = (tx[hands[0]] - mid_x, mid_x - tx[hands[1]])
    if min(reach) < MIN_ARM_REACH * height or top in hands:
        raise _unreadable(f"no two hands reach sideways (reach {reach[0]:.3g} m and {reach[1]:.3g} m "
                          f"for a {height:.3g} m tall rig; at least {MIN_ARM_REACH:g} of the height)")

    chest = lca(*hands)
    if chest not in chain(top) or chest in hands or chest == top:
        raise _unreadable("the head does not sit on the spine where the arms meet")
    upper = set(subtree(path(chest, top)[0])) | {b for h in hands for b in subtree(path(chest, h)[0])}
    lower = [i for i in leaves if i not in upper]
    sides = ([i for i in lower if tx[i] >= mid_x], [i for i in lower if tx[i] < mid_x])
    if not all(sides):
        raise _unreadable("no foot found on each side below the arms")
    feet = [best(c, lambda i: tz[i]) for c in sides]
    pelvis = lca(*feet)
    if pelvis not in chain(chest) or len({path(pelvis, f)[0] for f in feet}) < 2:
        raise _unreadable("the legs do not join the spine below the arms")
    pts = {}
    head_path = path(chest, top)
    lengths = np.linalg.norm(rig.tails - rig.heads, axis=1)
    skull = max(reversed(head_path), key=lambda i: lengths[i])  # the skull is the longest piece
    pts["neck_base"], pts["skull_base"], pts["vertex"] = ((head_path[0], 0),), ((skull, 0),), ((skull, 1),)
    for side, hand, foot in zip("LR", hands, feet):
        for name, pair in {**_arm_points(path(chest, hand), children, rig),
                           **_leg_points(path(pelvis, foot), rig, up, children)}.items():
            pts[f"{name}.{side}"] = (pair,)
    pts["hip_mid"] = pts["hip.L"] + pts["hip.R"]
    pts["shoulder_mid"] = pts["shoulder.L"] + pts["shoulder.R"]
    return Landmarks(rig.names, pts)


def _joints(bones, rig):
    p = np.vstack([rig.heads[bones], rig.tails[bones[-1]][None]])
    return np.concatenate([[0.0], np.cumsum(np.linalg.norm(np.diff(p, axis=0), axis=1))])


def _arm_points(bones, children, rig):
    """Shoulder, elbow, wrist and knuckles on an arm path from the chest to a fingertip."""
    m = len(bones) - 1
    if m < 2:
        raise _unreadable(f"an arm has {m + 1} bone(s) from the chest; it needs upper arm, forearm and hand")
    s = _joints(bones, rig)
    branching = [k for k in range(2, m + 1) if len(children[bones[k]]) >= 2]  # fingers fan out
    best = None
    for a in (0, 1):  # an optional collar bone before the shoulder
        for e in range(a + 1, m):
            for w in (branching[:1] if branching else range(e + 1, m + 1)):
                if w <= e or s[-1] <= s[a]:
                    continue
                parts = np.array([s[e] - s[a], s[w] - s[e], s[-1] - s[w]]) / (s[-1] - s[a])
                score = float(np.sum((parts - _ARM_PROPORTIONS) ** 2))
                if best is None or score < best[0] - 1e-12:
                    best = (score, a, e, w)
    if best is None:
        raise _unreadable("an arm's joints cannot be told apart")
    _, a, e, w = best
    return {"shoulder": (bones[a], 0), "elbow": (bones[e], 0), "wrist": (bones[w], 0),
            "knuckles": (bones[w], 1)}


def _toe_tip(ankle_bone, rig, children):
    """The last bone of the chain that carries on from the foot bone's direction (the toes).

    The lowest leaf of a leg may be a heel or a foot-roll guide bone lying across the foot
    (Rigify's meta-rig has one); the toes are the children that keep pointing the foot's
    way, so the chain is followed by the child most nearly along its parent (cosine
    above :data:`TOE_COSINE`).
    """
    bone = ankle_bone
    while True:
        d = rig.tails[bone] - rig.heads[bone]
        best, best_cos = None, TOE_COSINE
        for c in children[bone]:
            e = rig.tails[c] - rig.heads[c]
            cos = float(d @ e) / max(float(np.linalg.norm(d) * np.linalg.norm(e)), 1e-300)
            if cos > best_cos:
                best, best_cos = c, cos
        if best is None:
            return bone
        bone = best


def _leg_points(bones, rig, up, children):
    """Hip, knee, ankle, ball and toe tip on a leg path from the pelvis to the lowest leaf."""
    vec = rig.tails[bones] - rig.heads[bones]
    norm = np.linalg.norm(vec, axis=1)
    upright = np.abs(vec @ up) >= UPRIGHT_COSINE * np.maximum(norm, 1e-300)
    first = next((k for k in range(len(bones)) if upright[k]), None)
    ankle = next((k for k in range(first + 2, len(bones)) if not upright[k]), None) if first is not None else None
    if ankle is None:
        raise _unreadable("a leg has no upright thigh and shin followed by a foot bone pointing forward")
    s = _joints(bones, rig)
    knee = min(range(first + 1, ankle), key=lambda k: abs(s[k] - 0.5 * (s[first] + s[ankle])))
    return {"hip": (bones[first], 0), "knee": (bones[knee], 0), "ankle": (bones[ankle], 0),
            "ball": (bones[ankle], 1), "toe_tip": (_toe_tip(bones[ankle], rig, children), 1)}
