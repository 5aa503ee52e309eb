"""leapwright core: jump physics in SI units (m, s, kg, rad), world frame Z up.

Pure Python + numpy. Never imports Blender; inside the extension this package is
vendored as a subpackage, so modules import each other only relatively.
"""

from .base.errors import LeapwrightError, InvalidGoalError, InfeasibleJumpError

__all__ = ["LeapwrightError", "InvalidGoalError", "InfeasibleJumpError"]
