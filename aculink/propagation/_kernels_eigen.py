"""Numba kernels of the eigenray search: brackets from a fan, refinement by re-shooting.

A fan traced once records every ray's state where it crosses each receiver range
(:data:`aculink.propagation._kernels.N_RECORD` columns). For each receiver (range j, depth k):

* **Straddles.** Adjacent rays i, i+1 with the same history (surface bounces, seabed bounces,
  caustics) whose depths at range j lie on either side of the receiver depth bracket one eigenray.
* **Branch edges.** Where a ray's neighbour has another history (or did not get there), the eigenray
  of the ray's branch may lie between the two: a Newton prediction from the ray,
  theta* = theta_i + (z_r - z_i) / (dz/dtheta0), that falls between them is a candidate too.

Each candidate is refined by re-shooting single rays to range j only: Newton steps on the launch
angle using the dynamic-ray derivative dz/dtheta0, kept inside the bracket (bisection when a Newton
step would leave it), until the depth miss at the receiver range is below the tolerance. A shot of
another history (or one that stops short) shrinks the bracket from the far side; a candidate whose
bracket closes without convergence is dropped.
"""

import numba as nb
import numpy as np

from aculink.propagation import _kernels as _k

#: Refinement shots before a candidate is given up (straddles, branch edges).
MAX_ITERATIONS = 40
EDGE_ITERATIONS = 16
#: Branch-edge predictions are followed this many gap widths from the edge ray.
EDGE_REACH = 4.0

C_RANGE, C_DEPTH, C_LO, C_HI, C_KIND, C_FROM = 0, 1, 2, 3, 4, 5
N_CANDIDATE = 6
KIND_STRADDLE, KIND_EDGE_UP, KIND_EDGE_DOWN = 0, 1, 2


@nb.njit(cache=True, inline="always", error_model="numpy")
def dz_dtheta(row):
    """dz/dtheta0 at fixed range from a crossing record (m/rad)."""
    return row[_k.R_DZ] - row[_k.R_ZETA] / row[_k.R_XI] * row[_k.R_DX]


@nb.njit(cache=True, inline="always", error_model="numpy")
def same_history(a, b):
    return a[_k.R_NS] == b[_k.R_NS] and a[_k.R_NB] == b[_k.R_NB] and a[_k.R_NC] == b[_k.R_NC]


@nb.njit(cache=True, error_model="numpy")
def find_brackets(rec, thetas, depths, out):
    """Write candidates (range index, depth index, ray lo, ray hi, kind, ray used) into ``out``.

    Returns the number of candidates; when ``out`` is too small, only counts.
    """
    n_rays = rec.shape[0]
    n_ranges = rec.shape[1]
    n_depths = depths.shape[0]
    cap = out.shape[0]
    n = 0
    for j in range(n_ranges):
        for i in range(n_rays - 1):
            a = rec[i, j]
            b = rec[i + 1, j]
            ok_a = not np.isnan(a[_k.R_Z])
            ok_b = not np.isnan(b[_k.R_Z])
            if not (ok_a or ok_b):
                continue
            if ok_a and ok_b and same_history(a, b):
                za = a[_k.R_Z]
                zb = b[_k.R_Z]
                for k in range(n_depths):
                    fa = za - depths[k]
                    fb = zb - depths[k]
                    if fa * fb <= 0.0 and not (fa == 0.0 and fb == 0.0):
                        if n < cap:
                            out[n, C_RANGE] = j
                            out[n, C_DEPTH] = k
                            out[n, C_LO] = i
                            out[n, C_HI] = i + 1
                            out[n, C_KIND] = KIND_STRADDLE
                            out[n, C_FROM] = i if abs(fa) <= abs(fb) else i + 1
                        n += 1
                continue
            # different histories (or one missing): extrapolate each valid side into the gap
            span = thetas[i + 1] - thetas[i]
            for side in range(2):
                row = a if side == 0 else b
                if np.isnan(row[_k.R_Z]):
                    continue
                d = dz_dtheta(row)
                if d == 0.0 or np.isnan(d):
                    continue
                for k in range(n_depths):
                    step = (depths[k] - row[_k.R_Z]) / d
                    # the branch may bend before it ends: look a few gap widths past the prediction
                    inside = (0.0 < step < EDGE_REACH * span) if side == 0 else (-EDGE_REACH * span < step < 0.0)
                    if inside:
                        if n < cap:
                            out[n, C_RANGE] = j
                            out[n, C_DEPTH] = k
                            out[n, C_LO] = i
                            out[n, C_HI] = i + 1
                            out[n, C_KIND] = KIND_EDGE_UP if side == 0 else KIND_EDGE_DOWN
                            out[n, C_FROM] = i if side == 0 else i + 1
                        n += 1
    return n


