"""Numba kernels that evaluate a sound-speed profile stored as a piecewise cubic.

The profile is kept as knots ``z[0] < ... < z[n-1]`` and coefficients ``coef[i, :]`` of
``c(z) = a0 + a1 d + a2 d^2 + a3 d^3`` with ``d = z - z[i]`` on ``[z[i], z[i+1]]``. Outside the
knots the end pieces are extended. The ray tracer calls these millions of times, so they take
a layer hint and walk from it, which is O(1) for a ray moving smoothly in depth.
"""

import numba as nb
import numpy as np


@nb.njit(cache=True, inline="always", error_model="numpy")
def locate(z, knots, hint):
    """Index i of the piece holding depth ``z``, starting the search from ``hint``."""
    n = knots.shape[0] - 1
    i = hint
    if i < 0:
        i = 0
    if i > n - 1:
        i = n - 1
    while i > 0 and z < knots[i]:
        i -= 1
    while i < n - 1 and z >= knots[i + 1]:
        i += 1
    return i


@nb.njit(cache=True, inline="always", error_model="numpy")
def evaluate(z, knots, coef, hint):
    """Return ``(c, dc/dz, d2c/dz2, piece)`` at depth ``z``."""
    i = locate(z, knots, hint)
    d = z - knots[i]
    a0 = coef[i, 0]
    a1 = coef[i, 1]
    a2 = coef[i, 2]
    a3 = coef[i, 3]
    c = a0 + d * (a1 + d * (a2 + d * a3))
    dc = a1 + d * (2.0 * a2 + d * 3.0 * a3)
    d2c = 2.0 * a2 + 6.0 * a3 * d
    return c, dc, d2c, i


@nb.njit(cache=True, error_model="numpy")
def evaluate_many(z, knots, coef):
    """Vectorised :func:`evaluate` for an array of depths (c, dc/dz, d2c/dz2)."""
    c = np.empty(z.shape[0])
    dc = np.empty(z.shape[0])
    d2c = np.empty(z.shape[0])
    hint = 0
    for k in range(z.shape[0]):
        c[k], dc[k], d2c[k], hint = evaluate(z[k], knots, coef, hint)
    return c, dc, d2c
