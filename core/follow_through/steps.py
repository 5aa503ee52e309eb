"""Exact one-step responses of damped oscillators, many at once, in closed form.

For every (step, bone) pair the scalar oscillator

    y'' + c y' + K y = u(tau),   0 <= tau <= h,

with ``K >= 0`` [1/s^2], ``c >= 0`` [1/s] and a force ``u`` that is the parabola
through its values at the step's start, middle and end, has the exact end state

    (y, y')(h) = Phi (y, y')(0) + beta_start u(0) + beta_mid u(h/2) + beta_end u(h).

``Phi = exp(h A)``, ``A = [[0, 1], [-K, -c]]``, is written with ``m = -c/2``,
``q = c^2/4 - K`` and ``N = A - m I`` (so ``N^2 = q I``) as
``exp(m h) [C I + S N]``, ``C = cosh(sqrt(q) h)``, ``S = sinh(sqrt(q) h)/sqrt(q)``
(their cosine forms for ``q < 0`` and series near ``q h^2 = 0``); the overdamped
exponentials use the root ``-K / (c/2 + sqrt(q))``, which has no cancellation.
The forced part comes from the quadratic particular solution (undetermined
coefficients) minus its free response. That subtraction loses digits when
``K h^2`` is small, so those pairs (soft springs, gravity-only pendulums) go
through the matrix exponential of Van Loan's augmented matrix instead, by
scaling and squaring. All arithmetic is real and elementwise, so a whole bake's
steps cost a few dozen array operations.

References
----------
Van Loan, C. F. 1978, "Computing integrals involving the matrix exponential",
IEEE Trans. Automatic Control 23(3):395-404.
Moler, C. & Van Loan, C. 2003, "Nineteen dubious ways to compute the exponential
of a matrix, twenty-five years later", SIAM Review 45(1):3-49 (the 2x2 closed form).
Higham, N. J. 2005, "The scaling and squaring method for the matrix exponential
revisited", SIAM J. Matrix Anal. Appl. 26(4):1179-1193.
"""

import numpy as np

# Taylor terms after scaling to norm <= 1/2: the remainder 0.5^15/15! is ~2e-17,
# below double precision, so the exponential is exact to rounding.
_TAYLOR_TERMS = 14
#: Below this K h^2 the particular solution's subtraction would cost more than
#: ~1e-10 relative, and the augmented exponential is used.
SOFT_LIMIT = 0.01
#: Below this K h / c (a slow overdamped mode over a step) likewise.
OVERDAMPED_LIMIT = 0.05


def expm_batched(matrices):
    """Matrix exponentials of a stack (..., m, m) by scaling, Taylor and squaring.

    One scaling exponent serves the whole stack (the largest needed), which only
    costs a few extra squarings for the smaller matrices.
    """
    a = np.asarray(matrices, dtype=float)
    norm = float(np.max(np.abs(a).sum(axis=-1))) if a.size else 0.0
    squarings = max(0, int(np.ceil(np.log2(norm / 0.5)))) if norm > 0.5 else 0
    x = a / 2.0**squarings
    eye = np.broadcast_to(np.eye(a.shape[-1]), a.shape)
    result = eye + x / _TAYLOR_TERMS
    for k in range(_TAYLOR_TERMS - 1, 0, -1):
        result = eye + (x @ result) / k
    for _ in range(squarings):
        result = result @ result
    return result


def _free_response(k_net, c, h):
    """``exp(m h) C`` and ``exp(m h) S`` [s] of the free oscillator, elementwise."""
    q = 0.25 * c * c - k_net
    qh = q * h * h
    em = np.exp(-0.5 * c * h)
    small = np.abs(qh) < 1e-3
    # series of cosh(sqrt x) and sinh(sqrt x)/sqrt x: the x^4 terms are below 1e-14
    cs = 1.0 + qh * (0.5 + qh * (1.0 / 24.0 + qh / 720.0))
    ss = 1.0 + qh * (1.0 / 6.0 + qh * (1.0 / 120.0 + qh / 5040.0))
    under = np.sqrt(np.maximum(-qh, 0.0))
    cu = np.cos(under)
    su = np.sin(under) / np.where(under > 0.0, under, 1.0)
    root = np.sqrt(np.maximum(q, 0.0))
    fast = np.exp(-k_net * h / (0.5 * c + root + (root == 0.0)))  # exp((m + sqrt q) h)
    slow = np.exp(-(0.5 * c + root) * h)  # exp((m - sqrt q) h)
    co = 0.5 * (fast + slow)
    so = 0.5 * (fast - slow) / np.where(root > 0.0, root, 1.0)
    exp_c = np.where(small, em * cs, np.where(qh < 0.0, em * cu, co))
    exp_s = np.where(small, em * ss * h, np.where(qh < 0.0, em * su * h, so))
    return exp_c, exp_s


