"""Numba kernel of the transmission-loss grid: Gaussian beams summed on receiver columns.

Every fan ray carries a Gaussian beam (Cerveny, Popov and Psencik 1982; Porter and Bucker 1987)
whose width is the ray tube's own width, W = |q| dtheta0, floored at ``w_min`` (a wavelength): the
"geometric" choice of width, which keeps the field finite at caustics (q = 0) and lets the Gaussian
tails reach into shadow zones. At a receiver at normal distance n from the ray and along-ray offset
l, the beam contributes

    coherent:   B A_r exp(-n^2 / (2 W^2)) exp(-j omega (tau + l/c + p n^2 / (2 q)))
    incoherent: B^2 |A_r|^2 exp(-n^2 / W^2) / sqrt(pi) ...

with the amplitudes normalised so that a dense fan of beams reproduces the ray amplitude
sqrt(c cos(theta0) / (c0 r |q|)) away from caustics: B_coh = sqrt(c cos(theta0) |q| / (c0 r)) dtheta0 /
(W sqrt(2 pi)) and B_inc^2 = c cos(theta0) dtheta0 / (c0 r W sqrt(pi)). A_r collects the boundary
coefficients, caustic phase and absorption of the ray (complex, computed by the caller), and
tau + p n^2 / (2 q) is the paraxial travel time off the ray (Jensen et al. 2011, sect. 3.4).
"""

import math

import numba as nb
import numpy as np

#: Beams are summed out to this many widths from their ray.
BEAM_REACH = 5.0


@nb.njit(cache=True, parallel=True, error_model="numpy")
def beam_sum(z, c, cos_t, sin_t, tau, q, p, fac_re, fac_im, base, dtheta, ranges, depths, omega, w_min,
             out_re, out_im, out_inc):
    """Sum every ray's beam on every receiver column.

    Ray arrays are (n_rays, n_ranges) (NaN where a ray does not reach the range); ``base`` is
    c cos(theta0) / (c0 r) per ray and range; ``dtheta`` the fan spacing at each ray; ``depths``
    sorted ascending. Outputs are (n_ranges, n_depths), accumulated.
    """
    n_rays = z.shape[0]
    n_r = ranges.shape[0]
    for j in nb.prange(n_r):
        for i in range(n_rays):
            zi = z[i, j]
            if np.isnan(zi):
                continue
            qi = abs(q[i, j])
            w = qi * dtheta[i]
            if w < w_min:
                w = w_min
            ct = cos_t[i, j]
            reach = BEAM_REACH * w / max(ct, 1e-6)
            k0 = np.searchsorted(depths, zi - reach)
            k1 = np.searchsorted(depths, zi + reach)
            if k1 <= k0:
                continue
            b_coh = math.sqrt(base[i, j] * qi) * dtheta[i] / (w * math.sqrt(2.0 * math.pi))
            b_inc = base[i, j] * dtheta[i] / (w * math.sqrt(math.pi))
            fr = fac_re[i, j]
            fi = fac_im[i, j]
            f2 = fr * fr + fi * fi
            curv = p[i, j] / q[i, j] if q[i, j] != 0.0 else 0.0
            ci = c[i, j]
            st = sin_t[i, j]
            for k in range(k0, k1):
                d = depths[k] - zi
                nrm = d * ct
                g = math.exp(-0.5 * (nrm / w) ** 2)
                t = tau[i, j] + d * st / ci + 0.5 * curv * nrm * nrm
                ph = -omega * t
                cr = math.cos(ph)
                cim = math.sin(ph)
                a = b_coh * g
                out_re[j, k] += a * (fr * cr - fi * cim)
                out_im[j, k] += a * (fr * cim + fi * cr)
                out_inc[j, k] += b_inc * f2 * g * g
