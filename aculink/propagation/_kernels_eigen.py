"""Numba kernels of the eigenray search: arrivals as beam sums over a fan, and re-shooting.

A fan traced once records every ray's state where it crosses each receiver range (record columns
``R_*`` of :mod:`aculink.propagation._kernels`). For each receiver (range j, depth k):

* **Arrivals from the fan** (:func:`cluster_arrivals`). Every ray carries a Gaussian beam whose
  vertical width at the receiver range is its ray tube's, W = |dz/dtheta0| dtheta0, floored at a
  caller-given width near caustics (Jensen et al. 2011, sect. 3.4, "geometric" beams; Cerveny 2001,
  ch. 5). The rays whose beams reach the receiver (within :data:`BEAM_REACH` widths) form
  *clusters*: runs of adjacent rays of the fan (not split by the caustic count before the run holds
  an eigenray, so a shadow-side arrival beside a fold is one finite arrival, nor where a turning point
  grazes a boundary and the bounce count changes with a continuous wavefront; split where a
  reflection flips the vertical slowness, and at a caustic after an eigenray, so that each arrival
  holds at most one eigenray). Each cluster is one arrival: its complex amplitude is the coherent
  beam sum of its rays at each frequency, with every ray's own travel time moved to the receiver
  depth to second order (T = t + zeta dz + (1/2) (d zeta/dz) dz^2); its delay is that of the
  eigenray it contains (adjacent rays of one branch on either side of the receiver, or a ray and its
  neighbour one reflection away when the receiver lies between the ray and that boundary), or the
  beam-weighted travel time where it has none (a shadow-side arrival beside a caustic).
* **Re-shooting** (:func:`refine_one`, :func:`refine_all`): Newton steps on the launch angle with
  the dynamic-ray derivative dz/dtheta0, kept inside the bracket (bisection when a Newton step would
  leave it), until the depth miss at the receiver range is below the tolerance. The friendly API
  uses it only where a bracket is too wide to interpolate within the tolerance; it is also the slow,
  obviously correct twin the interpolation is tested against.

References
----------
F. B. Jensen, W. A. Kuperman, M. B. Porter and H. Schmidt, Computational Ocean Acoustics, 2nd ed.
(Springer, 2011), sect. 3.3 (ray amplitudes) and 3.4 (Gaussian beams).
V. Cerveny, Seismic Ray Theory (Cambridge University Press, 2001), ch. 5 (Gaussian beam summation).
"""

import math

import numba as nb
import numpy as np

from aculink.propagation import _kernels as _k

#: Refinement shots before a candidate is given up.
MAX_ITERATIONS = 40
#: A ray's beam reaches receivers this many widths away.
BEAM_REACH = 4.0
#: Adjacent rays of different histories belong to one arrival when their vertical slownesses differ
#: by less than this fraction of the sum of their magnitudes (no reflection between them).
CONTINUITY = 0.5

#: Integer columns of a cluster (one arrival): range index, depth index, surface bounces, seabed
#: bounces, first and last ray, the ray with the largest contribution, the lower ray of the strongest
#: bracket (-1: none), the number of brackets, and 1 where the caustic count changes inside the run
#: (a caustic within the beams' reach: the geometric amplitude is not to be trusted there), and, where
#: the strongest bracket straddles a reflection (the eigenray between a ray and the boundary), the ray
#: of the arrival's own history in it (-1: an ordinary bracket).
(Q_RANGE, Q_DEPTH, Q_NS, Q_NB, Q_FIRST, Q_LAST, Q_PRINCIPAL, Q_BRACKET, Q_N_BRACKETS, Q_CAUSTIC,
 Q_BOUNDARY) = range(11)
N_CLUSTER_INT = 11

_INV_SQRT_2PI = 1.0 / math.sqrt(2.0 * math.pi)


@nb.njit(cache=True, inline="always", error_model="numpy")
def dz_dtheta(row):
    """dz/dtheta0 at fixed range from a crossing record (m/rad): the launch-angle derivative moved
    from fixed arc length to fixed range with dx/ds = c xi, dz/ds = c zeta."""
    return row[_k.R_DZ] - row[_k.R_ZETA] / row[_k.R_XI] * row[_k.R_DX]


