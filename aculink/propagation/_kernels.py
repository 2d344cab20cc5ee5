"""Numba kernels of the ray tracer: one ray step, boundaries, dynamic ray tracing, fan drivers.

Everything here takes plain numbers and arrays; :mod:`aculink.propagation.rays` builds them from a
:class:`~aculink.site.model.Site`.

Equations and scheme
--------------------
The ray equations in range x and depth z, parametrised by arc length s, with slowness components
xi = cos(theta)/c and zeta = sin(theta)/c (theta positive downward)::

    dx/ds = c xi,   dz/ds = c zeta,   dxi/ds = 0,   dzeta/ds = -c_z / c^2,   dt/ds = 1/c

(the profile depends on depth only, so xi is Snell's invariant and stays exactly constant between
boundaries). Geometric spreading comes from dynamic ray tracing in Cartesian coordinates (Cerveny
2001, sect. 4.2): the derivatives (dx, dz, dxi, dzeta) of the state with respect to the launch angle
obey the variational equations of the system above::

    d(dx)/ds = c_z dz xi + c dxi,        d(dz)/ds = c_z dz zeta + c dzeta,
    d(dxi)/ds = 0,                       d(dzeta)/ds = -(c_zz / c^2 - 2 c_z^2 / c^3) dz,

started from (0, 0, -sin(theta0)/c0, cos(theta0)/c0), with d(dt)/ds = -c_z dz / c^2 for the travel-time
derivative (the Gaussian-beam phase front needs p = c (xi dzeta - zeta dxi) + xi c_z dt, the normal
slowness perturbation of the isochronous neighbour). The normal width of the ray tube per radian
of launch angle is q = -sin(theta) dx + cos(theta) dz = cos(theta) (dz/dtheta0 at fixed range); it
equals the q of the ray-centred (p, q) system with p0 = 1/c0, q0 = 0 (Jensen et al. 2011, sect. 3.3),
so the pressure relative to 1 m from the source is |A| = sqrt(c cos(theta0) / (c0 r |q|)), which is
1/distance near the source.

The integrator is the classical fourth-order Runge-Kutta method with a controlled arc-length step
of at most ``ds``:

* **Error control.** The end point's rates (the next step's first stage, so free when the step is
  accepted) give with the RK4 stages an embedded third-order solution; the difference h/6 (k4 - k5)
  estimates the local error ([Hairer1993] sect. II.4). Positions, c times the travel time and the
  maximum step times the ray angle are held to ``tol`` metres per step; a step over it is retried
  shorter, and the proposal doubles or halves with the thresholds of the (1/err)^(1/4) rule (the
  usual case, a full step below the halving threshold, is tested first and leaves the proposal
  alone, so the next step does not wait on the estimate).
* **Snell projection.** zeta is put back on xi^2 + zeta^2 = 1/c(z)^2 (a projection method,
  [Hairer2006] sect. IV.4) by one Newton step (no square root), applied one step late so that its
  division is not on the path from one step to the next (events project at once). The drift off it
  is tiny per step, but it moves the turning depth of a ray that turns in a weak gradient (a summer
  mixed layer), and the cycle phase error grows with every cycle: in the bundled summer-shelf cast
  with 5 m steps the projection takes the travel-time error at 10 km from 4.2 us (99th percentile;
  39 us worst) to 0.04 us (measured in tests/benchmarks/bench_rays.py).
* **Profile knots.** Each RK stage evaluates the cubic piece holding its own depth, within a run of
  pieces a step may cross (:func:`landing_pieces`); a step is shortened to end on the knot closing
  the run (predicted from the quadratic Taylor expansion of z(s)) where the profile's smoothness
  breaks: dc/dz jumps (piecewise linear, C0) or d2c/dz2 jumps (PCHIP, C1). The C1 case matters too:
  d2c/dz2 drives the dynamic rays, and the embedded error estimate is blind to a kink crossed inside
  a step (for a quadrature-like equation k4 = k5). Measured on the summer-shelf cast (1 m knots) with
  5 m steps crossing them (tests/benchmarks/bench_rays.py [1b]): 2178 instead of 3229 steps per ray,
  but travel-time errors of 18 us (median) and 370 us (99th percentile) at 10 km and errors in
  dz/dtheta0 of 18% of its rms over the fan (median), against 0.011 us, 0.037 us and 0.07% when
  landing. Smooth (C2) joins are crossed. The piece after a knot a step landed on is known, so it
  is taken without a search.
* **Events.** Boundaries, turning points, seabed vertices and receiver ranges are *events*: when a
  trial step crosses one, the crossing is found on the step's cubic Hermite interpolant (dense
  output from both end points' rates, [Hairer1993] sect. II.6) and the step is redone once to that
  length; RK4-Newton corrections on the step length follow only if it missed by more than 1e-8 m.

At a reflection the slowness vector is mirrored about the boundary (the local seabed slope) and the
dynamic-ray vector is carried across with the saltation (jump) rule of a discontinuous dynamical
system: with g(y) = 0 the boundary, h the reflection map and F-, F+ the right-hand sides before and
after, dy+ = Dh dy- + (Dh F- - F+) tau, tau = -(grad g . dy-)/(grad g . F-). This is the exact first-
order transformation (it reproduces Cerveny's interface rule for q and p at a planar boundary; the
sign of q flips, which is bookkeeping, not a caustic).

Caustics are counted where q changes sign along the path (reflections excepted). Each caustic adds a
phase of +pi/2 in aculink's exp(+j omega t) convention (-pi/2 in the exp(-i omega t) convention of
Jensen et al.); the friendly API applies it.

Rays stop when they reach the maximum range (landing on it exactly), when a seabed reflection sends
them back toward the source, when the product of seabed reflection magnitudes falls below a floor,
or when the step budget is used up.

References
----------
F. B. Jensen, W. A. Kuperman, M. B. Porter and H. Schmidt, Computational Ocean Acoustics, 2nd ed.
(Springer, 2011), ch. 3 (ray equations in arc length, dynamic ray tracing, caustic phase).
V. Cerveny, Seismic Ray Theory (Cambridge University Press, 2001), sect. 4.2 (dynamic ray tracing in
Cartesian coordinates) and sect. 4.4 (transformation at interfaces).
E. Hairer, S. P. Norsett and G. Wanner, Solving Ordinary Differential Equations I, 2nd ed. (Springer,
1993), sect. II.4 (step size control), II.6 (dense output) [Hairer1993].
E. Hairer, C. Lubich and G. Wanner, Geometric Numerical Integration, 2nd ed. (Springer, 2006),
sect. IV.4 (projection methods) [Hairer2006].
A. F. Filippov, Differential Equations with Discontinuous Righthand Sides (Kluwer, 1988) and
R. I. Leine and H. Nijmeijer, Dynamics and Bifurcations of Non-Smooth Mechanical Systems (Springer,
2004), sect. 3.5 (the saltation matrix used at reflections).
"""

