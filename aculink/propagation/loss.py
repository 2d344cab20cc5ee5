"""Transmission loss on a range x depth grid, coherent and incoherent, from Gaussian beams.

One fan of rays is traced to every grid range (the kernel records each ray's state there, as for
eigenrays), and each ray's Gaussian beam is summed on the grid columns
(:mod:`aculink.propagation._kernels_beams`). Beam widths follow the ray tubes and never fall below a
wavelength, so TL stays finite at caustics and in shadow zones; where no beam reaches at all, TL is
reported at :data:`TL_CAP_DB`. Grid points below the seabed are NaN. A beam that straddles the sea
surface or the seabed also adds its mirror image across that boundary, times the boundary's
reflection coefficient, so the part of the beam folded back by the reflection is not lost (see
:mod:`aculink.propagation._kernels_beams`).

The default fan (:func:`default_fan_deg`) spans +-89 deg, so that near the source the steep direct
and bottom paths are not cut off (a +-30 deg fan leaves false silent wedges beside a deep source),
with the spacing of the eigenray fan (several rays per bounce branch at the longest range).

TL is -20 log10 |p| (coherent: beams summed with their phases) and -10 log10 sum |p|^2
(incoherent: phases ignored), p relative to the pressure 1 m from the source: dB re 1 m.

References
----------
M. B. Porter and H. P. Bucker, "Gaussian beam tracing for computing ocean acoustic fields",
J. Acoust. Soc. Am. 82(4), 1349-1359 (1987).
V. Cerveny, M. M. Popov and I. Psencik, "Computation of wave fields in inhomogeneous media -
Gaussian beam approach", Geophys. J. R. astr. Soc. 70, 109-128 (1982).
F. B. Jensen, W. A. Kuperman, M. B. Porter and H. Schmidt, Computational Ocean Acoustics, 2nd ed.
(Springer, 2011), sect. 3.4 (Gaussian beams, paraxial travel time).
"""

from __future__ import annotations

import math

import numpy as np

from aculink.errors import AculinkError, check_range
from aculink.propagation import _kernels as _k
from aculink.propagation import _kernels_beams as _kb
from aculink.propagation.eigenrays import FAN_MAX_SPACING_DEG, _surface_factor
from aculink.propagation.rays import MAX_LAUNCH_DEG, check_angles, check_source_depth, prepare_medium, run_fan

__all__ = ["TL_CAP_DB", "MIN_BEAMS", "TINY_REFLECTION", "default_fan_deg", "transmission_loss"]

#: TL reported where no beam reaches, dB re 1 m.
TL_CAP_DB = 200.0
#: Fewest beams in a default fan.
MIN_BEAMS = 181
#: Image factors are not divided by a reflection coefficient smaller than this in magnitude.
TINY_REFLECTION = 1e-9


def _grid(site, ranges_m, depths_m):
    bed = site.seabed
    r = np.atleast_1d(np.asarray(ranges_m, dtype=float)).ravel()
    z = np.atleast_1d(np.asarray(depths_m, dtype=float)).ravel()
    if r.size == 0 or z.size == 0:
        raise AculinkError("ranges_m and depths_m need at least one value each")
    for v in r:
        check_range("ranges_m", v, 0.0, bed.max_range_m, low_open=True, unit="m")
    for v in z:
        check_range("depths_m", v, 0.0, bed.max_depth_m, unit="m")
    if np.unique(r).size != r.size or np.unique(z).size != z.size:
        raise AculinkError("ranges_m and depths_m must not repeat values")
    return r, z


def default_fan_deg(site, max_range_m, half_width_deg=MAX_LAUNCH_DEG):
    """The default beam fan: +-``half_width_deg`` with several rays per bounce branch at ``max_range_m``.

    The spacing is that of the eigenray search: at most 0.1 deg and a quarter of the angular width
    D / r of a bounce branch (D the shallowest seabed depth), so the bounce branches are resolved
    at the longest range. The half width defaults to the steepest launch angle accepted (89 deg),
    so every path a source can send, however steep, carries beams.
    """
    half = check_range("fan half width", half_width_deg, 0.0, MAX_LAUNCH_DEG, low_open=True, unit="deg")
    branch = math.degrees(float(np.min(site.seabed.depth_m)) / max_range_m)
    spacing = min(FAN_MAX_SPACING_DEG, 0.25 * branch)
    n = max(MIN_BEAMS, int(math.ceil(2.0 * half / spacing)) + 1)
    return np.linspace(-half, half, n)


