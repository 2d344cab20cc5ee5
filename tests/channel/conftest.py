"""Fixtures for the channel tests: Arrivals datasets built by hand from the image method.

The image method for an isovelocity waveguide ([Jensen2011], exact): image sources
at depths 2nD + zs and 2nD - zs, path length L = sqrt(r^2 + (zr - z_img)^2), delay L / c,
grazing angle atan(|zr - z_img| / r) at every bounce, amplitude (-1)^ns R_b^nb / L. The datasets
follow the Arrivals contract of DEVELOPERS.md, so the channel tests do not depend on the ray
tracer.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import xarray as xr

ROOT = Path(__file__).resolve().parents[2]
ENVIRONMENTS = ROOT / "environments"


def image_arrivals(*, depth_m=100.0, c=1500.0, zs=30.0, zr=60.0, range_m=1000.0, n_images=1,
                   bottom_r=0.5, freq_hz=(12000.0,), sin2_extra=None, absorption_db_per_m=0.0):
    """Arrivals (dims range, depth, arrival, frequency) of an isovelocity waveguide.

    ``n_images`` = 0 keeps the direct path and the surface image only (two paths).
    """
    rows = []
    for n in range(-n_images, n_images + 1):
        for sign in (+1, -1):
            z_img = 2 * n * depth_m + sign * zs
            if sign > 0:
                ns = nb = abs(n)
            elif n <= 0:
                ns, nb = abs(n) + 1, abs(n)
            else:
                ns, nb = n - 1, n
            if n_images == 0 and not (n == 0):
                continue
            dz = zr - z_img
            length = float(np.hypot(range_m, dz))
            grazing = float(np.arctan2(abs(dz), range_m))
            rows.append((length / c, length, grazing, ns, nb, dz))
    rows.sort()
    freq = np.asarray(freq_hz, dtype=float)
    a = len(rows)
    delay = np.array([r[0] for r in rows])
    length = np.array([r[1] for r in rows])
    grazing = np.array([r[2] for r in rows])
    ns = np.array([r[3] for r in rows])
    nb = np.array([r[4] for r in rows])
    dz = np.array([r[5] for r in rows])
    absorb = absorption_db_per_m * length[:, None] * (freq[None, :] / freq[0]) ** 2
    amp = ((-1.0) ** ns * bottom_r ** nb / length)[:, None] * 10 ** (-absorb / 20) + 0j
    # launch angle positive downward at the source: the path heads toward the image's mirror
    launch = np.rad2deg(np.arctan2(dz, range_m))
    sin2 = ns * np.sin(grazing) ** 2 if sin2_extra is None else sin2_extra * np.ones(a)

    def v(x, dims, units, long_name):
        return (dims, np.asarray(x)[None, None, ...], {"units": units, "long_name": long_name})

    ds = xr.Dataset(
        {
            "delay_s": v(delay, ("range", "depth", "arrival"), "s", "delay"),
            "amplitude": v(amp, ("range", "depth", "arrival", "frequency"), "1", "complex amplitude re 1 m"),
            "launch_angle_deg": v(launch, ("range", "depth", "arrival"), "degree", "launch angle"),
            "arrival_angle_deg": v(launch, ("range", "depth", "arrival"), "degree", "arrival angle"),
            "surface_bounces": v(ns, ("range", "depth", "arrival"), "1", "surface bounces"),
            "bottom_bounces": v(nb, ("range", "depth", "arrival"), "1", "bottom bounces"),
            "surface_grazing_sin2_sum": v(sin2, ("range", "depth", "arrival"), "1", "sum sin^2"),
            "path_length_m": v(length, ("range", "depth", "arrival"), "m", "path length"),
            "absorption_db": v(absorb, ("range", "depth", "arrival", "frequency"), "dB", "absorption"),
        },
        coords={"range": ("range", [range_m], {"units": "m"}), "depth": ("depth", [zr], {"units": "m"}),
                "arrival": np.arange(a), "frequency": ("frequency", freq, {"units": "Hz"})},
        attrs={"source_depth_m": zs},
    )
    ds["n_arrivals"] = (("range", "depth"), np.array([[a]]))
    return ds


def empty_arrivals(freq_hz=(12000.0,)):
    ds = image_arrivals(freq_hz=freq_hz)
    ds = ds.isel(arrival=slice(0, 1))
    ds["delay_s"][:] = np.nan
    ds["amplitude"][:] = 0
    ds.attrs["reason"] = "receiver in a shadow zone"
    return ds


@pytest.fixture
def shelf_site():
    """The bundled summer shelf site (loader under test elsewhere)."""
    from aculink.site.loader import load_site

    return load_site(ENVIRONMENTS / "shelf_summer.toml")


@pytest.fixture
def calm_site(shelf_site):
    """Shelf site with a flat calm sea, no motion, receiver at 1 km / 50 m, isovelocity-like use."""
    from aculink.site.model import Surface

    return shelf_site.replace(surface=Surface(0.0, 0.0)).with_geometry(range_m=1000.0, depth_m=50.0)
