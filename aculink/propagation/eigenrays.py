"""Eigenrays: every significant path from the source to each receiver, as an xarray Dataset.

How it works (kernels in :mod:`aculink.propagation._kernels_eigen`):

1. **Fan.** One fan of rays (default :func:`search_angles_deg`: launch angles from -89 to 89 deg,
   spaced for a reference range that depends only on the site and the octave of the longest range
   asked for, so a receiver's answer does not depend on the other receivers in the call) is traced
   once for all receivers; each ray records its state where it crosses every receiver range.
   Where adjacent rays reach a range with histories two or more bounces apart, or one branch's ray
   tube is wider than :data:`TUBE_WIDTH_FRACTION` of the water depth, rays are added between them
   (:func:`_refine_fan`).
2. **Candidates** (:func:`_candidates`). Every ray carries a Gaussian beam of its own ray tube's width
   (floored near caustics at :func:`beam_floor_m`); the rays whose beams reach a receiver, grouped
   into runs of adjacent rays (split where a reflection flips the vertical slowness), are its arrivals. An
   arrival's amplitude is the coherent beam sum of its rays (so it stays finite at caustics and
   turning points, where the geometric amplitude sqrt(c cos(theta0) / (c0 r |q|)) diverges as q -> 0,
   and the two rays of a fold merge into one arrival); far from caustics the sum reproduces the
   geometric amplitude (Cerveny 2001, ch. 5; Jensen et al. 2011, sect. 3.4).
3. **Prune** (:func:`_prune`). Arrivals predicted more than the dynamic range plus
   :data:`PRUNE_MARGIN_DB` below the strongest at their receiver are dropped (and counted).
4. **Refine** (:func:`_refine`). An arrival's eigenray comes from the fan without re-shooting: two
   adjacent rays of one branch bracket the receiver depth; the delay is moved from the nearer ray to
   the receiver depth at the receiver range to second order in the miss dz, tau = t + zeta dz +
   (1/2) (d zeta/dz) dz^2, with d zeta/dz at fixed range from the dynamic-ray derivatives (the
   wavefront's curvature), so the residual is third order; the launch angle is the Newton step
   theta + dz / (dz/dtheta0), the arrival slowness zeta + (d zeta/dz) dz, and path length, surface
   grazing sum and absorption are interpolated between the two rays. Where the Newton predictions
   from the two rays disagree by more than ``tolerance_m`` of depth, the eigenray is re-shot
   (Newton on the launch angle, safeguarded by bisection) instead. Arrivals without a bracket
   (beside a caustic, on its shadow side) take the beam-weighted delay and the strongest ray's
   angles.
5. **Merge** (:func:`_merge`). The beam sum, the Eckart surface factor and the absorption make each
   arrival's amplitude; arrivals more than ``dynamic_range_db`` below the strongest at every requested
   frequency are dropped and counted. :func:`_pack` pads and sorts them by delay.

Amplitudes are complex pressures relative to 1 m from the source, in aculink's exp(+j omega t)
convention, with everything included::

    A(f) = B(f) x prod R_surface(f) x 10^(-a(f)/20)

B(f) is the beam sum of the arrival's rays, sum_i g_i prod R_bottom,i exp(+j pi/2 n_caustics,i)
exp(-j omega (T_i - tau)) with g_i the ray's Gaussian weight at the receiver (geometric spreading
included); R_bottom is the Rayleigh coefficient at each bounce's grazing angle; R_surface(f) the
Eckart coherent coefficient, whose product over the bounces is (-1)^n exp(-2 k^2 sigma^2 sum
sin^2 theta_i) (``surface_grazing_sin2_sum`` lets later stages recompute it across the band); a(f)
is the Francois-Garrison absorption integrated along the path (accumulated by the kernel at every
requested frequency).

References
----------
F. B. Jensen, W. A. Kuperman, M. B. Porter and H. Schmidt, Computational Ocean Acoustics, 2nd ed.
(Springer, 2011), ch. 3 (eigenrays, ray amplitude, caustic phase, Gaussian beams).
V. Cerveny, Seismic Ray Theory (Cambridge University Press, 2001), ch. 5 (Gaussian beam summation).
Yu. A. Kravtsov and Yu. I. Orlov, Caustics, Catastrophes and Wave Fields (Springer, 1993), ch. 2
(the width of a fold caustic's Airy zone, of order (lambda^2 L)^(1/3), the floor not chosen).
C. Eckart, J. Acoust. Soc. Am. 25, 566-570 (1953) (coherent surface reflection).
R. E. Francois and G. R. Garrison, J. Acoust. Soc. Am. 72(3), 896-907 and 72(6), 1879-1890 (1982).
"""

from __future__ import annotations

import math

import numpy as np

from aculink.errors import AculinkError, check_range
from aculink.propagation import _kernels as _k
from aculink.propagation import _kernels_eigen as _ke
from aculink.propagation.rays import check_angles, check_source_depth, prepare_medium, run_fan, step_budget

