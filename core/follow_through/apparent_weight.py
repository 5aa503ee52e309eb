"""The apparent weight that drives follow-through: what a bone's mass feels at its head.

A mass carried by a moving point feels the gravity of its world minus the point's
acceleration, g_eff = g - a (vectors, world frame, Z up). Its apparent weight is
W = m |g_eff|: equal to m g when the point is still, zero in free fall (the chain floats
in the air), several times m g in a landing's deceleration (the chain drops).

References
----------
Newton's second law in an accelerating frame (the d'Alembert or fictitious force -m a):
textbook mechanics. For a vertical motion with g and a measured upward as magnitudes this is
the force-plate identity W = m (g + a).
"""

import numpy as np


def apparent_gravity(gravity, head_acceleration):
    """Apparent gravity at a bone's head, ``g_eff = g - a`` [m/s^2].

    Parameters
    ----------
    gravity : array_like, shape (3,)
        The scene's gravity vector [m/s^2] (pointing down: (0, 0, -9.81) on Earth).
    head_acceleration : numpy.ndarray, shape (..., 3)
        World acceleration of the point carrying the mass [m/s^2].

    Returns
    -------
    numpy.ndarray, shape (..., 3)
        ``g_eff``; the apparent weight per unit mass is its length [N/kg], zero in free fall.
    """
    return np.asarray(gravity, dtype=float) - head_acceleration


def apparent_weight_bw(gravity, head_acceleration):
    """Apparent weight in body weights, ``|g - a| / |g|`` [-]: 1 standing still, 0 in flight."""
    g = np.asarray(gravity, dtype=float)
    return np.linalg.norm(apparent_gravity(g, head_acceleration), axis=-1) / np.linalg.norm(g)
