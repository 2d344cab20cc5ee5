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

The integrator is the classical fourth-order Runge-Kutta method with a fixed arc-length step
``ds``. The sound-speed profile is C1 (PCHIP), so RK4 keeps travel-time errors near a microsecond at
10 km with 5 m steps (the measured figures are in tests/benchmarks/bench_rays.py).
Every step also stays inside one cubic piece of the profile: it is shortened to end on the next
profile knot (predicted from the quadratic Taylor expansion of z(s)), because d2c/dz2 of the C1
profile jumps at knots and a step straddling one loses RK4's order (measured: 15 us instead of 0.02 us
of travel-time error at 4 km in the bundled summer-shelf cast, and 10% errors in the spreading).
Boundaries, turning points, seabed vertices and receiver ranges are *events*: when a trial step
crosses one, the step is shortened to land on it (tangent prediction, then Newton corrections on the
step length, each an RK4 step from the same start), which keeps landing errors far below 1 us instead
of the 20-40 us a plain tangent prediction leaves.

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
KernelMedium = namedtuple("KernelMedium", ["knots", "coef", "bed_r", "bed_z", "bed_slope", "bt_step", "bt_re",
                                           "bt_im", "ab_dz", "ab_db", "ds", "floor_mag"])


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
_NEWTON_ITERATIONS = 4
_LAND_TOL_M = 1e-10
# a ray this close (along its path) to the knot it is heading to is taken to be on it: a step that
# aimed at a knot ends within about 1e-5 m of it, and straddling it by so little costs nothing
_KNOT_MIN_STEP_M = 1e-3


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


@nb.njit(cache=True, inline="always", error_model="numpy")
def _rhs(z, zeta, dz, dzeta, xi, dxi, knots, coef, piece):
    """Right-hand side of the ray and variational equations at one state (profile piece fixed)."""
    c, cz, czz = _eval_piece(z, knots, coef, piece)
    inv = 1.0 / c
    fx = c * xi
    fz = c * zeta
    fzeta = -cz * inv * inv
    fdx = cz * dz * xi + c * dxi
    fdz = cz * dz * zeta + c * dzeta
    fdzeta = -(czz - 2.0 * cz * cz * inv) * inv * inv * dz
    fdt = -cz * inv * inv * dz
    return fx, fz, fzeta, inv, fdx, fdz, fdzeta, fdt, c, cz


@nb.njit(cache=True, inline="always", error_model="numpy")
def _rk4(x, z, zeta, t, dx, dz, dzeta, dt, xi, dxi, h, k1x, k1z, k1e, k1t, k1a, k1b, k1c, k1d, knots, coef,
         piece):
    """One classical RK4 step of length h (arc length, m), given the first stage ``k1``; every stage
    uses profile piece ``piece``, the one the step lies in."""
    hh = 0.5 * h
    k2x, k2z, k2e, k2t, k2a, k2b, k2c, k2d, _, _ = _rhs(z + hh * k1z, zeta + hh * k1e, dz + hh * k1b,
                                                             dzeta + hh * k1c, xi, dxi, knots, coef, piece)
    k3x, k3z, k3e, k3t, k3a, k3b, k3c, k3d, _, _ = _rhs(z + hh * k2z, zeta + hh * k2e, dz + hh * k2b,
                                                             dzeta + hh * k2c, xi, dxi, knots, coef, piece)
    k4x, k4z, k4e, k4t, k4a, k4b, k4c, k4d, _, _ = _rhs(z + h * k3z, zeta + h * k3e, dz + h * k3b,
                                                             dzeta + h * k3c, xi, dxi, knots, coef, piece)
    w = h / 6.0
    x1 = x + w * (k1x + 2.0 * (k2x + k3x) + k4x)
    z1 = z + w * (k1z + 2.0 * (k2z + k3z) + k4z)
    e1 = zeta + w * (k1e + 2.0 * (k2e + k3e) + k4e)
    t1 = t + w * (k1t + 2.0 * (k2t + k3t) + k4t)
    a1 = dx + w * (k1a + 2.0 * (k2a + k3a) + k4a)
    b1 = dz + w * (k1b + 2.0 * (k2b + k3b) + k4b)
    c1 = dzeta + w * (k1c + 2.0 * (k2c + k3c) + k4c)
    d1 = dt + w * (k1d + 2.0 * (k2d + k3d) + k4d)
    return x1, z1, e1, t1, a1, b1, c1, d1


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
def _event_rate(kind, z, zeta, xi, bslope, knots, coef, hint):
    """Derivative of the event value along the ray, d g / ds."""
    c, cz, _, _ = evaluate(z, knots, coef, hint)
    if kind == _EV_SURFACE:
        return c * zeta
    if kind == _EV_BOTTOM:
        return c * zeta - bslope * c * xi
    if kind == _EV_RANGE:
        return c * xi
    return -cz / (c * c)


