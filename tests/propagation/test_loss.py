"""Transmission-loss grids from Gaussian beams."""

from __future__ import annotations

import numpy as np
import pytest

from aculink.errors import AculinkError
from aculink.propagation import _kernels_beams as _kb
from aculink.propagation import transmission_loss
from aculink.propagation.loss import default_fan_deg
from aculink.site.absorption import absorption_francois_garrison

import image_method as images


def _no_seabed(theta):
    """A seabed that reflects nothing, so a deep layer is an exact half-space."""
    return np.zeros(np.shape(theta))


def _rayleigh_lossless(theta, c1=1500.0, rho1=1000.0, c2=1650.0, rho2=1800.0):
    """Plane-wave reflection coefficient of a lossless fluid-fluid interface (Rayleigh; Brekhovskikh,
    Waves in Layered Media, 1960, ch. 1; Jensen et al. 2011, sect. 1.6), conjugated to exp(+j omega t)."""
    th = np.asarray(theta, dtype=float)
    k1z = np.sin(th) / c1
    k2z = np.sqrt((1.0 / c2**2 - np.cos(th) ** 2 / c1**2).astype(complex))
    return np.conj((rho2 * k1z - rho1 * k2z) / (rho2 * k1z + rho1 * k2z))


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
    ([Jensen2011] with no seabed reached): p = exp(-jkR1)/R1 - exp(-jkR2)/R2. Compared where the
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


def test_lloyd_mirror_down_to_one_metre_below_the_surface(make_site):
    """Coherent TL within 0.1 dB of the Lloyd mirror from 1 m to 100 m below the surface.

    Source: image method, exact for a point source in isovelocity water below a pressure-release
    surface (Jensen et al. 2011, ch. 2, from memory): p = exp(-jkR1)/R1 - exp(-jkR2)/R2, including
    the nulls (a seabed that reflects nothing makes the deep layer a half-space). Default fan. Beams
    straddling the surface need their images here: without them the TL near the surface is off by
    several dB (measured when this test was written).
    """
    site = make_site(seabed_depth_m=(5000.0,), source_depth_m=50.0)
    f = 500.0
    r = np.linspace(200.0, 3000.0, 15)
    z = np.array([1.0, 2.0, 3.0, 5.0, 8.0, 10.0, 15.0, 20.0, 30.0, 60.0, 100.0])
    tl = transmission_loss(site, r, z, f, bottom_reflection=_no_seabed)
    k = 2 * np.pi * f / 1500.0
    R1 = np.hypot(r[:, None], z[None, :] - 50.0)
    alpha = absorption_francois_garrison(f, 10.0, 35.0, 50.0, 8.0) / 1000.0
    exact = -20 * np.log10(np.abs(images.image_pressure(r, z, 50.0, 5000.0, k, 0, bottom=_no_seabed))) + alpha * R1
    np.testing.assert_allclose(tl.tl_coherent_db.values, exact, atol=0.1)


def test_isovelocity_channel_incoherent_near_both_boundaries(make_site):
    """Incoherent TL within 0.5 dB of the image sum 1 to 10 m from the surface and from the seabed.

    Source: image method in an isovelocity layer (Jensen et al. 2011, ch. 2, from memory), with the
    lossless Rayleigh coefficient of a 1650 m/s, 1800 kg/m^3 fluid seabed (Brekhovskikh 1960) at
    every seabed bounce and -1 at the surface; incoherent: -10 log10 sum |A_n|^2. Absorption
    (Francois and Garrison 1982, 10 degC, 35 psu) added as alpha r. Measured when written: within
    0.05 dB with boundary images, 2.8 dB off without them.
    """
    D, zs, f = 100.0, 30.0, 2000.0
    site = make_site(seabed_depth_m=(D,), source_depth_m=zs)
    r = np.array([500.0, 1000.0, 2000.0, 5000.0, 10000.0])
    z = np.array([1.0, 2.0, 3.0, 5.0, 10.0, 90.0, 95.0, 97.0, 98.0, 99.0])
    tl = transmission_loss(site, r, z, f, bottom_reflection=_rayleigh_lossless)
    alpha = absorption_francois_garrison(f, 10.0, 35.0, 50.0, 8.0) / 1000.0
    ref = images.image_incoherent_tl_db(r, z, zs, D, 400, bottom=_rayleigh_lossless) + alpha * r[:, None]
    np.testing.assert_allclose(tl.tl_incoherent_db.values, ref, atol=0.5)


def test_default_fan_leaves_no_silent_wedge_beside_a_deep_source(make_site):
    """Near a deep source every depth gets energy: incoherent TL follows direct + surface paths.

    Source: image method (Lloyd mirror, incoherent: -10 log10(1/R1^2 + 1/R2^2)), isovelocity, a
    seabed reflecting 1e-3 (60 dB per bounce, its path negligible). The direct path to (100 m,
    4990 m) leaves the source at 87.7 deg, outside a +-80 deg fan (which leaves 200 dB "no beam"
    values there). Within 1 dB at 100 m (steep beams evaluated on a column, a paraxial limit) and
    0.1 dB at 300 m and 1 km (tolerances from the measured 0.45 and 0.01 dB; common practice, no source).
    """
    site = make_site(seabed_depth_m=(5000.0,), source_depth_m=2500.0)
    r = np.array([100.0, 300.0, 1000.0])
    z = np.linspace(10.0, 4990.0, 100)
    f = 500.0
    tl = transmission_loss(site, r, z, f, bottom_reflection=lambda th: np.full(np.shape(th), 1e-3))
    assert tl.attrs["n_beams"] == default_fan_deg(site, 1000.0).size
    R1 = np.hypot(r[:, None], z[None, :] - 2500.0)
    R2 = np.hypot(r[:, None], z[None, :] + 2500.0)
    alpha = absorption_francois_garrison(f, 10.0, 35.0, 2500.0, 8.0) / 1000.0
    ref = -10 * np.log10(1 / R1**2 + 1 / R2**2) + alpha * R1
    err = np.abs(tl.tl_incoherent_db.values - ref)
    assert err[0].max() < 1.0
    assert err[1:].max() < 0.1