#: Arrivals predicted this far below the dynamic range are not refined, dB.
PRUNE_MARGIN_DB = 10.0
#: Fan of :func:`default_angles_deg` (the beam-TL fan): widest launch angle, deg.
FAN_HALF_WIDTH_DEG = 80.0
#: Eigenray search fan: widest launch angle, deg (steep image paths over hard seabeds at short range
#: are within the dynamic range up to about 87 deg; the step budget grows as 1 / cos).
SEARCH_HALF_WIDTH_DEG = 89.0
#: Coarsest and finest fan spacing, deg.
FAN_MAX_SPACING_DEG = 0.1
FAN_MIN_SPACING_DEG = 0.01
#: The search fan's spacing is chosen for this range, or the next octave of it above the longest
#: range asked for, m.
REFERENCE_RANGE_M = 10000.0
#: Fan refinement: rays added per suspicious gap, and rounds (each round at most halves a spacing).
GAP_RAYS = 3
GAP_ROUNDS = 5
#: Widest ray tube (fraction of the shallowest water depth) before the fan is refined.
TUBE_WIDTH_FRACTION = 1.0 / 16.0
#: Refinement modes: interpolate from the fan and re-shoot only wide brackets, or re-shoot all.
REFINE_MODES = ("auto", "reshoot")


def default_angles_deg(site, max_range_m):
    """A fan fine enough for several rays per bounce branch at ``max_range_m`` (+-80 deg)."""
    branch = math.degrees(float(np.min(site.seabed.depth_m)) / max_range_m)
    spacing = min(FAN_MAX_SPACING_DEG, 0.25 * branch)
    n = int(math.ceil(2.0 * FAN_HALF_WIDTH_DEG / spacing)) + 1
    return np.linspace(-FAN_HALF_WIDTH_DEG, FAN_HALF_WIDTH_DEG, n)


def reference_range_m(max_range_m):
    """:data:`REFERENCE_RANGE_M`, doubled until it covers ``max_range_m``."""
    octaves = max(0, math.ceil(math.log2(max_range_m / REFERENCE_RANGE_M) - 1e-12))
    return REFERENCE_RANGE_M * 2.0 ** octaves


def search_angles_deg(site, max_range_m):
    """The eigenray fan: +-:data:`SEARCH_HALF_WIDTH_DEG`, four rays per bounce branch at the
    reference range (:func:`reference_range_m`), so it is the same for every call up to that range."""
    branch = math.degrees(float(np.min(site.seabed.depth_m)) / reference_range_m(max_range_m))
    spacing = min(FAN_MAX_SPACING_DEG, max(FAN_MIN_SPACING_DEG, 0.25 * branch))
    n = int(math.ceil(2.0 * SEARCH_HALF_WIDTH_DEG / spacing)) + 1
    return np.linspace(-SEARCH_HALF_WIDTH_DEG, SEARCH_HALF_WIDTH_DEG, n)


def beam_floor_m(wavelength_m, path_m, q_m=None):
    """Narrowest beam width (normal to the ray), m: one wavelength, at every path length.

    Near a caustic the ray tubes shrink to nothing; a beam kept a wavelength wide keeps the caustic's
    field finite. Wider floors (the Airy-zone width of a fold, (lambda^2 L)^(1/3); Kravtsov and Orlov
    1993, ch. 2) smooth caustics more but truncate beams near the surface and the seabed: against a
    normal-mode reference they lost 1.5-5 dB of incoherent intensity near the boundaries, the
    wavelength floor 0.0-0.5 dB (median, isovelocity and refracting shallow water, 3-12 kHz).
    """
    return np.maximum(wavelength_m, 0.0 * np.asarray(path_m, dtype=float))


def _history(rec):
    """(surface bounces, seabed bounces, caustics) of every record as floats, -1 where absent."""
    return tuple(np.where(np.isnan(rec[..., col]), -1.0, rec[..., col]) for col in (_k.R_NS, _k.R_NB, _k.R_NC))


def _check_receivers(site, ranges_m, depths_m):
    bed = site.seabed
    r = np.atleast_1d(np.asarray(site.receiver.range_m if ranges_m is None else ranges_m, dtype=float)).ravel()
    z = np.atleast_1d(np.asarray(site.receiver.depth_m if depths_m is None else depths_m, dtype=float)).ravel()
    if r.size == 0 or z.size == 0:
        raise AculinkError("ranges_m and depths_m need at least one value each")
    for v in r:
        check_range("range_m", v, 0.0, bed.max_range_m, low_open=True, unit="m")
    for v in z:
        check_range("depth_m", v, 0.0, None, low_open=True, unit="m")
    if np.unique(r).size != r.size:
        raise AculinkError("ranges_m has repeated values: give each receiver range once")
    bottom = np.asarray(bed.depth_at(r), dtype=float)
    if np.max(z) > np.min(bottom):
        jj = int(np.argmin(bottom))
        raise AculinkError(f"depth_m = {np.max(z):g} m is below the seabed at range {r[jj]:g} m: allowed range is "
                           f"(0, {bottom[jj]:g}] m there")
    return r, z


