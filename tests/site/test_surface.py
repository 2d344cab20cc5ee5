"""Checks of the rough-surface reflection (Eckart 1953) and the Pierson-Moskowitz sea."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate, optimize

from aculink.constants import GRAVITY_MPS2, WIND_19P5_OVER_10
from aculink.errors import AculinkError
from aculink.site import (
    pierson_moskowitz_spectrum,
    rms_wave_height_pierson_moskowitz,
    significant_wave_height_pierson_moskowitz,
    surface_coherent_reflection,
    surface_vertical_velocity_rms,
)

# [Eckart1953] [computed], f = 10 kHz, c = 1500 m/s: sigma (m), theta (deg), |R|, loss (dB)
ECKART = [
    (0.05, 1, 0.99733, 0.023), (0.05, 5, 0.93553, 0.579), (0.05, 10, 0.76756, 2.298),
    (0.05, 30, 0.11155, 19.050), (0.1, 1, 0.98937, 0.093), (0.1, 5, 0.76601, 2.315),
    (0.1, 10, 0.34710, 9.191), (0.3, 1, 0.90829, 0.836), (0.3, 5, 0.09080, 20.838),
]

# [PiersonMoskowitz1964] [computed with g = 9.81 m/s^2]: U19.5, sigma_eta, Hs, omega_p, T_p
PM_TABLE = [
    (5, 0.1333, 0.5332, 1.7210, 3.65), (10, 0.5332, 2.1330, 0.8605, 7.30),
    (15, 1.1998, 4.7992, 0.5737, 10.95), (20, 2.1330, 8.5319, 0.4302, 14.60),
]
G_TABLE = 9.81


def test_eckart_table():
    """Eckart (1953), J. Acoust. Soc. Am. 25, 566-570: R = -exp(-2 k^2 sigma^2 sin^2 theta);
    [Eckart1953] table [computed], |R| to 5 decimals and loss to 3 decimals."""
    sigma, theta, mag, loss = np.array(ECKART).T
    r = surface_coherent_reflection(np.radians(theta), 10e3, sigma, 1500.0)
    assert np.all(r < 0)
    np.testing.assert_allclose(np.abs(r), mag, atol=5e-6 + 1e-12)
    np.testing.assert_allclose(-20 * np.log10(np.abs(r)), loss, atol=5e-4 + 1e-9)


def test_eckart_loss_is_4_343_gamma_squared():
    """Loss = 20 log10(e) Gamma^2 / 2 = 4.343 Gamma^2 dB with Gamma = 2 k sigma sin(theta)
    (Rayleigh roughness parameter; Eckart 1953) [closed form]."""
    theta, f, sigma, c = 0.2, 3e3, 0.4, 1490.0
    gamma = 2 * (2 * np.pi * f / c) * sigma * np.sin(theta)
    loss = -20 * np.log10(abs(surface_coherent_reflection(theta, f, sigma, c)))
    assert loss == pytest.approx(10 * np.log10(np.e) * gamma**2, rel=1e-12)


@settings(max_examples=100, deadline=None)
@given(st.floats(0.0, np.pi / 2), st.floats(0.0, 1e5), st.floats(0.0, 3.0), st.floats(0.0, 3.0))
def test_rougher_never_reflects_more(theta, f, s1, s2):
    """-1 <= R <= 0, and a rougher surface never reflects more coherently (Eckart 1953,
    closed form property); a smooth surface is the pressure-release R = -1."""
    lo, hi = sorted((s1, s2))
    r_lo = surface_coherent_reflection(theta, f, lo, 1500.0)
    r_hi = surface_coherent_reflection(theta, f, hi, 1500.0)
    assert -1.0 <= r_lo <= 0.0 and abs(r_hi) <= abs(r_lo) + 1e-15
    assert surface_coherent_reflection(theta, f, 0.0, 1500.0) == -1.0


def test_significant_wave_height_coefficient():
    """Pierson and Moskowitz (1964): Hs = 4 sigma_eta = 0.2092 U19.5^2 / g ([PiersonMoskowitz1964],
    [computed] from the spectrum's zeroth moment), at the coefficient's printed precision."""
    u = np.array([3.0, 10.0, 25.0])
    hs = significant_wave_height_pierson_moskowitz(u, height_m=19.5)
    np.testing.assert_allclose(hs * GRAVITY_MPS2 / u**2, 0.2092, atol=5e-5)


def test_pm_table():
    """[PiersonMoskowitz1964] [computed with g = 9.81]: sigma_eta and Hs scale as 1/g and the peak
    frequency as g, so our values (g = 9.80665) are rescaled to g = 9.81 and compared at the
    printed precision. The peak is found numerically (scipy.optimize) on our spectrum."""
    for u, sigma, hs, omega_p, t_p in PM_TABLE:
        scale = GRAVITY_MPS2 / G_TABLE
        assert rms_wave_height_pierson_moskowitz(u, height_m=19.5) * scale == pytest.approx(
            sigma, abs=5e-5 + 1e-9)
        assert significant_wave_height_pierson_moskowitz(u, height_m=19.5) * scale == (
            pytest.approx(hs, abs=5e-5 + 1e-9))
        peak = optimize.minimize_scalar(
            lambda w, u=u: -pierson_moskowitz_spectrum(w, u, height_m=19.5),
            bounds=(0.05, 5.0), method="bounded", options={"xatol": 1e-10}).x
        assert peak / scale == pytest.approx(omega_p, abs=5e-4)
        assert 2 * np.pi / (peak / scale) == pytest.approx(t_p, abs=5e-3)


@pytest.mark.parametrize("u10", [2.0, 7.5, 15.0])
def test_variance_and_vertical_velocity_by_quadrature(u10):
    """The closed forms sigma_eta^2 = int S dw = alpha U^4/(4 beta g^2) and
    sigma_v^2 = int w^2 S dw = alpha U^2 sqrt(pi/beta)/4 (derived in the docstrings from
    Pierson and Moskowitz 1964) agree with scipy.integrate.quad of our spectrum to 1e-8
    relative [general-purpose reference]."""
    spec = lambda w: pierson_moskowitz_spectrum(w, u10)  # noqa: E731
    m0, _ = integrate.quad(spec, 0.0, np.inf, epsabs=0, epsrel=1e-12, limit=500)
    m2, _ = integrate.quad(lambda w: w * w * spec(w), 0.0, np.inf, epsabs=0, epsrel=1e-12,
                           limit=500)
    assert rms_wave_height_pierson_moskowitz(u10) == pytest.approx(np.sqrt(m0), rel=1e-8)
    assert surface_vertical_velocity_rms(u10) == pytest.approx(np.sqrt(m2), rel=1e-8)


def test_wind_height_conversion():
    """Wind at 10 m is converted to 19.5 m with WIND_19P5_OVER_10 (a neutral log profile,
    U(z) ~ ln(z/z0)); the factor lies in the log-law range for sea-surface roughness lengths
    z0 = 1e-4..2e-4 m ([PiersonMoskowitz1964]: 1.058-1.062) [computed from the log law]."""
    lo, hi = (np.log(19.5 / z0) / np.log(10.0 / z0) for z0 in (1e-4, 2e-4))
    assert lo <= WIND_19P5_OVER_10 <= hi
    assert rms_wave_height_pierson_moskowitz(10.0) == pytest.approx(
        rms_wave_height_pierson_moskowitz(10.0 * WIND_19P5_OVER_10, height_m=19.5), rel=1e-14)
    assert surface_vertical_velocity_rms(10.0) == pytest.approx(
        surface_vertical_velocity_rms(10.0 * WIND_19P5_OVER_10, height_m=19.5), rel=1e-14)


def test_calm_sea():
    """No wind, no waves: zero spectrum, zero height, zero velocity (limit of the closed forms)."""
    assert rms_wave_height_pierson_moskowitz(0.0) == 0.0
    assert surface_vertical_velocity_rms(0.0) == 0.0
    assert np.all(pierson_moskowitz_spectrum([0.0, 1.0], 0.0) == 0.0)


@pytest.mark.parametrize("call, field", [
    (lambda: rms_wave_height_pierson_moskowitz(-1.0), "wind_speed_mps"),
    (lambda: rms_wave_height_pierson_moskowitz(5.0, height_m=15.0), "height_m"),
    (lambda: surface_coherent_reflection(0.1, 1e3, -0.1, 1500.0), "rms_height_m"),
    (lambda: surface_coherent_reflection(2.0, 1e3, 0.1, 1500.0), "grazing_rad"),
    (lambda: pierson_moskowitz_spectrum(-1.0, 5.0), "omega"),
])
def test_bad_input(call, field):
    """Bad input raises a one-line AculinkError naming the field (project rule)."""
    with pytest.raises(AculinkError) as err:
        call()
    assert field in str(err.value) and "\n" not in str(err.value)