import math
from collections import namedtuple

import numba as nb
import numpy as np

from aculink.site._profile_kernels import evaluate, locate

#: Columns of a crossing record (the ray state where it crosses a receiver range): depth, travel
#: time, slowness components, sound speed, launch-angle derivatives (dx, dz, dxi, dzeta), arc length,
#: surface / seabed bounces, caustics, seabed reflection product (re, im), sum of sin^2 of the surface
#: grazing angles, absorption (dB, first frequency of the medium), orientation (+-1, flips at each
#: reflection), travel-time derivative.
R_Z, R_T, R_XI, R_ZETA, R_C, R_DX, R_DZ, R_DXI, R_DZETA, R_S = 0, 1, 2, 3, 4, 5, 6, 7, 8, 9
R_NS, R_NB, R_NC, R_BRE, R_BIM, R_SIN2, R_ABS, R_ORIENT, R_DT = 10, 11, 12, 13, 14, 15, 16, 17, 18
N_RECORD = 19
#: Information columns per traced ray (``info`` of the fan drivers).
I_POINTS, I_STEPS, I_END, I_X_END, I_NS, I_NB, I_NC = 0, 1, 2, 3, 4, 5, 6
N_INFO = 7

#: The medium as the kernels read it (a namedtuple of arrays and numbers; numba passes it whole).
#: ``ab_db`` is (n_freq, n_bins): absorption in dB/m per depth bin for each frequency; the loss at
#: frequency m > 0 goes to record column :func:`abs_column` (m).
#: ``piece_lo[i]``, ``piece_hi[i]``: the first and last piece of the run of pieces around piece i
#: that a step may cross without landing on a knot (see :func:`landing_pieces`).
KernelMedium = namedtuple("KernelMedium", ["knots", "coef", "bed_r", "bed_z", "bed_slope", "bt_step", "bt_re",
                                           "bt_im", "ab_dz", "ab_db", "ds", "tol", "floor_mag", "piece_lo",
                                           "piece_hi"])


def landing_pieces(knots, coef, rel_tol=1e-9):
    """Runs of profile pieces a step may cross: ``(piece_lo, piece_hi)``, int arrays per piece.

    A step lands on every knot where the profile's smoothness breaks: where dc/dz jumps (a
    piecewise-linear profile, C0), a step across it loses RK4's order in the ray equations; where
    only d2c/dz2 jumps (PCHIP, C1), the ray equations keep a continuous right-hand side but the
    dynamic rays (driven by d2c/dz2) do not, and the embedded error estimate does not see it
    (measured on the summer-shelf cast: crossing those knots with 5 m steps gives 10 us travel-time
    and 10% spreading errors at 10 km, tests/benchmarks/bench_rays.py). Across the remaining knots
    (a C2 profile, or pieces joined smoothly) a step crosses, each RK stage evaluating the piece
    holding its own depth. A jump counts when it exceeds ``rel_tol`` times the largest |dc/dz|
    (or |d2c/dz2|) of the profile: smooth joins match to rounding.
    """
    knots = np.asarray(knots, dtype=float)
    coef = np.asarray(coef, dtype=float)
    n = coef.shape[0]
    h = np.diff(knots)
    slope_end = coef[:, 1] + h * (2.0 * coef[:, 2] + 3.0 * h * coef[:, 3])
    czz_end = 2.0 * coef[:, 2] + 6.0 * h * coef[:, 3]
    scale1 = max(float(np.max(np.abs(coef[:, 1]))), float(np.max(np.abs(slope_end))), 1e-30)
    scale2 = max(float(np.max(np.abs(2.0 * coef[:, 2]))), float(np.max(np.abs(czz_end))), 1e-30)
    kink = np.zeros(n + 1, dtype=bool)  # kink[k]: knot k ends a run
    kink[1:n] = (np.abs(slope_end[:-1] - coef[1:, 1]) > rel_tol * scale1) | (
        np.abs(czz_end[:-1] - 2.0 * coef[1:, 2]) > rel_tol * scale2)
    start = np.maximum.accumulate(np.where(kink[:n], np.arange(n), 0))
    stop = np.minimum.accumulate(np.where(kink[1:], np.arange(n), n - 1)[::-1])[::-1]
    return np.ascontiguousarray(start, dtype=np.int64), np.ascontiguousarray(stop, dtype=np.int64)


def record_width(n_freq):
    """Columns of a crossing record for a medium with ``n_freq`` absorption frequencies."""
    return N_RECORD + max(n_freq, 1) - 1


def abs_column(m):
    """Record column of the absorption (dB) at the medium's frequency ``m``."""
    return R_ABS if m == 0 else N_RECORD + m - 1

#: Termination codes (also written as CF flag values by the friendly API).
END_RANGE = 0  # reached the maximum range
END_BACKWARD = 1  # a seabed reflection turned it back toward the source
END_WEAK = 2  # seabed reflection losses passed the floor
END_STEPS = 3  # step budget used up

# Event kinds inside one step.
_EV_NONE, _EV_SURFACE, _EV_BOTTOM, _EV_RANGE, _EV_TURN = 0, 1, 2, 3, 4
# RK4-Newton corrections after the interpolated landing (rarely more than none are needed)
_NEWTON_ITERATIONS = 3
_LAND_TOL_M = 1e-8
# iterations of the root search on the step's cubic Hermite interpolant
_HERMITE_ITERATIONS = 40
_HERMITE_TOL_M = 1e-12  # along the path
# a ray this close (along its path) to the knot it is heading to is taken to be on it: a step that
# aimed at a knot ends within about 1e-5 m of it, and straddling it by so little costs nothing
_KNOT_MIN_STEP_M = 1e-3
# a step aimed at a knot that ends this close to it (in depth) is on it: the next step starts in the
# piece past it without a search
_KNOT_HIT_M = 1e-4
# step control: never below this step (m), shrink/grow factors per step and the safety factor
_H_MIN_M = 1e-3
_SHRINK_MIN, _SAFETY = 0.2, 0.9
_DOUBLE_BELOW = (_SAFETY / 2.0) ** 4  # a step twice as long would have an error ratio below 0.66
_HALVE_ABOVE = _SAFETY ** 4
# largest relative change of zeta the Snell projection makes (larger: near a turning point, skipped)
_PROJECT_MAX_REL = 1e-4