@nb.njit(cache=True, error_model="numpy")
def trace_ray(theta0, zs, med, r_max, max_steps, rec_r, rec, px, pz, pt, pa):
    """Trace one ray from range 0, depth ``zs``, launch angle ``theta0`` (rad, positive down).

    Parameters
    ----------
    med : KernelMedium
        Profile pieces (``knots``, ``coef``, see :mod:`aculink.site._profile_kernels`); seabed
        vertices ``bed_r``, ``bed_z`` (m) and segment slopes ``bed_slope``; the seabed reflection
        coefficient ``bt_re``, ``bt_im`` tabulated on grazing angles 0, ``bt_step``, ...; absorption
        ``ab_db`` (n_freq, bins) in dB/m on depth bins of width ``ab_dz``; the arc-length step ``ds``
        (m); ``floor_mag``: the ray stops when the product of seabed |R| falls below it.
    r_max : stop range, m. max_steps : step budget.
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
    bt_step = med.bt_step
    bt_re = med.bt_re
    bt_im = med.bt_im
    ab_dz = med.ab_dz
    ab_db = med.ab_db
    ds = med.ds
    floor_mag = med.floor_mag
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
    n_bt = bt_re.shape[0]
    n_knots = knots.shape[0]
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
    while step < max_steps:
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
        # The step stays inside one smooth cubic piece of the profile: it is shortened to end on the
        # next knot (d2c/dz2 jumps there, which would cost RK4 its order), found from the quadratic
        # prediction of z(h); a ray within _KNOT_MIN_STEP_M of the knot it is heading to moves on to
        # the next piece.
        piece = locate(z, knots, hint)
        if piece > 0 and z <= knots[piece] and zeta < 0.0:
            piece -= 1  # on a knot, heading up: the piece above
        for it in range(3):
            k1x, k1z, k1e, k1t, k1a, k1b, k1c, k1d, cs, czs = _rhs(z, zeta, dz, dzeta, xi, dxi, knots, coef,
                                                                   piece)
            b2 = 0.5 * k1e * cs * cs * cs * xi * xi  # (d2z/ds2) / 2 = -c_z c xi^2 / 2
            h_hi = -1.0
            h_lo = -1.0
            # a knot the ray is a hair past (it came from there) is not ahead of it
            if piece + 2 < n_knots and z < knots[piece + 1] < z_knot_max and (k1z > 0.0 or b2 > 0.0):
                h_hi = _first_root(k1z, b2, z - knots[piece + 1], ds)
            if piece > 0 and 0.0 < knots[piece] < z and (k1z < 0.0 or b2 < 0.0):
                h_lo = _first_root(k1z, b2, z - knots[piece], ds)
            move = 0
            hstep = ds
            if h_hi > 0.0 and (h_lo <= 0.0 or h_hi <= h_lo):
                if h_hi > _KNOT_MIN_STEP_M:
                    hstep = h_hi
                else:
                    move = 1
            elif h_lo > 0.0:
                if h_lo > _KNOT_MIN_STEP_M:
                    hstep = h_lo
                else:
                    move = -1
            if move == 0 or it == 2:
                break
            piece += move
        hint = piece
        x1, z1, e1, t1, a1, b1, c1, d1 = _rk4(x, z, zeta, t, dx, dz, dzeta, dt, xi, dxi, hstep, k1x, k1z, k1e,
                                                  k1t, k1a, k1b, k1c, k1d, knots, coef, piece)
        kind = _EV_NONE
        h = hstep
        # pick the event with the shortest tangent-predicted distance
        best = hstep * 2.0
        if z1 < 0.0:
            hp = -z / k1z if k1z < 0.0 else hstep
            hp = min(max(hp, 0.0), hstep)
            if hp < best:
                best = hp
                kind = _EV_SURFACE
        if z1 > bz0 + bsl * (x1 - bx0):
            g0 = z - (bz0 + bsl * (x - bx0))
            r = k1z - bsl * k1x
            hp = -g0 / r if r > 0.0 else hstep
            hp = min(max(hp, 0.0), hstep)
            if hp < best:
                best = hp
                kind = _EV_BOTTOM
        if x1 >= x_ev:
            hp = (x_ev - x) / k1x if k1x > 0.0 else hstep
            hp = min(max(hp, 0.0), hstep)
            if hp < best:
                best = hp
                kind = _EV_RANGE
        if zeta * e1 < 0.0:
            hp = -zeta / k1e if k1e != 0.0 else hstep
            hp = min(max(hp, 0.0), hstep)
            if hp < best:
                best = hp
                kind = _EV_TURN
        if kind != _EV_NONE:
            # land on the event: safeguarded Newton on the step length inside [0, hstep]
            if kind == _EV_SURFACE:
                inside = 1.0
            elif kind == _EV_TURN:
                inside = 1.0 if zeta > 0.0 else -1.0
            else:
                inside = -1.0
            lo = 0.0
            hi = hstep
            h = best if best > 0.0 else 0.5 * hstep
            tol = _LAND_TOL_M if kind != _EV_TURN else _LAND_TOL_M * 1e-6
            landed = False
            for _ in range(_NEWTON_ITERATIONS):
                x1, z1, e1, t1, a1, b1, c1, d1 = _rk4(x, z, zeta, t, dx, dz, dzeta, dt, xi, dxi, h, k1x, k1z,
                                                          k1e, k1t, k1a, k1b, k1c, k1d, knots, coef, piece)
                g = _event_value(kind, x1, z1, e1, bz0, bsl, bx0, x_ev)
                if abs(g) < tol:
                    landed = True
                    break
                if g * inside > 0.0:
                    lo = h
                else:
                    hi = h
                r = _event_rate(kind, z1, e1, xi, bsl, knots, coef, piece)
                hn = h - g / r if r != 0.0 else 0.5 * (lo + hi)
                if not (lo < hn < hi):
                    hn = 0.5 * (lo + hi)
                h = hn
            if not landed:
                x1, z1, e1, t1, a1, b1, c1, d1 = _rk4(x, z, zeta, t, dx, dz, dzeta, dt, xi, dxi, h, k1x, k1z,
                                                          k1e, k1t, k1a, k1b, k1c, k1d, knots, coef, piece)
        # absorption and path length per depth bin, at the step midpoint depth
        zm = 0.5 * (z + z1)
        if n_ab > 0:
            ib = int(zm / ab_dz)
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
        # caustic: q changes sign (orientation flips at reflections are bookkeeping)
        qn = orient * (xi * dz - zeta * dx)
        if qn * qsign < 0.0:
            n_c += 1
            qsign = -qsign
        if kind == _EV_SURFACE or kind == _EV_BOTTOM:
            c, cz, _, hint = evaluate(z, knots, coef, hint)
            if kind == _EV_SURFACE:
                nx = 0.0
                nz = 1.0
            else:
                nrm = 1.0 / math.sqrt(1.0 + bsl * bsl)
                nx = -bsl * nrm
                nz = nrm
            vn = xi * nx + zeta * nz
            sin_g = abs(vn) * c
            if sin_g > 1.0:
                sin_g = 1.0
            xi_r = xi - 2.0 * vn * nx
            zeta_r = zeta - 2.0 * vn * nz
            # saltation: tau = -(grad g . dy)/(grad g . F-), grad g = (-slope, 1) in (x, z)
            gsl = 0.0 if kind == _EV_SURFACE else bsl
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
            xi = xi_r
            zeta = zeta_r
            orient = -orient
            if kind == _EV_SURFACE:
                n_s += 1
                sin2 += sin_g * sin_g
            else:
                n_b += 1
                u = math.asin(sin_g) / bt_step
                iu = int(u)
                if iu > n_bt - 2:
                    iu = n_bt - 2
                w = u - iu
                rr = bt_re[iu] + w * (bt_re[iu + 1] - bt_re[iu])
                ri = bt_im[iu] + w * (bt_im[iu + 1] - bt_im[iu])
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
                row = rec[jrec]
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
                for m in range(1, n_f):
                    row[N_RECORD + m - 1] = absdb[m]
                row[R_ORIENT] = orient
                row[R_DT] = dt
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
            if bre * bre + bim * bim < floor_mag * floor_mag:
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
