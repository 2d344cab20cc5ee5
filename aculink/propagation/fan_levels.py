"""What each ray of a traced fan carries: its level along range, for pictures.

:func:`ray_levels` re-traces the fan of :func:`aculink.propagation.rays.trace_rays` with crossing
records on a grid of ranges (the kernel's records hold the dynamic-ray quantities, the product of
seabed reflection coefficients, the surface grazing angles and the absorption accumulated so far)
and turns each record into the ray's level, dB re 1 m from the source::

    L = 20 log10( sqrt(c cos(theta0) / (c0 r |q|)) |R_seabed| |R_surface| ) - absorption

(Jensen et al. 2011, sect. 3.3, for the amplitude; Eckart 1953 for the coherent surface
reflection). Near a caustic q passes through zero and ray theory's amplitude is unbounded; for
display each level is capped at 20 dB above spherical spreading (|q| >= r / 100 for a ray launched
horizontally), so that one focusing ray does not make every other ray at that range look weak.

References
----------
F. B. Jensen, W. A. Kuperman, M. B. Porter and H. Schmidt, Computational Ocean Acoustics, 2nd ed.
(Springer, 2011), sect. 3.3 (ray amplitude from dynamic ray tracing).
C. Eckart, "The scattering of sound from the sea surface", J. Acoust. Soc. Am. 25, 566-570 (1953).
"""

from __future__ import annotations

import numpy as np

from aculink.propagation import _kernels as _k

__all__ = ["ray_levels", "CAUSTIC_CAP_DB"]

#: Display cap on a ray's level above spherical spreading, dB (ray amplitude diverges at caustics).
CAUSTIC_CAP_DB = 20.0


def ray_levels(site, fan, *, freq_hz=None, n_ranges=200, bottom_reflection=None):
    """Level of every ray of ``fan`` on a grid of ranges.

    Parameters
    ----------
    site : Site
        The site the fan was traced in.
    fan : xarray.Dataset
        A result of :func:`aculink.propagation.trace_rays` (its launch angles, source depth, maximum
        range and step are reused).
    freq_hz : float, optional
        Frequency of the absorption and surface loss, Hz (default the modem carrier).
    n_ranges : int
        Number of ranges, evenly spaced up to the fan's maximum range.
    bottom_reflection : callable, optional
        The same seabed reflection override that was given to ``trace_rays``.

    Returns
    -------
    ranges_m : ndarray (K,)
    level_db : ndarray (rays, K)
        dB re 1 m from the source (spreading, seabed and surface reflection losses, absorption);
        NaN where the ray does not reach that range.
    """
    from aculink.propagation.eigenrays import _spreading, _surface_factor
    from aculink.propagation.rays import prepare_medium, run_fan, step_budget

    f = float(site.modem.carrier_hz if freq_hz is None else freq_hz)
    r_max = float(fan.attrs["max_range_m"])
    zs = float(fan.attrs["source_depth_m"])
    ranges = np.linspace(r_max / n_ranges, r_max, int(n_ranges))
    medium = prepare_medium(site, f, bottom_reflection=bottom_reflection, step_m=fan.attrs.get("step_m"))
    thetas = np.radians(fan.launch_angle_deg.values)
    budget = step_budget(r_max, medium.step_m, float(np.degrees(np.max(np.abs(thetas)))))
    rec, _, _ = run_fan(medium, thetas, zs, ranges, r_max, max_steps=budget)
    c0 = float(site.water.profile.speed(zs))
    with np.errstate(invalid="ignore", divide="ignore"):
        spread = _spreading(rec, np.cos(thetas)[:, None], c0, ranges[None, :])
        bottom = np.hypot(rec[..., _k.R_BRE], rec[..., _k.R_BIM])
        sin2 = np.nan_to_num(rec[..., _k.R_SIN2])
        n_s = np.nan_to_num(rec[..., _k.R_NS]).astype(int)
        surface = np.abs(_surface_factor(site, sin2, n_s, np.array([f]), medium.surface_speed_mps))[..., 0]
        spread_db = np.minimum(20.0 * np.log10(spread), CAUSTIC_CAP_DB - 20.0 * np.log10(ranges)[None, :])
        level = spread_db + 20.0 * np.log10(bottom * surface) - rec[..., _k.R_ABS]
        level = np.where(np.isfinite(rec[..., _k.R_Z]), level, np.nan)
    return ranges, level