@nb.njit(cache=True, inline="always", error_model="numpy")
def _boundary_bracket(own, other, j, zr, z, zeta, ns, nb_, nc, bed_z):
    """True where rays ``own`` and ``other`` are one reflection apart (one surface or one seabed
    bounce, the vertical slowness flipped, the same caustics) and the receiver lies between ``own``
    and that boundary: the eigenray of ``own``'s branch is between the two rays (unfolded across the
    boundary, ``other`` continues ``own``'s branch beyond it)."""
    if nc[own, j] != nc[other, j] or zeta[own, j] * zeta[other, j] >= 0.0:
        return False
    d_s = abs(ns[own, j] - ns[other, j])
    d_b = abs(nb_[own, j] - nb_[other, j])
    if d_s + d_b != 1.0:
        return False
    zb = 0.0 if d_s == 1.0 else bed_z[j]
    return (z[own, j] - zr) * (zb - zr) <= 0.0


@nb.njit(cache=True, inline="always", error_model="numpy")
def _add_bracket(wb, tn, w_br, t_br, br_best, br_lo, br_own, br_edge, lo, edge):
    """A bracket joins its run's weighted delay; the heaviest so far becomes the run's own (its
    lower ray ``lo``, which the run also takes as its label, and ``edge``, -1 for an inner one)."""
    w_br += wb
    t_br += wb * tn
    if wb > br_best:
        br_best, br_lo, br_own, br_edge = wb, lo, lo, edge
    return w_br, t_br, br_best, br_lo, br_own, br_edge


@nb.njit(cache=True, inline="always", error_model="numpy")
def _bracket_weight(near, j, zr, t, zeta, kappa, wz, amp, fac_re, fac_im, z):
    """(weight, delay) of a bracket from its nearer ray: the ray's beam power at the receiver, and its
    travel time moved to the receiver depth to second order."""
    dn = zr - z[near, j]
    tn = t[near, j] + zeta[near, j] * dn + 0.5 * kappa[near, j] * dn * dn
    a = amp[near, j] * math.exp(-0.5 * (dn / wz[near, j]) ** 2) / wz[near, j]
    return a * a * (fac_re[near, j] ** 2 + fac_im[near, j] ** 2), tn


