"""Exact rays in a layered medium of constant sound-speed gradients (the independent reference).

In a layer where c = c_k + g (z - z_k), Snell's law cos(theta) = p c with dc/ds = g sin(theta) gives
d(theta)/ds = -p g: the ray angle is linear in arc length and the ray is a circular arc of radius
1 / (p |g|) ([Jensen2011] ch. 3, rays in a constant-gradient layer). From an angle theta_a to
theta_b (positive downward)::

    x = (sin theta_a - sin theta_b) / (p g),   z = (cos theta_b - cos theta_a) / (p g),
    t = (ln tan(pi/4 + theta_a/2) - ln tan(pi/4 + theta_b/2)) / g,

and straight lines where g = 0. The surface (z = 0) and a flat seabed mirror the angle. No step,
no tolerance: the only error is floating-point rounding.
"""

from __future__ import annotations

import math

import numpy as np


def _lt(a):
    return math.log(math.tan(0.25 * math.pi + 0.5 * a))


def layered_ray(theta0, zs, knots, speeds, bottom, x_end):
    """Depth, travel time, surface and seabed bounces at range ``x_end`` of the ray launched at
    ``theta0`` (rad, positive down) from depth ``zs``; c is linear between ``knots`` (which run from 0
    to ``bottom``, the flat seabed)."""
    knots = np.asarray(knots, dtype=float)
    speeds = np.asarray(speeds, dtype=float)
    p = math.cos(theta0) / float(np.interp(zs, knots, speeds))
    x, z, th, t = 0.0, float(zs), float(theta0), 0.0
    k = min(int(np.searchsorted(knots, z, side="right")) - 1, knots.size - 2)
    n_s = n_b = 0
    while True:
        if z == knots[k] and th < 0.0 and k > 0:
            k -= 1  # on a knot heading up: the layer above
        za, zb = knots[k], knots[k + 1]
        ca, cb = speeds[k], speeds[k + 1]
        g = (cb - ca) / (zb - za)
        if g == 0.0:
            zx = zb if th > 0.0 else za
            thx = th
            dx = (zx - z) / math.tan(th)
            if x + dx >= x_end:
                dx = x_end - x
                return z + dx * math.tan(th), t + dx / (math.cos(th) * ca), n_s, n_b
            dt = dx / (math.cos(th) * ca)
        else:
            # exit angles at either face of the layer; the first reached along the ray (theta moves
            # monotonically, down for g > 0)
            best = None
            for zf, cf in ((za, ca), (zb, cb)):
                pc = p * cf
                if pc > 1.0:
                    continue
                a = math.acos(pc)
                for cand in (a, -a):
                    if z == zf and (cand > 0.0) == (th > 0.0):
                        continue  # the face the ray is leaving
                    if (g > 0.0 and cand < th) or (g < 0.0 and cand > th):
                        if best is None or abs(cand - th) < abs(best[0] - th):
                            best = (cand, zf)
            thx, zx = best
            dx = (math.sin(th) - math.sin(thx)) / (p * g)
            if x + dx >= x_end:
                thf = math.asin(math.sin(th) - p * g * (x_end - x))
                zf = z + (math.cos(thf) - math.cos(th)) / (p * g)
                return zf, t + (_lt(th) - _lt(thf)) / g, n_s, n_b
            dt = (_lt(th) - _lt(thx)) / g
        x += dx
        t += dt
        z = zx
        th = thx
        if z <= 0.0 and th < 0.0:
            th, z, n_s = -th, 0.0, n_s + 1
        elif z >= bottom and th > 0.0:
            th, z, n_b = -th, float(bottom), n_b + 1
        elif th > 0.0 and z == knots[k + 1]:
            k += 1


def linear_pieces(knots, speeds):
    """Profile pieces (knots, coef) of the piecewise-linear c(z) in the kernel's cubic layout."""
    knots = np.ascontiguousarray(knots, dtype=float)
    speeds = np.asarray(speeds, dtype=float)
    coef = np.zeros((knots.size - 1, 4))
    coef[:, 0] = speeds[:-1]
    coef[:, 1] = np.diff(speeds) / np.diff(knots)
    return knots, coef