def _transition(exp_c, exp_s, k_net, c):
    """``Phi`` as its four entries (each shaped like the inputs)."""
    half = 0.5 * c * exp_s
    return exp_c + half, exp_s, -k_net * exp_s, exp_c - half


def _polynomial_responses(phi, k_net, c, h):
    """End states for the forces ``(tau/h)^j``, j = 0, 1, 2, from rest: three (y, y') pairs."""
    p11, p12, p21, p22 = phi
    out = []
    for j in range(3):
        # quadratic particular solution P0 + P1 tau + P2 tau^2 of u = (tau/h)^j
        p2 = (1.0 / (k_net * h * h)) if j == 2 else 0.0
        p1 = (1.0 / (k_net * h) if j == 1 else 0.0) - 2.0 * c * p2 / k_net
        p0 = ((1.0 if j == 0 else 0.0) - c * p1 - 2.0 * p2) / k_net
        y = p0 + p1 * h + p2 * h * h - (p11 * p0 + p12 * p1)
        v = p1 + 2.0 * p2 * h - (p21 * p0 + p22 * p1)
        out.append((y, v))
    return out


def _augmented_responses(k_net, c, h):
    """``Phi`` and the three polynomial responses from Van Loan's 5x5 exponential.

    In step time ``w = tau / h`` the state ``(y, y', u, du/dw, d2u/dw2)`` is linear
    and autonomous, so one exponential maps its start to its end.
    """
    m = np.zeros(k_net.shape + (5, 5))
    m[..., 0, 1] = h
    m[..., 1, 0] = -k_net * h
    m[..., 1, 1] = -c * h
    m[..., 1, 2] = h
    m[..., 2, 3] = 1.0
    m[..., 3, 4] = 1.0
    e = expm_batched(m)
    phi = (e[..., 0, 0], e[..., 0, 1], e[..., 1, 0], e[..., 1, 1])
    # u = w^j: (u, u', u'') at w = 0 is (1,0,0), (0,1,0), (0,0,2)
    polys = [(e[..., 0, 2], e[..., 1, 2]), (e[..., 0, 3], e[..., 1, 3]), (2.0 * e[..., 0, 4], 2.0 * e[..., 1, 4])]
    return phi, polys


def oscillator_steps(k_net, c, h):
    """Exact one-step maps of ``y'' + c y' + K y = u`` with a parabolic force.

    Parameters
    ----------
    k_net : numpy.ndarray
        Net stiffness K over inertia [1/s^2], >= 0, any shape.
    c : numpy.ndarray
        Damping over inertia [1/s], >= 0, broadcastable to ``k_net``.
    h : numpy.ndarray
        Step length [s], > 0, broadcastable to ``k_net``.

    Returns
    -------
    phi : numpy.ndarray, shape k_net.shape + (2, 2)
        Free transition of ``(y, y')`` [rad, rad/s].
    beta : numpy.ndarray, shape k_net.shape + (3, 2)
        End state per unit force [1/s^2] at the step's start, middle and end.
    """
    k_net, c, h = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (k_net, c, h)))
    # the subtraction cancels ~1/(K h^2) digits, and ~(c / K h)^3 when heavily overdamped
    soft = (k_net * h * h < SOFT_LIMIT) | (k_net * h < OVERDAMPED_LIMIT * c)
    stiff_k = np.where(soft, 1.0, k_net)
    exp_c, exp_s = _free_response(stiff_k, c, h)
    phi = _transition(exp_c, exp_s, stiff_k, c)
    polys = _polynomial_responses(phi, stiff_k, c, h)
    phi = np.stack([np.stack(phi[:2], -1), np.stack(phi[2:], -1)], -2)
    gam = np.stack([np.stack(p, -1) for p in polys], -2)  # (..., 3, 2)
    if np.any(soft):
        sphi, spolys = _augmented_responses(k_net[soft], c[soft], h[soft])
        phi[soft] = np.stack([np.stack(sphi[:2], -1), np.stack(sphi[2:], -1)], -2)
        gam[soft] = np.stack([np.stack(p, -1) for p in spolys], -2)
    # nodal weights of the parabola through u(0), u(h/2), u(h) in w = tau/h:
    # 1 - 3w + 2w^2, 4w - 4w^2, -w + 2w^2
    g0, g1, g2 = gam[..., 0, :], gam[..., 1, :], gam[..., 2, :]
    beta = np.stack([g0 - 3.0 * g1 + 2.0 * g2, 4.0 * (g1 - g2), 2.0 * g2 - g1], -2)
    return phi, beta