@nb.njit(cache=True, inline="always", error_model="numpy")
def _scan(j, k, z, t, zeta, kappa, wz, amp, fac_re, fac_im, ns, nb_, nc, bed_z, zr, omegas, fill, base, out_int,
          out_delay, out_re, out_im, acc_re, acc_im):
    """Walk the fan at receiver (j, k); count its clusters, and with ``fill`` write them from row
    ``base``. Returns the number of clusters."""
    n_rays = z.shape[0]
    n_f = omegas.shape[0]
    count = 0
    in_run = False
    t_ref = 0.0
    best = -1.0
    principal = -1
    first = -1
    last = -1
    w_lin = 0.0
    t_lin = 0.0
    w_br = 0.0
    t_br = 0.0
    br_best = -1.0
    br_lo = -1
    br_own = -1
    br_edge = -1
    n_br = 0
    caustic = 0
    for i in range(n_rays + 1):
        member = False
        if i < n_rays:
            zi = z[i, j]
            if not np.isnan(zi):
                member = abs(zr - zi) <= BEAM_REACH * wz[i, j]
        flipped = False
        if in_run and member and not (ns[i, j] == ns[i - 1, j] and nb_[i, j] == nb_[i - 1, j]):
            # another history: the same branch if the wavefront is continuous across the change (a
            # turning point grazing a boundary), a new arrival if the slowness flips (a reflection)
            za = zeta[i - 1, j]
            zb = zeta[i, j]
            member_run = abs(zb - za) < CONTINUITY * (abs(za) + abs(zb))
            flipped = not member_run
        elif in_run and member and n_br > 0 and nc[i, j] != nc[i - 1, j]:
            # past a caustic after an eigenray: the other branch of the fold is another eigenray, so
            # another arrival (one eigenray per arrival keeps every delay that of a true eigenray)
            member_run = False
        else:
            member_run = True
        if flipped and _boundary_bracket(i - 1, i, j, zr, z, zeta, ns, nb_, nc, bed_z):
            # the closing run's eigenray lies between its last ray and the boundary
            n_br += 1
            if fill:
                wb, tn = _bracket_weight(i - 1, j, zr, t, zeta, kappa, wz, amp, fac_re, fac_im, z)
                w_br, t_br, br_best, br_lo, br_own, br_edge = _add_bracket(
                    wb, tn, w_br, t_br, br_best, br_lo, br_own, br_edge, i - 1, i - 1)
        if in_run and (not member or not member_run):
            # close the run: one arrival
            if fill:
                row = base + count - 1
                out_int[row, Q_RANGE] = j
                out_int[row, Q_DEPTH] = k
                label = br_own if br_own >= 0 else principal
                out_int[row, Q_NS] = int(ns[label, j])
                out_int[row, Q_NB] = int(nb_[label, j])
                out_int[row, Q_FIRST] = first
                out_int[row, Q_LAST] = last
                out_int[row, Q_PRINCIPAL] = principal
                out_int[row, Q_BRACKET] = br_lo
                out_int[row, Q_N_BRACKETS] = n_br
                out_int[row, Q_CAUSTIC] = caustic
                out_int[row, Q_BOUNDARY] = br_edge
                tau = t_br / w_br if n_br > 0 and w_br > 0.0 else (t_lin / w_lin if w_lin > 0.0 else t_ref)
                out_delay[row] = tau
                for m in range(n_f):
                    ph = omegas[m] * (tau - t_ref)
                    cr = math.cos(ph)
                    ci = math.sin(ph)
                    out_re[row, m] = acc_re[m] * cr - acc_im[m] * ci
                    out_im[row, m] = acc_re[m] * ci + acc_im[m] * cr
            in_run = False
        if not member:
            continue
        if not in_run:
            in_run = True
            count += 1
            first = i
            best = -1.0
            principal = i
            w_lin = 0.0
            t_lin = 0.0
            w_br = 0.0
            t_br = 0.0
            br_best = -1.0
            br_lo = -1
            br_own = -1
            br_edge = -1
            n_br = 0
            caustic = 0
            if fill:
                for m in range(n_f):
                    acc_re[m] = 0.0
                    acc_im[m] = 0.0
            if flipped and _boundary_bracket(i, i - 1, j, zr, z, zeta, ns, nb_, nc, bed_z):
                # the new run's eigenray lies between its first ray and the boundary
                n_br += 1
                if fill:
                    wb, tn = _bracket_weight(i, j, zr, t, zeta, kappa, wz, amp, fac_re, fac_im, z)
                    w_br += wb
                    t_br += wb * tn
                    br_best = wb
                    br_lo = i - 1
                    br_own = i
                    br_edge = i
        last = i
        if i > first and nc[i, j] != nc[i - 1, j]:
            caustic = 1
        d = zr - z[i, j]
        # a bracket: this ray and the previous one, of one branch, on either side of the receiver
        # (found in both passes: the split after an eigenray depends on it)
        bracket = False
        if i > first and nc[i - 1, j] == nc[i, j] and ns[i - 1, j] == ns[i, j] and nb_[i - 1, j] == nb_[i, j]:
            d0 = zr - z[i - 1, j]
            bracket = d0 * d <= 0.0 and not (d0 == 0.0 and d == 0.0)
        if not fill:
            if bracket:
                n_br += 1
            continue
        w = wz[i, j]
        zeta_i = zeta[i, j]
        t_full = t[i, j] + zeta_i * d + 0.5 * kappa[i, j] * d * d
        if first == i:
            t_ref = t_full
        g = amp[i, j] * math.exp(-0.5 * (d / w) ** 2) * _INV_SQRT_2PI / w
        gr = g * fac_re[i, j]
        gi = g * fac_im[i, j]
        mag2 = gr * gr + gi * gi
        if mag2 > best:
            best = mag2
            principal = i
        w_lin += mag2
        t_lin += mag2 * t_full  # second order: beam tails reach several metres
        for m in range(n_f):
            ph = -omegas[m] * (t_full - t_ref)
            cr = math.cos(ph)
            ci = math.sin(ph)
            acc_re[m] += gr * cr - gi * ci
            acc_im[m] += gr * ci + gi * cr
        if bracket:
            n_br += 1
            near = i if abs(d) <= abs(zr - z[i - 1, j]) else i - 1
            wb, tn = _bracket_weight(near, j, zr, t, zeta, kappa, wz, amp, fac_re, fac_im, z)
            w_br, t_br, br_best, br_lo, br_own, br_edge = _add_bracket(
                wb, tn, w_br, t_br, br_best, br_lo, br_own, br_edge, i - 1, -1)
    return count