def _spreading(rows, cos0, c0, r):
    """|A| = sqrt(c cos(theta0) / (c0 r |q|)) from crossing records (Jensen et al. 2011, sect. 3.3)."""
    c = rows[..., _k.R_C]
    cos_t = rows[..., _k.R_XI] * c
    q = cos_t * (rows[..., _k.R_DZ] - rows[..., _k.R_ZETA] / rows[..., _k.R_XI] * rows[..., _k.R_DX])
    with np.errstate(divide="ignore"):
        return np.sqrt(c * cos0 / (c0 * r * np.abs(q)))


def _surface_factor(site, sin2, n_surface, freq_hz, c_surface):
    """Product of Eckart coefficients over the surface bounces, shape (..., F)."""
    from aculink.site.surface import surface_coherent_reflection

    sigma = site.surface.rms_height_m
    mag = np.abs(surface_coherent_reflection(np.full(np.shape(sin2) + (len(freq_hz),), 0.5 * np.pi),
                                             np.asarray(freq_hz)[None, :] + np.zeros(np.shape(sin2) + (1,)),
                                             sigma * np.sqrt(np.asarray(sin2))[..., None], c_surface))
    return np.where((n_surface % 2 == 1)[..., None], -mag, mag)


def _refine_fan(medium, thetas, rec, info, zs, r_sorted, r_max, budget, max_width_m):
    """Add rays where the fan is too coarse for its beams.

    Two reasons to add rays between adjacent rays i, i+1 (for up to :data:`GAP_ROUNDS` rounds):

    * at some receiver range their histories differ by two or more (surface bounces + seabed bounces
      + caustics): a branch narrower than the spacing may hide between them (:data:`GAP_RAYS` rays);
    * they belong to one branch but their ray tube is wider than ``max_width_m`` at some receiver
      range (|dz/dtheta0| dtheta0): a beam that wide would straddle the waveguide's features (one ray
      in the middle).
    """
    for _ in range(GAP_ROUNDS):
        a, b = rec[:-1], rec[1:]
        both = ~np.isnan(a[..., _k.R_Z]) & ~np.isnan(b[..., _k.R_Z])
        jump = sum(np.abs(b[..., col] - a[..., col]) for col in (_k.R_NS, _k.R_NB, _k.R_NC))
        with np.errstate(invalid="ignore"):
            tube = np.maximum(np.abs(_ke_dzdt(a)), np.abs(_ke_dzdt(b))) * np.diff(thetas)[:, None]
            wide = np.any(both & (jump == 0) & (tube > max_width_m), axis=1)
        gaps = np.any(both & (jump >= 2), axis=1)
        if not (gaps.any() or wide.any()):
            break
        frac = np.arange(1, GAP_RAYS + 1) / (GAP_RAYS + 1)
        g = np.flatnonzero(gaps)
        w = np.flatnonzero(wide & ~gaps)
        new = np.concatenate([(thetas[g, None] + frac[None, :] * (thetas[g + 1] - thetas[g])[:, None]).ravel(),
                              0.5 * (thetas[w] + thetas[w + 1])])
        rec_n, info_n, _ = run_fan(medium, new, zs, r_sorted, r_max, max_steps=budget)
        order = np.argsort(np.concatenate([thetas, new]), kind="stable")
        thetas = np.concatenate([thetas, new])[order]
        rec = np.concatenate([rec, rec_n])[order]
        info = np.concatenate([info, info_n])[order]
    return np.ascontiguousarray(thetas), np.ascontiguousarray(rec), info


def _ke_dzdt(rows):
    """dz/dtheta0 at fixed range of crossing records (vectorised twin of ``_kernels_eigen.dz_dtheta``)."""
    return rows[..., _k.R_DZ] - rows[..., _k.R_ZETA] / rows[..., _k.R_XI] * rows[..., _k.R_DX]


