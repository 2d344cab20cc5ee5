"""The analytic estimate's finite designs against the infinite-length bounds (Salz 1973;
Cioffi, Dudevoir, Eyuboglu and Forney 1995), the known-channel bound against the practical
receivers, and the per-channel cache."""

import gc
import weakref

import numpy as np
import pytest

from aculink.channel import Channel
from aculink.modem import predict_link

from .conftest import PROAKIS_B, PROAKIS_C

SPARSE = np.array([1, 0, 0, 0.5j, 0, 0, 0, -0.3])
#: strongest arrival late, precursors 20 dB down (our own test channel)
LATE = np.array([0.1, 0, 0.1j, 0, 0, 1, 0, 0.3])
CHANNELS = {"b": PROAKIS_B, "c": PROAKIS_C, "sparse": SPARSE, "late": LATE}


@pytest.mark.parametrize("name", list(CHANNELS))
@pytest.mark.parametrize("snr_db", [10, 30])
def test_finite_t2_design_never_exceeds_salz_and_converges(name, snr_db):
    """Salz (1973), Cioffi et al. (1995): no finite MMSE-DFE beats the infinite-length unbiased
    SNR exp(mean ln(1 + gamma)) - 1 over the folded SNR of the same pulse. For T/2 feedforward
    spans of 5 to 64 symbols: finite <= Salz + 1e-4 dB, non-decreasing (to 1e-3 dB) with the
    span, and within 0.01 dB of Salz at 64 symbols."""
    h = CHANNELS[name]
    gaps = []
    for k in (5, 10, 20, 32, 48, 64):
        p = predict_link(h, None, 1000, "qpsk", "mmse-dfe", snr_db=snr_db, n_ff=2 * k)
        gaps.append(p.snr_finite_db - p.mmse_dfe_db)
    gaps = np.array(gaps)
    assert np.all(gaps <= 1e-4), gaps
    assert np.all(np.diff(gaps) >= -1e-3), gaps
    assert gaps[-1] > -0.01, gaps


def _band_channel():
    """Our own three-path channel over a 5 kHz band at 12 kHz."""
    return Channel.from_taps([0.0, 0.7e-3, 2.1e-3], [1.0, 0.6j, -0.3], 12000.0, 5000.0)


def test_full_band_long_linear_equalizer_is_designed():
    """At the highest symbol rate of the band, Rs (1 + beta) = B, the T/2 noise has an empty
    band between (1 + beta) Rs/2 and Rs (Proakis 2001 eq. 9.2-26), so the 64-tap design's noise
    covariance is singular: every receiver is still designed at 40 dB, below the Salz bound
    (Salz 1973)."""
    ch = _band_channel()
    for rx in ("linear", "dfe", "mmse-dfe"):
        p = predict_link(ch, None, 4000.0, "qpsk", rx, snr_db=40)
        assert np.isfinite(p.snr_out_db)
        assert p.snr_finite_db <= p.mmse_dfe_db + 1e-3


@pytest.mark.parametrize("name", list(CHANNELS))
@pytest.mark.parametrize("snr_db", [12, 25])
def test_known_channel_bound_is_above_the_practical_receivers(name, snr_db):
    """Definition of a bound: the known-channel MMSE-DFE (optimised spans and window, correct
    past decisions) is never below the practical linear equalizer's or DFE's estimate on the
    same channel, finite design or final (Al-Dhahir and Cioffi 1995: more taps and feedback
    never raise the MMSE), nor above Salz (1973)."""
    h = CHANNELS[name]
    bound = predict_link(h, None, 1000, "qpsk", "mmse-dfe", snr_db=snr_db)
    assert bound.known_channel
    assert bound.snr_out_db <= bound.mmse_dfe_db + 1e-4
    for rx in ("linear", "dfe"):
        p = predict_link(h, None, 1000, "qpsk", rx, snr_db=snr_db)
        assert bound.snr_out_db >= p.snr_finite_db - 1e-9
        assert bound.snr_out_db >= p.snr_out_db
    practical = predict_link(h, None, 1000, "qpsk", "mmse-dfe", snr_db=snr_db, known_channel=False)
    assert bound.snr_out_db >= practical.snr_out_db


def test_known_channel_bound_on_a_time_varying_site_channel():
    """Bound property on a channel with moving paths (our own: Doppler factors 1e-4 apart): the
    bound counts no tracking noise, the practical DFE does, so the bound stays above it."""
    ch = Channel.from_taps([0.0, 1.0e-3, 3.0e-3], [1.0, 0.5j, 0.2], 12000.0, 4000.0,
                           doppler=[0.0, 1e-4, -1e-4])
    bound = predict_link(ch, None, 2000.0, "qpsk", "mmse-dfe", snr_db=25)
    dfe = predict_link(ch, None, 2000.0, "qpsk", "dfe", snr_db=25)
    assert bound.snr_out_db >= dfe.snr_out_db


def test_practical_losses_are_charged():
    """Common practice (no source): every practical receiver loses the implementation loss; the
    fixed-tap receivers also their training estimate: 'none' a factor 1 + 1/N with N training
    symbols (Kay 1993, ch. 4, from memory), 'mmse-dfe' at least as much as 'none'."""
    kw = dict(snr_db=20)
    none = predict_link(SPARSE, None, 1000, "qpsk", "none", **kw)
    assert none.estimation_loss_db == pytest.approx(10 * np.log10(1 + 1 / none.n_training), rel=1e-9)
    assert none.implementation_loss_db > 0
    sinr = 10 ** (none.snr_finite_db / 10)
    expect = sinr / (1 + 1 / none.n_training) / 10 ** (none.implementation_loss_db / 10)
    assert 10 ** (none.snr_out_db / 10) == pytest.approx(expect, rel=1e-9)
    mm = predict_link(SPARSE, None, 1000, "qpsk", "mmse-dfe", known_channel=False, **kw)
    assert mm.estimation_loss_db > none.estimation_loss_db
    assert mm.snr_out_db < mm.snr_finite_db - mm.estimation_loss_db + 1e-9


def test_cache_lives_on_the_channel():
    """Regression (no module-level cache): asking twice gives the same estimate, and once the
    channel object is gone nothing keeps it alive."""
    ch = _band_channel()
    a = predict_link(ch, None, 2000.0, "16qam", "dfe", snr_db=25)
    b = predict_link(ch, None, 2000.0, "16qam", "dfe", snr_db=25)
    assert a == b
    ref = weakref.ref(ch)
    del ch
    gc.collect()
    assert ref() is None