# Arithmetic of the stages may be reassociated and contracted (FMA); NaN/Inf semantics are kept, and
# the event and root-finding logic below is compiled without any fast-math flag.
_FAST = {"contract", "arcp", "nsz", "reassoc"}


@nb.njit(cache=True, inline="always", error_model="numpy")
def _eval_piece(z, knots, coef, i):
    """c, dc/dz, d2c/dz2 from profile piece ``i`` (its cubic, extended if z is a hair outside)."""
    d = z - knots[i]
    a1 = coef[i, 1]
    a2 = coef[i, 2]
    a3 = coef[i, 3]
    c = coef[i, 0] + d * (a1 + d * (a2 + d * a3))
    dc = a1 + d * (2.0 * a2 + d * 3.0 * a3)
    d2c = 2.0 * a2 + 6.0 * a3 * d
    return c, dc, d2c


@nb.njit(cache=True, fastmath=_FAST, error_model="numpy")
def _rates(c, cz, czz, inv, zeta, dz, dzeta, xi, dxi):
    """Right-hand side of the ray and variational equations from c, dc/dz, d2c/dz2 and 1/c.

    Returns dx/ds, dz/ds, dzeta/ds, dt/ds, d(dx)/ds, d(dz)/ds, d(dzeta)/ds, d(dt)/ds.
    """
    inv2 = inv * inv
    fzeta = -cz * inv2
    fdx = cz * dz * xi + c * dxi
    fdz = cz * dz * zeta + c * dzeta
    fdzeta = -(czz - 2.0 * cz * cz * inv) * inv2 * dz
    return c * xi, c * zeta, fzeta, inv, fdx, fdz, fdzeta, fzeta * dz


@nb.njit(cache=True, inline="always", error_model="numpy")
def _piece_at(z, knots, piece, plo, phi):
    """Profile piece holding depth ``z``, walking from ``piece`` but kept inside [plo, phi] (the pieces
    between the landing knots around the step: a stage a hair past a kink stays on its side)."""
    while piece > plo and z < knots[piece]:
        piece -= 1
    while piece < phi and z >= knots[piece + 1]:
        piece += 1
    return piece


@nb.njit(cache=True, fastmath=_FAST, error_model="numpy")
def _rhs(z, zeta, dz, dzeta, xi, dxi, knots, coef, piece, plo, phi):
    """:func:`_rates` at one state, then c, dc/dz, d2c/dz2 there and the profile piece used (the one
    holding z within [plo, phi], found from ``piece``)."""
    piece = _piece_at(z, knots, piece, plo, phi)
    c, cz, czz = _eval_piece(z, knots, coef, piece)
    inv = 1.0 / c
    fx, fz, fe, ft, fa, fb, fc, fd = _rates(c, cz, czz, inv, zeta, dz, dzeta, xi, dxi)
    return fx, fz, fe, ft, fa, fb, fc, fd, c, cz, czz, piece


@nb.njit(cache=True, fastmath=_FAST, error_model="numpy")
def _rk4(x, z, zeta, t, dx, dz, dzeta, dt, xi, dxi, h, k1x, k1z, k1e, k1t, k1a, k1b, k1c, k1d, knots, coef,
         piece, plo, phi):
    """One classical RK4 step of length h (arc length, m), given the first stage ``k1``; each stage
    evaluates the profile piece holding its own depth (searched from ``piece``, the step's first
    piece, within [plo, phi]), so a step may cross knots where the profile is C1. Returns the new
    state and the last stage's (dx/ds, dz/ds, dzeta/ds, dt/ds), which the error estimate needs."""
    hh = 0.5 * h
    k2x, k2z, k2e, k2t, k2a, k2b, k2c, k2d, _, _, _, p2 = _rhs(z + hh * k1z, zeta + hh * k1e, dz + hh * k1b,
                                                              dzeta + hh * k1c, xi, dxi, knots, coef, piece,
                                                              plo, phi)
    k3x, k3z, k3e, k3t, k3a, k3b, k3c, k3d, _, _, _, p3 = _rhs(z + hh * k2z, zeta + hh * k2e, dz + hh * k2b,
                                                              dzeta + hh * k2c, xi, dxi, knots, coef, p2,
                                                              plo, phi)
    k4x, k4z, k4e, k4t, k4a, k4b, k4c, k4d, _, _, _, _ = _rhs(z + h * k3z, zeta + h * k3e, dz + h * k3b,
                                                             dzeta + h * k3c, xi, dxi, knots, coef, p3,
                                                             plo, phi)
    w = h * (1.0 / 6.0)
    x1 = x + w * (k1x + 2.0 * (k2x + k3x) + k4x)
    z1 = z + w * (k1z + 2.0 * (k2z + k3z) + k4z)
    e1 = zeta + w * (k1e + 2.0 * (k2e + k3e) + k4e)
    t1 = t + w * (k1t + 2.0 * (k2t + k3t) + k4t)
    a1 = dx + w * (k1a + 2.0 * (k2a + k3a) + k4a)
    b1 = dz + w * (k1b + 2.0 * (k2b + k3b) + k4b)
    c1 = dzeta + w * (k1c + 2.0 * (k2c + k3c) + k4c)
    d1 = dt + w * (k1d + 2.0 * (k2d + k3d) + k4d)
    return x1, z1, e1, t1, a1, b1, c1, d1, k4x, k4z, k4e, k4t


@nb.njit(cache=True, fastmath=_FAST, error_model="numpy")
def _error_ratio(h, k4x, k4z, k4e, k4t, f1x, f1z, f1e, f1t, c, ds, tol):
    """Local error estimate of the step over the tolerance (accept when <= 1).

    The classical RK4 weights with a fifth stage at the end point (the next step's first stage)
    embed a third-order solution with weights (1/6, 1/3, 1/3, 0, 1/6) (checked against the order
    conditions up to order 3, [Hairer1993] sect. II.4); the two differ by h/6 (k4 - k5), an upper
    estimate of the RK4 error. Positions, the travel time (times c) and the ray angle (times the
    maximum step, the lever arm of an angle error) are held to ``tol`` metres.
    """
    w = h * (1.0 / 6.0)
    ex = abs(w * (k4x - f1x))
    ez = abs(w * (k4z - f1z))
    et = abs(w * (k4t - f1t)) * c
    ea = abs(w * (k4e - f1e)) * c * ds
    return max(max(ex, ez), max(et, ea)) * (1.0 / tol)