def test_default_fan_spans_the_steepest_launch_angle(make_site):
    """The default fan reaches +-89 deg, with at most 0.1 deg and a quarter branch D/r between rays
    (contract of default_fan_deg; the branch rule is common practice, no source)."""
    site = make_site(seabed_depth_m=(100.0,))
    a = default_fan_deg(site, 10000.0)
    assert a[0] == -89.0 and a[-1] == 89.0
    assert np.max(np.diff(a)) <= min(0.1, 0.25 * np.degrees(100.0 / 10000.0)) + 1e-12
    assert np.max(np.diff(default_fan_deg(site, 100.0))) <= 0.1 + 1e-12


def _beam_sum_numpy(z, c, cos_t, sin_t, tau, q, p, fac, img_s, img_b, base, dtheta, bed_z, depths, omega, w_min):
    """Slow, obviously correct twin of the beam-sum kernel: every beam and image on every grid point
    with the formulas of the kernel's docstring, no reach cut-off beyond the same 5 widths."""
    n_r, n_z = z.shape[1], depths.size
    out = np.zeros((n_r, n_z), complex)
    inc = np.zeros((n_r, n_z))
    for j in range(n_r):
        for i in range(z.shape[0]):
            if np.isnan(z[i, j]):
                continue
            w = max(abs(q[i, j]) * dtheta[i], w_min)
            reach = _kb.BEAM_REACH * w / max(cos_t[i, j], 1e-6)
            b_coh = np.sqrt(base[i, j] * abs(q[i, j])) * dtheta[i] / (w * np.sqrt(2 * np.pi))
            b_inc = base[i, j] * dtheta[i] / (w * np.sqrt(np.pi))
            curv = p[i, j] / q[i, j]
            beams = [(z[i, j], sin_t[i, j], fac[i, j], depths >= -np.inf),
                     (-z[i, j], -sin_t[i, j], fac[i, j] * img_s[i, j], depths >= 0.0),
                     (2 * bed_z[j] - z[i, j], -sin_t[i, j], fac[i, j] * img_b[i, j], depths <= bed_z[j])]
            for zc, st, a, side in beams:
                d = depths - zc
                sel = side & (np.abs(d) < reach)
                n = d * cos_t[i, j]
                g = np.exp(-0.5 * (n / w) ** 2)
                t = tau[i, j] + d * st / c[i, j] + 0.5 * curv * n * n
                out[j] += np.where(sel, b_coh * a * g * np.exp(-1j * omega * t), 0.0)
                inc[j] += np.where(sel, b_inc * abs(a) ** 2 * g * g, 0.0)
    return out, inc


@pytest.mark.parametrize("kernel", [_kb.beam_sum, _kb.beam_sum_serial])
def test_beam_kernels_match_a_slow_numpy_twin(kernel):
    """The parallel and serial beam kernels equal a plain numpy loop on random beams (to 1e-9)."""
    rng = np.random.default_rng(7)
    n_rays, n_r = 40, 3
    depths = np.sort(rng.uniform(0.0, 60.0, 50))
    bed_z = np.array([60.0, 58.0, 61.0])
    z = rng.uniform(0.0, 58.0, (n_rays, n_r))
    z[3, 1] = np.nan
    theta = rng.uniform(-1.2, 1.2, (n_rays, n_r))
    c = rng.uniform(1480.0, 1520.0, (n_rays, n_r))
    q = rng.uniform(-300.0, 300.0, (n_rays, n_r))
    p = rng.uniform(-1e-3, 1e-3, (n_rays, n_r))
    tau = rng.uniform(0.1, 2.0, (n_rays, n_r))
    fac = rng.normal(size=(n_rays, n_r)) + 1j * rng.normal(size=(n_rays, n_r))
    img_s = rng.normal(size=(n_rays, n_r)) + 1j * rng.normal(size=(n_rays, n_r))
    img_b = rng.normal(size=(n_rays, n_r)) + 1j * rng.normal(size=(n_rays, n_r))
    base = rng.uniform(1e-5, 1e-3, (n_rays, n_r))
    dtheta = rng.uniform(1e-3, 1e-2, n_rays)
    omega, w_min = 2 * np.pi * 3000.0, 0.5
    args = [np.ascontiguousarray(a) for a in (z, c, np.cos(theta), np.sin(theta), tau, q, p, fac.real, fac.imag,
                                               img_s.real, img_s.imag, img_b.real, img_b.imag, base)]
    out_re, out_im, out_inc = np.zeros((n_r, 50)), np.zeros((n_r, 50)), np.zeros((n_r, 50))
    kernel(*args, dtheta, bed_z, depths, omega, w_min, out_re, out_im, out_inc)
    ref, ref_inc = _beam_sum_numpy(z, c, np.cos(theta), np.sin(theta), tau, q, p, fac, img_s, img_b, base, dtheta,
                                   bed_z, depths, omega, w_min)
    np.testing.assert_allclose(out_re + 1j * out_im, ref, rtol=1e-9, atol=1e-12 * np.abs(ref).max())
    np.testing.assert_allclose(out_inc, ref_inc, rtol=1e-9, atol=1e-12 * ref_inc.max())


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
