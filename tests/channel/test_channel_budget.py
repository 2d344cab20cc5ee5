"""Link budget (sonar equation) and coloured noise."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate, signal

from aculink.channel import Channel, colored_noise, link_budget
from aculink.errors import AculinkError
from aculink.site.model import Modem, Noise, Receiver, Source


@pytest.fixture
def wenz_site(shelf_site):
    """Band 10-20 kHz, shipping 0.5, wind 5 m/s, no extra noise, SL 185, DI 3 dB."""
    return shelf_site.replace(noise=Noise(shipping=0.5, wind_speed_mps=5.0, extra_db=0.0),
                              modem=Modem(carrier_hz=15000.0, bandwidth_hz=10000.0),
                              source=Source(depth_m=20.0, level_db=185.0),
                              receiver=Receiver(depth_m=50.0, range_m=4000.0, directivity_index_db=3.0))


@pytest.fixture
def two_path_channel():
    freq = np.linspace(10000.0, 20000.0, 11)
    gains = np.vstack([1e-3 * np.exp(-freq / 4e4), -5e-4 * np.exp(-freq / 3e4)])
    return Channel.from_taps([2.0, 2.003], gains, 15000.0, 10000.0, freq_hz=freq)


def test_noise_band_level_is_the_wenz_integral(wenz_site, two_path_channel):
    """Noise in 10-20 kHz for s = 0.5, w = 5 m/s is 83.25 dB re 1 uPa^2 ([Coates1990],
    computed from the Coates fits of the Wenz curves; +-0.01 dB)."""
    b = link_budget(wenz_site, two_path_channel)
    assert b.noise_band_db == pytest.approx(83.25, abs=0.01)
    assert b.noise_psd_db(10e3) == pytest.approx(46.09, abs=0.01)  # [Coates1990] table


def test_budget_terms_add_up(wenz_site, two_path_channel):
    """Sonar equation: SNR_band = SL - TL - NL_band + DI exactly; Eb/N0 = SNR B / Rb; SNR(f) =
    SL - 10 log10 B - TL(f) - NL(f) + DI; and the band SNR equals the ratio of the integrals of
    the received-signal PSD and the noise PSD (scipy.integrate.quad; Urick 1983 ch. 2, from
    memory; Stojanovic 2007 SNR(l, f))."""
    b = link_budget(wenz_site, two_path_channel)
    assert b.snr_band_db == pytest.approx(185.0 - b.tl_db - b.noise_band_db + 3.0, abs=1e-12)
    assert b.ebn0_db(5000.0) == pytest.approx(b.snr_band_db + 10 * np.log10(10000.0 / 5000.0), abs=1e-12)
    f = 13000.0
    # the fixture's two path gains written out (incoherent sum of path powers at f)
    tl_f = -10 * np.log10((1e-3 * np.exp(-f / 4e4)) ** 2 + (5e-4 * np.exp(-f / 3e4)) ** 2)
    assert b.tl_freq_db(f)[0] == pytest.approx(tl_f, abs=1e-12)
    expected = 185.0 - 40.0 - tl_f - b.noise_psd_db(f) + 3.0
    assert 10 * np.log10(b.snr_density(f)[0]) == pytest.approx(expected, abs=1e-9)

    def nl(ff):
        return 10 ** (b.noise_psd_db(ff) / 10)

    sig, _ = integrate.quad(lambda ff: float(b.snr_density(ff)[0] * nl(ff)), 10e3, 20e3, epsrel=1e-10)
    noise, _ = integrate.quad(nl, 10e3, 20e3, epsrel=1e-10)
    assert b.snr_band_db == pytest.approx(10 * np.log10(sig / noise), abs=0.01)
    d = b.to_dict()
    for key in ("source_level_db", "tl_db", "noise_band_db", "directivity_index_db", "snr_band_db"):
        assert key in d and key in d["units"]
    assert "uPa" in d["units"]["source_level_db"] and "1 m" in d["units"]["tl_db"]
    with pytest.raises(AculinkError, match="bit_rate_bps"):
        b.ebn0_db(0.0)


def test_empty_channel_budget_is_no_path(wenz_site):
    """An empty channel gives SNR minus infinity and a 'no path' report, not an error."""
    ch = Channel.from_taps(np.zeros(0), np.zeros(0), 15000.0, 10000.0)
    b = link_budget(wenz_site, ch)
    assert b.snr_band_db == -np.inf and b.no_path and "no path" in b.reason
    assert b.to_dict()["no_path"]


def test_colored_noise_follows_requested_psd(wenz_site, two_path_channel):
    """The Welch estimate (scipy.signal.welch, two-sided) of colored_noise follows the requested
    NL(f) within 0.5 dB at every bin up to 0.45 fs (reference library; tolerance from the issue;
    the sampled spectrum is periodic, so the jump of NL between fc - fs/2 and fc + fs/2 leaks
    into the window's last bins, which are left out)."""
    b = link_budget(wenz_site, two_path_channel)
    fs, fc = 16000.0, 15000.0
    n = colored_noise(1 << 20, fs, fc, b.noise_psd_db, seed=1)
    f, p = signal.welch(n, fs=fs, nperseg=256, return_onesided=False, detrend=False)
    want = b.noise_psd_db(fc + f)
    inner = np.abs(f) <= 0.45 * fs
    assert np.max(np.abs(10 * np.log10(p) - want)[inner]) < 0.5
    np.testing.assert_array_equal(n[:10], colored_noise(1 << 20, fs, fc, b.noise_psd_db, seed=1)[:10])
    # total power is the integral of the PSD over the sampled band
    total, _ = integrate.quad(lambda ff: 10 ** (b.noise_psd_db(fc + ff) / 10), -fs / 2, fs / 2, epsrel=1e-8)
    assert 10 * np.log10(np.mean(np.abs(n) ** 2)) == pytest.approx(10 * np.log10(total), abs=0.05)