@nb.njit(cache=True, inline="always", error_model="numpy")
def _next_step(err, hstep, hctl, ds):
    """Step proposal after an accepted step of length ``hstep`` with error ratio ``err``.

    Doubling and halving with the thresholds of the (1 / err)^(1/4) rule of a third-order error
    estimate ([Hairer1993] sect. II.4), without its root: a full step doubles when twice its length
    would still pass with the safety factor, and a step (full or cut short by a knot or an event)
    that came close to the tolerance halves the proposal.
    """
    # the usual case (a full step at the largest step, or in between the thresholds) tested first and
    # leaving hctl alone, so that the next step does not wait on the error estimate
    if hctl == ds and err <= _HALVE_ABOVE:
        return hctl
    if err > _HALVE_ABOVE:
        return min(hctl, 0.5 * hstep)
    if err < _DOUBLE_BELOW and hstep >= hctl * (1.0 - 1e-12):
        return min(ds, 2.0 * hstep)
    return hctl


@nb.njit(cache=True, inline="always", error_model="numpy")
def _toward_root(a, b, dz, hmax):
    """Smallest root h in (0, hmax] of b h^2 + a h = dz when a dz >= 0 (the ray heading to the depth
    dz away), or -1 when there is none: 2 dz / (a + sign(a) sqrt(a^2 + 4 b dz)), the form without
    cancellation (one square root and one division instead of the general search's two)."""
    disc = a * a + 4.0 * b * dz
    if disc < 0.0:
        return -1.0
    sq = math.sqrt(disc)
    h = 2.0 * dz / (a + sq) if a > 0.0 else 2.0 * dz / (a - sq)
    return h if 0.0 < h <= hmax else -1.0


@nb.njit(cache=True, inline="always", error_model="numpy")
def _first_root(a, b, d, hmax):
    """Smallest root h in (0, hmax] of b h^2 + a h + d = 0, or -1 when there is none."""
    best = -1.0
    if abs(b) * hmax < 1e-12 * max(abs(a), 1e-300):
        if a != 0.0:
            h = -d / a
            if 0.0 < h <= hmax:
                best = h
        return best
    disc = a * a - 4.0 * b * d
    if disc < 0.0:
        return best
    sq = math.sqrt(disc)
    qq = -0.5 * (a + sq) if a >= 0.0 else -0.5 * (a - sq)
    if qq != 0.0:
        for h in (qq / b, d / qq):
            if 0.0 < h <= hmax and (best < 0.0 or h < best):
                best = h
    return best


@nb.njit(cache=True, inline="always", error_model="numpy")
def _event_value(kind, x, z, zeta, bz0, bslope, bx0, x_event):
    """Signed distance to the event surface (zero on it)."""
    if kind == _EV_SURFACE:
        return z
    if kind == _EV_BOTTOM:
        return z - (bz0 + bslope * (x - bx0))
    if kind == _EV_RANGE:
        return x - x_event
    return zeta


@nb.njit(cache=True, inline="always", error_model="numpy")
def _event_rate(kind, fx, fz, fe, bslope):
    """Derivative of the event value along the ray, d g / ds, from the ray's rates."""
    if kind == _EV_SURFACE:
        return fz
    if kind == _EV_BOTTOM:
        return fz - bslope * fx
    if kind == _EV_RANGE:
        return fx
    return fe


@nb.njit(cache=True, inline="always", error_model="numpy")
def _hermite(u, h, y0, y1, f0, f1):
    """Cubic Hermite interpolant of one state component over a step (fraction u of length h) and
    its derivative along the ray."""
    u2 = u * u
    u3 = u2 * u
    val = (2.0 * u3 - 3.0 * u2 + 1.0) * y0 + (u3 - 2.0 * u2 + u) * h * f0 + (3.0 * u2 - 2.0 * u3) * y1 \
        + (u3 - u2) * h * f1
    der = (6.0 * u2 - 6.0 * u) * (y0 - y1) / h + (3.0 * u2 - 4.0 * u + 1.0) * f0 + (3.0 * u2 - 2.0 * u) * f1
    return val, der


@nb.njit(cache=True, error_model="numpy")
def _hermite_root(h, x0, z0, e0, x1, z1, e1, k1x, k1z, k1e, f1x, f1z, f1e, ax, az, ae, g_off):
    """Arc length in (0, h] where the event value g = ax x + az z + ae zeta - g_off crosses zero on the
    step's cubic Hermite interpolant (safeguarded Newton; the value changes sign over the step).

    Every event is linear in (x, z, zeta) (see :func:`_first_event`), so one compiled function (all
    arguments floats) serves them all."""
    g0 = ax * x0 + az * z0 + ae * e0 - g_off
    if g0 == 0.0:
        return 0.0
    lo = 0.0
    hi = 1.0
    u = 0.5
    g1 = ax * x1 + az * z1 + ae * e1 - g_off
    if g1 != g0:
        u = min(max(g0 / (g0 - g1), 0.0), 1.0)
    for _ in range(_HERMITE_ITERATIONS):
        xv, xd = _hermite(u, h, x0, x1, k1x, f1x)
        zv, zd = _hermite(u, h, z0, z1, k1z, f1z)
        ev, ed = _hermite(u, h, e0, e1, k1e, f1e)
        g = ax * xv + az * zv + ae * ev - g_off
        if g == 0.0:
            break
        if (g > 0.0) == (g0 > 0.0):
            lo = u
        else:
            hi = u
        r = (ax * xd + az * zd + ae * ed) * h
        un = u - g / r if r != 0.0 else 0.5 * (lo + hi)
        if not (lo < un < hi):
            un = 0.5 * (lo + hi)
        if abs(un - u) * h < _HERMITE_TOL_M or (hi - lo) * h < _HERMITE_TOL_M:
            u = un
            break
        u = un
    return u * h