def _ray_arrays(site, rec, thetas, r_sorted, c0, wavelength_m):
    """Per ray and range: the arrays :func:`aculink.propagation._kernels_eigen.cluster_arrivals` reads.

    Returns a dict with ``z``, ``t``, ``zeta``, ``kappa`` (d zeta/dz at fixed range), ``wz`` (vertical
    beam width), ``amp`` (beam amplitude factor), ``fac_re``, ``fac_im`` (seabed product times caustic
    phase), ``ns``, ``nb``, ``nc``, ``dzdt`` (dz/dtheta0).
    """
    z = rec[..., _k.R_Z]
    ok = np.isfinite(z)
    c = rec[..., _k.R_C]
    xi = rec[..., _k.R_XI]
    zeta = rec[..., _k.R_ZETA]
    cz = np.zeros(z.shape)
    cz[ok] = site.water.profile.evaluate(z[ok])[1]
    with np.errstate(divide="ignore", invalid="ignore"):
        dzdt = _ke_dzdt(rec)
        dzeta = rec[..., _k.R_DZETA] + cz * rec[..., _k.R_DX] / (c ** 3 * xi)
        kappa = np.where(np.abs(dzdt) > 1e-12, dzeta / dzdt, 0.0)
        cos_t = np.abs(c * xi)
        dtheta = np.abs(np.gradient(thetas))[:, None]
        amp = dtheta * np.sqrt(c * np.cos(thetas)[:, None] * np.abs(dzdt) / (c0 * r_sorted[None, :] * cos_t))
        wz = np.maximum(np.abs(dzdt) * dtheta, beam_floor_m(wavelength_m, rec[..., _k.R_S], cos_t * np.abs(dzdt)) / cos_t)
    ns, nb, nc = _history(rec)
    fac = (rec[..., _k.R_BRE] + 1j * rec[..., _k.R_BIM]) * np.exp(0.5j * np.pi * nc)
    arrays = dict(z=z, t=rec[..., _k.R_T], zeta=zeta, kappa=kappa, wz=wz, amp=amp, fac_re=fac.real,
                  fac_im=fac.imag, ns=ns, nb=nb, nc=nc)
    out = {key: np.ascontiguousarray(np.where(ok, v, np.nan if key == "z" else 0.0), dtype=float)
           for key, v in arrays.items()}
    out["dzdt"] = dzdt
    return out


def _candidates(arrays, depths, freqs):
    """Arrivals of every receiver from the fan (beam clusters).

    Returns ``(ints (n, N_CLUSTER_INT), delay (n,), beam (n, F) complex)``.
    """
    names = ("z", "t", "zeta", "kappa", "wz", "amp", "fac_re", "fac_im", "ns", "nb", "nc")
    args = [arrays[n] for n in names]
    depths = np.ascontiguousarray(depths, dtype=float)
    omegas = 2.0 * np.pi * np.asarray(freqs, dtype=float)
    n_r, n_z, n_f = arrays["z"].shape[1], depths.size, omegas.size
    counts = np.zeros((n_r, n_z), dtype=np.int64)
    offsets = np.zeros((n_r, n_z), dtype=np.int64)
    ints = np.zeros((0, _ke.N_CLUSTER_INT), dtype=np.int64)
    delay, re, im = np.zeros(0), np.zeros((0, n_f)), np.zeros((0, n_f))
    _ke.cluster_arrivals(*args, depths, omegas, counts, offsets, False, ints, delay, re, im)
    total = int(counts.sum())
    offsets = (np.cumsum(counts.ravel()) - counts.ravel()).reshape(counts.shape)
    ints = np.zeros((total, _ke.N_CLUSTER_INT), dtype=np.int64)
    delay, re, im = np.zeros(total), np.zeros((total, n_f)), np.zeros((total, n_f))
    _ke.cluster_arrivals(*args, depths, omegas, counts, offsets, True, ints, delay, re, im)
    return ints, delay, re + 1j * im


def _absorption_db(rows, n_freq):
    """Absorption (dB) at each medium frequency from crossing records, shape (..., F)."""
    return np.stack([rows[..., _k.abs_column(m)] for m in range(n_freq)], axis=-1)


def _prune(ints, predicted, dyn, shape):
    """Keep arrivals within the dynamic range plus :data:`PRUNE_MARGIN_DB` of the strongest at their
    receiver, by their predicted amplitudes (n, F) (the beam sum with the strongest ray's surface and
    absorption factors); returns (keep mask, pruned counts per receiver)."""
    jj, kk = ints[:, _ke.Q_RANGE], ints[:, _ke.Q_DEPTH]
    with np.errstate(divide="ignore"):
        peak = 20.0 * np.log10(np.abs(predicted)).max(axis=1) if predicted.size else np.zeros(0)
    best = np.full(shape, -np.inf)
    np.maximum.at(best, (jj, kk), peak)
    keep = peak >= best[jj, kk] - dyn - PRUNE_MARGIN_DB
    pruned = np.zeros(shape, dtype=int)
    np.add.at(pruned, (jj[~keep], kk[~keep]), 1)
    return keep, pruned


