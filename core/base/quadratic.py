"""Real roots of a quadratic, in the form that keeps its digits.

References
----------
Press, W. H., Teukolsky, S. A., Vetterling, W. T. & Flannery, B. P. 2007, "Numerical
Recipes", 3rd ed., Cambridge University Press, sec. 5.6 (q = -(b + sgn(b) sqrt(b^2 - 4ac)) / 2,
roots q / a and c / q, with no cancellation between b and the square root).
"""

import math


def quadratic_roots(c2, c1, c0):
    """Real roots of ``c2 x^2 + c1 x + c0`` (plain floats; a zero leading coefficient leaves the
    line's root, as numpy.roots drops leading zeros). Empty when there is none."""
    if c2 == 0.0:
        return [] if c1 == 0.0 else [-c0 / c1]
    disc = c1 * c1 - 4.0 * c2 * c0
    if disc < 0.0:
        return []
    q = -0.5 * (c1 + math.copysign(math.sqrt(disc), c1))
    return [q / c2, c0 / q] if q != 0.0 else [0.0, 0.0]