@nb.njit(cache=True, inline="always", error_model="numpy")
def _first_event(hstep, x, z, zeta, x1, z1, e1, k1x, k1z, k1e, f1x, f1z, f1e, bz0, bsl, bx0, x_ev):
    """The event a trial step of length ``hstep`` crosses first and the arc length to it (the step's
    own length and _EV_NONE when it crosses none): surface, seabed, next range event, turning point.
    The events as lines g = ax x + az z + ae zeta - g_off: z (surface), z - bz0 - bsl (x - bx0)
    (seabed), x - x_ev (range), zeta (turning point), the values of :func:`_event_value`."""
    kind = _EV_NONE
    h = hstep
    if z1 < 0.0:
        h = _hermite_root(hstep, x, z, zeta, x1, z1, e1, k1x, k1z, k1e, f1x, f1z, f1e, 0.0, 1.0, 0.0, 0.0)
        kind = _EV_SURFACE
    if z1 > bz0 + bsl * (x1 - bx0):
        hp = _hermite_root(hstep, x, z, zeta, x1, z1, e1, k1x, k1z, k1e, f1x, f1z, f1e, -bsl, 1.0, 0.0,
                           bz0 - bsl * bx0)
        if kind == _EV_NONE or hp < h:
            h = hp
            kind = _EV_BOTTOM
    if x1 >= x_ev:
        hp = _hermite_root(hstep, x, z, zeta, x1, z1, e1, k1x, k1z, k1e, f1x, f1z, f1e, 1.0, 0.0, 0.0, x_ev)
        if kind == _EV_NONE or hp < h:
            h = hp
            kind = _EV_RANGE
    if zeta * e1 < 0.0:
        hp = _hermite_root(hstep, x, z, zeta, x1, z1, e1, k1x, k1z, k1e, f1x, f1z, f1e, 0.0, 0.0, 1.0, 0.0)
        if kind == _EV_NONE or hp < h:
            h = hp
            kind = _EV_TURN
    return kind, h


@nb.njit(cache=True, inline="always", error_model="numpy")
def _land_on_event(kind, h, hstep, x, z, zeta, t, dx, dz, dzeta, dt, xi, dxi, k1x, k1z, k1e, k1t, k1a, k1b, k1c,
                   k1d, knots, coef, piece, plo, phi, bz0, bsl, bx0, x_ev):
    """The RK4 step of length ``h`` (the interpolated event crossing), corrected by safeguarded
    Newton iterations on the step length inside [0, hstep] while it misses the event by more than
    the landing tolerance. Returns the state at the event and the step length."""
    x1, z1, e1, t1, a1, b1, c1, d1, _, _, _, _ = _rk4(x, z, zeta, t, dx, dz, dzeta, dt, xi, dxi, h, k1x, k1z, k1e,
                                                      k1t, k1a, k1b, k1c, k1d, knots, coef, piece, plo, phi)
    if kind == _EV_SURFACE:
        inside = 1.0
    elif kind == _EV_TURN:
        inside = 1.0 if zeta > 0.0 else -1.0
    else:
        inside = -1.0
    ltol = _LAND_TOL_M if kind != _EV_TURN else _LAND_TOL_M * 1e-6
    lo = 0.0
    hi = hstep
    for _ in range(_NEWTON_ITERATIONS):
        g = _event_value(kind, x1, z1, e1, bz0, bsl, bx0, x_ev)
        if abs(g) < ltol:
            break
        if g * inside > 0.0:
            lo = h
        else:
            hi = h
        f2x, f2z, f2e, _, _, _, _, _, _, _, _, _ = _rhs(z1, e1, b1, c1, xi, dxi, knots, coef, piece, plo, phi)
        r = _event_rate(kind, f2x, f2z, f2e, bsl)
        hn = h - g / r if r != 0.0 else 0.5 * (lo + hi)
        if not (lo < hn < hi):
            hn = 0.5 * (lo + hi)
        h = hn
        x1, z1, e1, t1, a1, b1, c1, d1, _, _, _, _ = _rk4(x, z, zeta, t, dx, dz, dzeta, dt, xi, dxi, h, k1x, k1z,
                                                          k1e, k1t, k1a, k1b, k1c, k1d, knots, coef, piece, plo,
                                                          phi)
    return x1, z1, e1, t1, a1, b1, c1, d1, h


@nb.njit(cache=True, inline="always", error_model="numpy")
def _reflect(kind, z, xi, zeta, dx, dz, dxi, dzeta, bsl, knots, coef, hint):
    """Mirror the slowness about the boundary and carry the dynamic-ray vector across it (saltation).

    Returns xi, zeta, dx, dz, dxi, dzeta, sin(grazing angle), piece.
    """
    c, cz, _, hint = evaluate(z, knots, coef, hint)
    if kind == _EV_SURFACE:
        nx = 0.0
        nz = 1.0
        gsl = 0.0
    else:
        nrm = 1.0 / math.sqrt(1.0 + bsl * bsl)
        nx = -bsl * nrm
        nz = nrm
        gsl = bsl
    vn = xi * nx + zeta * nz
    sin_g = min(abs(vn) * c, 1.0)
    xi_r = xi - 2.0 * vn * nx
    zeta_r = zeta - 2.0 * vn * nz
    # saltation: tau = -(grad g . dy)/(grad g . F-), grad g = (-slope, 1) in (x, z)
    den = c * zeta - gsl * c * xi
    tau = -(dz - gsl * dx) / den if den != 0.0 else 0.0
    fe = -cz / (c * c)
    # Dh F- for the slowness part: the reflection applied to (0, fe)
    dn_f = fe * nz
    rfx = -2.0 * dn_f * nx
    rfz = fe - 2.0 * dn_f * nz
    dvn = dxi * nx + dzeta * nz
    dxi_r = dxi - 2.0 * dvn * nx
    dzeta_r = dzeta - 2.0 * dvn * nz
    dx = dx + c * (xi - xi_r) * tau
    dz = dz + c * (zeta - zeta_r) * tau
    dxi = dxi_r + rfx * tau
    dzeta = dzeta_r + (rfz - fe) * tau
    return xi_r, zeta_r, dx, dz, dxi, dzeta, sin_g, hint


@nb.njit(cache=True, inline="always", error_model="numpy")
def _seabed_coefficient(sin_g, bt_step, bt_re, bt_im):
    """Seabed reflection coefficient (re, im) at grazing angle asin(sin_g), linear in the table."""
    u = math.asin(sin_g) / bt_step
    iu = int(u)
    if iu > bt_re.shape[0] - 2:
        iu = bt_re.shape[0] - 2
    w = u - iu
    return bt_re[iu] + w * (bt_re[iu + 1] - bt_re[iu]), bt_im[iu] + w * (bt_im[iu + 1] - bt_im[iu])


