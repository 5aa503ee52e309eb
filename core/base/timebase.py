"""Frame rates given as decimals or ratios, and seconds <-> frames."""

from fractions import Fraction

from .errors import InvalidGoalError

#: Largest frame rate accepted [frames/s]; far above any production rate, it keeps
#: sample counts bounded when a rate is typed wrong.
MAX_FPS = 10_000.0
#: Smallest frame rate accepted [frames/s]: Blender's own lowest (fps 1 over an fps_base
#: of 1e6, the hard limits of its RenderSettings); below it frame times overflow.
MIN_FPS = 1e-6


def parse_fps(text):
    """Frame rate from ``"24"``, ``"23.976"`` or ``"24000/1001"`` [frames/s].

    Raises
    ------
    InvalidGoalError
        For zero, negative, non-finite or malformed rates, naming the input.
    """
    if isinstance(text, (int, float)):
        value = float(text)
    else:
        s = str(text).strip()
        try:
            if "/" in s:
                num, den = s.split("/", 1)
                den_f = float(den)
                if den_f == 0:
                    raise InvalidGoalError(f"fps {text!r} divides by zero; give e.g. 24 or 24000/1001")
                value = float(num) / den_f
            else:
                value = float(Fraction(s)) if s and s.replace(".", "", 1).isdigit() else float(s)
        except InvalidGoalError:
            raise
        except (ValueError, ZeroDivisionError, OverflowError):
            raise InvalidGoalError(f"fps {text!r} is not a number; give e.g. 24, 23.976 or 24000/1001") from None
    if not (value == value) or value in (float("inf"), float("-inf")):
        raise InvalidGoalError(f"fps {text!r} is not finite; give e.g. 24 or 24000/1001")
    if value <= 0:
        raise InvalidGoalError(f"fps must be greater than 0, got {text!r}; give e.g. 24")
    if value < MIN_FPS:
        raise InvalidGoalError(f"fps {text!r} is below {MIN_FPS:g}, Blender's lowest frame rate; give e.g. 24")
    if value > MAX_FPS:
        raise InvalidGoalError(f"fps {text!r} is above {MAX_FPS:g}; give a frame rate such as 24, 30 or 60")
    return value


def seconds_to_frames(seconds, fps, start_frame=1.0):
    """Unrounded frame number of a time [s] on a timeline whose time 0 is ``start_frame``."""
    return start_frame + seconds * fps
