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

Beams near a boundary. A beam whose Gaussian reaches past the sea surface or the seabed loses the
part beyond it, and the reflected part that should fold back into the water is missing (2-4.5 dB
within about three beam widths of a boundary). Each such beam therefore also contributes its
*image*: the same beam mirrored about the boundary plane (depth -z about the surface, 2D - z about
a seabed at depth D; the vertical direction reversed) with its coefficient multiplied by the
boundary's reflection coefficient, or divided by it when the ray has just left that boundary (its
image is then its own state before the bounce). This is the method of images applied beam by beam
(Jensen et al. 2011, ch. 2, the image construction of a point source at a plane boundary; from memory):
unfolding the fan about a plane boundary in a layer of constant speed, the real beams plus their
images are exactly the unfolded beam sum, so the folded-back part of every straddling beam is
restored. The caller computes the image coefficients (``img_s``, ``img_b``; 0 where no image is
needed) and the seabed depth of every column.
"""

import math

import numba as nb
import numpy as np

#: Beams are summed out to this many widths from their ray.
BEAM_REACH = 5.0


@nb.njit(cache=True, inline="always", error_model="numpy")
def _add_beam(j, zc, st, ct, ci, tau, curv, w, b_coh, b_inc, fr, fi, depths, k0, k1, omega,
              out_re, out_im, out_inc):
    """Add one beam centred at depth ``zc`` (direction sine ``st``) to depths[k0:k1] of column j."""
    f2 = fr * fr + fi * fi
    for k in range(k0, k1):
        d = depths[k] - zc
        nrm = d * ct
        g = math.exp(-0.5 * (nrm / w) ** 2)
        t = tau + d * st / ci + 0.5 * curv * nrm * nrm
        ph = -omega * t
        cr = math.cos(ph)
        cim = math.sin(ph)
        a = b_coh * g
        out_re[j, k] += a * (fr * cr - fi * cim)
        out_im[j, k] += a * (fr * cim + fi * cr)
        out_inc[j, k] += b_inc * f2 * g * g


@nb.njit(cache=True, inline="always", error_model="numpy")
def _column(j, z, c, cos_t, sin_t, tau, q, p, fac_re, fac_im, img_s_re, img_s_im, img_b_re, img_b_im,
            base, dtheta, bed_z, depths, omega, w_min, out_re, out_im, out_inc):
    """Every beam (and its boundary images) on receiver column j."""
    n_rays = z.shape[0]
    zb = bed_z[j]
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
        b_coh = math.sqrt(base[i, j] * qi) * dtheta[i] / (w * math.sqrt(2.0 * math.pi))
        b_inc = base[i, j] * dtheta[i] / (w * math.sqrt(math.pi))
        curv = p[i, j] / q[i, j] if q[i, j] != 0.0 else 0.0
        ci = c[i, j]
        st = sin_t[i, j]
        fr = fac_re[i, j]
        fi = fac_im[i, j]
        t0 = tau[i, j]
        k0 = np.searchsorted(depths, zi - reach)
        k1 = np.searchsorted(depths, zi + reach)
        if k1 > k0:
            _add_beam(j, zi, st, ct, ci, t0, curv, w, b_coh, b_inc, fr, fi, depths, k0, k1, omega,
                      out_re, out_im, out_inc)
        if zi < reach:
            # surface image at -zi, travelling the other way vertically
            sr, si = img_s_re[i, j], img_s_im[i, j]
            k1 = np.searchsorted(depths, reach - zi)
            if k1 > 0 and (sr != 0.0 or si != 0.0):
                _add_beam(j, -zi, -st, ct, ci, t0, curv, w, b_coh, b_inc, fr * sr - fi * si,
                          fr * si + fi * sr, depths, 0, k1, omega, out_re, out_im, out_inc)
        if zb - zi < reach:
            br, bi = img_b_re[i, j], img_b_im[i, j]
            zm = 2.0 * zb - zi
            k0 = np.searchsorted(depths, zm - reach)
            k1 = np.searchsorted(depths, zb, side="right")
            if k1 > k0 and (br != 0.0 or bi != 0.0):
                _add_beam(j, zm, -st, ct, ci, t0, curv, w, b_coh, b_inc, fr * br - fi * bi,
                          fr * bi + fi * br, depths, k0, k1, omega, out_re, out_im, out_inc)


@nb.njit(cache=True, parallel=True, error_model="numpy")
def beam_sum(z, c, cos_t, sin_t, tau, q, p, fac_re, fac_im, img_s_re, img_s_im, img_b_re, img_b_im, base,
             dtheta, bed_z, depths, omega, w_min, out_re, out_im, out_inc):
    """Sum every ray's beam, with its boundary images, on every receiver column.

    Ray arrays are (n_rays, n_ranges) (NaN where a ray does not reach the range); ``img_s`` and
    ``img_b`` the complex factors (real, imaginary parts) of the surface and seabed images (0 for
    none); ``base`` is c cos(theta0) / (c0 r) per ray and range; ``dtheta`` the fan spacing at each
    ray; ``bed_z`` the seabed depth of each column; ``depths`` sorted ascending. Outputs are
    (n_ranges, n_depths), accumulated. Columns run in parallel (each writes only its own row).
    """
    for j in nb.prange(z.shape[1]):
        _column(j, z, c, cos_t, sin_t, tau, q, p, fac_re, fac_im, img_s_re, img_s_im, img_b_re, img_b_im,
                base, dtheta, bed_z, depths, omega, w_min, out_re, out_im, out_inc)


@nb.njit(cache=True, error_model="numpy")
def beam_sum_serial(z, c, cos_t, sin_t, tau, q, p, fac_re, fac_im, img_s_re, img_s_im, img_b_re, img_b_im,
                    base, dtheta, bed_z, depths, omega, w_min, out_re, out_im, out_inc):
    """Serial twin of :func:`beam_sum` (same arguments), for tests and one-column grids."""
    for j in range(z.shape[1]):
        _column(j, z, c, cos_t, sin_t, tau, q, p, fac_re, fac_im, img_s_re, img_s_im, img_b_re, img_b_im,
                base, dtheta, bed_z, depths, omega, w_min, out_re, out_im, out_inc)