@nb.njit(cache=True, inline="always", error_model="numpy")
def _write_record(row, z, t, xi, zeta, c, dx, dz, dxi, dzeta, s, n_s, n_b, n_c, bre, bim, sin2, absdb,
                  orient, dt):
    """Fill one crossing record (columns ``R_*``; absorption at the extra frequencies after them)."""
    row[R_Z] = z
    row[R_T] = t
    row[R_XI] = xi
    row[R_ZETA] = zeta
    row[R_C] = c
    row[R_DX] = dx
    row[R_DZ] = dz
    row[R_DXI] = dxi
    row[R_DZETA] = dzeta
    row[R_S] = s
    row[R_NS] = n_s
    row[R_NB] = n_b
    row[R_NC] = n_c
    row[R_BRE] = bre
    row[R_BIM] = bim
    row[R_SIN2] = sin2
    row[R_ABS] = absdb[0]
    for m in range(1, absdb.shape[0]):
        row[N_RECORD + m - 1] = absdb[m]  # abs_column(m)
    row[R_ORIENT] = orient
    row[R_DT] = dt


@nb.njit(cache=True, inline="always", error_model="numpy")
def _start_piece(z, zeta, knots, hint):
    """Profile piece a step from depth ``z`` lies in (on a knot, the one the ray is heading into)."""
    piece = locate(z, knots, hint)
    if piece > 0 and z <= knots[piece] and zeta < 0.0:
        piece -= 1  # on a knot, heading up: the piece above
    return piece


@nb.njit(cache=True, inline="always", error_model="numpy")
def _knot_step(z, k1z, b2, knots, plo, phi, z_knot_max, hmax):
    """Step that ends on the next landing knot (a kink of the profile, see :func:`landing_pieces`)
    above or below the run of pieces [plo, phi] (quadratic prediction of z(h)), or ``hmax``.

    Returns (step, move, aim): move is +-1 when the ray is within _KNOT_MIN_STEP_M of the landing
    knot it is heading to, and so belongs to the run of pieces past it; aim is +1 (-1) when the step
    was cut to end on the knot below (above), 0 otherwise.
    """
    n_knots = knots.shape[0]
    z_hi = knots[phi + 1] if phi + 2 < n_knots else 1e300
    z_lo = knots[plo] if plo > 0 else -1e300
    reach = abs(k1z) * hmax + abs(b2) * hmax * hmax  # bound on |z(h) - z| over the step
    if z_hi - z > reach and z - z_lo > reach:
        return hmax, 0, 0
    h_hi = -1.0
    h_lo = -1.0
    # a knot the ray is a hair past (it came from there) is not ahead of it
    # heading to a knot: one root in the stable form; a knot behind that the ray may curve back to
    # (rare): the general search
    if k1z > 0.0:
        if z < z_hi < z_knot_max:
            h_hi = _toward_root(k1z, b2, z_hi - z, hmax)
        if 0.0 < z_lo < z and b2 < 0.0:
            h_lo = _first_root(k1z, b2, z - z_lo, hmax)
    else:
        if 0.0 < z_lo < z:
            h_lo = _toward_root(k1z, b2, z_lo - z, hmax)
        if z < z_hi < z_knot_max and b2 > 0.0:
            h_hi = _first_root(k1z, b2, z - z_hi, hmax)
    if h_hi > 0.0 and (h_lo <= 0.0 or h_hi <= h_lo):
        if h_hi > _KNOT_MIN_STEP_M:
            return h_hi, 0, 1
        return hmax, 1, 0
    if h_lo > 0.0:
        if h_lo > _KNOT_MIN_STEP_M:
            return h_lo, 0, -1
        return hmax, -1, 0
    return hmax, 0, 0


@nb.njit(cache=True, inline="always", error_model="numpy")
def _snell_projection(zeta, xi, inv_c):
    """zeta put back on Snell's law, xi^2 + zeta^2 = 1 / c^2 (a projection method, [Hairer2006]
    sect. IV.4), given 1 / c: the integrator's drift off it moves turning depths, and so the phase
    of every later cycle.

    One Newton step on zeta^2 = 1/c^2 - xi^2 (no square root): with the relative drift e = d /
    zeta^2 held below 2 _PROJECT_MAX_REL its error is zeta e^2 / 8 (1e-20 relative for the usual
    drift of 1e-10), and the next step's projection removes it. Larger drifts (near a turning point,
    where the projection is ill-conditioned, or zeta = 0) are left alone.
    """
    return zeta + _snell_correction(zeta, xi, inv_c)


@nb.njit(cache=True, inline="always", error_model="numpy")
def _snell_correction(zeta, xi, inv_c):
    """The change :func:`_snell_projection` makes to zeta (0 where it leaves zeta alone)."""
    d = inv_c * inv_c - xi * xi - zeta * zeta
    z2 = zeta * zeta
    if abs(d) < (2.0 * _PROJECT_MAX_REL) * z2:
        return d / (zeta + zeta)
    return 0.0