def _interpolate_eigenrays(rec, thetas, arrays, ints, depths, n_freq):
    """Eigenray values of bracketed arrivals from their two bracketing rays (no re-shooting).

    Returns a dict of arrays (one entry per arrival): ``theta`` (launch angle, rad), ``zeta``, ``xi``,
    ``path``, ``sin2``, ``absorption`` (n, F), ``nc``, and ``miss`` (the depth disagreement of the
    Newton predictions from the two rays, m: the interpolation's error estimate).
    """
    jj = ints[:, _ke.Q_RANGE]
    lo = ints[:, _ke.Q_BRACKET]
    hi = lo + 1
    zr = depths[ints[:, _ke.Q_DEPTH]]
    z_lo, z_hi = arrays["z"][lo, jj], arrays["z"][hi, jj]
    near = np.where(np.abs(zr - z_hi) <= np.abs(zr - z_lo), hi, lo)
    far = np.where(near == hi, lo, hi)
    d = zr - arrays["z"][near, jj]
    zp_near, zp_far = arrays["dzdt"][near, jj], arrays["dzdt"][far, jj]
    theta = thetas[near] + d / zp_near
    theta_far = thetas[far] + (zr - arrays["z"][far, jj]) / zp_far
    # interpolate in launch angle (the fan's own parameter) at the Newton-predicted eigenray
    u = np.clip((theta - thetas[lo]) / (thetas[hi] - thetas[lo]), 0.0, 1.0)
    a, b = rec[lo, jj], rec[hi, jj]

    def lerp(col):
        return a[:, col] + u * (b[:, col] - a[:, col])

    absorption = _absorption_db(a, n_freq) + u[:, None] * (_absorption_db(b, n_freq) - _absorption_db(a, n_freq))
    return dict(theta=theta, zeta=arrays["zeta"][near, jj] + arrays["kappa"][near, jj] * d, xi=lerp(_k.R_XI),
                path=lerp(_k.R_S), sin2=lerp(_k.R_SIN2), absorption=absorption, nc=arrays["nc"][near, jj],
                miss=np.abs(zp_near) * np.abs(theta - theta_far), near=near, far=far)


def _reshoot(medium, zs, rec, thetas, near, far, jj, zr, r_sorted, budget, tol):
    """Re-shoot the eigenrays of the given brackets; returns (records, launch angles, converged)."""
    rows0 = np.ascontiguousarray(rec[near, jj])
    m = near.size
    out_rec = np.full((m, rec.shape[2]), np.nan)
    out_theta = np.zeros(m)
    out_ok = np.zeros(m, dtype=np.bool_)
    _ke.refine_all(np.ascontiguousarray(thetas[near]), np.ascontiguousarray(rows0[:, _k.R_Z] - zr),
                   np.ascontiguousarray(thetas[far]), rows0, np.ascontiguousarray(zr, dtype=float),
                   np.ascontiguousarray(r_sorted[jj]), float(zs), medium.kernel(), int(budget), float(tol),
                   out_rec, out_theta, out_ok)
    return out_rec, out_theta, out_ok


def _refine(site, medium, zs, rec, thetas, arrays, ints, delay, depths, r_sorted, budget, tol, mode):
    """Eigenray values (launch angle, arrival slowness, path, grazing sum, absorption, caustics, delay)
    of every arrival: interpolated from its bracket, re-shot where the bracket is too wide (or always
    with ``mode="reshoot"``), or those of its strongest ray where it has no bracket."""
    n_f = medium.n_freq
    jj = ints[:, _ke.Q_RANGE]
    p = ints[:, _ke.Q_PRINCIPAL]
    prow = rec[p, jj]
    out = dict(theta=thetas[p].copy(), zeta=prow[:, _k.R_ZETA].copy(), xi=prow[:, _k.R_XI].copy(),
               path=prow[:, _k.R_S].copy(), sin2=prow[:, _k.R_SIN2].copy(), absorption=_absorption_db(prow, n_f),
               nc=arrays["nc"][p, jj].copy(), delay=delay.copy())
    br = np.flatnonzero(ints[:, _ke.Q_BRACKET] >= 0)
    if br.size == 0:
        return out
    got = _interpolate_eigenrays(rec, thetas, arrays, ints[br], depths, n_f)
    for key in ("theta", "zeta", "xi", "path", "sin2", "absorption", "nc"):
        out[key][br] = got[key]
    wide = (got["miss"] > tol) if mode == "auto" else np.ones(br.size, dtype=bool)
    if wide.any():
        sel = br[wide]
        zr = depths[ints[sel, _ke.Q_DEPTH]]
        rows, th, ok = _reshoot(medium, zs, rec, thetas, got["near"][wide], got["far"][wide], jj[sel], zr, r_sorted,
                                budget, tol)
        sel, rows, th, zr = sel[ok], rows[ok], th[ok], zr[ok]
        out["theta"][sel] = th
        out["zeta"][sel] = rows[:, _k.R_ZETA]
        out["xi"][sel] = rows[:, _k.R_XI]
        out["path"][sel] = rows[:, _k.R_S]
        out["sin2"][sel] = rows[:, _k.R_SIN2]
        out["absorption"][sel] = _absorption_db(rows, n_f)
        out["nc"][sel] = rows[:, _k.R_NC]
        single = ints[sel, _ke.Q_N_BRACKETS] == 1
        out["delay"][sel[single]] = _delay_at_receiver(site, rows[single], zr[single])
    return out


