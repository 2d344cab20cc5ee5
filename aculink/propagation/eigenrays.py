"""Eigenrays: every significant path from the source to each receiver, as an xarray Dataset.

How it works (kernels in :mod:`aculink.propagation._kernels_eigen`):

1. One fan of rays (default: launch angles from -80 to 80 deg, spaced finely enough to put several
   rays in every bounce branch at the longest range) is traced once for all receivers; each ray
   records its state where it crosses every receiver range.
2. Adjacent rays with the same history (surface bounces, seabed bounces, caustics) on either side of
   a receiver depth bracket an eigenray; at branch edges, a Newton prediction from the last ray of the
   branch is used.
3. Candidates whose predicted level (from the bracketing ray) is more than the dynamic range plus
   :data:`PRUNE_MARGIN_DB` below the strongest at that receiver are dropped before refinement.
4. The rest are refined by re-shooting single rays to the receiver range (Newton on the launch angle
   with the dynamic-ray derivative, safeguarded by bisection) until the depth miss is below
   ``tolerance_m``. The delay is then moved to the receiver depth at the receiver range to second
   order in the miss dz: tau = t + zeta dz + (1/2) (d zeta/dz) dz^2, with d zeta/dz at fixed range
   from the dynamic-ray derivatives (the wavefront's curvature), so the residual is third order.
5. Duplicates (same history, launch angles within the angular width of the tolerance) are merged;
   arrivals more than ``dynamic_range_db`` below the strongest at every requested frequency are
   dropped and counted.

Amplitudes are complex pressures relative to 1 m from the source, in aculink's exp(+j omega t)
convention, with everything included::

    A(f) = |A_spread| x exp(+j pi/2 n_caustics) x prod R_bottom x prod R_surface(f) x 10^(-a(f)/20)

|A_spread| = sqrt(c cos(theta0) / (c0 r |q|)) from dynamic ray tracing (Jensen et al. 2011, sect.
3.3); R_bottom is the Rayleigh coefficient at each bounce's grazing angle; R_surface(f) the Eckart
coherent coefficient, whose product over the bounces is (-1)^n exp(-2 k^2 sigma^2 sum sin^2 theta_i)
(``surface_grazing_sin2_sum`` lets later stages recompute it across the band); a(f) is the
Francois-Garrison absorption integrated along the path.

References
----------
F. B. Jensen, W. A. Kuperman, M. B. Porter and H. Schmidt, Computational Ocean Acoustics, 2nd ed.
(Springer, 2011), ch. 3 (eigenrays, ray amplitude, caustic phase).
C. Eckart, J. Acoust. Soc. Am. 25, 566-570 (1953) (coherent surface reflection).
R. E. Francois and G. R. Garrison, J. Acoust. Soc. Am. 72(3), 896-907 and 72(6), 1879-1890 (1982).
"""

from __future__ import annotations

import math

import numpy as np

from aculink.errors import AculinkError, check_range
from aculink.propagation import _kernels as _k
from aculink.propagation import _kernels_eigen as _ke
from aculink.propagation.rays import (absorption_table_db_per_m, check_angles, check_source_depth, depth_bin_edges,
                                      prepare_medium, run_fan, step_budget)

#: Candidates predicted this far below the dynamic range are not refined, dB.
PRUNE_MARGIN_DB = 10.0
#: Default eigenray fan: widest launch angle, deg, and the coarsest spacing, deg.
FAN_HALF_WIDTH_DEG = 80.0
FAN_MAX_SPACING_DEG = 0.1
#: Pruned candidates whose predicted launch angles differ by less than this are counted once, rad.
DUPLICATE_ANGLE_RAD = 1e-4
#: Fan gap refinement: rays added per suspicious gap, and rounds.
GAP_RAYS = 3
GAP_ROUNDS = 3


def default_angles_deg(site, max_range_m):
    """A fan fine enough for several rays per bounce branch at ``max_range_m``."""
    branch = math.degrees(float(np.min(site.seabed.depth_m)) / max_range_m)
    spacing = min(FAN_MAX_SPACING_DEG, 0.25 * branch)
    n = int(math.ceil(2.0 * FAN_HALF_WIDTH_DEG / spacing)) + 1
    return np.linspace(-FAN_HALF_WIDTH_DEG, FAN_HALF_WIDTH_DEG, n)