@nb.njit(cache=True, error_model="numpy")
def trace_ray(theta0, zs, med, r_max, max_steps, rec_r, rec, px, pz, pt, pa):
    """Trace one ray from range 0, depth ``zs``, launch angle ``theta0`` (rad, positive down).

    Parameters
    ----------
    med : KernelMedium
        Profile pieces (``knots``, ``coef``, see :mod:`aculink.site._profile_kernels`); seabed
        vertices ``bed_r``, ``bed_z`` (m) and segment slopes ``bed_slope``; the seabed reflection
        coefficient ``bt_re``, ``bt_im`` tabulated on grazing angles 0, ``bt_step``, ...; absorption
        ``ab_db`` (n_freq, bins) in dB/m on depth bins of width ``ab_dz``; the largest arc-length
        step ``ds`` (m) and the local error tolerance ``tol`` (m); ``floor_mag``: the ray stops when
        the product of seabed |R| falls below it.
    r_max : stop range, m. max_steps : step budget (rejected trial steps count; steps cut short to
        end on a profile knot do not, since each of them makes progress and their number is bounded by
        the path length over the knot spacing).
    rec_r : increasing receiver ranges; ``rec[j, :]`` receives the crossing record at rec_r[j]
        (left as NaN where the ray does not get there); record columns ``R_*`` and :func:`abs_column`.
    px, pz, pt, pa : path buffers (range, depth, time, angle in rad); length 0 records no path.

    Returns
    -------
    n_points, n_steps, termination, x_end, n_surface, n_bottom, n_caustic
    """
    knots = med.knots
    coef = med.coef
    bed_r = med.bed_r
    bed_z = med.bed_z
    bed_slope = med.bed_slope
    ab_dz = med.ab_dz
    ab_db = med.ab_db
    ds = med.ds
    tol = med.tol
    c0, _, _, hint = evaluate(zs, knots, coef, 0)
    cos0 = math.cos(theta0)
    sin0 = math.sin(theta0)
    x = 0.0
    z = zs
    xi = cos0 / c0
    zeta = sin0 / c0
    t = 0.0
    s = 0.0
    dx = 0.0
    dz = 0.0
    dxi = -sin0 / c0
    dzeta = cos0 / c0
    dt = 0.0
    bre = 1.0
    bim = 0.0
    sin2 = 0.0
    n_f = ab_db.shape[0]
    absdb = np.zeros(n_f)
    n_s = 0
    n_b = 0
    n_c = 0
    orient = 1.0
    qsign = 1.0
    seg = 0
    n_seg = bed_slope.shape[0]
    jrec = 0
    n_rec = rec_r.shape[0]
    while jrec < n_rec and rec_r[jrec] <= 0.0:
        jrec += 1
    cap = px.shape[0]
    n_ab = ab_db.shape[1]
    inv_ab_dz = 1.0 / ab_dz
    z_knot_max = 0.0
    for m in range(bed_z.shape[0]):
        z_knot_max = max(z_knot_max, bed_z[m])
    npts = 0
    if cap > 0:
        px[0] = x
        pz[0] = z
        pt[0] = t
        pa[0] = theta0
        npts = 1
    term = END_STEPS
    step = 0
    hctl = ds  # the step controller's proposal
    # first stage carried over from the previous step's end point (valid for piece k1_piece)
    k1_piece = -1
    cs = czs = czzs = invs = 0.0
    n_free = 0  # steps not counted in the budget (those cut short to end on a kink)
    next_piece = -1
    pend = 0.0  # Snell projection correction waiting for the next step (see below)
    piece_lo = med.piece_lo
    piece_hi = med.piece_hi
    lands = piece_lo[piece_lo.shape[0] - 1] > 0  # the profile has kinks to land on
    while step - n_free < max_steps:
        step += 1
        bx0 = bed_r[seg]
        bz0 = bed_z[seg]
        bsl = bed_slope[seg]
        # next range event: receiver, seabed vertex or the end
        x_ev = r_max
        if jrec < n_rec and rec_r[jrec] < x_ev:
            x_ev = rec_r[jrec]
        if seg + 1 < n_seg and bed_r[seg + 1] < x_ev:
            x_ev = bed_r[seg + 1]
        # The step may cross knots where the profile is C1 (each stage evaluates its own piece) and
        # stays inside the run of pieces [plo, phi] between kinks, shortened to end on the next kink.
        # after a step that ended on a kink the piece is known: the one past it
        piece = next_piece if next_piece >= 0 else _start_piece(z, zeta, knots, hint)
        plo = piece_lo[piece]
        phi = piece_hi[piece]
        # the first stage: c, c_z, c_zz carried over from the previous step's end point when the state
        # did not jump there and the piece is the same (fewer values live across steps than the whole
        # stage); a new piece is evaluated afresh (c_zz, and c_z of a C0 profile, jump at knots)
        if piece != k1_piece:
            cs, czs, czzs = _eval_piece(z, knots, coef, piece)
            invs = 1.0 / cs
        k1x, k1z, k1e, k1t, k1a, k1b, k1c, k1d = _rates(cs, czs, czzs, invs, zeta, dz, dzeta, xi, dxi)
        hstep = hctl
        aim = 0
        if lands:
            b2 = 0.5 * k1e * cs * cs * cs * xi * xi  # (d2z/ds2) / 2 = -c_z c xi^2 / 2
            hstep, move, aim = _knot_step(z, k1z, b2, knots, plo, phi, z_knot_max, hctl)
            if move != 0:
                # on the kink it was heading to: the step lies in the run past it, up to its far end
                piece = phi + 1 if move > 0 else plo - 1
                plo = piece_lo[piece]
                phi = piece_hi[piece]
                cs, czs, czzs = _eval_piece(z, knots, coef, piece)
                invs = 1.0 / cs
                k1x, k1z, k1e, k1t, k1a, k1b, k1c, k1d = _rates(cs, czs, czzs, invs, zeta, dz, dzeta, xi, dxi)
                b2 = 0.5 * k1e * cs * cs * cs * xi * xi
                hstep, _, aim = _knot_step(z, k1z, b2, knots, plo, phi, z_knot_max, hctl)
            if hstep < hctl:
                n_free += 1  # a step that ends on a kink always makes progress: the budget counts the others
        k1_piece = piece
        x1, z1, e1, t1, a1, b1, c1, d1, k4x, k4z, k4e, k4t = _rk4(x, z, zeta, t, dx, dz, dzeta, dt, xi, dxi,
                                                                  hstep, k1x, k1z, k1e, k1t, k1a, k1b, k1c,
                                                                  k1d, knots, coef, piece, plo, phi)
        f1x, f1z, f1e, f1t, _, _, _, _, c1s, cz1s, czz1s, p1 = _rhs(z1, e1, b1, c1, xi, dxi, knots, coef, piece,
                                                                    plo, phi)
        err = _error_ratio(hstep, k4x, k4z, k4e, k4t, f1x, f1z, f1e, f1t, cs, ds, tol)
        if err > 1.0 and hstep > _H_MIN_M:
            # rejected: retry from the same point with a shorter step (k1 stays valid)
            hctl = max(_H_MIN_M, hstep * max(_SHRINK_MIN, _SAFETY / math.sqrt(math.sqrt(err))))
            continue
        hctl = _next_step(err, hstep, hctl, ds)
        # events: the one crossed first along the step, located on the step's Hermite interpolant
        kind, h = _first_event(hstep, x, z, zeta, x1, z1, e1, k1x, k1z, k1e, f1x, f1z, f1e, bz0, bsl, bx0, x_ev)
        if kind != _EV_NONE:
            # land on the event: one RK4 step of the interpolated length, then safeguarded RK4-Newton
            # corrections on the step length if the interpolant missed by more than the tolerance
            x1, z1, e1, t1, a1, b1, c1, d1, h = _land_on_event(kind, h, hstep, x, z, zeta, t, dx, dz, dzeta, dt, xi,
                                                               dxi, k1x, k1z, k1e, k1t, k1a, k1b, k1c, k1d, knots,
                                                               coef, piece, plo, phi, bz0, bsl, bx0, x_ev)
            k1_piece = -1  # the state changes at the event: the next first stage is computed afresh
            hint = piece
            next_piece = -1
        else:
            # the end point's rates are the next step's first stage
            cs, czs, czzs, invs = c1s, cz1s, czz1s, f1t
            k1_piece = p1
            next_piece = -1
            if aim != 0:
                # the step ended on the kink it aimed at (to the quadratic prediction's accuracy): the
                # next step lies in the piece past it, whose c_z and c_zz are taken there; 1/c by one
                # Newton step from the old piece's (c is continuous, so this is exact to rounding)
                kp = phi + 1 if aim > 0 else plo - 1
                zk = knots[phi + 1] if aim > 0 else knots[plo]
                if abs(z1 - zk) < _KNOT_HIT_M:
                    cs, czs, czzs = _eval_piece(z1, knots, coef, kp)
                    invs = f1t * (2.0 - cs * f1t)
                    k1_piece = kp
                    next_piece = kp
            hint = k1_piece
        # absorption and path length per depth bin, at the step midpoint depth
        if n_ab > 0:
            ib = int(0.5 * (z + z1) * inv_ab_dz)
            if ib < 0:
                ib = 0
            if ib >= n_ab:
                ib = n_ab - 1
            for m in range(n_f):
                absdb[m] += ab_db[m, ib] * h
        x = x1
        z = z1
        zeta = e1
        t = t1
        dx = a1
        dz = b1
        dzeta = c1
        dt = d1
        s += h
        if kind == _EV_SURFACE:
            z = 0.0
        elif kind == _EV_BOTTOM:
            z = bz0 + bsl * (x - bx0)
        elif kind == _EV_RANGE:
            x = x_ev
        elif kind == _EV_TURN:
            zeta = 0.0
        if kind == _EV_NONE:
            # The projection, one step late: the correction computed at the previous step's end is
            # applied now, and this step's is computed for the next (f1t = dt/ds = 1/c at the end
            # point), so that the division is not on the path from one step to the next. The step
            # from the unprojected state differs from the one from the projected state by h J d
            # (J the Jacobian of the rates, d the correction ~1e-10 zeta), which the next projection
            # removes: the state stays within one step's drift of Snell's law instead of drifting.
            zeta += pend
            pend = _snell_correction(zeta, xi, f1t)
        else:
            pend = 0.0  # events project at once (a reflection changes the slowness vector)
        if kind != _EV_NONE and kind != _EV_TURN:
            c, _, _ = _eval_piece(z, knots, coef, _piece_at(z, knots, piece, plo, phi))
            zeta = _snell_projection(zeta, xi, 1.0 / c)
        # caustic: q changes sign (orientation flips at reflections are bookkeeping)
        qn = orient * (xi * dz - zeta * dx)
        if qn * qsign < 0.0:
            n_c += 1
            qsign = -qsign
        if kind == _EV_SURFACE or kind == _EV_BOTTOM:
            xi, zeta, dx, dz, dxi, dzeta, sin_g, hint = _reflect(kind, z, xi, zeta, dx, dz, dxi, dzeta, bsl,
                                                                 knots, coef, hint)
            orient = -orient
            if kind == _EV_SURFACE:
                n_s += 1
                sin2 += sin_g * sin_g
            else:
                n_b += 1
                rr, ri = _seabed_coefficient(sin_g, med.bt_step, med.bt_re, med.bt_im)
                tr = bre * rr - bim * ri
                bim = bre * ri + bim * rr
                bre = tr
        if cap > 0 and npts < cap:
            px[npts] = x
            pz[npts] = z
            pt[npts] = t
            pa[npts] = math.atan2(zeta, xi)
            npts += 1
        if kind == _EV_RANGE:
            if jrec < n_rec and x >= rec_r[jrec]:
                c, _, _, hint = evaluate(z, knots, coef, hint)
                _write_record(rec[jrec], z, t, xi, zeta, c, dx, dz, dxi, dzeta, s, n_s, n_b, n_c, bre, bim, sin2,
                              absdb, orient, dt)
                jrec += 1
            if seg + 1 < n_seg and x >= bed_r[seg + 1]:
                seg += 1
            if x >= r_max:
                term = END_RANGE
                break
        if kind == _EV_BOTTOM:
            if xi <= 0.0:
                term = END_BACKWARD
                break
            if bre * bre + bim * bim < med.floor_mag * med.floor_mag:
                term = END_WEAK
                break
    return npts, step, term, x, n_s, n_b, n_c


