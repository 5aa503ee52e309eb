"""Reading a sampled path from a CSV file: ``frame,x,y,z`` in metres (Z up), and any further
column triples ``name_x,name_y,name_z`` (foot tracks, body landmarks).
"""

import csv
import math

import numpy as np

from leapwright.core.base.errors import InvalidTrajectoryError

from cli import body as body_arc

REQUIRED_COLUMNS = ("frame", "x", "y", "z")


def _number(text, line, column):
    try:
        value = float(text)
    except (TypeError, ValueError):
        raise InvalidTrajectoryError(f"line {line}: {column} = {text!r} is not a number") from None
    if not math.isfinite(value):
        raise InvalidTrajectoryError(
            f"line {line}: {column} is {text.strip()!r}; every value must be a finite number "
            "(fill it in or drop the row)")
    return value


def read_trajectory_csv(path):
    """Frames, positions (n, 3) [m] and foot tracks ``{name: (n, 3)}`` from a CSV file.

    Landmark columns (:data:`body_arc.LANDMARK_COLUMNS`) are not foot tracks; see
    :func:`read_csv_tracks` for every column triple.
    """
    frames, positions, tracks = read_csv_tracks(path)
    return frames, positions, {k: v for k, v in tracks.items() if k not in body_arc.LANDMARK_COLUMNS}


def read_csv_tracks(path):
    """Frames, positions (n, 3) [m] and every column triple ``{name: (n, 3)}`` of a CSV file.

    Raises
    ------
    InvalidTrajectoryError
        Missing file or column, a non-numeric or non-finite value, naming the line.
    """
    try:
        with open(path, newline="", encoding="utf-8-sig") as fh:
            rows = list(csv.reader(fh))
    except OSError as exc:
        raise InvalidTrajectoryError(f"cannot read {path!r}: {exc.strerror}") from None
    except UnicodeDecodeError:
        raise InvalidTrajectoryError(f"{path!r} is not a text CSV file") from None
    if not rows:
        raise InvalidTrajectoryError(f"{path!r} is empty; it needs a header frame,x,y,z and one row per frame")
    header = [h.strip() for h in rows[0]]
    missing = [c for c in REQUIRED_COLUMNS if c not in header]
    if missing:
        raise InvalidTrajectoryError(
            f"{path!r} has no column {', '.join(repr(m) for m in missing)} (header: {','.join(header)}); "
            "the header must contain frame,x,y,z")
    col = {name: i for i, name in enumerate(header)}
    triple_names = sorted(name[:-2] for name in header
                        if name.endswith("_x") and name[:-2] + "_y" in col and name[:-2] + "_z" in col)
    wanted = list(REQUIRED_COLUMNS) + [f"{f}_{a}" for f in triple_names for a in "xyz"]
    data = []
    for line, row in enumerate(rows[1:], start=2):
        if not any(cell.strip() for cell in row):
            continue
        if len(row) < len(header):
            raise InvalidTrajectoryError(
                f"line {line} has {len(row)} values but the header has {len(header)}; fill in every column")
        data.append([_number(row[col[c]], line, c) for c in wanted])
    arr = np.array(data, dtype=float).reshape(-1, len(wanted))
    tracks = {name: arr[:, 4 + 3 * k:7 + 3 * k] for k, name in enumerate(triple_names)}
    return arr[:, 0], arr[:, 1:4], tracks