@nb.njit(cache=True, error_model="numpy")
def refine_one(theta_a, f_a, theta_b, kind, row0, zr, r_target, zs, knots, coef, bed_r, bed_z, bed_slope, bt_step,
               bt_re, bt_im, ab_dz, ab_db, ds, max_steps, floor_mag, tol, rec_out, bins):
    """Refine one eigenray; returns (converged, theta, iterations). ``rec_out`` is (1, N_RECORD).

    ``theta_a`` is a ray of the wanted history with depth miss ``f_a`` (``row0`` its record);
    ``theta_b`` the other end of the bracket: a ray of the same history with the opposite miss
    (straddle) or a ray of another history (edge). Every shot of the wanted history with the
    sign of ``f_a`` moves the ``a`` end, one with the other sign or another history moves ``b``;
    Newton steps with dz/dtheta0 are taken when they stay inside the bracket, bisection otherwise.
    """
    rec_r = np.empty(1)
    rec_r[0] = r_target
    nop = np.empty(0)
    ns = row0[_k.R_NS]
    nb_ = row0[_k.R_NB]
    nc = row0[_k.R_NC]
    a = theta_a
    b = theta_b
    s_a = 1.0 if f_a > 0.0 else -1.0
    limit = MAX_ITERATIONS if kind == KIND_STRADDLE else EDGE_ITERATIONS
    theta = theta_a + (zr - row0[_k.R_Z]) / dz_dtheta(row0)
    for it in range(limit):
        if not (min(a, b) < theta < max(a, b)):
            theta = 0.5 * (a + b)
        for m in range(bins.shape[0]):
            bins[m] = 0.0
        rec_out[0, _k.R_Z] = np.nan
        _k.trace_ray(theta, zs, knots, coef, bed_r, bed_z, bed_slope, bt_step, bt_re, bt_im, ab_dz, ab_db, ds,
                     r_target, max_steps, floor_mag, rec_r, rec_out, nop, nop, nop, nop, bins)
        row = rec_out[0]
        if np.isnan(row[_k.R_Z]) or row[_k.R_NS] != ns or row[_k.R_NB] != nb_ or row[_k.R_NC] != nc:
            b = theta
            theta = 0.5 * (a + b)
            if abs(b - a) < 1e-13:
                return False, theta, it + 1
            continue
        f = row[_k.R_Z] - zr
        if abs(f) < tol:
            return True, theta, it + 1
        if (f > 0.0) == (s_a > 0.0):
            a = theta
        else:
            b = theta
        if abs(b - a) < 1e-13:
            return False, theta, it + 1
        d = dz_dtheta(row)
        theta = theta - f / d if d != 0.0 else 0.5 * (a + b)
    return False, theta, limit


@nb.njit(cache=True, parallel=True, error_model="numpy")
def refine_all(cand, thetas, rec, depths, ranges, zs, knots, coef, bed_r, bed_z, bed_slope, bt_step, bt_re,
               bt_im, ab_dz, ab_db, ds, max_steps, floor_mag, tol, out_rec, out_bins, out_theta, out_ok):
    """Refine every candidate in parallel; results in ``out_*`` (one row per candidate)."""
    n = cand.shape[0]
    for c in nb.prange(n):
        j = int(cand[c, C_RANGE])
        k = int(cand[c, C_DEPTH])
        i_lo = int(cand[c, C_LO])
        i_hi = int(cand[c, C_HI])
        kind = int(cand[c, C_KIND])
        i0 = int(cand[c, C_FROM])
        i1 = i_hi if i0 == i_lo else i_lo
        row0 = rec[i0, j]
        zr = depths[k]
        ok, th, _ = refine_one(thetas[i0], row0[_k.R_Z] - zr, thetas[i1], kind, row0, zr, ranges[j], zs, knots, coef,
                               bed_r, bed_z, bed_slope, bt_step, bt_re, bt_im, ab_dz, ab_db, ds, max_steps,
                               floor_mag, tol, out_rec[c:c + 1], out_bins[c])
        out_theta[c] = th
        out_ok[c] = ok