def _merge(site, medium, ints, beam, eig, freqs, dyn, shape):
    """Each arrival's amplitude (beam sum x Eckart surface factor x absorption) and the mask of those
    within ``dyn`` dB of the strongest at their receiver at some frequency (and the dropped counts)."""
    surface = _surface_factor(site, eig["sin2"], ints[:, _ke.Q_NS], freqs, medium.surface_speed_mps)
    amp = beam * surface * 10.0 ** (-eig["absorption"] / 20.0)
    with np.errstate(divide="ignore"):
        level = 20.0 * np.log10(np.abs(amp))
    jj, kk = ints[:, _ke.Q_RANGE], ints[:, _ke.Q_DEPTH]
    top = np.full(shape + (freqs.size,), -np.inf)
    np.maximum.at(top, (jj, kk), level)
    strong = np.any(level >= top[jj, kk] - dyn, axis=1)
    dropped = np.zeros(shape, dtype=int)
    np.add.at(dropped, (jj[~strong], kk[~strong]), 1)
    return amp, strong, dropped



def find_arrivals(site, ranges_m=None, depths_m=None, freq_hz=None, *, source_depth_m=None, angles_deg=None,
                  dynamic_range_db=40.0, tolerance_m=0.1, bottom_reflection=None, step_m=None, refine="auto"):
    """Eigenrays from the source to every receiver on a range x depth grid.

    Parameters
    ----------
    site : Site
        The environment.
    ranges_m, depths_m : float or array_like, optional
        Receiver ranges and depths, m (default the site's receiver). Every depth must be in the water
        at every range; ranges at most the seabed's last range.
    freq_hz : float or array_like, optional
        Frequencies for the amplitudes and absorption, Hz (default the modem carrier).
    source_depth_m : float, optional
        Source depth, m (default the site's source).
    angles_deg : array_like, optional
        The search fan's launch angles, deg (default :func:`search_angles_deg`: +-89 deg, spaced for
        the site's reference range, so the same for every receiver set up to that range).
    dynamic_range_db : float
        Arrivals more than this below the strongest at the same receiver are dropped (and counted).
    tolerance_m : float
        Largest depth miss of a refined eigenray at the receiver range, m.
    bottom_reflection : callable, optional
        ``f(grazing_rad) -> complex`` seabed coefficient (default Rayleigh from the site).
    step_m : float, optional
        Arc-length step of the integrator, m.
    refine : {"auto", "reshoot"}
        ``"auto"``: eigenrays interpolated from the fan, re-shot only where a bracket is too wide for
        ``tolerance_m``; ``"reshoot"``: every bracketed eigenray re-shot (slower; the reference).

    Returns
    -------
    xarray.Dataset
        Dims ``range``, ``depth``, ``arrival`` (padded, sorted by delay) and ``frequency``:
        ``delay_s``, ``amplitude`` (complex, re 1 m), ``launch_angle_deg``, ``arrival_angle_deg``,
        ``surface_bounces``, ``bottom_bounces``, ``caustics``, ``path_length_m``,
        ``surface_grazing_sin2_sum``, ``absorption_db``, ``n_rays``, ``n_eigenrays``, ``n_arrivals``,
        ``n_dropped``. Attrs ``site``,
        ``source_depth_m``, ``dynamic_range_db`` and ``reason`` where a receiver has no arrival.

    Raises
    ------
    AculinkError
        Source or receiver outside the water, a range beyond the seabed description, bad angles,
        frequencies or tolerances, or a fan none of whose rays reaches a receiver range.

    References
    ----------
    F. B. Jensen, W. A. Kuperman, M. B. Porter and H. Schmidt, Computational Ocean Acoustics, 2nd
    ed. (Springer, 2011), ch. 3.

    Examples
    --------
    >>> arr = find_arrivals(site, 2000.0, 30.0)          # doctest: +SKIP
    >>> arr.delay_s.isel(range=0, depth=0).values        # doctest: +SKIP
    """
    import xarray as xr

    variables, coords, attrs = solve_arrivals(site, ranges_m, depths_m, freq_hz, source_depth_m=source_depth_m,
                                              angles_deg=angles_deg, dynamic_range_db=dynamic_range_db,
                                              tolerance_m=tolerance_m, bottom_reflection=bottom_reflection,
                                              step_m=step_m, refine=refine)
    return xr.Dataset(variables, coords=coords, attrs=attrs)