def _fan_budget(r_max, step_m, max_angle_deg):
    """Steps for the steepest ray to reach ``r_max``: its path is r / cos(theta) however it bounces
    in a layer, with room for refraction and the landing steps at boundaries (not capped, unlike the
    eigenray budget, so that steep beams reach the far columns).
    """
    cos_a = math.cos(math.radians(min(abs(max_angle_deg), MAX_LAUNCH_DEG)))
    return int(1.5 * r_max / (step_m * cos_a)) + 2000


def _image_factors(site, medium, freq, z, c, cos_t, sin_t, n_s, n_b, bed_z):
    """Complex factors of each beam's surface and seabed images, (rays, ranges) each.

    The grazing angle at the boundary follows from Snell's law (cos theta_b = cos theta c_b / c). A
    beam heading for the boundary (or one that has never met it) images with the coefficient R; a
    beam that has just left it (heading away after at least one bounce there) images with 1 / R,
    its own state before the bounce (Jensen et al. 2011, ch. 2, image construction).
    """
    from aculink.site.surface import surface_coherent_reflection

    prof = site.water.profile
    with np.errstate(invalid="ignore"):
        cos_s = np.clip(cos_t * medium.surface_speed_mps / c, 0.0, 1.0)
        cb = np.asarray(prof.speed(np.nan_to_num(bed_z)), dtype=float)
        cos_b = np.clip(cos_t * cb[None, :] / c, 0.0, 1.0)
    r_s = surface_coherent_reflection(np.arccos(np.nan_to_num(cos_s, nan=1.0)), freq, site.surface.rms_height_m,
                                      medium.surface_speed_mps).astype(complex)
    nodes = medium.bt_step * np.arange(medium.bt_re.size)
    th_b = np.arccos(np.nan_to_num(cos_b, nan=1.0))
    r_b = np.interp(th_b, nodes, medium.bt_re) + 1j * np.interp(th_b, nodes, medium.bt_im)

    def image(r, leaving):
        inv = np.divide(1.0, r, out=np.zeros_like(r), where=np.abs(r) > TINY_REFLECTION)
        return np.where(leaving, inv, r)

    img_s = image(r_s, (sin_t > 0.0) & (n_s > 0))
    img_b = image(r_b, (sin_t < 0.0) & (n_b > 0))
    ok = np.isfinite(z)
    return np.where(ok, img_s, 0.0), np.where(ok, img_b, 0.0)


