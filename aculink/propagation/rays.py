"""Ray fans: from a :class:`~aculink.site.model.Site` to labelled ray paths.

This module turns a site into the plain arrays the numba kernels read (:class:`Medium`), runs fans
of rays through :mod:`aculink.propagation._kernels` and labels the result. The physics and the
integration scheme are described in the kernel module; the choices made here are:

* **Step.** RK4 with an error-controlled arc-length step of at most :data:`STEP_M` (5 m) and a
  local tolerance of :data:`STEP_TOL_M`, shortened to land exactly on boundaries, turning points,
  seabed vertices, receiver ranges and the profile knots where its smoothness breaks (dc/dz or
  d2c/dz2 jumps: every knot of a piecewise-linear or PCHIP profile; steps cross the knots of a C2
  profile), with the ray angle projected back on Snell's law after each step. In very shallow
  water the largest step is kept to a quarter of the shallowest seabed depth.
* **Seabed reflection.** The complex Rayleigh coefficient
  (:func:`aculink.site.seabed.rayleigh_reflection`) is tabulated on :data:`BOTTOM_TABLE_SIZE`
  grazing angles with the critical angle on a node (so the kink there is not smeared) and linearly
  interpolated in the kernel. With attenuation in dB per wavelength the coefficient does not depend
  on frequency. The water speed and density used are those at the mean seabed depth of the track.
  A caller may pass its own ``bottom_reflection(grazing_rad) -> complex`` instead.
* **Absorption.** Francois-Garrison (:func:`aculink.site.absorption.absorption_francois_garrison`)
  at the local temperature, salinity and depth (the profile's values where known, 10 deg C and 35
  otherwise) and the site pH, tabulated on :data:`ABSORPTION_BINS` depth bins; the kernel adds the
  loss of each step at its midpoint depth (or, for eigenrays, the path length in each bin, so that
  the loss can be evaluated at every requested frequency afterwards).
* **Stopping.** A ray stops at the maximum range, when a seabed reflection turns it back, when the
  product of seabed reflection magnitudes falls below :data:`BOUNDARY_FLOOR_DB` (120 dB of
  boundary loss: far below any dynamic range in use), or when its step budget is used up.

References
----------
F. B. Jensen, W. A. Kuperman, M. B. Porter and H. Schmidt, Computational Ocean Acoustics, 2nd ed.
(Springer, 2011), ch. 3.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from aculink.errors import AculinkError, check_range
from aculink.propagation import _kernels as _k

__all__ = ["STEP_M", "STEP_TOL_M", "BOTTOM_TABLE_SIZE", "ABSORPTION_BINS", "BOUNDARY_FLOOR_DB",
           "MAX_LAUNCH_DEG", "DEFAULT_FAN_DEG", "TERMINATION_MEANINGS", "Medium", "bottom_reflection_table",
           "absorption_table_db_per_m", "depth_bin_edges", "prepare_medium", "check_source_depth",
           "check_angles", "check_max_range", "step_budget", "run_fan", "trace_rays"]

#: Largest arc-length step of the RK4 integrator, m (the step controller may take shorter ones).
STEP_M = 5.0
#: Local error tolerance of one step (positions, c times the travel time, the maximum step times the
#: ray angle), m: the step controller shortens steps below :data:`STEP_M` to meet it.
STEP_TOL_M = 1e-4
#: Grazing-angle nodes of the tabulated seabed reflection coefficient.
BOTTOM_TABLE_SIZE = 4097
#: Depth bins of the tabulated absorption.
ABSORPTION_BINS = 256
#: Rays stop when their seabed reflection losses exceed this, dB.
BOUNDARY_FLOOR_DB = 120.0
#: Steepest launch angle accepted, deg.
MAX_LAUNCH_DEG = 89.0
#: Default fan for trace_rays, deg (start, stop, count).
DEFAULT_FAN_DEG = (-30.0, 30.0, 121)

TERMINATION_MEANINGS = "reached_max_range turned_back_by_seabed below_amplitude_floor step_budget_used"


@dataclass(frozen=True)
class Medium:
    """The plain arrays and numbers the ray kernels read for one site (and one frequency)."""

    knots: np.ndarray
    coef: np.ndarray
    bed_r: np.ndarray
    bed_z: np.ndarray
    bed_slope: np.ndarray
    bt_step: float
    bt_re: np.ndarray
    bt_im: np.ndarray
    ab_dz: float
    ab_db: np.ndarray
    step_m: float
    floor_mag: float
    step_tol_m: float
    max_range_m: float
    surface_speed_mps: float

    @property
    def n_freq(self):
        """Frequencies whose absorption the kernels accumulate (rows of ``ab_db``)."""
        return int(self.ab_db.shape[0])

    def kernel(self):
        """The :class:`aculink.propagation._kernels.KernelMedium` the kernels read."""
        lo, hi = _k.landing_pieces(self.knots, self.coef)
        return _k.KernelMedium(self.knots, self.coef, self.bed_r, self.bed_z, self.bed_slope, self.bt_step,
                               self.bt_re, self.bt_im, self.ab_dz, self.ab_db, self.step_m, self.step_tol_m,
                               self.floor_mag, lo, hi)

    def kernel_args(self):
        """Arguments of :func:`aculink.propagation._kernels.trace_ray` after ``theta0, zs``."""
        return (self.kernel(),)


def bottom_reflection_table(site, bottom_reflection=None, size=BOTTOM_TABLE_SIZE):
    """Tabulate the seabed reflection coefficient on uniform grazing angles from 0.

    Returns ``(step_rad, coefficients)``; the critical grazing angle, where there is one, is a node.
    """
    from aculink.site.seabed import rayleigh_reflection

    bed = site.seabed
    depth = float(np.mean(bed.depth_m))
    c_water = float(site.water.profile.speed(depth))
    if bottom_reflection is None:
        def bottom_reflection(theta):
            return rayleigh_reflection(theta, c_water, site.water.density_kgm3, bed.sound_speed_mps,
                                       bed.density_kgm3, bed.attenuation_db_per_wavelength)
        step = 0.5 * math.pi / (size - 1)
        if bed.sound_speed_mps > c_water:
            crit = math.acos(c_water / bed.sound_speed_mps)
            step = crit / max(1, round(crit / step))
    else:
        step = 0.5 * math.pi / (size - 1)
    n = int(math.ceil(0.5 * math.pi / step - 1e-9)) + 1
    theta = np.minimum(step * np.arange(n), 0.5 * math.pi)
    r = np.asarray(bottom_reflection(theta), dtype=complex) * np.ones(n)
    if not np.all(np.isfinite(r)):
        raise AculinkError("bottom_reflection returned non-finite coefficients")
    return step, r


def absorption_table_db_per_m(site, freq_hz, depth_edges_m):
    """Francois-Garrison absorption at each depth bin's centre, dB/m, shape (F, bins)."""
    from aculink.site.absorption import absorption_francois_garrison

    zc = 0.5 * (depth_edges_m[1:] + depth_edges_m[:-1])
    prof = site.water.profile
    temp = np.asarray(prof.temperature_at(zc), dtype=float)
    sal = np.asarray(prof.salinity_at(zc), dtype=float)
    f = np.atleast_1d(np.asarray(freq_hz, dtype=float))
    alpha = absorption_francois_garrison(f[:, None], temp[None, :], sal[None, :], zc[None, :],
                                         site.water.ph)
    return np.asarray(alpha, dtype=float) / 1000.0


