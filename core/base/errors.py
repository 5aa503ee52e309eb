"""The core's own exception types.

Every message repeats the values the user gave and says what to change, so the
command line and the Blender panel can show it as it is.
"""


class LeapwrightError(ValueError):
    """Base of every error the core raises on purpose."""


class InvalidGoalError(LeapwrightError):
    """A value is out of its domain: negative, NaN, zero fps, contradictory goals."""


class InfeasibleJumpError(LeapwrightError):
    """The goals are each valid but no physical jump meets them together."""


class InvalidTrajectoryError(LeapwrightError):
    """A sampled trajectory cannot be analysed (too short, NaN, wrong shape)."""


def require_finite(name, value, *, positive=False, non_negative=False, unit=""):
    """Return ``float(value)`` or raise :class:`InvalidGoalError` naming it.

    Parameters
    ----------
    name : str
        The goal's name as the user knows it (``--height``, ``gravity``).
    value : float
    positive, non_negative : bool
        Extra domain checks.
    unit : str
        Printed after the value in the message.
    """
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InvalidGoalError(f"{name} must be a number, got {value!r}") from None
    if x != x or x in (float("inf"), float("-inf")):
        raise InvalidGoalError(f"{name} must be a finite number, got {value!r}; give a real value")
    if positive and not x > 0:
        raise InvalidGoalError(f"{name} must be greater than 0, got {x:g}{unit}; give a positive value")
    if non_negative and x < 0:
        raise InvalidGoalError(f"{name} must be 0 or more, got {x:g}{unit}; give a value of 0 or more")
    return x