@nb.njit(cache=True, parallel=True, error_model="numpy")
def cluster_arrivals(z, t, zeta, kappa, wz, amp, fac_re, fac_im, ns, nb_, nc, bed_z, depths, omegas, counts,
                     offsets, fill, out_int, out_delay, out_re, out_im):
    """Clusters (arrivals) of every receiver from a fan's per-ray arrays (rays, ranges).

    ``amp`` is the beam amplitude factor dtheta0 sqrt(c cos(theta0) |dz/dtheta0| / (c0 r cos(theta)))
    (the integral of each normalised Gaussian over depth then reproduces the geometric amplitude),

    ``fac`` the ray's complex seabed-reflection product times its caustic phase, ``kappa`` d zeta/dz at
    fixed range, ``wz`` the vertical beam width, ``bed_z`` the seabed depth at each range. With ``fill`` False, writes the cluster count of every
    receiver into ``counts`` (ranges, depths); with ``fill`` True, writes the clusters from row
    ``offsets[j, k]``: integer columns ``Q_*``, delay (s), and the amplitude's real and imaginary
    parts at each angular frequency in ``omegas``.
    """
    n_r = z.shape[1]
    n_z = depths.shape[0]
    n_f = omegas.shape[0]
    for j in nb.prange(n_r):
        acc_re = np.zeros(n_f)
        acc_im = np.zeros(n_f)
        for k in range(n_z):
            c = _scan(j, k, z, t, zeta, kappa, wz, amp, fac_re, fac_im, ns, nb_, nc, bed_z, depths[k], omegas, fill,
                      offsets[j, k], out_int, out_delay, out_re, out_im, acc_re, acc_im)
            if not fill:
                counts[j, k] = c


@nb.njit(cache=True, error_model="numpy")
def refine_one(theta_a, f_a, theta_b, row0, zr, r_target, zs, med, max_steps, tol, rec_out):
    """Refine one eigenray by re-shooting; returns (converged, theta, iterations).

    ``rec_out`` is (1, record width). ``theta_a`` is a ray of the wanted history (surface bounces,
    seabed bounces, caustics) with depth miss ``f_a`` (``row0`` its record); ``theta_b`` the other end
    of the bracket, a ray of the same history with the opposite miss. Every shot of the wanted history
    with the sign of ``f_a`` moves the ``a`` end, one with the other sign or another history moves
    ``b``; Newton steps with dz/dtheta0 are taken when they stay inside the bracket, bisection
    otherwise.
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
    theta = theta_a + (zr - row0[_k.R_Z]) / dz_dtheta(row0)
    for it in range(MAX_ITERATIONS):
        if not (min(a, b) < theta < max(a, b)):
            theta = 0.5 * (a + b)
        rec_out[0, _k.R_Z] = np.nan
        _k.trace_ray(theta, zs, med, r_target, max_steps, rec_r, rec_out, nop, nop, nop, nop)
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
    return False, theta, MAX_ITERATIONS


@nb.njit(cache=True, parallel=True, error_model="numpy")
def refine_all(theta_a, f_a, theta_b, rows0, zr, r_target, zs, med, max_steps, tol, out_rec, out_theta, out_ok):
    """:func:`refine_one` for every bracket (arrays of one entry per bracket), in parallel."""
    n = theta_a.shape[0]
    for c in nb.prange(n):
        ok, th, _ = refine_one(theta_a[c], f_a[c], theta_b[c], rows0[c], zr[c], r_target[c], zs, med, max_steps,
                               tol, out_rec[c:c + 1])
        out_theta[c] = th
        out_ok[c] = ok
