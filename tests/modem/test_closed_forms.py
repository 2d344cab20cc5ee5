"""Closed-form error rates, RRC pulses and PLL gains against published/computed check values."""

import numpy as np
import pytest

from aculink.modem import bit_error_rate, pll_gains, symbol_error_rate
from aculink.modem.constellations import constellation, MODULATIONS
from aculink.modem.pulses import rrc_impulse, rrc_taps


def db(x):
    return 10 ** (np.asarray(x, dtype=float) / 10)


def test_bpsk_ber_table():
    """Table computed from Proakis 2001 section 5.2, Pb = Q(sqrt(2 Eb/N0))."""
    ebn0 = [0, 2, 4, 6, 7, 8, 9, 9.6, 10, 12]
    ref = [7.8650e-02, 3.7506e-02, 1.2501e-02, 2.3883e-03, 7.7267e-04, 1.9091e-04, 3.3627e-05,
           9.7362e-06, 3.8721e-06, 9.0060e-09]
    np.testing.assert_allclose(bit_error_rate("bpsk", db(ebn0)), ref, rtol=1e-4)
    np.testing.assert_allclose(bit_error_rate("qpsk", 2 * db(ebn0)), ref, rtol=1e-4)


def test_psk_symbol_error_tables():
    """Computed table: QPSK and 8-PSK exact Ps (Craig 1991 / Proakis 2001 5.2-7)."""
    esn0 = db([5, 10, 15, 20])
    np.testing.assert_allclose(symbol_error_rate("qpsk", esn0), [7.3938e-02, 1.5648e-03, 1.8722e-08, 1.5240e-23], rtol=1e-4)
    np.testing.assert_allclose(symbol_error_rate("8psk", esn0), [3.3523e-01, 8.7005e-02, 2.3395e-03, 6.2338e-08], rtol=1e-4)


def test_qam_tables():
    """Computed tables: square QAM Ps (Proakis 5.2-9) and exact Gray Pb (Cho and Yoon 2002)."""
    esn0 = db([10, 15, 20, 25])
    np.testing.assert_allclose(symbol_error_rate("16qam", esn0), [2.2203e-01, 1.7782e-02, 1.1616e-05, 2.7372e-15], rtol=1e-4)
    np.testing.assert_allclose(symbol_error_rate("64qam", esn0), [6.7383e-01, 3.4762e-01, 5.0270e-02, 1.8240e-04], rtol=1e-4)
    ebn0 = db([6, 10, 14, 18])
    np.testing.assert_allclose(bit_error_rate("16qam", 4 * ebn0), [2.7871e-02, 1.7542e-03, 2.7632e-06, 4.5223e-13], rtol=1e-4)
    np.testing.assert_allclose(bit_error_rate("64qam", 6 * ebn0), [8.3817e-02, 2.6533e-02, 2.1540e-03, 6.3511e-06], rtol=1e-4)


def test_8psk_gray_ber_near_ser_over_bits():
    """Proakis 2001 5.2-7: with Gray mapping Pb ~ Ps / log2 M at high SNR (within 0.2 %)."""
    g = db([15, 20])
    np.testing.assert_allclose(bit_error_rate("8psk", g), symbol_error_rate("8psk", g) / 3, rtol=2e-3)


@pytest.mark.parametrize("name", list(MODULATIONS))
def test_constellations_unit_energy_and_gray(name):
    """Proakis 2001 5.2: unit mean energy; Gray mapping: nearest neighbours differ in one bit."""
    c = constellation(name)
    assert np.mean(np.abs(c.points) ** 2) == pytest.approx(1.0, rel=1e-12)
    bits = c.label_bits()
    d = np.abs(c.points[:, None] - c.points[None, :])
    np.fill_diagonal(d, np.inf)
    dmin = d.min()
    for i, j in zip(*np.nonzero(np.isclose(d, dmin))):
        assert np.sum(bits[i] != bits[j]) == 1


@pytest.mark.parametrize("beta,h0,hq", [(0.25, 1.068310, -0.064237), (0.35, 1.095634, 0.260603),
                                        (0.5, 1.136620, 0.578632), (1.0, 1.273240, 1.000000)])
def test_rrc_check_values(beta, h0, hq):
    """Computed from the published RRC closed form (Proakis and Salehi 2002, section 8.3): h(0), h(T/4 beta), removable
    singularities continuous to 1e-6, unit energy, RRC*RRC = raised cosine (peak 1)."""
    assert rrc_impulse(np.array([0.0]), beta)[0] == pytest.approx(h0, abs=1e-6)
    t = 1 / (4 * beta)
    assert rrc_impulse(np.array([t]), beta)[0] == pytest.approx(hq, abs=1e-6)
    assert rrc_impulse(np.array([t + 1e-7]), beta)[0] == pytest.approx(hq, abs=1e-5)
    g = rrc_taps(beta, 16, span_symbols=20)
    rc = np.convolve(g, g)
    assert rc.max() == pytest.approx(1.0, abs=1e-9)
    mid = rc.size // 2
    isi = np.abs(rc[mid % 16::16])
    isi = np.delete(isi, np.argmax(isi))
    assert isi.max() < 2e-3


def test_pll_gain_check_value():
    """Computed from Rice 2009 appendix C (from memory): zeta 0.7071, BnT 0.01."""
    k1, k2 = pll_gains(0.01, 0.7071)
    assert k1 == pytest.approx(0.026313, rel=1e-4)
    assert k2 == pytest.approx(3.5085e-4, rel=1e-4)
