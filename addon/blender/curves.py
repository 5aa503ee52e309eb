"""What every capability writes: curve records, the timeline, and the properties leapwright adds.

Plain records (no Blender data): a capability computes all of them before the first key is
written, so a refused run changes nothing.
"""

from dataclasses import dataclass

import numpy as np

#: The rig's custom property holding the planned apparent weight [body weights].
WEIGHT_PROPERTY = "lw_weight_bw"
#: The rig's custom property holding the checker's measured apparent weight [body weights].
MEASURED_PROPERTY = "lw_weight_measured_bw"
#: Prefix of leapwright's timeline markers.
MARKER_PREFIX = "lw:"


@dataclass(frozen=True)
class CurveSpec:
    """One F-curve to write: ``data_path[index]`` keyed at ``frames``.

    ``slopes`` [channel units / frame] are used by ``'BEZIER'`` only.
    """

    data_path: str
    index: int
    frames: np.ndarray
    values: np.ndarray
    slopes: np.ndarray
    interpolation: str


@dataclass(frozen=True)
class Timeline:
    """Where the plan sits on the scene's timeline: frame = start + t × fps."""

    start_frame: float
    fps: float

    def frames(self, t):
        return self.start_frame + np.asarray(t, dtype=float) * self.fps
