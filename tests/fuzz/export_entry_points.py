"""Fuzzed export checks: ``core.export.game_checks.export_issues`` and ``snap_to_whole_frames``.

Each entry is ``(name, strategy, call)`` (see :mod:`tests.fuzz.entry_points`).
Besides never crashing, the call holds the rules the docstrings promise: every
issue is of a described kind and repeats no NaN or inf, and the snap moves each
key at most half a frame onto a whole frame and leaves no whole frame unkeyed.
"""

import re

import numpy as np
from hypothesis import strategies as st

from leapwright.core.export.game_checks import ISSUE_KINDS, export_issues, snap_to_whole_frames

from tests.fuzz.planning_entry_points import FINITE

_wild = st.floats()
#: Key times: whole frames, between frames, near Blender's float32 limit, and wild numbers [frame].
_frame = st.one_of(st.integers(-1000, 10_000).map(float), st.floats(-1e4, 1e4, **FINITE),
                   st.sampled_from([0.5, -0.5, 2.5, 1e308, -1e308, 3.4028234663852886e38, 5e-324]), _wild)
_finite_frame = st.one_of(st.integers(-1000, 10_000).map(float), st.floats(-1e4, 1e4, **FINITE))
_labels = st.sampled_from(['pose.bones["hips"].location[2]', 'pose.bones["root"].location[1]',
                           '["leapwright_weight"][0]', "location[0]"])


@st.composite
def _key_lists(draw, element):
    frames = draw(st.lists(element, max_size=30))
    if draw(st.booleans()):
        frames = sorted(f for f in frames if f == f)  # as Blender keeps them: increasing
    if draw(st.booleans()):
        frames = [float(np.float32(f)) if abs(f) < 3e38 else f for f in frames]  # Blender stores float32
    return frames


@st.composite
def _root_axes(draw):
    """None, a random rotation scaled from 0 to huge, or wild or misshapen numbers [-]."""
    kind = draw(st.integers(0, 5))
    if kind == 0:
        return None
    if kind == 5:
        return draw(st.one_of(st.lists(_wild, min_size=9, max_size=9).map(lambda v: np.reshape(v, (3, 3))),
                              st.lists(st.floats(-1, 1, **FINITE), max_size=12)))
    rng = np.random.default_rng(draw(st.integers(0, 2**31 - 1)))
    q, _r = np.linalg.qr(rng.normal(size=(3, 3)))
    scale = draw(st.sampled_from([1.0, 0.0, 1e-310, 1e-300, 1e-3, 1e3, 1e300]))
    m = q * scale
    if draw(st.integers(0, 3)) == 0:
        m[:, 2] = 0.0  # a bone (or object axis) scaled to nothing
    return m


@st.composite
def export_inputs(draw):
    """Keyword arguments of :func:`export_issues`: half of them usable, half with wild numbers."""
    sensible = draw(st.booleans())
    number = st.floats(-3.0, 3.0, **FINITE) if sensible else st.one_of(st.floats(-3.0, 3.0, **FINITE), _wild)
    kw = {"unit_scale": draw(st.one_of(st.sampled_from([1.0, 0.01, 100.0]), st.floats(1e-6, 1e6, **FINITE))
                             if sensible else st.one_of(st.sampled_from([1.0, 0.0, -1.0]), _wild)),
          "object_scale": draw(st.one_of(st.tuples(number, number, number), st.floats(0.1, 3, **FINITE).map(
              lambda v: (v, v, v))) if sensible else st.lists(number, min_size=2, max_size=4))}
    frame = _finite_frame if sensible else _frame
    kw["key_frames"] = draw(st.dictionaries(_labels, _key_lists(frame), max_size=4))
    kw["root_axes"] = draw(_root_axes())
    kw["root_name"] = "root"
    kw["up_axis"] = draw(st.sampled_from([(0.0, 0.0, 1.0), (0.0, 1.0, 0.0)]) if sensible else
                         st.one_of(st.just((0.0, 0.0, 1.0)), st.tuples(number, number, number)))
    value = st.floats(0.5, 2.0, **FINITE) if sensible else st.one_of(st.just(1.0), st.floats(0.5, 2.0, **FINITE),
                                                                    _wild)
    kw["scale_keys"] = draw(st.dictionaries(st.sampled_from(["spine", "tail"]), st.lists(value, max_size=6),
                                            max_size=2))
    return kw, draw(st.booleans())


_NOT_A_NUMBER = re.compile(r"\b(nan|inf)\b", re.IGNORECASE)


def _export_checks(example):
    kw, snap_first = example
    out = []

    def snap_all():
        for frames in kw["key_frames"].values():
            f = np.asarray(frames, dtype=float)
            new, keep = snap_to_whole_frames(f)
            if new.shape != f.shape or np.any(np.abs(new - f) > 0.5) or np.any(new != np.rint(new)):
                raise AssertionError(f"snap moved a key more than half a frame or off a whole frame: {f!r}")
            if len(np.unique(new[keep])) != keep.sum() or set(new[keep]) != set(new):
                raise AssertionError(f"snap kept two keys on one frame or lost a frame: {f!r}")
            out.extend([new, keep.astype(float)])

    if snap_first:
        snap_all()
    found = export_issues(**kw)
    for issue in found:
        if issue.kind not in ISSUE_KINDS or _NOT_A_NUMBER.search(issue.message):
            raise AssertionError(f"issue {issue!r} is of no described kind or shows a NaN/inf")
    if not snap_first:
        snap_all()
    return out + [float(len(found))]


ENTRY_POINTS = [
    ("export checks", export_inputs(), _export_checks),
]