def _refine_gaps(medium, thetas, rec, info, zs, r_sorted, r_max, budget):
    """Add rays inside fan gaps where a whole bounce branch could hide.

    Where two adjacent rays reach a receiver range with histories that differ by two or more
    (surface bounces + seabed bounces + caustics), a branch narrower than the fan spacing may lie
    between them; :data:`GAP_RAYS` rays are added in each such gap, for up to :data:`GAP_ROUNDS`
    rounds. Gaps that differ by one bounce are single branch edges, which the edge prediction covers.
    """
    for _ in range(GAP_ROUNDS):
        both = ~np.isnan(rec[:-1, :, _k.R_Z]) & ~np.isnan(rec[1:, :, _k.R_Z])
        jump = np.abs(rec[1:, :, _k.R_NS] - rec[:-1, :, _k.R_NS]) + np.abs(
            rec[1:, :, _k.R_NB] - rec[:-1, :, _k.R_NB]) + np.abs(rec[1:, :, _k.R_NC] - rec[:-1, :, _k.R_NC])
        gaps = np.flatnonzero(np.any(both & (jump >= 2), axis=1))
        if gaps.size == 0:
            break
        frac = np.arange(1, GAP_RAYS + 1) / (GAP_RAYS + 1)
        new = (thetas[gaps, None] + frac[None, :] * (thetas[gaps + 1] - thetas[gaps])[:, None]).ravel()
        rec_n, info_n, _ = run_fan(medium, new, zs, r_sorted, r_max, max_steps=budget)
        order = np.argsort(np.concatenate([thetas, new]), kind="stable")
        thetas = np.concatenate([thetas, new])[order]
        rec = np.concatenate([rec, rec_n])[order]
        info = np.concatenate([info, info_n])[order]
    return np.ascontiguousarray(thetas), np.ascontiguousarray(rec), info


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


def find_arrivals(site, ranges_m=None, depths_m=None, freq_hz=None, *, source_depth_m=None, angles_deg=None,
                  dynamic_range_db=40.0, tolerance_m=0.1, bottom_reflection=None, step_m=None):
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
        The search fan's launch angles, deg (default :func:`default_angles_deg`).
    dynamic_range_db : float
        Arrivals more than this below the strongest at the same receiver are dropped (and counted).
    tolerance_m : float
        Largest depth miss of a refined eigenray at the receiver range, m.
    bottom_reflection : callable, optional
        ``f(grazing_rad) -> complex`` seabed coefficient (default Rayleigh from the site).
    step_m : float, optional
        Arc-length step of the integrator, m.
    Returns
    -------
    xarray.Dataset
        Dims ``range``, ``depth``, ``arrival`` (padded, sorted by delay) and ``frequency``:
        ``delay_s``, ``amplitude`` (complex, re 1 m), ``launch_angle_deg``, ``arrival_angle_deg``,
        ``surface_bounces``, ``bottom_bounces``, ``caustics``, ``path_length_m``,
        ``surface_grazing_sin2_sum``, ``absorption_db``, ``n_arrivals``, ``n_dropped``. Attrs ``site``,
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
                                              step_m=step_m)
    return xr.Dataset(variables, coords=coords, attrs=attrs)