def depth_bin_edges(site):
    """Edges of the absorption depth bins, m (surface to the deepest seabed point)."""
    return np.linspace(0.0, site.seabed.max_depth_m, ABSORPTION_BINS + 1)


def prepare_medium(site, freq_hz=None, *, bottom_reflection=None, step_m=None) -> Medium:
    """Build the kernel inputs for ``site``; absorption at ``freq_hz`` (a number or an array: the
    kernels accumulate the loss at each; none when None)."""
    prof = site.water.profile
    bed = site.seabed
    if bed.range_m.size == 1:
        bed_r = np.array([0.0, 1e30])
        bed_z = np.array([bed.depth_m[0], bed.depth_m[0]], dtype=float)
    else:
        bed_r = np.asarray(bed.range_m, dtype=float)
        bed_z = np.asarray(bed.depth_m, dtype=float)
    slope = np.diff(bed_z) / np.diff(bed_r)
    step, table = bottom_reflection_table(site, bottom_reflection)
    edges = depth_bin_edges(site)
    if freq_hz is None:
        ab = np.zeros((1, ABSORPTION_BINS))
    else:
        ab = absorption_table_db_per_m(site, np.atleast_1d(np.asarray(freq_hz, dtype=float)).ravel(), edges)
    if step_m is None:
        step_m = min(STEP_M, 0.25 * float(np.min(bed.depth_m)))
    return Medium(
        knots=np.ascontiguousarray(prof.knots, dtype=float),
        coef=np.ascontiguousarray(prof.coef, dtype=float),
        bed_r=np.ascontiguousarray(bed_r), bed_z=np.ascontiguousarray(bed_z),
        bed_slope=np.ascontiguousarray(slope),
        bt_step=float(step), bt_re=np.ascontiguousarray(table.real), bt_im=np.ascontiguousarray(table.imag),
        ab_dz=float(edges[1] - edges[0]), ab_db=np.ascontiguousarray(ab),
        step_m=float(step_m), floor_mag=10.0 ** (-BOUNDARY_FLOOR_DB / 20.0), step_tol_m=STEP_TOL_M,
        max_range_m=float(bed.max_range_m), surface_speed_mps=float(prof.speed(0.0)),
    )


