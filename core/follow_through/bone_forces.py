"""The force on each simulated bone from gravity and the body's turning, component-first.

Every vector here is a tuple or array of its three components first, ``(3, nodes, slots)``,
so each operation is one array pass over all bones and nodes; products are made in place
where a temporary is not read again (at a demo-sized bake each array operation costs about as
much as allocating its output).

References
----------
Rodrigues, O. 1840, "Des lois géométriques qui régissent les déplacements d'un système solide",
J. Math. Pures Appl. 5:380-440 (the rotation of a vector by a rotation vector).
"""

import numpy as np

__all__ = ["cross_parts", "gravity_and_turn", "loaded_pose_load", "swing_part", "turned"]


def cross_parts(px, py, pz, vx, vy, vz):
    """Components of ``p x v``, each made from its first product in place."""
    cx = py * vz
    cx -= pz * vy
    cy = pz * vx
    cy -= px * vz
    cz = px * vy
    cz -= py * vx
    return cx, cy, cz


def turned(px, py, pz, d0):
    """Components of ``d0`` (3, ...) turned by the rotation vectors ``(px, py, pz)`` (Rodrigues)."""
    theta = np.sqrt(px * px + py * py + pz * pz)
    # sin(t)/t = sin(t/2) cos(t/2) / (t/2) and (1 - cos t)/t^2 = (sin(t/2)/(t/2))^2 / 2,
    # written with the half angle so that neither loses digits near t = 0. In place where a
    # temporary is not read again: at the demo's size each array operation costs about as much
    # as making its output (the same bits as the plain expressions).
    half = 0.5 * theta
    a = np.cos(half)
    sinc_half = np.sin(half)
    zero = half == 0.0
    half[zero] = 1.0
    sinc_half /= half
    sinc_half[zero] = 1.0
    a *= sinc_half
    b = sinc_half * sinc_half
    b *= 0.5
    c1 = cross_parts(px, py, pz, *d0)
    c2 = cross_parts(px, py, pz, *c1)
    out = []
    for d, c1, c2 in zip(d0, c1, c2):
        c1 *= a
        c1 += d
        c2 *= b
        c1 += c2
        out.append(c1)
    return tuple(out)


def gravity_and_turn(psi, d0, ge, al, gain, loaded):
    """Force on each bone [rad/s^2] from gravity (relative to the loaded pose) and the turning.

    Every vector is component-first, (3, nodes, slots); so is the result.
    """
    dx, dy, dz = turned(psi[0], psi[1], psi[2], d0)
    gx, gy, gz = ge
    ax, ay, az = al
    along = ax * dx
    along += ay * dy
    along += az * dz
    out = np.empty(psi.shape)
    for f, (p, q, r, s, load, acc, d) in enumerate(((dy, gz, dz, gy, loaded[0], ax, dx), (dz, gx, dx, gz, loaded[1], ay, dy),
                                                    (dx, gy, dy, gx, loaded[2], az, dz))):
        # gain * (d x g) - load - alpha + (alpha . d) d, component f
        term = p * q
        term -= r * s
        np.multiply(gain, term, out=out[f])
        out[f] -= load
        out[f] -= acc
        out[f] += along * d
    # no torque about the bone's own (animated) axis: a point mass has no inertia there
    ex, ey, ez = d0
    tw = out[0] * ex
    tw += out[1] * ey
    tw += out[2] * ez
    for f, e in enumerate((ex, ey, ez)):
        out[f] -= tw * e
    return out


def loaded_pose_load(d0, g_ref, gain):
    """The load ``gain * (d0 x g_ref)`` under which the animated pose is the rest shape [1/s^2]."""
    return gain * np.stack(cross_parts(d0[0], d0[1], d0[2], *g_ref))


def swing_part(psi, d0):
    """The offsets less their part about the animated bone axis (component-first)."""
    return psi - (psi[0] * d0[0] + psi[1] * d0[1] + psi[2] * d0[2]) * d0