@nb.njit(cache=True, inline="always", error_model="numpy")
def _trace_into(i, thetas, zs, med, r_max, max_steps, rec_r, rec, px, pz, pt, pa, info):
    """Trace ray ``i`` of a fan into its rows of the output buffers (shared by both drivers)."""
    npts, nst, term, xe, ns, nbt, nc = trace_ray(thetas[i], zs, med, r_max, max_steps, rec_r, rec[i], px[i],
                                                 pz[i], pt[i], pa[i])
    info[i, I_POINTS] = npts
    info[i, I_STEPS] = nst
    info[i, I_END] = term
    info[i, I_X_END] = xe
    info[i, I_NS] = ns
    info[i, I_NB] = nbt
    info[i, I_NC] = nc


@nb.njit(cache=True, parallel=True, error_model="numpy")
def trace_fan(thetas, zs, med, r_max, max_steps, rec_r, rec, px, pz, pt, pa, info):
    """Trace every launch angle in ``thetas`` (parallel over rays).

    ``rec`` is (n_rays, n_ranges, record width), filled with NaN by the caller; ``px`` .. ``pa`` are
    (n_rays, n_points) path buffers (n_points may be 0); ``info[i]`` receives the ``I_*`` columns
    (n_points, n_steps, termination, x_end, n_surface, n_bottom, n_caustic).
    """
    n = thetas.shape[0]
    for i in nb.prange(n):
        _trace_into(i, thetas, zs, med, r_max, max_steps, rec_r, rec, px, pz, pt, pa, info)


@nb.njit(cache=True, error_model="numpy")
def trace_fan_serial(thetas, zs, med, r_max, max_steps, rec_r, rec, px, pz, pt, pa, info):
    """Serial twin of :func:`trace_fan` (one core; for single rays and timing)."""
    n = thetas.shape[0]
    for i in range(n):
        _trace_into(i, thetas, zs, med, r_max, max_steps, rec_r, rec, px, pz, pt, pa, info)
