"""Limits checked before work starts: Blender's frames, and memory for sampled ranges.

Values are checked before anything is allocated or written, so a typo such as
a frame range of 20 million frames is refused with a message instead of
exhausting the machine's memory half way through.
"""

import os

from .errors import InvalidGoalError

#: The last frame Blender has (MAXFRAME in Blender's source, DNA_scene_types.h); frames run -MAX_FRAME..MAX_FRAME.
MAX_FRAME = 1_048_574
#: Bytes a bake holds per sampled bone and frame [bytes]: a 4x4 float64 matrix and three working
#: copies (estimate; a 20,000,000-frame request of 3 bones was seen asking for 29.8 GiB, ~530 B each).
BYTES_PER_SAMPLE = 16 * 8 * 4


def available_memory():
    """Memory the system can still give [bytes]: MemAvailable on Linux, else a quarter of physical memory."""
    try:
        with open("/proc/meminfo", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except (OSError, ValueError, IndexError):
        pass
    try:
        return os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES") // 4
    except (ValueError, OSError, AttributeError):
        return 8 << 30


def frame_problem(frame, label="frame"):
    """Why ``frame`` is not a frame Blender has, or None."""
    if not -MAX_FRAME <= frame <= MAX_FRAME:
        return (f"{label} {frame} is beyond the frames Blender has (-{MAX_FRAME:,} to {MAX_FRAME:,}); "
                "choose a frame inside them")
    return None


def memory_problem(frames, bones, available=None):
    """Why sampling ``bones`` bones over ``frames`` frames would not fit in memory, or None.

    Parameters
    ----------
    frames, bones : int
        Frames sampled and bones per frame.
    available : int or None
        Free memory [bytes]; None reads it from the system. Half of it is the budget.
    """
    need = int(frames) * max(int(bones), 1) * BYTES_PER_SAMPLE
    free = available_memory() if available is None else int(available)
    if need <= free // 2:
        return None
    return (f"{int(frames):,} frames of {max(int(bones), 1)} bone(s) need about {need / 2**30:.1f} GiB, more than "
            f"half of the {free / 2**30:.1f} GiB free; choose a shorter frame range")


def check_frame_range(start, end, bones=1):
    """Raise InvalidGoalError when ``start..end`` is outside Blender's frames or too big to sample."""
    for frame, label in ((start, "the first frame"), (end, "the last frame")):
        problem = frame_problem(frame, label)
        if problem:
            raise InvalidGoalError(problem)
    problem = memory_problem(end - start + 1, bones)
    if problem:
        raise InvalidGoalError(problem)
