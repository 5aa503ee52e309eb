"""Where the feet are: planted during contact, carried with the body in flight."""

import numpy as np


def contact_spots(plan):
    """Forward position of the feet in each contact [m], take-off spot first.

    The centre of mass stands over the feet at rest and at the bottom of each
    crouch, where the forward travel is paused, so each spot is the COM's
    forward position at that stretch's bottom (the first: at rest).
    """
    spots = [float(plan.forward(0.0))]
    for hop in plan.hops:
        # After touchdown the forward speed is absorbed by the bottom of the landing.
        later = [p for p in plan.phases if p.name == "landing" and p.start_s >= hop.touchdown_time_s - 1e-9]
        spots.append(float(plan.forward(later[0].end_s)) if later else float(plan.forward(plan.duration_s)))
    return spots


def foot_ball_path(plan, t, tuck=0.0):
    """Forward and height of the ball of the foot relative to the take-off spot [m].

    In contact the ball is fixed at its spot on the ground (take-off spot, then
    each landing spot). In flight it moves forward in step with the COM, from
    one spot to the next, and its height is the COM's rise above the straight
    line joining its take-off and touchdown heights, plus ``tuck`` [m] times
    sin(pi s) (s the fraction of the flight), so it leaves and meets the ground
    exactly at take-off and touchdown.

    Parameters
    ----------
    plan : JumpPlan
    t : array_like
        Times [s].
    tuck : float
        Extra lift of the feet at mid-flight [m].
    """
    t = np.asarray(t, dtype=float)
    spots = contact_spots(plan)
    rise = plan.resolved_goals.landing_height
    forward = np.full(t.shape, spots[0])
    height = np.zeros(t.shape)
    for k, hop in enumerate(plan.hops):
        t0, t1 = hop.takeoff_time_s, hop.touchdown_time_s
        after = t >= t1
        forward[after] = spots[k + 1]
        height[after] = (k + 1) * rise
        inside = (t > t0) & (t < t1)
        if not inside.any():
            continue
        s = (t[inside] - t0) / (t1 - t0)
        x0, x1 = plan.forward(t0), plan.forward(t1)
        frac = (plan.forward(t[inside]) - x0) / (x1 - x0) if abs(x1 - x0) > 1e-12 else s
        forward[inside] = spots[k] + frac * (spots[k + 1] - spots[k])
        z0, z1 = plan.height(t0), plan.height(t1)
        line = z0 + s * (z1 - z0)
        ground = k * rise + s * rise
        height[inside] = ground + (plan.height(t[inside]) - line) + tuck * np.sin(np.pi * s)
    return forward, height
