"""Transmission-loss grids from Gaussian beams."""

from __future__ import annotations

import numpy as np
import pytest

from aculink.errors import AculinkError
from aculink.propagation import transmission_loss
from aculink.site.absorption import absorption_francois_garrison


def test_spherical_spreading_in_deep_isovelocity_water(make_site):
    """Deep isovelocity water, no boundary reached: TL = 20 log10 R plus absorption.

    Source: spherical spreading of a point source (Urick, Principles of Underwater Sound, 3rd ed. 1983,
    ch. 5), absorption from Francois and Garrison (1982) at 10 degC, 35 psu, the source depth (the
    receivers sit at the source depth +-300 m, where the formula's depth terms change by < 0.1%).
    Within 0.05 dB, coherent and incoherent.
    """
    site = make_site(seabed_depth_m=(11000.0,), source_depth_m=5500.0)
    r = np.array([500.0, 1000.0, 3000.0, 6000.0])
    z = np.array([5200.0, 5500.0, 5800.0])
    f = 1000.0
    tl = transmission_loss(site, r, z, f, angles_deg=np.linspace(-45, 45, 1801))
    R = np.hypot(r[:, None], z[None, :] - 5500.0)
    alpha = absorption_francois_garrison(f, 10.0, 35.0, 5500.0, 8.0) / 1000.0
    expect = 20 * np.log10(R) + alpha * R
    np.testing.assert_allclose(tl.tl_coherent_db.values, expect, atol=0.05)
    np.testing.assert_allclose(tl.tl_incoherent_db.values, expect, atol=0.05)
    assert tl.tl_coherent_db.attrs["units"] == "dB re 1 m"


def test_lloyd_mirror_near_a_pressure_release_surface(make_site):
    """Coherent TL near the surface follows the two-path (Lloyd's mirror) interference pattern.

    Source: image method, exact for an isovelocity half-space with a pressure-release surface
    (REFERENCES 6.3 with no seabed reached): p = exp(-jkR1)/R1 - exp(-jkR2)/R2. Compared where the
    exact TL is within 10 dB of spherical spreading (away from the nulls), within 1 dB; the incoherent
    TL equals -10 log10(1/R1^2 + 1/R2^2) within 0.2 dB.
    """
    site = make_site(seabed_depth_m=(5000.0,), source_depth_m=50.0)
    f = 500.0
    r = np.linspace(500.0, 3000.0, 26)
    z = np.linspace(5.0, 200.0, 40)
    tl = transmission_loss(site, r, z, f, angles_deg=np.linspace(-60, 60, 2401))
    k = 2 * np.pi * f / 1500.0
    R1 = np.hypot(r[:, None], z[None, :] - 50.0)
    R2 = np.hypot(r[:, None], z[None, :] + 50.0)
    alpha = absorption_francois_garrison(f, 10.0, 35.0, 100.0, 8.0) / 1000.0
    p = np.exp(-1j * k * R1) / R1 - np.exp(-1j * k * R2) / R2
    exact = -20 * np.log10(np.abs(p)) + alpha * R1
    away = exact < 20 * np.log10(R1) + 10.0
    assert away.sum() > 300
    np.testing.assert_allclose(tl.tl_coherent_db.values[away], exact[away], atol=1.0)
    inc = -10 * np.log10(1 / R1**2 + 1 / R2**2) + alpha * R1
    np.testing.assert_allclose(tl.tl_incoherent_db.values, inc, atol=0.2)


def test_finite_in_shadow_and_at_caustics(make_site, munk):
    """TL is finite everywhere in the water, including shadow zones and caustics (Munk profile).

    Source: property of Gaussian-beam summation (Porter and Bucker 1987, J. Acoust. Soc. Am. 82(4));
    no numeric reference. Below-seabed points are NaN.
    """
    z, c = munk(5000.0, 50.0)
    site = make_site(z, c, seabed_depth_m=(5000.0,), source_depth_m=1000.0)
    tl = transmission_loss(site, np.linspace(2000.0, 70000.0, 35), np.linspace(0.0, 5000.0, 51), 100.0,
                           angles_deg=np.linspace(-20, 20, 801))
    v = tl.tl_coherent_db.values
    assert np.all(np.isfinite(v)) and np.all(np.isfinite(tl.tl_incoherent_db.values))
    assert np.all(v <= tl.attrs["tl_cap_db"])


def test_grid_below_a_sloping_seabed_is_nan_and_bad_input(make_site):
    """Points below a sloping seabed are NaN; a grid outside the site raises (contract; no source)."""
    site = make_site(seabed_range_m=(0.0, 2000.0), seabed_depth_m=(100.0, 50.0), source_depth_m=30.0)
    tl = transmission_loss(site, [500.0, 1900.0], [40.0, 80.0], 2000.0)
    assert np.isfinite(tl.tl_coherent_db.sel(range=500.0, depth=80.0))
    assert np.isnan(tl.tl_coherent_db.sel(range=1900.0, depth=80.0))
    with pytest.raises(AculinkError, match="ranges_m = 2500"):
        transmission_loss(site, [2500.0], [40.0])
    with pytest.raises(AculinkError, match="depths_m = 120"):
        transmission_loss(site, [500.0], [120.0])
    with pytest.raises(AculinkError, match="freq_hz = 0"):
        transmission_loss(site, [500.0], [40.0], 0.0)