def check_source_depth(site, source_depth_m):
    """Source depth (default the site's), checked to lie in the water at range 0."""
    zs = site.source.depth_m if source_depth_m is None else source_depth_m
    bottom = float(site.seabed.depth_at(0.0))
    return check_range("source_depth_m", zs, 0.0, bottom, low_open=True, high_open=True, unit="m")


def check_angles(angles_deg):
    """Launch angles as a sorted float array (deg), each inside +-MAX_LAUNCH_DEG."""
    a = np.atleast_1d(np.asarray(angles_deg, dtype=float)).ravel()
    if a.size == 0:
        raise AculinkError("angles_deg is empty: give at least one launch angle")
    bad = a[~np.isfinite(a) | (np.abs(a) > MAX_LAUNCH_DEG)]
    if bad.size:
        raise AculinkError(f"angles_deg = {bad[0]:g} deg: allowed range is "
                           f"[{-MAX_LAUNCH_DEG:g}, {MAX_LAUNCH_DEG:g}] deg")
    return np.unique(a)


def check_max_range(site, max_range_m):
    """Maximum range (default the site's receiver range), within the seabed description."""
    r = site.receiver.range_m if max_range_m is None else max_range_m
    return check_range("max_range_m", r, 0.0, site.seabed.max_range_m, low_open=True, unit="m")


def step_budget(max_range_m, step_m, max_angle_deg):
    """Steps a ray may take: the straight path at the steepest angle, with room for refraction
    and the extra landing steps at boundaries. Only rays that neither die on the seabed nor reach
    the range use it up, so a generous budget costs nothing on ordinary rays."""
    cos_a = math.cos(math.radians(min(abs(max_angle_deg), MAX_LAUNCH_DEG)))
    return int(1.5 * max_range_m / (step_m * cos_a)) + 2000


def run_fan(medium: Medium, thetas_rad, zs, rec_r, r_max, *, path_points=0, max_steps=None,
            parallel=True):
    """Trace a fan; return (records (rays, ranges, record width), info (rays, N_INFO), paths or None).

    Record columns are the ``R_*`` constants of :mod:`aculink.propagation._kernels` (and
    :func:`~aculink.propagation._kernels.abs_column` for the absorption at each medium frequency);
    ``info`` columns the ``I_*`` constants.
    """
    thetas = np.ascontiguousarray(thetas_rad, dtype=float)
    rec_r = np.ascontiguousarray(rec_r, dtype=float)
    n = thetas.size
    rec = np.full((n, rec_r.size, _k.record_width(medium.n_freq)), np.nan)
    paths = [np.full((n, path_points), np.nan) for _ in range(4)]
    info = np.zeros((n, _k.N_INFO))
    if max_steps is None:
        max_steps = step_budget(r_max, medium.step_m, np.degrees(np.max(np.abs(thetas))))
    driver = _k.trace_fan if parallel and n > 1 else _k.trace_fan_serial
    driver(thetas, float(zs), medium.kernel(), float(r_max), int(max_steps), rec_r, rec, *paths, info)
    return rec, info, (paths if path_points else None)