def transmission_loss(site, ranges_m, depths_m, freq_hz=None, *, source_depth_m=None, angles_deg=None,
                      bottom_reflection=None, step_m=None):
    """Coherent and incoherent transmission loss on a range x depth grid.

    Parameters
    ----------
    site : Site
        The environment.
    ranges_m, depths_m : array_like
        Grid ranges (> 0, at most the seabed's last range) and depths (0 to the deepest seabed), m.
    freq_hz : float, optional
        Frequency, Hz (default the modem carrier).
    source_depth_m : float, optional
        Source depth, m (default the site's source).
    angles_deg : array_like, optional
        Launch angles of the beam fan, deg (default :func:`default_fan_deg`: -89 to 89 deg, several
        rays per bounce branch at the longest range).
    bottom_reflection : callable, optional
        ``f(grazing_rad) -> complex`` seabed coefficient (default Rayleigh from the site).
    step_m : float, optional
        Arc-length step of the integrator, m.

    Returns
    -------
    xarray.Dataset
        ``tl_coherent_db`` and ``tl_incoherent_db`` (range, depth), dB re 1 m; NaN below the seabed.

    Raises
    ------
    AculinkError
        For a source outside the water, grid points outside the site, bad frequency or angles.

    References
    ----------
    M. B. Porter and H. P. Bucker, J. Acoust. Soc. Am. 82(4), 1349-1359 (1987).
    F. B. Jensen, W. A. Kuperman, M. B. Porter and H. Schmidt, Computational Ocean Acoustics, 2nd ed.
    (Springer, 2011), sect. 3.4 (Gaussian beams) and ch. 2 (images at a plane boundary).
    """
    import xarray as xr

    zs = check_source_depth(site, source_depth_m)
    ranges, depths = _grid(site, ranges_m, depths_m)
    freq = check_range("freq_hz", site.modem.carrier_hz if freq_hz is None else freq_hz, 0.0, 1.0e6,
                       low_open=True, unit="Hz")
    r_order = np.argsort(ranges)
    z_order = np.argsort(depths)
    r_sorted = ranges[r_order]
    z_sorted = np.ascontiguousarray(depths[z_order])
    r_max = float(r_sorted[-1])
    angles = check_angles(default_fan_deg(site, r_max) if angles_deg is None else angles_deg)
    if angles.size < 2:
        raise AculinkError("angles_deg needs at least 2 launch angles for a beam fan")
    medium = prepare_medium(site, freq, bottom_reflection=bottom_reflection, step_m=step_m)
    thetas = np.radians(angles)
    rec, _, _ = run_fan(medium, thetas, zs, r_sorted, r_max,
                        max_steps=_fan_budget(r_max, medium.step_m, float(np.max(np.abs(angles)))))
    prof = site.water.profile
    c0 = float(prof.speed(zs))
    z = rec[..., _k.R_Z]
    c = rec[..., _k.R_C]
    xi, zeta = rec[..., _k.R_XI], rec[..., _k.R_ZETA]
    q = c * (xi * rec[..., _k.R_DZ] - zeta * rec[..., _k.R_DX])
    cz = np.full(z.shape, np.nan)
    ok = np.isfinite(z)
    cz[ok] = prof.evaluate(z[ok])[1]
    # normal slowness perturbation of the isochronous neighbour (Jensen et al. 2011, sect. 3.3)
    p = c * (xi * rec[..., _k.R_DZETA] - zeta * rec[..., _k.R_DXI]) + xi * cz * rec[..., _k.R_DT]
    base = c * np.cos(thetas)[:, None] / (c0 * r_sorted[None, :])
    n_s = np.nan_to_num(rec[..., _k.R_NS]).astype(int)
    n_b = np.nan_to_num(rec[..., _k.R_NB]).astype(int)
    surf = _surface_factor(site, np.nan_to_num(rec[..., _k.R_SIN2]), n_s, [freq], medium.surface_speed_mps)[..., 0]
    fac = ((rec[..., _k.R_BRE] + 1j * rec[..., _k.R_BIM]) * surf
           * np.exp(0.5j * np.pi * np.nan_to_num(rec[..., _k.R_NC])) * 10.0 ** (-rec[..., _k.R_ABS] / 20.0))
    bed_z = np.ascontiguousarray(np.asarray(site.seabed.depth_at(r_sorted), dtype=float) * np.ones(r_sorted.size))
    cos_t, sin_t = xi * c, zeta * c
    img_s, img_b = _image_factors(site, medium, freq, z, c, cos_t, sin_t, n_s, n_b, bed_z)
    dtheta = np.abs(np.gradient(thetas))
    wavelength = c0 / freq
    shape = (r_sorted.size, z_sorted.size)
    out_re, out_im, out_inc = np.zeros(shape), np.zeros(shape), np.zeros(shape)
    arr = [np.ascontiguousarray(a, dtype=float) for a in
           (z, c, cos_t, sin_t, rec[..., _k.R_T], q, p, fac.real, fac.imag, img_s.real, img_s.imag,
            img_b.real, img_b.imag, base)]
    kernel = _kb.beam_sum if r_sorted.size > 1 else _kb.beam_sum_serial
    kernel(*arr, dtheta, bed_z, z_sorted, 2.0 * np.pi * freq, wavelength, out_re, out_im, out_inc)
    floor = 10.0 ** (-TL_CAP_DB / 20.0)
    with np.errstate(divide="ignore"):
        tl_coh = -20.0 * np.log10(np.maximum(np.hypot(out_re, out_im), floor))
        tl_inc = -10.0 * np.log10(np.maximum(out_inc, floor * floor))
    below = z_sorted[None, :] > np.asarray(site.seabed.depth_at(r_sorted), dtype=float)[:, None]
    tl_coh[below] = np.nan
    tl_inc[below] = np.nan
    # back to the caller's order
    ri = np.argsort(r_order)
    zi = np.argsort(z_order)
    tl_coh = tl_coh[ri][:, zi]
    tl_inc = tl_inc[ri][:, zi]
    return xr.Dataset(
        {
            "tl_coherent_db": (("range", "depth"), tl_coh, {
                "units": "dB re 1 m", "long_name": "coherent transmission loss (Gaussian beams)"}),
            "tl_incoherent_db": (("range", "depth"), tl_inc, {
                "units": "dB re 1 m", "long_name": "incoherent transmission loss (Gaussian beams)"}),
        },
        coords={
            "range": ("range", ranges, {"units": "m", "long_name": "range from the source"}),
            "depth": ("depth", depths, {"units": "m", "long_name": "depth below the mean surface",
                                        "positive": "down"}),
        },
        attrs={"site": site.name, "source_depth_m": zs, "frequency_hz": freq, "n_beams": int(angles.size),
               "tl_cap_db": TL_CAP_DB, "method": "Gaussian beams with ray-tube widths (Porter and Bucker 1987) and boundary images",
               "title": "transmission loss"},
    )