def solve_arrivals(site, ranges_m=None, depths_m=None, freq_hz=None, *, source_depth_m=None, angles_deg=None,
                   dynamic_range_db=40.0, tolerance_m=0.1, bottom_reflection=None, step_m=None):
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
    order = np.argsort(ranges)
    r_sorted = ranges[order]
    r_max = float(r_sorted[-1])
    angles = check_angles(default_angles_deg(site, r_max) if angles_deg is None else angles_deg)
    if angles.size < 2:
        raise AculinkError("angles_deg needs at least 2 launch angles to bracket eigenrays")
    medium = prepare_medium(site, float(freqs.min()), bottom_reflection=bottom_reflection, step_m=step_m)
    thetas = np.radians(angles)
    budget = step_budget(r_max, medium.step_m, float(np.max(np.abs(angles))))
    rec, info, _ = run_fan(medium, thetas, zs, r_sorted, r_max, max_steps=budget)
    thetas, rec, info = _refine_gaps(medium, thetas, rec, info, zs, r_sorted, r_max, budget)
    reasons = {}
    reached = ~np.isnan(rec[:, :, _k.R_Z])
    for j in np.flatnonzero(~reached.any(axis=0)):
        short = info[:, 2] != _k.END_WEAK
        if np.any(short & (info[:, 3] < r_sorted[j])):
            raise AculinkError(
                f"angles_deg = [{angles[0]:g}, {angles[-1]:g}] deg: no ray of the fan reaches range "
                f"{r_sorted[j]:g} m (furthest {info[:, 3].max():g} m); widen or move the fan")
        reasons[j] = "every ray fell below the amplitude floor before this range"

    # candidates
    cand = np.zeros((0, _ke.N_CANDIDATE))
    n = _ke.find_brackets(rec, thetas, depths, cand)
    cand = np.zeros((n, _ke.N_CANDIDATE))
    _ke.find_brackets(rec, thetas, depths, cand)
    jj = cand[:, _ke.C_RANGE].astype(int)
    kk = cand[:, _ke.C_DEPTH].astype(int)
    rows0 = rec[cand[:, _ke.C_FROM].astype(int), jj]
    c0 = float(site.water.profile.speed(zs))
    cos0 = np.cos(thetas[cand[:, _ke.C_FROM].astype(int)])
    pred = (_spreading(rows0, cos0, c0, r_sorted[jj]) * np.hypot(rows0[:, _k.R_BRE], rows0[:, _k.R_BIM])
            * 10.0 ** (-rows0[:, _k.R_ABS] / 20.0))
    with np.errstate(divide="ignore"):
        pred_db = 20.0 * np.log10(pred)
    n_r, n_z = ranges.size, depths.size
    best = np.full((n_r, n_z), -np.inf)
    np.maximum.at(best, (jj, kk), pred_db)
    keep = pred_db >= best[jj, kk] - dyn - PRUNE_MARGIN_DB
    pruned = cand[~keep]
    cand = np.ascontiguousarray(cand[keep])

    # refinement by re-shooting
    edges = depth_bin_edges(site)
    alpha = absorption_table_db_per_m(site, freqs, edges)  # (F, B)
    shoot = cand
    m = shoot.shape[0]
    out_rec = np.full((m, _k.N_RECORD), np.nan)
    out_bins = np.zeros((m, edges.size - 1))
    out_theta = np.zeros(m)
    out_ok = np.zeros(m, dtype=np.bool_)
    _ke.refine_all(shoot, thetas, rec, depths, r_sorted, zs, *medium.kernel_args(), medium.step_m, budget,
                   medium.floor_mag, tol, out_rec, out_bins, out_theta, out_ok)
    jj = shoot[out_ok, _ke.C_RANGE].astype(int)
    kk = shoot[out_ok, _ke.C_DEPTH].astype(int)
    rows, th = out_rec[out_ok], out_theta[out_ok]
    absorption = out_bins[out_ok] @ alpha.T  # (n, F)

    # merge duplicates: same receiver and history, launch angles within the tolerance's angular width
    hist = rows[:, [_k.R_NS, _k.R_NB, _k.R_NC]].astype(int)
    srt = np.lexsort((th, hist[:, 2], hist[:, 1], hist[:, 0], kk, jj))
    jj, kk, rows, absorption, th, hist = jj[srt], kk[srt], rows[srt], absorption[srt], th[srt], hist[srt]
    dzdt = np.abs(rows[:, _k.R_DZ] - rows[:, _k.R_ZETA] / rows[:, _k.R_XI] * rows[:, _k.R_DX])
    width = np.maximum(1e-9, 4.0 * tol / np.maximum(dzdt, 1e-30))
    dup = np.zeros(th.size, dtype=bool)
    if th.size > 1:
        same = (jj[1:] == jj[:-1]) & (kk[1:] == kk[:-1]) & np.all(hist[1:] == hist[:-1], axis=1)
        dup[1:] = same & (np.abs(th[1:] - th[:-1]) <= np.maximum(width[1:], width[:-1]))
    keep = ~dup
    jj, kk, rows, absorption, th, hist = jj[keep], kk[keep], rows[keep], absorption[keep], th[keep], hist[keep]

    # physical quantities
    zr = depths[kk]
    r_of = r_sorted[jj]
    delay = _delay_at_receiver(site, rows, zr)
    spread = _spreading(rows, np.cos(th), c0, r_of)
    surface = _surface_factor(site, rows[:, _k.R_SIN2], hist[:, 0], freqs, medium.surface_speed_mps)
    bottom = rows[:, _k.R_BRE] + 1j * rows[:, _k.R_BIM]
    caustic = np.exp(0.5j * np.pi * hist[:, 2])
    amp = (spread * bottom * caustic)[:, None] * surface * 10.0 ** (-absorption / 20.0)
    with np.errstate(divide="ignore"):
        level = 20.0 * np.log10(np.abs(amp))
    top = np.full((n_r, n_z, freqs.size), -np.inf)
    np.maximum.at(top, (jj, kk), level)
    strong = np.any(level >= top[jj, kk] - dyn, axis=1)

    n_dropped = np.zeros((n_r, n_z), dtype=int)
    np.add.at(n_dropped, (jj[~strong], kk[~strong]), 1)
    if pruned.size:
        # distinct pruned eigenrays: by receiver, history and predicted launch angle
        pj = pruned[:, _ke.C_RANGE].astype(int)
        pk = pruned[:, _ke.C_DEPTH].astype(int)
        prow = rec[pruned[:, _ke.C_FROM].astype(int), pj]
        ph = prow[:, [_k.R_NS, _k.R_NB, _k.R_NC]].astype(int)
        pth = thetas[pruned[:, _ke.C_FROM].astype(int)] + (depths[pk] - prow[:, _k.R_Z]) / (
            prow[:, _k.R_DZ] - prow[:, _k.R_ZETA] / prow[:, _k.R_XI] * prow[:, _k.R_DX])
        o = np.lexsort((pth, ph[:, 2], ph[:, 1], ph[:, 0], pk, pj))
        key = np.column_stack([pj, pk, ph])[o]
        new = np.r_[True, np.any(key[1:] != key[:-1], axis=1) | (np.diff(pth[o]) > DUPLICATE_ANGLE_RAD)]
        np.add.at(n_dropped, (pj[o][new], pk[o][new]), 1)
    sel = strong
    jj, kk, rows, th, hist = jj[sel], kk[sel], rows[sel], th[sel], hist[sel]
    delay, amp, absorption = delay[sel], amp[sel], absorption[sel]

    # pack into padded arrays sorted by delay
    counts = np.zeros((n_r, n_z), dtype=int)
    np.add.at(counts, (jj, kk), 1)
    n_a = max(1, int(counts.max()) if counts.size else 1)
    srt = np.lexsort((delay, kk, jj))
    jj, kk, rows, th, hist = jj[srt], kk[srt], rows[srt], th[srt], hist[srt]
    delay, amp, absorption = delay[srt], amp[srt], absorption[srt]
    first = np.zeros(jj.size, dtype=int)
    if jj.size:
        start = np.r_[True, (jj[1:] != jj[:-1]) | (kk[1:] != kk[:-1])]
        idx = np.arange(jj.size)
        first = idx - np.maximum.accumulate(np.where(start, idx, 0))
    shape3 = (n_r, n_z, n_a)

    def fill(values, pad, dtype=float):
        out = np.full(shape3 + np.shape(values)[1:], pad, dtype=dtype)
        out[jj, kk, first] = values
        return out

    arrival_angle = np.degrees(np.arctan2(rows[:, _k.R_ZETA], rows[:, _k.R_XI]))
    inv = np.argsort(order)  # back to the caller's range order

    def back(a):
        return a[inv]

    empty = counts == 0
    attrs = {"site": site.name, "source_depth_m": zs, "dynamic_range_db": dyn, "tolerance_m": tol,
             "title": "eigenray arrivals"}
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
            "delay_s": (dims3, back(fill(delay, np.nan)), {"units": "s", "long_name": "travel time from the source"}),
            "amplitude": (dims4, back(fill(amp, 0.0, complex)), {
                "units": "1", "long_name": "complex pressure relative to 1 m from the source (exp(+j omega t))"}),
            "launch_angle_deg": (dims3, back(fill(np.degrees(th), np.nan)), {
                "units": "degree", "long_name": "launch angle below the horizontal"}),
            "arrival_angle_deg": (dims3, back(fill(arrival_angle, np.nan)), {
                "units": "degree", "long_name": "arrival angle below the horizontal, direction of travel"}),
            "surface_bounces": (dims3, back(fill(hist[:, 0], -1, int)), dict(int_attrs, long_name="surface reflections")),
            "bottom_bounces": (dims3, back(fill(hist[:, 1], -1, int)), dict(int_attrs, long_name="seabed reflections")),
            "caustics": (dims3, back(fill(hist[:, 2], -1, int)), dict(int_attrs, long_name="caustics passed")),
            "path_length_m": (dims3, back(fill(rows[:, _k.R_S], np.nan)), {"units": "m", "long_name": "path length"}),
            "surface_grazing_sin2_sum": (dims3, back(fill(rows[:, _k.R_SIN2], np.nan)), {
                "units": "1", "long_name": "sum of sin^2 of the grazing angle over the surface bounces"}),
            "absorption_db": (dims4, back(fill(absorption, np.nan)), {
                "units": "dB", "long_name": "absorption along the path (Francois-Garrison)"}),
            "n_arrivals": (("range", "depth"), back(counts), {"units": "1", "long_name": "arrivals kept"}),
            "n_dropped": (("range", "depth"), back(n_dropped), {
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