def solve_arrivals(site, ranges_m=None, depths_m=None, freq_hz=None, *, source_depth_m=None, angles_deg=None,
                   dynamic_range_db=40.0, tolerance_m=0.1, bottom_reflection=None, step_m=None, refine="auto"):
    """The work of :func:`find_arrivals`, returned as plain ``(variables, coords, attrs)``.

    ``variables`` and ``coords`` map names to ``(dims, numpy array, attrs)``; the command line reads
    them directly, which keeps xarray (and the modules it pulls in) out of its start-up time.
    """
    zs = check_source_depth(site, source_depth_m)
    ranges, depths = _check_receivers(site, ranges_m, depths_m)
    freqs = np.atleast_1d(np.asarray(site.modem.carrier_hz if freq_hz is None else freq_hz, dtype=float)).ravel()
    for f in freqs:
        check_range("freq_hz", f, 0.0, 1.0e6, low_open=True, unit="Hz")
    dyn = check_range("dynamic_range_db", dynamic_range_db, 0.0, 300.0, unit="dB")
    tol = check_range("tolerance_m", tolerance_m, 0.0, 10.0, low_open=True, unit="m")
    if refine not in REFINE_MODES:
        raise AculinkError(f"refine = {refine!r}: allowed values are {', '.join(REFINE_MODES)}")
    order = np.argsort(ranges)
    r_sorted = ranges[order]
    r_max = float(r_sorted[-1])
    angles = check_angles(search_angles_deg(site, r_max) if angles_deg is None else angles_deg)
    if angles.size < 2:
        raise AculinkError("angles_deg needs at least 2 launch angles to bracket eigenrays")
    medium = prepare_medium(site, freqs, bottom_reflection=bottom_reflection, step_m=step_m)
    thetas = np.radians(angles)
    budget = step_budget(r_max, medium.step_m, float(np.max(np.abs(angles))))
    rec, info, _ = run_fan(medium, thetas, zs, r_sorted, r_max, max_steps=budget)
    thetas, rec, info = _refine_fan(medium, thetas, rec, info, zs, r_sorted, r_max, budget,
                                    TUBE_WIDTH_FRACTION * float(np.min(site.seabed.depth_m)))
    reasons = _unreached(rec, info, r_sorted, angles)
    shape = (ranges.size, depths.size)

    c0 = float(site.water.profile.speed(zs))
    wavelength = c0 / float(freqs.min())
    arrays = _ray_arrays(site, rec, thetas, r_sorted, c0, wavelength)
    ints, delay, beam = _candidates(arrays, depths, freqs)
    p = ints[:, _ke.Q_PRINCIPAL]
    prow = rec[p, ints[:, _ke.Q_RANGE]]
    guess = _surface_factor(site, prow[:, _k.R_SIN2], ints[:, _ke.Q_NS], freqs, medium.surface_speed_mps)
    keep, pruned = _prune(ints, np.abs(beam * guess) * 10.0 ** (-_absorption_db(prow, medium.n_freq) / 20.0),
                          dyn, shape)
    ints, delay, beam = ints[keep], delay[keep], beam[keep]
    eig = _refine(site, medium, zs, rec, thetas, arrays, ints, delay, depths, r_sorted, budget, tol, refine)
    amp, strong, dropped = _merge(site, medium, ints, beam, eig, freqs, dyn, shape)
    sel = {key: v[strong] for key, v in eig.items()}
    return _pack(site, ranges, depths, freqs, order, ints[strong], amp[strong], sel, pruned + dropped, reasons,
                 zs, dyn, tol)


def _unreached(rec, info, r_sorted, angles):
    """Why receiver ranges no ray reached are empty; raises when the fan itself falls short."""
    reasons = {}
    reached = ~np.isnan(rec[:, :, _k.R_Z])
    for j in np.flatnonzero(~reached.any(axis=0)):
        short = info[:, _k.I_END] != _k.END_WEAK
        if np.any(short & (info[:, _k.I_X_END] < r_sorted[j])):
            raise AculinkError(
                f"angles_deg = [{angles[0]:g}, {angles[-1]:g}] deg: no ray of the fan reaches range "
                f"{r_sorted[j]:g} m (furthest {info[:, _k.I_X_END].max():g} m); widen or move the fan")
        reasons[j] = "every ray fell below the amplitude floor before this range"
    return reasons