def trace_rays(site, source_depth_m=None, angles_deg=None, max_range_m=None, *, bottom_reflection=None,
               step_m=None):
    """Trace a fan of rays through the site and return their paths.

    Parameters
    ----------
    site : Site
        The environment (profile, seabed, surface).
    source_depth_m : float, optional
        Source depth, m (default the site's source), inside the water at range 0.
    angles_deg : array_like, optional
        Launch angles, deg, positive downward (default -30 to 30 deg, 121 rays).
    max_range_m : float, optional
        Where the rays stop, m (default the site's receiver range); at most the seabed's last range.
    bottom_reflection : callable, optional
        ``f(grazing_rad) -> complex`` seabed reflection coefficient (default Rayleigh from the site).
    step_m : float, optional
        Largest arc-length step, m (default :data:`STEP_M`).

    Returns
    -------
    xarray.Dataset
        Dims ``ray`` x ``point``: ``range_m``, ``depth_m``, ``time_s``, ``angle_deg`` (NaN past a
        ray's end; points at every step and exactly at every boundary, turning point and seabed
        vertex). Per ray: ``launch_angle_deg``, ``surface_bounces``, ``bottom_bounces``,
        ``caustics``, ``termination`` (flag values), ``end_range_m``, ``n_steps``.

    Raises
    ------
    AculinkError
        Source outside the water, launch angles beyond +-89 deg, range beyond the seabed description.

    References
    ----------
    F. B. Jensen, W. A. Kuperman, M. B. Porter and H. Schmidt, Computational Ocean Acoustics, 2nd
    ed. (Springer, 2011), ch. 3 (ray equations, dynamic ray tracing).

    Examples
    --------
    >>> fan = trace_rays(site, angles_deg=np.linspace(-20, 20, 41))  # doctest: +SKIP
    >>> fan.range_m.sel(ray=0).max()                                  # doctest: +SKIP
    """
    import xarray as xr

    zs = check_source_depth(site, source_depth_m)
    angles = check_angles(np.linspace(*DEFAULT_FAN_DEG[:2], DEFAULT_FAN_DEG[2]) if angles_deg is None
                          else angles_deg)
    r_max = check_max_range(site, max_range_m)
    medium = prepare_medium(site, None, bottom_reflection=bottom_reflection, step_m=step_m)
    budget = step_budget(r_max, medium.step_m, float(np.max(np.abs(angles))))
    _, info, paths = run_fan(medium, np.radians(angles), zs, np.empty(0), r_max, path_points=budget + 1,
                             max_steps=budget)
    n_used = int(info[:, _k.I_POINTS].max())
    px, pz, pt, pa = (p[:, :n_used] for p in paths)
    ray = np.arange(angles.size)
    dims = ("ray", "point")
    ds = xr.Dataset(
        {
            "range_m": (dims, px, {"units": "m", "long_name": "horizontal range from the source"}),
            "depth_m": (dims, pz, {"units": "m", "long_name": "depth below the mean surface",
                                   "positive": "down"}),
            "time_s": (dims, pt, {"units": "s", "long_name": "travel time from the source"}),
            "angle_deg": (dims, np.degrees(pa), {"units": "degree",
                                                 "long_name": "ray angle below the horizontal"}),
            "launch_angle_deg": ("ray", angles, {"units": "degree",
                                                 "long_name": "launch angle below the horizontal"}),
            "surface_bounces": ("ray", info[:, _k.I_NS].astype(int), {"units": "1",
                                                                "long_name": "surface reflections"}),
            "bottom_bounces": ("ray", info[:, _k.I_NB].astype(int), {"units": "1", "long_name": "seabed reflections"}),
            "caustics": ("ray", info[:, _k.I_NC].astype(int), {"units": "1", "long_name": "caustics passed"}),
            "termination": ("ray", info[:, _k.I_END].astype(int), {
                "units": "1", "long_name": "why the ray stopped",
                "flag_values": np.array([_k.END_RANGE, _k.END_BACKWARD, _k.END_WEAK, _k.END_STEPS]),
                "flag_meanings": TERMINATION_MEANINGS}),
            "end_range_m": ("ray", info[:, _k.I_X_END], {"units": "m", "long_name": "range where the ray stopped"}),
            "n_steps": ("ray", info[:, _k.I_STEPS].astype(int), {"units": "1", "long_name": "integration steps taken"}),
        },
        coords={"ray": ("ray", ray, {"long_name": "ray index"}),
                "point": ("point", np.arange(n_used), {"long_name": "path point index"})},
        attrs={"site": site.name, "source_depth_m": zs, "max_range_m": r_max, "step_m": medium.step_m,
               "title": "ray fan"},
    )
    return ds
