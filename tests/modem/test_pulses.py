"""The shared pulse shapes (aculink.channel.pulses, re-exported by aculink.modem.pulses) against
their closed forms and numpy."""

import numpy as np
import pytest

from aculink.channel import pulses as channel_pulses
from aculink.errors import AculinkError
from aculink.modem import pulses
from aculink.modem.pulses import (filter_pulse, raised_cosine, raised_cosine_spectrum, root_raised_cosine,
                                  rrc_taps)

BETAS = [0.1, 0.25, 0.35, 0.5, 1.0]


def test_one_home():
    """Design rule (one pulse module): the modem's names are the channel stage's functions."""
    assert pulses.raised_cosine is channel_pulses.raised_cosine
    assert pulses.raised_cosine_spectrum is channel_pulses.raised_cosine_spectrum
    assert pulses.root_raised_cosine is channel_pulses.root_raised_cosine


@pytest.mark.parametrize("beta", BETAS)
def test_raised_cosine_nyquist_zero_crossings(beta):
    """Proakis 2001 eq. 9.2-27: p(0) = 1 and p(nT) = 0 for n != 0 (the Nyquist criterion in time);
    at |t| = T/(2 beta) the removable singularity equals its limit (pi/4) sinc(1/(2 beta)),
    and the neighbourhood agrees with it to 1e-6."""
    n = np.arange(-30, 31)
    p = raised_cosine(n, beta)
    assert p[30] == pytest.approx(1.0, abs=1e-15)
    assert np.max(np.abs(np.delete(p, 30))) < 1e-15
    ts = 1 / (2 * beta)
    assert raised_cosine(ts, beta) == pytest.approx(np.pi / 4 * np.sinc(ts), abs=1e-12)
    assert raised_cosine(ts + 1e-7, beta) == pytest.approx(np.pi / 4 * np.sinc(ts), abs=1e-6)


@pytest.mark.parametrize("beta", BETAS)
def test_raised_cosine_spectrum_closed_form_and_nyquist(beta):
    """Proakis 2001 eq. 9.2-26: P(f)/T = 1 for |f| <= (1 - beta)/2T, 1/2 at |f| = 1/2T, 0 beyond
    (1 + beta)/2T; Nyquist criterion in frequency: sum_k P(f - k/T) = T."""
    f = np.linspace(-0.5, 0.5, 1001)
    folded = sum(raised_cosine_spectrum(f - k, beta) for k in range(-2, 3))
    np.testing.assert_allclose(folded, 1.0, atol=1e-12)
    assert raised_cosine_spectrum(0.5, beta) == pytest.approx(0.5, abs=1e-12)
    assert raised_cosine_spectrum((1 - beta) / 2, beta) == pytest.approx(1.0, abs=1e-12)
    assert np.all(raised_cosine_spectrum(np.linspace((1 + beta) / 2 + 1e-9, 2, 50), beta) == 0.0)


@pytest.mark.parametrize("beta", [0.25, 0.5, 1.0])
def test_spectrum_is_transform_of_pulse(beta):
    """Fourier pair (Proakis 2001 eqs. 9.2-26/27), by numpy's FFT of the finely sampled pulse:
    sum_n p(n dt) exp(-j 2 pi f n dt) dt matches P(f)/T to 2e-3 (truncation at +-200 T)."""
    sps = 16
    t = np.arange(-200 * sps, 200 * sps) / sps
    p = raised_cosine(t, beta)
    n = t.size
    spec = np.real(np.fft.fft(np.fft.ifftshift(p))) / sps
    f = np.fft.fftfreq(n, d=1 / sps)
    keep = np.abs(f) < 1.5
    np.testing.assert_allclose(spec[keep], raised_cosine_spectrum(f[keep], beta), atol=2e-3)


@pytest.mark.parametrize("beta", [0.25, 0.35, 0.5, 1.0])
def test_rrc_convolved_with_itself_is_raised_cosine(beta):
    """Proakis and Salehi 2002 section 8.3: the RRC is the spectral square root of the raised
    cosine, so (numpy convolution of the sampled RRC, 32 samples per symbol, +-60 T) equals the
    raised cosine to 2e-4 over +-8 T."""
    sps = 32
    t = np.arange(-60 * sps, 60 * sps + 1) / sps
    g = root_raised_cosine(t, beta)
    rc = np.convolve(g, g) / sps
    mid = rc.size // 2
    lag = np.arange(-8 * sps, 8 * sps + 1)
    np.testing.assert_allclose(rc[mid + lag], raised_cosine(lag / sps, beta), atol=2e-4)


@pytest.mark.parametrize("beta", [0.25, 0.5])
def test_filter_pulse_is_the_filters_autocorrelation(beta):
    """numpy reference: filter_pulse at T/4 is np.correlate of the simulator's unit-energy RRC
    filter with itself (c(0) = 1, symmetric), and within 5e-3 of the raised cosine (the RRC's
    tail beyond +-10 T is a few 1e-3 of its peak at beta = 0.25, from its closed form)."""
    g = rrc_taps(beta, 4)
    ref = np.correlate(g, g, "full")
    c, centre = filter_pulse(beta, 4)
    np.testing.assert_allclose(c, ref, atol=1e-14)
    assert c[centre] == pytest.approx(1.0, abs=1e-12)
    np.testing.assert_allclose(c, c[::-1], atol=1e-15)
    k = np.arange(c.size) - centre
    assert np.max(np.abs(c - raised_cosine(k / 4, beta))) < 5e-3
    c2, centre2 = filter_pulse(beta, 2)
    np.testing.assert_allclose(c2, c[centre % 2::2], atol=1e-15)
    assert centre2 == centre // 2


def test_bad_rolloff_one_line():
    """Project rule: an out-of-range roll-off is an AculinkError naming the field."""
    for bad in (0.0, 1.5):
        with pytest.raises(AculinkError, match="rolloff") as exc:
            raised_cosine(np.zeros(3), bad)
        assert "\n" not in str(exc.value)