def _pack(site, ranges, depths, freqs, order, ints, amp, eig, n_dropped, reasons, zs, dyn, tol):
    """Padded (range, depth, arrival) arrays sorted by delay, in the caller's range order."""
    n_r, n_z = ranges.size, depths.size
    jj, kk = ints[:, _ke.Q_RANGE], ints[:, _ke.Q_DEPTH]
    counts = np.zeros((n_r, n_z), dtype=int)
    np.add.at(counts, (jj, kk), 1)
    n_a = max(1, int(counts.max()) if counts.size else 1)
    srt = np.lexsort((eig["delay"], kk, jj))
    jj, kk, ints, amp = jj[srt], kk[srt], ints[srt], amp[srt]
    eig = {key: v[srt] for key, v in eig.items()}
    delay = eig["delay"]
    first = np.zeros(jj.size, dtype=int)
    if jj.size:
        start = np.r_[True, (jj[1:] != jj[:-1]) | (kk[1:] != kk[:-1])]
        idx = np.arange(jj.size)
        first = idx - np.maximum.accumulate(np.where(start, idx, 0))
    shape3 = (n_r, n_z, n_a)
    inv = np.argsort(order)  # back to the caller's range order

    def fill(values, pad, dtype=float):
        out = np.full(shape3 + np.shape(values)[1:], pad, dtype=dtype)
        out[jj, kk, first] = values
        return out[inv]

    arrival_angle = np.degrees(np.arctan2(eig["zeta"], eig["xi"]))
    empty = counts == 0
    r_sorted = ranges[order]
    attrs = {"site": site.name, "source_depth_m": zs, "dynamic_range_db": dyn, "tolerance_m": tol,
             "title": "eigenray arrivals",
             "amplitude_method": "Gaussian-beam sum of the fan's rays per arrival (Cerveny 2001, ch. 5)"}
    if empty.any():
        j, k = np.argwhere(empty)[0]
        why = reasons.get(j) or (f"no eigenray within {dyn:g} dB found" if n_dropped[j, k] else
                                 "no eigenray found (the fan brackets no path to this receiver)")
        attrs["reason"] = (f"{int(empty.sum())} of {empty.size} receivers have no arrival, e.g. range "
                           f"{r_sorted[j]:g} m, depth {depths[k]:g} m: {why}")
    int_attrs = {"units": "1", "comment": "-1 marks padding"}
    dims3 = ("range", "depth", "arrival")
    dims4 = dims3 + ("frequency",)
    return (
        {
            "delay_s": (dims3, fill(delay, np.nan), {"units": "s", "long_name": "travel time from the source"}),
            "amplitude": (dims4, fill(amp, 0.0, complex), {
                "units": "1", "long_name": "complex pressure relative to 1 m from the source (exp(+j omega t))"}),
            "launch_angle_deg": (dims3, fill(np.degrees(eig["theta"]), np.nan), {
                "units": "degree", "long_name": "launch angle below the horizontal"}),
            "arrival_angle_deg": (dims3, fill(arrival_angle, np.nan), {
                "units": "degree", "long_name": "arrival angle below the horizontal, direction of travel"}),
            "surface_bounces": (dims3, fill(ints[:, _ke.Q_NS], -1, int),
                                dict(int_attrs, long_name="surface reflections")),
            "bottom_bounces": (dims3, fill(ints[:, _ke.Q_NB], -1, int),
                               dict(int_attrs, long_name="seabed reflections")),
            "caustics": (dims3, fill(eig["nc"].astype(int), -1, int),
                         dict(int_attrs, long_name="caustics passed by the arrival's eigenray (or strongest ray)")),
            "n_rays": (dims3, fill(ints[:, _ke.Q_LAST] - ints[:, _ke.Q_FIRST] + 1, 0, int), {
                "units": "1", "long_name": "fan rays whose beams make up the arrival"}),
            "n_eigenrays": (dims3, fill(ints[:, _ke.Q_N_BRACKETS], -1, int), dict(
                int_attrs, long_name="eigenrays (bracketing ray pairs) merged into the arrival; 0: beside a caustic")),
            "path_length_m": (dims3, fill(eig["path"], np.nan), {"units": "m", "long_name": "path length"}),
            "surface_grazing_sin2_sum": (dims3, fill(eig["sin2"], np.nan), {
                "units": "1", "long_name": "sum of sin^2 of the grazing angle over the surface bounces"}),
            "absorption_db": (dims4, fill(eig["absorption"], np.nan), {
                "units": "dB", "long_name": "absorption along the path (Francois-Garrison)"}),
            "n_arrivals": (("range", "depth"), counts[inv], {"units": "1", "long_name": "arrivals kept"}),
            "n_dropped": (("range", "depth"), n_dropped[inv], {
                "units": "1", "long_name": "arrivals dropped below the dynamic range"}),
        },
        {
            "range": ("range", ranges, {"units": "m", "long_name": "receiver range"}),
            "depth": ("depth", depths, {"units": "m", "long_name": "receiver depth", "positive": "down"}),
            "arrival": ("arrival", np.arange(n_a), {"long_name": "arrival index, by delay"}),
            "frequency": ("frequency", freqs, {"units": "Hz", "long_name": "frequency"}),
        },
        attrs,
    )


def _delay_at_receiver(site, rows, zr):
    """Travel time at the receiver depth from a ray that ends ``zr - z`` away at the same range.

    T(x, z) about the ray's end point: dT/dz = zeta and d2T/dz2 = d zeta/dz at fixed range, from
    the launch-angle derivatives moved from fixed arc length to fixed range with the ray equations
    dz/ds = c zeta, dzeta/ds = -c_z / c^2 (Jensen et al., Computational Ocean Acoustics, 2nd ed.
    2011, sect. 3.2). Where dz/dtheta0 vanishes (a caustic at the receiver) the first-order form
    is kept.
    """
    z, xi, zeta, c = rows[:, _k.R_Z], rows[:, _k.R_XI], rows[:, _k.R_ZETA], rows[:, _k.R_C]
    miss = zr - z
    cz = site.water.profile.evaluate(z)[1]
    dz_x = rows[:, _k.R_DZ] - zeta / xi * rows[:, _k.R_DX]
    dzeta_x = rows[:, _k.R_DZETA] + cz * rows[:, _k.R_DX] / (c ** 3 * xi)
    with np.errstate(divide="ignore", invalid="ignore"):
        curvature = np.where(np.abs(dz_x) > 1e-12, dzeta_x / dz_x, 0.0)
    return rows[:, _k.R_T] + zeta * miss + 0.5 * curvature * miss ** 2
