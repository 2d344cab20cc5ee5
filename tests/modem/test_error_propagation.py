"""DFE error propagation: the model's closed form, the Duttweiler-Mazo-Messerschmitt bound, and
the predicted BER against the simulator on the Proakis textbook channels."""

import numpy as np
import pytest
from scipy.stats import norm

from aculink.modem import bit_error_rate, predict_link, simulate_link
from aculink.modem.analytic import error_propagation

from .conftest import PROAKIS_B, PROAKIS_C


@pytest.mark.parametrize("g,snr_db", [(0.3, 10.0), (0.45, 12.0), (0.2, 8.0)])
def test_bpsk_one_tap_closed_form(g, snr_db):
    """BPSK with one feedback tap g (Proakis 2001 section 5.2 for the Q-function error rates;
    scipy.stats.norm.sf as Q): a wrong decision (Delta = +-2) shifts the next decision variable by
    +-2g, so it errs with p = [Q((1 - 2g)/sigma) + Q((1 + 2g)/sigma)] / 2 against Q(1/sigma)
    without it; the branching-process mean (Harris 1963) is 1 / (1 - (p - Q(1/sigma)))."""
    snr = 10 ** (snr_db / 10)
    sigma = np.sqrt(0.5 / snr)
    q = norm.sf
    e = 0.5 * (q((1 - 2 * g) / sigma) + q((1 + 2 * g) / sigma)) - q(1 / sigma)
    factor, m = error_propagation([g], snr, "bpsk")
    assert m == pytest.approx(e, rel=1e-9)
    assert factor == pytest.approx(min(1 / (1 - e), 2.0), rel=1e-9)


@pytest.mark.parametrize("seed", range(6))
def test_binary_factor_within_dmm_bound(seed):
    """Duttweiler, Mazo and Messerschmitt (1974): with N feedback taps and binary decisions the
    error probability is at most 2^N times that with correct decisions; the factor is >= 1."""
    rng = np.random.default_rng(seed)
    n = int(rng.integers(1, 6))
    g = rng.uniform(-2, 2, n)
    factor, _ = error_propagation(g, 10 ** (rng.uniform(5, 15) / 10), "bpsk")
    assert 1.0 <= factor <= 2.0 ** n + 1e-9


def test_no_feedback_no_propagation():
    """Definition: without feedback (or with taps that cannot move a decision) nothing propagates;
    the linear equalizer's and the no-equalizer prediction carry a factor of 1."""
    assert error_propagation([], 100.0, "qpsk") == (1.0, 0.0)
    assert error_propagation([1e-5], 100.0, "qpsk")[0] == 1.0
    for rx in ("none", "linear"):
        assert predict_link(PROAKIS_B, None, 1000, "qpsk", rx, snr_db=14).error_propagation == 1.0


@pytest.mark.slow
@pytest.mark.parametrize("h,snr_db,factor", [(PROAKIS_B, 14, 2.0), (PROAKIS_C, 18, 4.0)], ids=["b", "c"])
def test_dfe_ber_with_propagation_against_monte_carlo(h, snr_db, factor):
    """Proakis 2001 section 10.3 channels b and c (taps as in the textbook): the adaptive
    DFE's predicted BER (error propagation included) lies within the stated factor of the
    simulated BER's 95 % Clopper-Pearson interval (2 on b, 4 on c where the model is pessimistic:
    several feedback taps exceed the cursor), and the prediction without propagation (BER at the
    predicted SNR) would be below the interval on b: error propagation is what closes the gap."""
    kw = dict(symbol_rate_baud=1000, modulation="qpsk", receiver="dfe", snr_db=snr_db)
    r = simulate_link(h, n_symbols=40000, max_errors=150, seed=9, **kw)
    p = predict_link(h, None, 1000, "qpsk", "dfe", snr_db=snr_db)
    assert r.ber_low / factor <= p.ber_predicted <= r.ber_high * factor, (r.ber, r.ber_low, r.ber_high, p.ber_predicted)
    assert p.error_propagation > 1.5
    if h is PROAKIS_B:
        no_prop = float(bit_error_rate("qpsk", 10 ** (p.snr_out_db / 10)))
        assert no_prop < r.ber_low


@pytest.mark.slow
@pytest.mark.parametrize("h,snr_db", [(PROAKIS_B, 20), (np.array([1, 0, 0, 0.5j, 0, 0, 0, -0.3]), 23)],
                         ids=["b", "sparse"])
def test_mmse_dfe_estimation_loss_against_monte_carlo(h, snr_db):
    """Kay 1993 ch. 4 (least squares, from memory) for the estimate's error: the mmse-dfe
    receiver designed on the training estimate measures below the known-channel design; the
    prediction with its estimation and implementation loss (known_channel=False) is within 0.6 dB
    of the measured output SNR and not above it by more than 0.2 dB (slightly pessimistic, the
    rule of the estimate)."""
    kw = dict(symbol_rate_baud=1000, modulation="qpsk", receiver="mmse-dfe", snr_db=snr_db)
    r = simulate_link(h, n_symbols=8000, max_errors=10 ** 6, seed=4, **kw)
    p = predict_link(h, None, 1000, "qpsk", "mmse-dfe", snr_db=snr_db, known_channel=False)
    assert r.snr_predicted_db == pytest.approx(p.snr_out_db, abs=1e-9)
    assert r.snr_out_db < p.snr_finite_db
    assert abs(r.snr_out_db - p.snr_out_db) < 0.6
    assert p.snr_out_db <= r.snr_out_db + 0.2


def test_long_feedback_gives_the_branching_mean_without_overflow():
    """Harris 1963 (Galton-Watson mean, 1 / (1 - m)): 400 small feedback taps on 64-QAM at 20 dB
    (a long reverberant channel) cause m < 1 errors per error; the factor is the branching mean.
    The cap 32^400 of the Duttweiler-Mazo-Messerschmitt generalisation overflows a float, which
    used to abort the whole prediction with an OverflowError."""
    factor, m = error_propagation(np.full(400, 0.02), 100.0, "64qam")
    assert 0.0 < m < 1.0
    assert factor == pytest.approx(1.0 / (1.0 - m), rel=1e-12)
