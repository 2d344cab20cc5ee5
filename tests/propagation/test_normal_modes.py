"""The normal-mode reference (tests/propagation/normal_modes.py) and the ray models against it.

First the mode solver against closed forms (isovelocity modes, the Pekeris characteristic equation
and cut-off frequencies, the image sum, first-order attenuation); then the incoherent TL of the
eigenrays and of the Gaussian beams against the incoherent mode sum in a downward-refracting
summer-thermocline shallow waveguide over a hard fluid seabed, where the trapped modes are exact.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from aculink.propagation import find_arrivals, transmission_loss
from aculink.propagation.rays import absorption_table_db_per_m, depth_bin_edges
from aculink.site.loader import site_from_dict

import image_method as images
import normal_modes as nm


def _pekeris_exact(f, D, c1, rho1, c2, rho2):
    """Trapped-mode k_r from tan(kz D) = -(rho2/rho1) kz / gamma, one root per ((m-1/2) pi, m pi) / D."""
    k1, k2 = 2 * np.pi * f / c1, 2 * np.pi * f / c2
    kz_max = math.sqrt(k1**2 - k2**2)

    def g(kz):
        return math.sin(kz * D) * math.sqrt(max(k1**2 - kz**2 - k2**2, 0.0)) + (rho2 / rho1) * kz * math.cos(kz * D)

    out = []
    m = 1
    while (m - 0.5) * np.pi / D < kz_max:
        lo, hi = (m - 0.5) * np.pi / D, min(m * np.pi / D, kz_max)
        if g(lo) * g(hi) > 0:
            break
        out.append(math.sqrt(k1**2 - brentq(g, lo, hi, xtol=1e-15) ** 2))
        m += 1
    return np.array(out)


def test_rigid_bottom_isovelocity_modes_match_the_closed_form():
    """k_r and psi of an isovelocity layer over a rigid seabed.

    Source: closed form (Jensen et al. 2011, ch. 2 and 5, the ideal waveguide; from memory, and
    it solves the depth equation exactly): k_z = (m - 1/2) pi / D, psi_m = sqrt(2 rho / D) sin(k_z z).
    k_r^2 within 1e-5 k^2 (Richardson-extrapolated finite differences leave O(h^4): measured 6e-6 k^2,
    the largest for the mode nearest cut-off), shapes within 1e-6 of their peak.
    """
    D, c, f, rho = 100.0, 1500.0, 200.0, 1000.0
    ms = nm.modes([0.0, D], [c, c], D, f, bottom="rigid", density_kgm3=rho)
    k = 2 * np.pi * f / c
    m = np.arange(1, ms.k_r.size + 1)
    kz = (m - 0.5) * np.pi / D
    assert ms.k_r.size == int(k * D / np.pi + 0.5)  # every kz below k propagates
    np.testing.assert_allclose(ms.k_r.real**2, k**2 - kz**2, rtol=0, atol=1e-5 * k**2)
    exact = np.sqrt(2 * rho / D) * np.sin(kz[:, None] * ms.z[None, :])
    sign = np.sign(np.sum(exact * ms.psi, axis=1))
    np.testing.assert_allclose(ms.psi * sign[:, None], exact, atol=1e-6 * np.sqrt(2 * rho / D))


def test_pekeris_modes_match_the_characteristic_equation():
    """Trapped modes over a fluid half-space (Pekeris waveguide).

    Source: Pekeris (1948), Geol. Soc. Am. Mem. 27; Jensen et al. 2011, ch. 2 (from memory):
    tan(kz D) = -(rho2/rho1) kz / gamma, gamma = sqrt(k_r^2 - k2^2), psi = A sin(kz z) with
    int psi^2/rho dz + psi(D)^2/(2 gamma rho2) = 1, roots by scipy.optimize.brentq. k_r within 1e-6
    relative (measured 3e-8), shapes within 0.5% of their peak (measured 0.07%).
    """
    D, c1, rho1, c2, rho2, f = 100.0, 1500.0, 1000.0, 1700.0, 1800.0, 300.0
    ms = nm.modes([0.0, D], [c1, c1], D, f, bottom=nm.FluidBottom(c2, rho2), density_kgm3=rho1)
    kr = _pekeris_exact(f, D, c1, rho1, c2, rho2)
    assert ms.k_r.size == kr.size
    np.testing.assert_allclose(ms.k_r.real, kr, rtol=1e-6)
    k2 = 2 * np.pi * f / c2
    kz = np.sqrt((2 * np.pi * f / c1) ** 2 - kr**2)
    gamma = np.sqrt(kr**2 - k2**2)
    norm = (D / 2 - np.sin(2 * kz * D) / (4 * kz)) / rho1 + np.sin(kz * D) ** 2 / (2 * gamma * rho2)
    exact = np.sin(kz[:, None] * ms.z[None, :]) / np.sqrt(norm)[:, None]
    sign = np.sign(np.sum(exact * ms.psi, axis=1))
    np.testing.assert_allclose(ms.psi * sign[:, None], exact, atol=5e-3 * np.abs(exact).max())


@pytest.mark.parametrize("n", [1, 2, 5])
def test_pekeris_mode_cutoff_frequencies(n):
    """Mode n appears at f_n = (n - 1/2) c1 c2 / (2 D sqrt(c2^2 - c1^2)).

    Source: Jensen et al. 2011, ch. 2 (Pekeris waveguide cut-off, from memory; it follows from the
    characteristic equation at gamma = 0). 1% below f_n there are n - 1 trapped modes, 1% above n.
    """
    D, c1, c2 = 100.0, 1500.0, 1700.0
    fn = (n - 0.5) * c1 * c2 / (2 * D * math.sqrt(c2**2 - c1**2))
    for f, count in ((0.99 * fn, n - 1), (1.01 * fn, n)):
        ms = nm.modes([0.0, D], [c1, c1], D, f, bottom=nm.FluidBottom(c2, 1800.0))
        assert ms.k_r.size == count


def test_coherent_mode_sum_equals_the_image_sum():
    """The modal field of a unit source equals the image sum at short range (fixes the 4 pi).

    Source: image method, exact for an isovelocity layer with a pressure-release surface and a rigid
    seabed (Jensen et al. 2011, ch. 2, from memory), with free field exp(ikR)/(4 pi R): p = sum
    (-1)^n_s exp(ikL)/(4 pi L); the mode field p = i/(4 rho) sum psi psi H0(k_r r) (Jensen et al.
    2011, eq. 5.13, from memory). A uniform attenuation alpha = 2e-4 Np/m (k -> k + i alpha in
    both) makes the image sum converge absolutely. Complex pressures within 1.5% (measured 0.5%,
    median 0.05%) and coherent TL -20 log10(4 pi |p|) within 0.1 dB (measured 0.035 dB), 300 m to
    2 km. k D / pi = 13, so no mode is near cut-off.
    """
    D, c, zs, alpha = 100.0, 1500.0, 37.0, 2e-4
    f = 13 * c / (2 * D)
    k = 2 * np.pi * f / c
    ms = nm.modes([0.0, D], [c, c], D, f, bottom="rigid", density_kgm3=1000.0,
                  attenuation_np_per_m=lambda z: np.full(np.shape(z), alpha))
    r = np.array([300.0, 500.0, 1000.0, 2000.0])
    z = np.linspace(3.0, 97.0, 48)
    p_modes = nm.pressure(ms, r, z, zs)
    amp, L = images.image_terms(r, z, zs, D, 1000)
    p_images = np.sum(amp * np.exp(1j * k * L - alpha * L), axis=-1) / (4 * np.pi)
    assert np.max(np.abs(p_modes - p_images) / np.abs(p_images)) < 0.015
    np.testing.assert_allclose(nm.tl_coherent_db(ms, r, z, zs), -20 * np.log10(4 * np.pi * np.abs(p_images)),
                               atol=0.1)


def test_attenuation_enters_to_first_order():
    """Im k_r of a uniformly attenuating isovelocity layer: exact sqrt((k + i alpha)^2 - kz^2).

    Source: closed form of the rigid-bottom modes with a complex wavenumber (Jensen et al. 2011,
    ch. 5, from memory); first-order perturbation theory agrees to O(alpha^2): within 1e-3 relative.
    """
    D, c, f, alpha = 100.0, 1500.0, 200.0, 1e-4
    ms = nm.modes([0.0, D], [c, c], D, f, bottom="rigid",
                  attenuation_np_per_m=lambda z: np.full(np.shape(z), alpha))
    k = 2 * np.pi * f / c
    kz = (np.arange(1, ms.k_r.size + 1) - 0.5) * np.pi / D
    exact = np.sqrt((k + 1j * alpha) ** 2 - kz**2)
    np.testing.assert_allclose(ms.k_r.imag, exact.imag, rtol=1e-3)


# --- the ray models against the modes in a summer-thermocline shallow waveguide -------------------

#: Our own scenario: a warm mixed layer over a seasonal thermocline (downward refracting), 100 m of
#: water over a hard, lossless fluid seabed (1800 m/s, 2000 kg/m^3, critical angle 34 deg), a calm
#: flat surface (the mode model has no roughness).
THERMOCLINE = {
    "name": "summer thermocline over a hard seabed (test scenario)",
    "water": {"depth_m": [0.0, 15.0, 25.0, 35.0, 50.0, 100.0],
              "sound_speed_mps": [1521.0, 1520.5, 1512.0, 1500.0, 1493.0, 1490.0]},
    "seabed": {"depth_m": [100.0], "sound_speed_mps": 1800.0, "density_kgm3": 2000.0,
               "attenuation_db_per_wavelength": 0.0},
    "surface": {"wind_speed_mps": 0.0},
    "source": {"depth_m": 40.0},
    "receiver": {"depth_m": 50.0, "range_m": 5000.0},
    "modem": {"carrier_hz": 1000.0, "bandwidth_hz": 500.0},
}
RANGES_M = np.arange(1000.0, 10001.0, 1000.0)
DEPTHS_M = np.arange(4.0, 97.0, 4.0)
#: The comparison's goal: median |difference| and its 95th percentile, dB.
GOAL_MEDIAN_DB, GOAL_P95_DB = 1.0, 3.0


def thermocline_reference():
    """The site, the incoherent mode TL on the grid, and the mask of points compared.

    The modes carry the water's Francois-Garrison absorption (the same depth table the ray tracer
    uses, an input here, not the thing tested) by first-order perturbation. Compared: every grid
    point except those within a wavelength of the source depth, where the incoherent mode sum has
    its known enhancement (the squared mode products add in phase at z = zs: up to 1.8 dB in an
    isovelocity layer; Jensen et al. 2011, ch. 5, from memory), which incoherent rays do not have.
    """
    site = site_from_dict(THERMOCLINE)
    f = site.modem.carrier_hz
    water = THERMOCLINE["water"]
    edges = depth_bin_edges(site)
    db_per_m = absorption_table_db_per_m(site, f, edges)[0]
    centres = 0.5 * (edges[1:] + edges[:-1])

    def alpha(z):
        return np.interp(z, centres, db_per_m) / (20.0 * math.log10(math.e))

    ms = nm.modes(water["depth_m"], water["sound_speed_mps"], 100.0, f, bottom=nm.FluidBottom(1800.0, 2000.0),
                  density_kgm3=site.water.density_kgm3, attenuation_np_per_m=alpha, points_per_wavelength=20)
    ref = nm.tl_incoherent_db(ms, RANGES_M, DEPTHS_M, site.source.depth_m)
    wavelength = float(site.water.profile.speed(site.source.depth_m)) / f
    mask = np.broadcast_to(np.abs(DEPTHS_M - site.source.depth_m) > wavelength, ref.shape)
    return site, ref, mask


@pytest.fixture(scope="module")
def thermocline():
    """:func:`thermocline_reference`, computed once for the module."""
    return thermocline_reference()


def _figures(tl, ref, mask):
    err = np.abs(tl - ref)[mask]
    return float(np.median(err)), float(np.percentile(err, 95))


def test_beam_incoherent_tl_matches_the_mode_sum(thermocline):
    """Incoherent Gaussian-beam TL against the incoherent mode sum, 1-10 km, the whole water column.

    Source: incoherent normal-mode sum of the trapped modes (Jensen et al. 2011, ch. 5), exact for
    this range-independent waveguide with a fluid seabed at ranges of ten water depths and more;
    goal median |difference| <= 1 dB, 95th percentile <= 3 dB (ray-mode agreement of about 1 dB
    where the ray amplitudes are right: Jensen et al. 2011, ch. 3, from memory). Measured when
    written: median 0.5 dB, 95th percentile 1.6 dB.
    """
    site, ref, mask = thermocline
    tl = transmission_loss(site, RANGES_M, DEPTHS_M).tl_incoherent_db.values
    median, p95 = _figures(tl, ref, mask)
    assert median <= GOAL_MEDIAN_DB and p95 <= GOAL_P95_DB, f"median {median:.2f} dB, 95% {p95:.2f} dB"


def test_eigenray_incoherent_tl_matches_the_mode_sum(thermocline):
    """Incoherent TL of the eigenrays (sum of |amplitude|^2 over arrivals) against the mode sum.

    Source and goal as for the beams (median <= 1 dB, 95th percentile <= 3 dB). The amplitudes
    include the same absorption as the modes. Measured when written: median 0.46 dB, 95th
    percentile 1.7 dB (3.6 and 8.1 dB with the eigenray amplitudes of an hour earlier).
    """
    site, ref, mask = thermocline
    arr = find_arrivals(site, RANGES_M, DEPTHS_M)
    power = np.sum(np.abs(arr.amplitude.values[..., 0]) ** 2, axis=-1)
    tl = -10.0 * np.log10(power)
    median, p95 = _figures(tl, ref, mask)
    assert median <= GOAL_MEDIAN_DB and p95 <= GOAL_P95_DB, f"median {median:.2f} dB, 95% {p95:.2f} dB"
