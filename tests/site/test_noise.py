"""Checks of the ambient-noise fits (Coates 1989/1990, as used by Stojanovic 2007)."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from aculink.errors import AculinkError
from aculink.site import noise_band_level_db, noise_components_db, noise_psd_db

# [Coates1990] components, s = 0.5, w = 5 m/s [computed from the published fits]:
# f (kHz), Nt, Ns, Nw, Nth, total (dB re 1 uPa^2/Hz)
COMPONENTS = [
    (0.01, 77.00, 71.88, 42.26, -55.00, 78.17),
    (0.1, 47.00, 67.16, 58.81, -35.00, 67.79),
    (1, 17.00, 39.23, 60.93, -15.00, 60.95),
    (10, -13.00, 5.92, 46.09, 5.00, 46.09),
    (25, -24.94, -7.56, 38.54, 12.96, 38.55),
    (50, -33.97, -17.78, 32.65, 18.98, 32.84),
    (100, -43.00, -28.01, 26.70, 25.00, 28.94),
]

# [Coates1990] totals [computed]: columns (s, w) and rows f (kHz).
TOTAL_CASES = [(0.0, 0.0), (0.5, 0.0), (0.5, 5.0), (0.5, 10.0), (1.0, 10.0), (0.0, 15.0)]
TOTALS = [
    (0.1, 57.68, 67.22, 67.79, 69.55, 77.47, 71.28),
    (0.5, 46.62, 50.53, 62.76, 69.56, 69.87, 74.86),
    (1, 44.30, 45.37, 60.95, 67.88, 67.93, 73.20),
    (5, 34.69, 34.74, 51.46, 58.40, 58.40, 63.73),
    (10, 29.34, 29.35, 46.09, 53.04, 53.04, 58.37),
    (25, 22.30, 22.31, 38.55, 45.48, 45.49, 50.81),
    (50, 20.71, 20.71, 32.84, 39.64, 39.64, 44.94),
    (100, 25.13, 25.13, 28.94, 34.20, 34.20, 39.15),
    (200, 31.03, 31.03, 31.41, 32.67, 32.67, 35.13),
]
TOL_DB = 0.005 + 1e-9  # half a unit of the tables' second decimal


def test_components_table():
    """Coates (1989/1990) fits as printed by Stojanovic (2007) [published formulas];
    [Coates1990] component table [computed] at 0.01 dB. The 100 kHz thermal value (25 dB)
    catches a natural log in place of log10."""
    f_khz, nt, ns, nw, nth, total = np.array(COMPONENTS).T
    parts = noise_components_db(f_khz * 1e3, 0.5, 5.0)
    np.testing.assert_allclose(parts.turbulence_db, nt, atol=TOL_DB)
    np.testing.assert_allclose(parts.shipping_db, ns, atol=TOL_DB)
    np.testing.assert_allclose(parts.wind_db, nw, atol=TOL_DB)
    np.testing.assert_allclose(parts.thermal_db, nth, atol=TOL_DB)
    np.testing.assert_allclose(noise_psd_db(f_khz * 1e3, 0.5, 5.0), total, atol=TOL_DB)


@pytest.mark.parametrize("column", range(len(TOTAL_CASES)))
def test_total_table(column):
    """[Coates1990] total N(f) for six (shipping, wind) cases [computed], 0.01 dB."""
    s, w = TOTAL_CASES[column]
    table = np.array(TOTALS)
    np.testing.assert_allclose(noise_psd_db(table[:, 0] * 1e3, s, w), table[:, column + 1],
                               atol=TOL_DB)


def test_stojanovic_values():
    """Stojanovic (2007) model, [Stojanovic2007] [computed]: s = 0.5, w = 0 gives 67.22,
    45.37, 29.35, 25.13 dB at 0.1, 1, 10, 100 kHz; at 1 kHz Nt = 17, Ns = 39.23, Nw = 44.15,
    Nth = -15 dB."""
    np.testing.assert_allclose(noise_psd_db([100.0, 1e3, 1e4, 1e5], 0.5, 0.0),
                               [67.22, 45.37, 29.35, 25.13], atol=TOL_DB)
    parts = noise_components_db(1e3, 0.5, 0.0)
    np.testing.assert_allclose(np.array(parts, dtype=float), [17.0, 39.23, 44.15, -15.0],
                               atol=TOL_DB)


def test_psd_is_power_sum_of_components():
    """N = Nt + Ns + Nw + Nth in linear power (Coates 1989/1990; Stojanovic 2007) [published]."""
    f = np.geomspace(1.0, 1e6, 50)
    parts = np.array(noise_components_db(f, 0.3, 7.0))
    expected = 10.0 * np.log10(np.sum(10.0 ** (parts / 10.0), axis=0))
    np.testing.assert_allclose(noise_psd_db(f, 0.3, 7.0), expected, atol=1e-10)


def test_band_level_check_value():
    """[Coates1990] [computed]: the integral of N(f) over 10-20 kHz for s = 0.5, w = 5
    is 83.25 dB re 1 uPa^2 (0.01 dB)."""
    assert noise_band_level_db(10e3, 20e3, 0.5, 5.0) == pytest.approx(83.25, abs=TOL_DB)


def test_band_level_against_trapezoid():
    """Independent quadrature: numpy's trapezoid rule on 400001 linear points over
    1-30 kHz agrees with our integral to 1e-4 dB [computed, general-purpose reference]."""
    f = np.linspace(1e3, 30e3, 400001)
    power = np.trapezoid(10.0 ** (noise_psd_db(f, 0.8, 12.0) / 10.0), f)
    assert noise_band_level_db(1e3, 30e3, 0.8, 12.0) == pytest.approx(10 * np.log10(power),
                                                                     abs=1e-4)


def test_band_level_thermal_closed_form():
    """At 400-800 kHz with no wind the thermal term -15 + 20 log10 f dominates (the next term
    is 39 dB lower), so the band level is the closed form
    10 log10(10^-1.5 * 1000 Hz/kHz * (800^3 - 400^3)/3) to 0.01 dB [closed form]."""
    closed = 10.0 * np.log10(10.0 ** -1.5 * 1000.0 * (800.0**3 - 400.0**3) / 3.0)
    assert noise_band_level_db(400e3, 800e3, 0.0, 0.0) == pytest.approx(closed, abs=0.01)


def test_band_level_narrow_band_limit():
    """A 1 Hz band at f has the level of the density at f (definition of a spectral density)
    to 1e-3 dB [closed form]."""
    assert noise_band_level_db(5000.0, 5001.0, 0.5, 5.0) == pytest.approx(
        noise_psd_db(5000.5, 0.5, 5.0), abs=1e-3)


def test_band_level_broadcasts():
    """Band levels broadcast over edges and conditions [computed]."""
    levels = noise_band_level_db([1e3, 10e3], [2e3, 20e3], 0.5, [[0.0], [5.0]])
    assert levels.shape == (2, 2)
    assert levels[1, 1] == pytest.approx(83.25, abs=TOL_DB)


@settings(max_examples=100, deadline=None)
@given(st.floats(1.0, 1e6), st.floats(0.0, 1.0), st.floats(0.0, 1.0), st.floats(0.0, 30.0),
       st.floats(0.0, 30.0))
def test_psd_monotone_in_shipping_and_wind(f, s1, s2, w1, w2):
    """More shipping or more wind never lowers the noise: each term is non-decreasing in s and
    w (Coates fits, closed form property)."""
    s_lo, s_hi = sorted((s1, s2))
    w_lo, w_hi = sorted((w1, w2))
    assert noise_psd_db(f, s_lo, w_lo) <= noise_psd_db(f, s_hi, w_lo) + 1e-12
    assert noise_psd_db(f, s_lo, w_lo) <= noise_psd_db(f, s_lo, w_hi) + 1e-12


@pytest.mark.parametrize("call, field", [
    (lambda: noise_psd_db(0.0, 0.5, 5.0), "freq_hz"),
    (lambda: noise_psd_db(1e3, 1.5, 5.0), "shipping"),
    (lambda: noise_psd_db(1e3, 0.5, -1.0), "wind_speed_mps"),
    (lambda: noise_band_level_db(20e3, 10e3, 0.5, 5.0), "f_high_hz"),
])
def test_bad_input(call, field):
    """Bad input raises a one-line AculinkError naming the field (project rule)."""
    with pytest.raises(AculinkError) as err:
        call()
    assert field in str(err.value) and "\n" not in str(err.value)
