"""Monte Carlo link simulation against closed forms and textbook results."""

import numpy as np
import pytest

from aculink.errors import AculinkError
from aculink.modem import MODULATIONS, bit_error_rate, clopper_pearson, predict_link, simulate_link

from .conftest import PROAKIS_B, PROAKIS_C

#: Es/N0 (dB) giving a BER near 1e-2 for each modulation ([Proakis2001] tables).
AWGN_POINTS = {"bpsk": 4.0, "qpsk": 7.0, "8psk": 11.0, "16qam": 14.0, "64qam": 20.0}


@pytest.mark.parametrize("mod", list(MODULATIONS))
def test_awgn_ber_matches_closed_form(mod):
    """Proakis 2001 sections 5.2-7 / 5.2-9 ([Proakis2001]): over a one-tap channel in white
    noise the simulated Gray BER's 99 % Clopper-Pearson interval (Clopper and Pearson 1934)
    contains the closed form (receiver 'none': matched filter, preamble gain/phase, PLL). The
    preamble is 512 symbols so that the data-aided gain estimate costs 1 + 1/N = 0.01 dB
    (Kay 1993, ch. 4, from memory). 1500 errors: +-7 % at 99 %."""
    snr = AWGN_POINTS[mod]
    r = simulate_link([1.0], symbol_rate_baud=1000, modulation=mod, receiver="none", snr_db=snr,
                      n_symbols=100000, max_errors=1500, seed=11, n_training=512)
    lo, hi = clopper_pearson(r.bit_errors, r.bits, 0.99)
    ref = float(bit_error_rate(mod, 10 ** (snr / 10)))
    assert lo <= ref <= hi, (r.ber, ref)
    assert r.ber_low <= r.ber <= r.ber_high


def test_clopper_pearson_reference_values():
    """Clopper and Pearson (1934) via the beta distribution (scipy.stats): 0 of 10 gives the upper
    limit 1 - 0.025^(1/10) = 0.30850; 5 of 10 gives 0.18709 to 0.81291 (standard table values)."""
    assert clopper_pearson(0, 10) == (0.0, pytest.approx(0.30850, abs=1e-5))
    lo, hi = clopper_pearson(5, 10)
    assert lo == pytest.approx(0.18709, abs=1e-5) and hi == pytest.approx(0.81291, abs=1e-5)


@pytest.mark.parametrize("h", [PROAKIS_B, PROAKIS_C], ids=["b", "c"])
def test_proakis_linear_poor_dfe_much_better(h):
    """Proakis 2001 sections 10.2-3 and 10.3 ([Salz1973], textbook result): on channels b and c
    a linear equalizer does poorly and a DFE much better. At 20 dB the adaptive DFE's measured
    SNR beats the adaptive linear equalizer's by more than 5 dB and its BER is lower."""
    kw = dict(symbol_rate_baud=1000, modulation="qpsk", snr_db=20, n_symbols=8000, max_errors=10 ** 6, seed=2)
    le = simulate_link(h, receiver="linear", **kw)
    dfe = simulate_link(h, receiver="dfe", **kw)
    assert dfe.snr_out_db > le.snr_out_db + 5.0
    assert dfe.ber < le.ber


def test_adaptive_t2_dfe_within_half_db_of_its_finite_design():
    """Al-Dhahir and Cioffi 1995: the T/2 RLS DFE of simulate_link on Proakis b at 20 dB measures an
    output SNR within 0.5 dB of the finite-length MMSE-DFE with its own spans (predict_link's
    snr_finite_db), and the mmse-dfe receiver (designed from the estimated channel) too."""
    kw = dict(symbol_rate_baud=1000, modulation="qpsk", snr_db=20, n_symbols=10000, max_errors=10 ** 6, seed=4)
    dfe = simulate_link(PROAKIS_B, receiver="dfe", **kw)
    pred = predict_link(PROAKIS_B, None, 1000, "qpsk", "dfe", snr_db=20)
    assert dfe.snr_out_db == pytest.approx(pred.snr_finite_db, abs=0.5)
    mm = simulate_link(PROAKIS_B, receiver="mmse-dfe", **kw)
    assert mm.snr_out_db == pytest.approx(pred.snr_finite_db, abs=1.0)


def test_same_seed_same_result():
    """Regression (reproducibility): same seed, same numbers; another seed, other numbers."""
    kw = dict(symbol_rate_baud=1000, modulation="8psk", receiver="dfe", snr_db=14, n_symbols=3000)
    a, b = simulate_link(PROAKIS_B, seed=7, **kw), simulate_link(PROAKIS_B, seed=7, **kw)
    c = simulate_link(PROAKIS_B, seed=8, **kw)
    assert a.to_dict() == b.to_dict()
    np.testing.assert_array_equal(a.learning_curve.values, b.learning_curve.values)
    assert a.snr_out_db != c.snr_out_db


@pytest.mark.slow
def test_doppler_receiver_locks_and_meets_static_ber():
    """[Li2008] (v = 1.5 m/s -> a = 1e-3, 12 Hz at 12 kHz; the wideband model of Li et al.
    2008): with the time scale applied the front end estimates it within 5e-5 and the DFE's BER
    lies inside the no-motion 95 % interval (or below it)."""
    h = [1.0, 0, 0.4j, 0, -0.25]
    kw = dict(symbol_rate_baud=2000, modulation="qpsk", receiver="dfe", snr_db=10, carrier_hz=12000,
              n_symbols=40000, max_errors=300, seed=3)
    still = simulate_link(h, doppler=0.0, **kw)
    moving = simulate_link(h, doppler=1.5 / 1500, **kw)
    assert moving.doppler_estimate == pytest.approx(1e-3, abs=5e-5)
    assert moving.ber <= still.ber_high


@pytest.mark.parametrize("kwargs,match", [
    (dict(modulation="qpks"), "did you mean 'qpsk'"),
    (dict(receiver="dfee"), "did you mean 'dfe'"),
    (dict(receiver="mmse_dfe", n_ff=0), "n_ff"),
    (dict(n_training=20), "n_training = 20: must be >="),
    (dict(algorithm="lms"), "algorithm"),
    (dict(step_size=2.0, algorithm="nlms"), "step_size"),
    (dict(samples_per_symbol=3), "even"),
])
def test_bad_input_one_line(kwargs, match):
    """Project rule: bad input raises AculinkError with one line naming the limit."""
    base = dict(symbol_rate_baud=1000, modulation="qpsk", receiver="dfe", snr_db=20, n_symbols=100)
    base.update(kwargs)
    with pytest.raises(AculinkError, match=match) as exc:
        simulate_link(PROAKIS_B, **base)
    assert "\n" not in str(exc.value)


def test_rate_above_band_rejected():
    """[ProakisSalehi2008]: the occupied band is Rs (1 + beta); above the channel's band is an error."""
    from aculink.channel import Channel

    ch = Channel.from_taps([0.0, 1e-3], [1.0, 0.5], 12000.0, 4000.0)
    with pytest.raises(AculinkError, match=r"allowed range is \(0, 3200\] Bd"):
        predict_link(ch, None, 3500, "qpsk", "dfe", rolloff=0.25, snr_db=20)
