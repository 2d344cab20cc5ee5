"""Eigenrays: every significant path from the source to each receiver, as an xarray Dataset.

How it works (kernels in :mod:`aculink.propagation._kernels_eigen`):

1. **Fan** (:func:`_search_fan`). One fan of rays (default :func:`search_angles_deg`: launch angles
   from -89 to 89 deg, spaced for a reference range that depends only on the site and the octave of
   the longest range asked for) is traced once for all receivers; each ray records its state where
   it crosses every receiver range. Per receiver range, where adjacent rays reach it with histories
   two or more bounces apart, or with a ray tube wider than :data:`TUBE_WIDTH_FRACTION` of the water
   depth (within one branch or across one reflection), rays are added between them
   (:func:`_refine_fan`); an added ray joins the fan of the range that asked for it only, so a
   receiver's answer does not depend on the other receivers in the call.
2. **Candidates** (:func:`_candidates`). Every ray carries a Gaussian beam of its own ray tube's width
   (floored near caustics at :func:`beam_floor_m`); the rays whose beams reach a receiver, grouped
   into runs of adjacent rays (split where a reflection flips the vertical slowness, and at a
   caustic once the run holds an eigenray, so an arrival holds at most one eigenray), are its
   arrivals. An eigenray is bracketed by two adjacent rays of one branch on either side of the
   receiver, or by a ray and its neighbour one reflection away when the receiver lies between the
   ray and that boundary. The beam sum of a run stays finite at caustics and turning points, where
   the geometric amplitude sqrt(c cos(theta0) / (c0 r |q|)) diverges as q -> 0 (Cerveny 2001, ch. 5;
   Jensen et al. 2011, sect. 3.4).
3. **Prune** (:func:`_prune`). Arrivals whose arriving level (beam sum and absorption, with the
   surface taking only what the channel stage's surface model loses: coherent and scattered energy
   together, less what is scattered past the seabed's critical angle) is more than the
   dynamic range plus :data:`PRUNE_MARGIN_DB` below the strongest at their receiver are dropped (and
   counted); runs with neither an eigenray nor a caustic (beam tails) are removed.
4. **Refine** (:func:`_refine`). An arrival's eigenray comes from the fan without re-shooting: the
   bracket's records are interpolated quadratically in the launch angle (through a third ray of the
   same branch, :func:`_interpolate_rows`) and Newton steps on that interpolant put the eigenray on
   the receiver depth; the delay is the second-order form tau = t + zeta dz + (1/2) (d zeta/dz) dz^2
   (:func:`_delay_at_receiver`). It is re-shot instead (Newton on the launch angle, safeguarded by
   bisection) where the Newton predictions from the two bracketing rays disagree by more than
   ``tolerance_m``, where |dz/dtheta0| changes by more than :data:`TUBE_CHANGE` across the bracket,
   or where the bracket straddles a reflection. Arrivals without a bracket (beside a caustic, on its
   shadow side) take the beam-weighted delay and the strongest ray's angles.
5. **Merge** (:func:`_merge`). An arrival's amplitude is ray theory at its eigenray where no caustic
   is within the beams' reach (exact to the order of ray theory, and not truncated at the surface
   and the seabed as a beam sum is), else the beam sum; times the Eckart surface factor and the
   absorption. Arrivals whose arriving level (as for the prune) is more than ``dynamic_range_db`` below the
   strongest at every requested frequency are dropped and counted. :func:`_pack` pads and sorts them
   by delay.

Amplitudes are complex pressures relative to 1 m from the source, in aculink's exp(+j omega t)
convention, with everything included::

    A(f) = B(f) x prod R_surface(f) x 10^(-a(f)/20)

B(f) is the eigenray's ray amplitude sqrt(c cos(theta0) / (c0 r |q|)) prod R_bottom exp(+j pi/2
n_caustics), or near a caustic the beam sum of the arrival's rays, sum_i g_i prod R_bottom,i exp(+j pi/2 n_caustics,i)
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
from collections import namedtuple

import numpy as np

from aculink.errors import AculinkError, check_range
from aculink.propagation import _kernels as _k
from aculink.propagation import _kernels_eigen as _ke
from aculink.propagation.rays import check_angles, check_source_depth, prepare_medium, run_fan, step_budget

__all__ = ["PRUNE_MARGIN_DB", "FAN_HALF_WIDTH_DEG", "SEARCH_HALF_WIDTH_DEG", "FAN_MAX_SPACING_DEG",
           "FAN_MIN_SPACING_DEG", "REFERENCE_RANGE_M", "GAP_RAYS", "GAP_ROUNDS", "TUBE_WIDTH_FRACTION",
           "TUBE_CHANGE", "NEWTON_STEPS", "REFINE_MODES", "default_angles_deg", "reference_range_m",
           "search_angles_deg", "beam_floor_m", "find_arrivals", "solve_arrivals"]

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
#: Largest relative change of |dz/dtheta0| across a bracket for its eigenray to be interpolated (the
#: spreading from the quadratic then errs by well under 0.05 dB); beyond it the eigenray is re-shot.
TUBE_CHANGE = 0.05
#: Newton steps on the interpolated records of a bracket (each squares the relative depth miss).
NEWTON_STEPS = 2
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
    q = rows[..., _k.R_XI] * c * _dz_dtheta(rows)
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


def _arriving_factor(site, sin2, n_surface, freq_hz, c_surface, keep):
    """Amplitude share of a path's smooth-surface energy that reaches the receiver, coherent and
    scattered together (the channel stage's surface model, :func:`aculink.site.surface.
    surviving_energy_fraction`) with energy scattered steeper than ``keep`` (rad; None: no limit)
    lost: 1 for a path without surface bounces or on a calm sea, shape (..., F)."""
    from aculink.site.surface import path_kept_fraction, rayleigh_parameter_squared, surviving_energy_fraction

    sin2 = np.nan_to_num(np.asarray(sin2, dtype=float))
    n = np.asarray(n_surface)
    f = np.asarray(freq_hz, dtype=float)
    sigma = site.surface.rms_height_m
    if sigma <= 0 or keep is None:
        return np.ones(sin2.shape + (f.size,))
    gamma2 = rayleigh_parameter_squared(sin2, f, sigma, c_surface)
    kept = path_kept_fraction(sin2, n, site.surface.wind_speed_mps, keep)
    factor = np.sqrt(surviving_energy_fraction(gamma2, np.maximum(n, 1), kept))
    return np.where((n > 0)[..., None], factor, 1.0)


def _column_index(member):
    """Per receiver range, the indices of its rays in launch-angle order, padded with -1: (n_max, R)."""
    counts = member.sum(axis=0)
    order = np.argsort(~member, axis=0, kind="stable")[: max(1, int(counts.max()))]
    return np.where(np.arange(order.shape[0])[:, None] < counts[None, :], order, -1)


def _gather(thetas, rec, idx):
    """The fan seen per receiver range: launch angles (n_max, R) and records (n_max, R, width), NaN
    where a column is padded."""
    cols = np.arange(idx.shape[1])[None, :]
    pad = idx < 0
    th = np.where(pad, np.nan, thetas[np.maximum(idx, 0)])
    rows = rec[np.maximum(idx, 0), cols]
    rows[pad] = np.nan
    return th, rows


def _fan_requests(th, rows, max_width_m):
    """Launch angles to add, and the receiver range (column) asking for each, from one round of
    :func:`_refine_fan`'s two tests on the per-range fan ``th``, ``rows``."""
    a, b = rows[:-1], rows[1:]
    both = np.isfinite(a[..., _k.R_Z]) & np.isfinite(b[..., _k.R_Z])
    jump = sum(np.abs(b[..., col] - a[..., col]) for col in (_k.R_NS, _k.R_NB, _k.R_NC))
    spacing = th[1:] - th[:-1]
    with np.errstate(invalid="ignore"):
        tube = np.maximum(np.abs(_dz_dtheta(a)), np.abs(_dz_dtheta(b))) * spacing
        gaps = both & (jump >= 2)
        # one history apart (a reflection or a caustic between them) the wavefront is still one
        # sheet, folded at the boundary: a wide tube there hides the eigenrays near the boundary
        wide = both & (jump <= 1) & (tube > max_width_m) & ~gaps
    gi, gj = np.nonzero(gaps)
    wi, wj = np.nonzero(wide)
    frac = np.arange(1, GAP_RAYS + 1) / (GAP_RAYS + 1)
    angles = np.concatenate([(th[gi, gj, None] + frac[None, :] * spacing[gi, gj, None]).ravel(),
                             th[wi, wj] + 0.5 * spacing[wi, wj]])
    return angles, np.concatenate([np.repeat(gj, GAP_RAYS), wj])


def _refine_fan(medium, thetas, rec, info, zs, r_sorted, r_max, budget, max_width_m):
    """Add rays where the fan is too coarse for its beams, separately for every receiver range.

    Two reasons to add rays between adjacent rays i, i+1 of a range's fan (for up to
    :data:`GAP_ROUNDS` rounds):

    * their histories differ by two or more (surface bounces + seabed bounces + caustics): a branch
      narrower than the spacing may hide between them (:data:`GAP_RAYS` rays);
    * they belong to one branch, or to branches one reflection (or caustic) apart, but their ray tube
      is wider than ``max_width_m`` (|dz/dtheta0| dtheta0): a beam that wide would straddle the
      waveguide's features, and across a reflection the eigenrays between the two rays and the
      boundary would be missed (one ray in the middle).

    A ray added for one range joins that range's fan only (each ray is traced once, to every range):
    a receiver's fan, hence its answer, does not depend on the other ranges of the call.

    Returns ``(thetas, rec, info, member)``: every traced ray in launch-angle order, and ``member``
    (rays, ranges), True where the ray belongs to that range's fan.
    """
    member = np.ones(rec.shape[:2], dtype=bool)
    for _ in range(GAP_ROUNDS):
        angles, cols = _fan_requests(*_gather(thetas, rec, _column_index(member)), max_width_m)
        if angles.size == 0:
            break
        wanted = np.unique(angles)
        pos = np.minimum(np.searchsorted(thetas, wanted), thetas.size - 1)
        new = wanted[thetas[pos] != wanted]
        if new.size:
            rec_n, info_n, _ = run_fan(medium, new, zs, r_sorted, r_max, max_steps=budget)
            order = np.argsort(np.concatenate([thetas, new]), kind="stable")
            thetas = np.concatenate([thetas, new])[order]
            rec = np.concatenate([rec, rec_n])[order]
            info = np.concatenate([info, info_n])[order]
            member = np.concatenate([member, np.zeros((new.size, member.shape[1]), dtype=bool)])[order]
        member[np.searchsorted(thetas, angles), cols] = True
    return np.ascontiguousarray(thetas), np.ascontiguousarray(rec), info, member


def _ray_spacing(th):
    """Launch-angle width of each ray of a per-range fan (half the distance between its neighbours,
    the distance to the one neighbour at an end), rad; NaN where padded."""
    gap = np.abs(np.diff(th, axis=0))
    before = np.vstack([np.full((1, th.shape[1]), np.nan), gap])
    after = np.vstack([gap, np.full((1, th.shape[1]), np.nan)])
    return np.where(np.isnan(before), after, np.where(np.isnan(after), before, 0.5 * (before + after)))


def _dz_dtheta(rows):
    """dz/dtheta0 at fixed range of crossing records (vectorised twin of ``_kernels_eigen.dz_dtheta``):
    the launch-angle derivative moved from fixed arc length to fixed range with dx/ds = c xi,
    dz/ds = c zeta."""
    return rows[..., _k.R_DZ] - rows[..., _k.R_ZETA] / rows[..., _k.R_XI] * rows[..., _k.R_DX]


def _wavefront_curvature(site, rows):
    """d zeta/dz at fixed range (the wavefront's curvature, 1/(m s/m)) of crossing records: d zeta/dtheta0
    moved to fixed range with dzeta/ds = -c_z / c^2, over dz/dtheta0 (Jensen et al. 2011, sect. 3.2);
    0 where dz/dtheta0 vanishes (a caustic at that point) or the record is empty."""
    z, c = rows[..., _k.R_Z], rows[..., _k.R_C]
    ok = np.isfinite(z)
    cz = np.zeros(z.shape)
    cz[ok] = site.water.profile.evaluate(z[ok])[1]
    with np.errstate(divide="ignore", invalid="ignore"):
        dzdt = _dz_dtheta(rows)
        dzeta = rows[..., _k.R_DZETA] + cz * rows[..., _k.R_DX] / (c ** 3 * rows[..., _k.R_XI])
        return np.where(ok & (np.abs(dzdt) > 1e-12), dzeta / dzdt, 0.0)


def _ray_arrays(site, rec, thetas, r_sorted, c0, wavelength_m):
    """Per ray and range: the arrays :func:`aculink.propagation._kernels_eigen.cluster_arrivals` reads.

    ``rec`` and ``thetas`` are the per-range fan of :func:`_gather` ((rays, ranges), NaN-padded).
    Returns a dict with ``z``, ``t``, ``zeta``, ``kappa`` (d zeta/dz at fixed range), ``wz`` (vertical
    beam width), ``amp`` (beam amplitude factor), ``fac_re``, ``fac_im`` (seabed product times caustic
    phase), ``ns``, ``nb``, ``nc``, ``dzdt`` (dz/dtheta0).
    """
    z = rec[..., _k.R_Z]
    ok = np.isfinite(z)
    c = rec[..., _k.R_C]
    with np.errstate(divide="ignore", invalid="ignore"):
        dzdt = _dz_dtheta(rec)
        cos_t = np.abs(c * rec[..., _k.R_XI])
        dtheta = _ray_spacing(thetas)
        amp = dtheta * np.sqrt(c * np.cos(thetas) * np.abs(dzdt) / (c0 * r_sorted[None, :] * cos_t))
        wz = np.maximum(np.abs(dzdt) * dtheta, beam_floor_m(wavelength_m, rec[..., _k.R_S], cos_t * np.abs(dzdt)) / cos_t)
    ns, nb, nc = _history(rec)
    fac = (rec[..., _k.R_BRE] + 1j * rec[..., _k.R_BIM]) * np.exp(0.5j * np.pi * nc)
    arrays = dict(z=z, t=rec[..., _k.R_T], zeta=rec[..., _k.R_ZETA], kappa=_wavefront_curvature(site, rec), wz=wz,
                  amp=amp, fac_re=fac.real, fac_im=fac.imag, ns=ns, nb=nb, nc=nc)
    out = {key: np.ascontiguousarray(np.where(ok, v, np.nan if key == "z" else 0.0), dtype=float)
           for key, v in arrays.items()}
    out["dzdt"] = dzdt
    return out


def _candidates(arrays, depths, freqs, bed_z):
    """Arrivals of every receiver from the fan (beam clusters); ``bed_z`` is the seabed depth at each
    receiver range, m.

    Returns ``(ints (n, N_CLUSTER_INT), delay (n,), beam (n, F) complex)``.
    """
    names = ("z", "t", "zeta", "kappa", "wz", "amp", "fac_re", "fac_im", "ns", "nb", "nc")
    args = [arrays[n] for n in names] + [np.ascontiguousarray(bed_z, dtype=float)]
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


def _within(ints, level_db, below_db, shape):
    """Mask of arrivals within ``below_db`` of the strongest at their receiver at some frequency
    (``level_db`` (n, F)), and the count of the others per receiver."""
    jj, kk = ints[:, _ke.Q_RANGE], ints[:, _ke.Q_DEPTH]
    top = np.full(shape + level_db.shape[1:], -np.inf)
    np.maximum.at(top, (jj, kk), level_db)
    keep = np.any(level_db >= top[jj, kk] - below_db, axis=1)
    out = np.zeros(shape, dtype=int)
    np.add.at(out, (jj[~keep], kk[~keep]), 1)
    return keep, out


def _level_db(amplitude):
    with np.errstate(divide="ignore"):
        return 20.0 * np.log10(np.abs(amplitude))


def _prune(site, rec, ints, beam, dyn, shape, freqs, c_surface, keep):
    """Keep arrivals within the dynamic range plus :data:`PRUNE_MARGIN_DB` of the strongest at their
    receiver, by the beam sum with the strongest ray's absorption and the energy that survives the
    surface (:func:`_arriving_factor`; not the Eckart coherent level: the channel stage gives a surface
    path's scattered power back, which a path pruned on its coherent level would lose); returns (keep
    mask, pruned counts per receiver).

    Runs with neither an eigenray (bracket) nor a caustic are not arrivals at all: the tails of wide
    beams of a branch whose eigenray (if any) is another arrival, with no stationary point of their
    own. They are removed without being counted (beside the ray-theory amplitude of that eigenray they
    would count its energy twice; found 15-180 us early, as their travel times are carried metres
    across a profile knot).
    """
    prow = rec[ints[:, _ke.Q_PRINCIPAL], ints[:, _ke.Q_RANGE]]
    smooth = np.abs(beam) * 10.0 ** (-_absorption_db(prow, len(freqs)) / 20.0)
    arriving = smooth * _arriving_factor(site, prow[:, _k.R_SIN2], ints[:, _ke.Q_NS], freqs, c_surface, keep)
    keep, pruned = _within(ints, _level_db(arriving), dyn + PRUNE_MARGIN_DB, shape)
    tail = (ints[:, _ke.Q_N_BRACKETS] == 0) & (ints[:, _ke.Q_CAUSTIC] == 0)
    np.add.at(pruned, (ints[tail & ~keep, _ke.Q_RANGE], ints[tail & ~keep, _ke.Q_DEPTH]), -1)
    return keep & ~tail, pruned


def _bracket_rays(arrays, ints, depths):
    """The bracketing rays of each bracketed arrival: (lower, upper, nearer, farther) ray indices."""
    jj = ints[:, _ke.Q_RANGE]
    lo = ints[:, _ke.Q_BRACKET]
    hi = lo + 1
    zr = depths[ints[:, _ke.Q_DEPTH]]
    near = np.where(np.abs(zr - arrays["z"][hi, jj]) <= np.abs(zr - arrays["z"][lo, jj]), hi, lo)
    # across a reflection the nearer ray is the one of the arrival's own history
    edge = ints[:, _ke.Q_BOUNDARY]
    near = np.where(edge >= 0, edge, near)
    return lo, hi, near, np.where(near == hi, lo, hi)


def _newton_angle(arrays, thetas, ray, jj, zr):
    """Launch angle of the eigenray from one fan ray: theta + dz / (dz/dtheta0)."""
    return thetas[ray, jj] + (zr - arrays["z"][ray, jj]) / arrays["dzdt"][ray, jj]


def _same_history(rec, a, b, jj):
    """True where rays ``a`` and ``b`` reach range ``jj`` with the same bounce and caustic counts."""
    ra, rb = rec[a, jj], rec[b, jj]
    return np.all([ra[:, col] == rb[:, col] for col in (_k.R_NS, _k.R_NB, _k.R_NC)], axis=0)


def _smooth_third(rec, lo, hi, third, jj):
    """True where ray ``third`` (beside the bracket lo, hi) can join a quadratic interpolation: another
    ray, of the same history, whose |dz/dtheta0| is within :data:`TUBE_CHANGE` of the bracket's (not
    past a profile knot or near a caustic, where z(theta0) has a kink or a fold)."""
    ok = (third != lo) & (third != hi) & np.isfinite(rec[third, jj, _k.R_Z]) & _same_history(rec, third, lo, jj)
    g = [np.abs(_dz_dtheta(rec[ray, jj])) for ray in (lo, hi, third)]
    with np.errstate(invalid="ignore"):
        return ok & (np.abs(g[2] - g[0]) <= TUBE_CHANGE * np.minimum(g[0], g[1]))


def _interpolate_rows(rec, thetas, lo, hi, jj, theta):
    """Crossing records at launch angles ``theta`` inside brackets (lo, hi): quadratic (Lagrange) in
    the launch angle through the bracket and a third ray of the same history beside it (the one on
    the side of the nearer end), linear where there is none.

    Linear interpolation errs by (1/8) dtheta^2 f'' (2e-7 of sin^2 per surface bounce for a 0.1 deg
    fan, which the Eckart factor at 12 kHz and 5 cm roughness turns into 1e-5 of amplitude); the
    quadratic by O(dtheta^3).
    """
    n = thetas.shape[0]
    u = (theta - thetas[lo, jj]) / (thetas[hi, jj] - thetas[lo, jj])
    side = np.where(u < 0.5, np.maximum(lo - 1, 0), np.minimum(hi + 1, n - 1))
    other = np.where(u < 0.5, np.minimum(hi + 1, n - 1), np.maximum(lo - 1, 0))
    ok = _smooth_third(rec, lo, hi, side, jj)
    # the other side where the nearer one is of another history or past a kink
    alt = ~ok & _smooth_third(rec, lo, hi, other, jj)
    third = np.where(alt, other, side)
    ok |= alt
    x0, x1, x2 = thetas[lo, jj], thetas[hi, jj], thetas[third, jj]
    w0 = (theta - x1) * (theta - x2) / ((x0 - x1) * (x0 - x2))
    w1 = (theta - x0) * (theta - x2) / ((x1 - x0) * (x1 - x2))
    w2 = (theta - x0) * (theta - x1) / ((x2 - x0) * (x2 - x1))
    w0 = np.where(ok, w0, 1.0 - u)
    w1 = np.where(ok, w1, u)
    w2 = np.where(ok, w2, 0.0)
    rows = w0[:, None] * rec[lo, jj] + w1[:, None] * rec[hi, jj] + w2[:, None] * np.nan_to_num(rec[third, jj])
    for col in (_k.R_NS, _k.R_NB, _k.R_NC, _k.R_ORIENT):
        rows[:, col] = rec[lo, jj, col]
    return rows


def _interpolate_eigenrays(rec, thetas, arrays, ints, depths):
    """Eigenrays of bracketed arrivals from the fan (no re-shooting).

    Returns ``(theta, rows, miss, near, far)``: the launch angle (the Newton step from the nearer ray),
    the crossing record interpolated at it (:func:`_interpolate_rows`), the depth disagreement of the
    Newton predictions from the two bracketing rays (m, the interpolation's error estimate), and the
    nearer and farther rays.
    """
    jj = ints[:, _ke.Q_RANGE]
    zr = depths[ints[:, _ke.Q_DEPTH]]
    lo, hi, near, far = _bracket_rays(arrays, ints, depths)
    theta = _newton_angle(arrays, thetas, near, jj, zr)
    theta_far = _newton_angle(arrays, thetas, far, jj, zr)
    miss = np.abs(arrays["dzdt"][near, jj]) * np.abs(theta - theta_far)
    # where the ray tube changes fast across the bracket (a ray touching a profile knot, a caustic
    # near), the interpolated spreading is not to be trusted either: counted as a miss
    za, zb = np.abs(arrays["dzdt"][lo, jj]), np.abs(arrays["dzdt"][hi, jj])
    with np.errstate(divide="ignore", invalid="ignore"):
        rough = ~(np.abs(za - zb) <= TUBE_CHANGE * np.minimum(za, zb))
    miss = np.where(rough, np.inf, miss)
    bounds = np.minimum(thetas[lo, jj], thetas[hi, jj]), np.maximum(thetas[lo, jj], thetas[hi, jj])
    # Newton on the interpolated records (z and dz/dtheta0 of the quadratic through three rays): the
    # eigenray then ends at the receiver depth to the interpolation's own third order
    for _ in range(NEWTON_STEPS):
        theta = np.clip(theta, *bounds)
        rows = _interpolate_rows(rec, thetas, lo, hi, jj, theta)
        with np.errstate(divide="ignore", invalid="ignore"):
            step = (zr - rows[:, _k.R_Z]) / _dz_dtheta(rows)
        theta = theta + np.where(np.isfinite(step), step, 0.0)
    theta = np.clip(theta, *bounds)
    rows = _interpolate_rows(rec, thetas, lo, hi, jj, theta)
    return theta, rows, miss, near, far


def _reshoot(medium, zs, rec, thetas, near, far, jj, zr, r_sorted, budget, tol):
    """Re-shoot the eigenrays of the given brackets; returns (records, launch angles, converged)."""
    rows0 = np.ascontiguousarray(rec[near, jj])
    m = near.size
    out_rec = np.full((m, rec.shape[2]), np.nan)
    out_theta = np.zeros(m)
    out_ok = np.zeros(m, dtype=np.bool_)
    _ke.refine_all(np.ascontiguousarray(thetas[near, jj]), np.ascontiguousarray(rows0[:, _k.R_Z] - zr),
                   np.ascontiguousarray(thetas[far, jj]), rows0, np.ascontiguousarray(zr, dtype=float),
                   np.ascontiguousarray(r_sorted[jj]), float(zs), medium.kernel(), int(budget), float(tol),
                   out_rec, out_theta, out_ok)
    return out_rec, out_theta, out_ok


def _eigen_values(site, rows, theta, zr, n_freq):
    """What an eigenray reports, from its crossing record at the receiver range (``rows``, with the
    depth miss ``zr - z`` still to cover): launch angle, arrival slowness, path, grazing sum,
    absorption, caustics and delay (second order in the miss, :func:`_delay_at_receiver`)."""
    zeta, dzeta_dz = _slowness_at_receiver(site, rows, zr)
    return dict(theta=theta, zeta=zeta, xi=rows[:, _k.R_XI], path=rows[:, _k.R_S], sin2=rows[:, _k.R_SIN2],
                absorption=_absorption_db(rows, n_freq), nc=rows[:, _k.R_NC],
                delay=_delay_at_receiver(site, rows, zr))


def _geometric_amplitude(rows, theta, c0, r):
    """Ray-theory complex amplitude of eigenrays (re 1 m, before the surface and absorption factors):
    sqrt(c cos(theta0) / (c0 r |q|)) x seabed product x exp(+j pi/2 n_caustics) (Jensen et al. 2011,
    sect. 3.3)."""
    spread = _spreading(rows, np.cos(theta), c0, r)
    return spread * (rows[:, _k.R_BRE] + 1j * rows[:, _k.R_BIM]) * np.exp(0.5j * np.pi * rows[:, _k.R_NC])


def _strongest_ray_values(fan, arrays, ints, delay, n_freq):
    """What an arrival without a bracket reports: its strongest ray's values and the beam-weighted
    delay of :func:`_candidates` (a shadow-side arrival beside a caustic has no real eigenray), with
    the path length moved with the delay (dS = c dT) from the ray's end to the receiver."""
    jj = ints[:, _ke.Q_RANGE]
    p = ints[:, _ke.Q_PRINCIPAL]
    prow = fan.rec[p, jj]
    path = prow[:, _k.R_S] + prow[:, _k.R_C] * (delay - prow[:, _k.R_T])
    return dict(theta=fan.thetas[p, jj], zeta=prow[:, _k.R_ZETA], xi=prow[:, _k.R_XI], path=path,
                sin2=prow[:, _k.R_SIN2], absorption=_absorption_db(prow, n_freq), nc=arrays["nc"][p, jj],
                delay=delay.copy(), geometric=np.full(jj.size, np.nan + 0j), reshot=np.zeros(jj.size, dtype=bool))


def _refine(site, medium, zs, fan, arrays, ints, delay, depths, r_sorted, tol, mode, c0):
    """Eigenray values of every arrival (:func:`_eigen_values`, plus ``geometric``, its ray-theory
    amplitude or NaN where the beam sum is kept, and ``reshot``): interpolated from its bracket,
    re-shot where the bracket is too wide (or always with ``mode="reshoot"``), or those of its
    strongest ray where it has no bracket (:func:`_strongest_ray_values`)."""
    out = _strongest_ray_values(fan, arrays, ints, delay, medium.n_freq)
    br = np.flatnonzero(ints[:, _ke.Q_BRACKET] >= 0)
    if br.size == 0:
        return out
    jj = ints[br, _ke.Q_RANGE]
    zr = depths[ints[br, _ke.Q_DEPTH]]
    theta, rows, miss, near, far = _interpolate_eigenrays(fan.rec, fan.thetas, arrays, ints[br], depths)
    ok = np.ones(br.size, dtype=bool)
    # a bracket across a reflection has one ray of the arrival's history: it is re-shot
    w = np.flatnonzero(((miss > tol) | (ints[br, _ke.Q_BOUNDARY] >= 0)) if mode == "auto" else ok)
    if w.size:
        shot, th, conv = _reshoot(medium, zs, fan.rec, fan.thetas, near[w], far[w], jj[w], zr[w], r_sorted,
                                  fan.budget, tol)
        rows[w[conv]] = shot[conv]
        theta[w[conv]] = th[conv]
        ok[w[~conv]] = False
        out["reshot"][br[w[conv]]] = True
    sel, rows, theta, zr, jj = br[ok], rows[ok], theta[ok], zr[ok], jj[ok]
    for key, v in _eigen_values(site, rows, theta, zr, medium.n_freq).items():
        out[key][sel] = v
    # far from caustics (none inside the run of rays) ray theory is exact to its order and free of the
    # beams' truncation at the surface and the seabed; the beam sum stays where a caustic is near
    regular = (ints[sel, _ke.Q_N_BRACKETS] == 1) & (ints[sel, _ke.Q_CAUSTIC] == 0)
    out["geometric"][sel[regular]] = _geometric_amplitude(rows[regular], theta[regular], c0, r_sorted[jj[regular]])
    return out


def _merge(site, medium, ints, beam, beam_delay, eig, freqs, dyn, shape, keep):
    """Each arrival's amplitude, the mask of those kept and the dropped counts per receiver.

    The amplitude is the ray-theory one of the eigenray where :func:`_refine` gave it, else the beam
    sum (turned from the phase reference ``beam_delay`` to the reported delay), times the Eckart
    surface factor and the absorption. An arrival is kept when its arriving level (coherent and
    scattered energy together, :func:`_arriving_factor`) is within ``dyn`` dB of the strongest at its
    receiver at some frequency.
    """
    shift = np.exp(-2j * np.pi * freqs[None, :] * (beam_delay - eig["delay"])[:, None])
    base = np.where(np.isnan(eig["geometric"])[:, None], beam * shift, eig["geometric"][:, None])
    smooth = base * 10.0 ** (-eig["absorption"] / 20.0)
    surface = _surface_factor(site, eig["sin2"], ints[:, _ke.Q_NS], freqs, medium.surface_speed_mps)
    arriving = smooth * _arriving_factor(site, eig["sin2"], ints[:, _ke.Q_NS], freqs, medium.surface_speed_mps,
                                         keep)
    strong, dropped = _within(ints, _level_db(arriving), dyn, shape)
    return smooth * surface, strong, dropped


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
    angles = check_angles(search_angles_deg(site, float(r_sorted[-1])) if angles_deg is None else angles_deg)
    if angles.size < 2:
        raise AculinkError("angles_deg needs at least 2 launch angles to bracket eigenrays")
    medium = prepare_medium(site, freqs, bottom_reflection=bottom_reflection, step_m=step_m)
    fan = _search_fan(site, medium, zs, np.radians(angles), r_sorted)
    shape = (ranges.size, depths.size)
    c0 = float(site.water.profile.speed(zs))
    arrays = _ray_arrays(site, fan.rec, fan.thetas, r_sorted, c0, c0 / float(freqs.min()))
    ints, delay, beam = _candidates(arrays, depths, freqs, site.seabed.depth_at(r_sorted))
    # energy scattered past the bed's critical angle is lost (a custom bottom has no known angle)
    from aculink.site.surface import scatter_keep_angle_rad

    keep_angle = scatter_keep_angle_rad(site) if bottom_reflection is None else None
    keep, pruned = _prune(site, fan.rec, ints, beam, dyn, shape, freqs, medium.surface_speed_mps, keep_angle)
    ints, delay, beam = ints[keep], delay[keep], beam[keep]
    eig = _refine(site, medium, zs, fan, arrays, ints, delay, depths, r_sorted, tol, refine, c0)
    amp, strong, dropped = _merge(site, medium, ints, beam, delay, eig, freqs, dyn, shape, keep_angle)
    sel = {key: v[strong] for key, v in eig.items()}
    return _pack(site, ranges, depths, freqs, order, ints[strong], amp[strong], sel, pruned + dropped,
                 fan.reasons, zs, dyn, tol, keep_angle)


#: The search fan as each receiver range sees it: launch angles (rays, ranges) and crossing records
#: (rays, ranges, width), NaN-padded; the step budget; why empty ranges are empty.
SearchFan = namedtuple("SearchFan", ["thetas", "rec", "budget", "reasons"])


def _search_fan(site, medium, zs, thetas, r_sorted):
    """Trace the search fan once to every receiver range, refine it per range (:func:`_refine_fan`)
    and lay it out per range (:func:`_gather`)."""
    r_max = float(r_sorted[-1])
    budget = step_budget(r_max, medium.step_m, float(np.degrees(np.max(np.abs(thetas)))))
    rec, info, _ = run_fan(medium, thetas, zs, r_sorted, r_max, max_steps=budget)
    reasons = _unreached(rec, info, r_sorted, np.degrees(thetas))
    thetas, rec, info, member = _refine_fan(medium, thetas, rec, info, zs, r_sorted, r_max, budget,
                                            TUBE_WIDTH_FRACTION * float(np.min(site.seabed.depth_m)))
    th, rows = _gather(thetas, rec, _column_index(member))
    return SearchFan(th, rows, budget, reasons)


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


def _pack(site, ranges, depths, freqs, order, ints, amp, eig, n_dropped, reasons, zs, dyn, tol, keep_angle):
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
             "amplitude_method": "ray theory at the eigenray; Gaussian-beam sum of the fan's rays where a caustic "
                                 "is within the beams' reach or there is no eigenray (Cerveny 2001, ch. 5)",
             # read by the channel stage's surface scatter (NaN: every scattered joule kept)
             "scatter_keep_angle_rad": float("nan") if keep_angle is None else float(keep_angle),
             "n_reshot": int(np.sum(eig["reshot"])), "n_interpolated": int(np.sum(~eig["reshot"] & (
                 ints[:, _ke.Q_BRACKET] >= 0)))}
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


def _slowness_at_receiver(site, rows, zr):
    """Vertical slowness at the receiver depth, to first order in the miss ``zr - z`` with the
    wavefront's curvature (:func:`_wavefront_curvature`), and that curvature."""
    curvature = _wavefront_curvature(site, rows)
    return rows[:, _k.R_ZETA] + curvature * (zr - rows[:, _k.R_Z]), curvature


def _delay_at_receiver(site, rows, zr):
    """Travel time at the receiver depth from a ray that ends ``zr - z`` away at the same range.

    T(x, z) about the ray's end point: dT/dz = zeta and d2T/dz2 = d zeta/dz at fixed range
    (:func:`_wavefront_curvature`), so tau = t + zeta dz + (1/2) (d zeta/dz) dz^2 with a third-order
    residual.
    """
    miss = zr - rows[:, _k.R_Z]
    return rows[:, _k.R_T] + rows[:, _k.R_ZETA] * miss + 0.5 * _wavefront_curvature(site, rows) * miss ** 2
