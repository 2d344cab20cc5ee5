"""Channel statistics on hand-built channels against their closed forms."""

from __future__ import annotations

import numpy as np
import pytest

from aculink.channel import Channel

FC, B = 12000.0, 6000.0


def test_two_equal_paths_closed_forms():
    """Two equal paths dt apart: rms spread dt/2; 90% and 99% windows dt; |R(df)| = |cos(pi df dt)|
    = 0.5 at df = 1/(3 dt); incoherent TL -10 log10(2 A^2); coherent TL from the band mean of
    |A (1 + exp(-j 2 pi f dt))|^2 = A^2 (2 + 2 mean cos). Closed forms (Bello 1963 frequency
    correlation of a WSSUS channel; definition of the rms delay spread, Rappaport 2002 sec. 5.4)."""
    dt, a = 1.7e-3, 0.01
    ch = Channel.from_taps([0.5, 0.5 + dt], [a, a], FC, B)
    s = ch.statistics()
    assert s["rms_delay_spread_s"] == pytest.approx(dt / 2, rel=1e-12)
    assert s["spread_90_s"] == pytest.approx(dt, rel=1e-12)
    assert s["spread_99_s"] == pytest.approx(dt, rel=1e-12)
    assert s["coherence_bandwidth_hz"] == pytest.approx(1 / (3 * dt), rel=1e-8)
    assert s["significant_paths"] == 2 and s["paths"] == 2
    assert s["tl_incoherent_db"] == pytest.approx(-10 * np.log10(2 * a * a), abs=1e-9)
    f = ch.band_grid(257)
    mean_cos = np.mean(np.cos(2 * np.pi * f * dt))
    assert s["tl_coherent_db"] == pytest.approx(-10 * np.log10(a * a * (2 + 2 * mean_cos)), abs=1e-9)
    assert s["coherence_time_s"] == np.inf and s["doppler_spread_hz"] == 0.0


def test_exponential_power_delay_profile_closed_forms():
    """Discrete exponential profile P_k = r^k (k = 0..N-1, spacing d, r = exp(-d/tau0)):
    rms spread d sqrt(r)/(1 - r) (variance of a geometric law, r^N negligible); shortest 90% window
    (k90 - 1) d with k90 the smallest k with (1 - r^k) >= 0.9 (1 - r^N); coherence bandwidth where
    |(1 - r)/(1 - r exp(-j theta))| = 0.5, theta = 2 pi df d, i.e. cos(theta) =
    (1 + r^2 - 4 (1 - r)^2)/(2 r). Closed forms, derived; the continuous limits are tau0 and
    sqrt(3)/(2 pi tau0) (Rappaport 2002, sec. 5.4, exponential profile; from memory)."""
    d, tau0, n = 5e-5, 4e-3, 4000
    r = np.exp(-d / tau0)
    k = np.arange(n)
    ch = Channel.from_taps(k * d, np.sqrt(r ** k), FC, B)
    s = ch.statistics()
    assert s["rms_delay_spread_s"] == pytest.approx(d * np.sqrt(r) / (1 - r), rel=1e-9)
    assert s["rms_delay_spread_s"] == pytest.approx(tau0, rel=1e-3)
    for frac, key in ((0.9, "spread_90_s"), (0.99, "spread_99_s")):
        k_need = int(np.ceil(np.log(1 - frac * (1 - r ** n)) / np.log(r) - 1e-9))
        assert s[key] == pytest.approx((k_need - 1) * d, rel=1e-12)
    theta = np.arccos((1 + r * r - 4 * (1 - r) ** 2) / (2 * r))
    assert s["coherence_bandwidth_hz"] == pytest.approx(theta / (2 * np.pi * d), rel=1e-6)
    assert s["coherence_bandwidth_hz"] == pytest.approx(np.sqrt(3) / (2 * np.pi * tau0), rel=2e-3)
    # within 20 dB: r^k >= 0.01 -> k <= ln(0.01)/ln(r)
    assert s["significant_paths"] == int(np.floor(np.log(0.01) / np.log(r))) + 1


def test_doppler_spread_and_coherence_time_two_paths():
    """Two equal paths with Doppler factors a1, a2 and no surface: Doppler spectrum two lines
    at a fc, rms spread fc |a1 - a2| / 2; |R(dt)| = |cos(pi fc (a1 - a2) dt)| = 0.5 at
    dt = 1/(3 fc |a1 - a2|). Closed forms (Bello 1963 time correlation; derived)."""
    a1, a2 = 1e-3, -2e-4
    ch = Channel.from_taps([1.0, 1.002], [1.0, 1.0], FC, B, doppler=[a1, a2])
    s = ch.statistics()
    nu = FC * abs(a1 - a2)
    assert s["doppler_shift_hz"] == pytest.approx(FC * (a1 + a2) / 2, rel=1e-12)
    assert s["doppler_spread_hz"] == pytest.approx(nu / 2, rel=1e-9)
    assert s["coherence_time_s"] == pytest.approx(1 / (3 * nu), rel=1e-8)
    assert s["time_varying"]


def test_empty_channel_statistics():
    """No paths: counts zero, TL infinite, spreads NaN (documented behaviour, regression)."""
    ch = Channel.from_taps(np.zeros(0), np.zeros(0), FC, B)
    s = ch.statistics()
    assert s["paths"] == 0 and np.isinf(s["tl_incoherent_db"]) and np.isnan(s["rms_delay_spread_s"])
