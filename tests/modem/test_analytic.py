"""Equalizer SNR bounds, finite-length MMSE-DFE and water-filling against published equations and computed check values (Salz 1973; Cioffi et al.
1995; Al-Dhahir and Cioffi 1995; Hirt and Massey 1988)."""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from aculink.modem import equalizer_bounds, folded_snr_from_taps, mmse_dfe_design, water_filling

from .conftest import PROAKIS_B, PROAKIS_C


def db(x):
    return 10 * np.log10(x)


@pytest.mark.parametrize("rho,snr,row", [
    (0.5, 10, [10.9691, 8.7506, 9.5757, 9.0683, 10.0000, 10.5249, 10.1219]),
    (0.5, 20, [20.9691, 18.7506, 18.8454, 18.7884, 20.0000, 20.0573, 20.0142]),
    (0.9, 10, [12.5768, 2.7875, 8.0538, 7.3145, 10.0000, 11.0531, 10.6982]),
    (0.9, 20, [22.5768, 12.7875, 14.2987, 14.1342, 20.0000, 20.1892, 20.1475]),
])
def test_two_tap_closed_forms(rho, snr, row):
    """Two-tap closed forms (derived from Salz 1973 and Cioffi et al.
    1995. Tolerance 1e-4 dB (table precision)."""
    b = equalizer_bounds(folded_snr_from_taps([1.0, rho], 10 ** (snr / 10)))
    got = [b.mfb, b.zf_le, b.mmse_le_biased, b.mmse_le, b.zf_dfe, b.mmse_dfe_biased, b.mmse_dfe]
    np.testing.assert_allclose(db(got), row, atol=1.1e-4)
    g = 10 ** (snr / 10)
    a, bb = 1 + g * (1 + rho ** 2), 2 * g * rho
    assert b.mmse_dfe_biased == pytest.approx((a + np.sqrt(a * a - bb * bb)) / 2, rel=1e-9)
    assert b.mmse_le_biased == pytest.approx(np.sqrt(a * a - bb * bb), rel=1e-9)


def test_proakis_spectral_facts():
    """Proakis 2001 section 10.2 channels, computed: ZF-DFE loss (geometric mean of |H|^2) b -7.3776 dB, c -12.2245 dB."""
    for h, ref in ((PROAKIS_B, -7.3776), (PROAKIS_C, -12.2245)):
        b = equalizer_bounds(folded_snr_from_taps(h, 1.0))
        assert db(b.zf_dfe) == pytest.approx(ref, abs=2e-3)


@settings(max_examples=40, deadline=None)
@given(st.lists(st.complex_numbers(max_magnitude=2, allow_nan=False, allow_infinity=False), min_size=1, max_size=6),
       st.floats(-5, 30))
def test_ordering_invariants(taps, snr_db):
    """AM-GM-HM inequalities (Cioffi et al. 1995): ZF-LE <= LE,U <= DFE,U <= MFB, ZF-LE <= ZF-DFE <= DFE,U, and
    the canonical identity log2(1 + SNR_DFE,U) = mean log2(1 + gS) (Cioffi et al. 1995);
    water-filling capacity >= the flat-input information rate (Hirt and Massey 1988)."""
    h = np.array(taps)
    if np.sum(np.abs(h) ** 2) < 1e-3:
        return
    b = equalizer_bounds(folded_snr_from_taps(h, 10 ** (snr_db / 10), 4096))
    tol = 1e-9 * max(1.0, b.mfb)
    assert b.zf_le <= b.mmse_le + tol
    assert b.mmse_le <= b.mmse_dfe + tol
    assert b.mmse_dfe <= b.mfb + tol
    assert b.zf_le <= b.zf_dfe + tol
    assert b.zf_dfe <= b.mmse_dfe + tol
    assert np.log2(1 + b.mmse_dfe) == pytest.approx(b.flat_information_bits, rel=1e-9, abs=1e-12)
    assert b.capacity_bits >= b.flat_information_bits - 1e-9


# Finite-length MSE table (computed from the design of Al-Dhahir and Cioffi 1995), in dB.
FINITE = {
    ("b", 10): {3: (-7.694, -4.425), 11: (-7.772, -4.730), 31: (-7.772, -4.732)},
    ("b", 20): {3: (-14.370, -6.499), 11: (-15.276, -7.257), 31: (-15.281, -7.460)},
    ("b", 30): {3: (-22.536, -6.954), 11: (-23.910, -9.722), 31: (-23.936, -10.058)},
    ("c", 10): {3: (-5.295, -2.652), 11: (-6.023, -2.961), 31: (-6.024, -2.987)},
    ("c", 20): {3: (-9.859, -4.787), 11: (-12.018, -5.073), 31: (-12.052, -5.286)},
    ("c", 30): {3: (-17.594, -5.753), 11: (-19.799, -7.568), 31: (-19.857, -7.919)},
}


@pytest.mark.parametrize("key", list(FINITE))
def test_finite_length_mmse_table(key):
    """Computed table (Al-Dhahir and Cioffi 1995 design, minimum over the decision delay),
    tolerance 0.005 dB; Nb = nu for the DFE, Nb = 0 for the LE."""
    name, snr = key
    h, nu = (PROAKIS_B, 2) if name == "b" else (PROAKIS_C, 4)
    for nf, (dfe_ref, le_ref) in FINITE[key].items():
        starts = range(-nf + 1, nu + 1)
        dfe = mmse_dfe_design(h, nf, nu, noise_acf=10 ** (-snr / 10), starts=starts)
        le = mmse_dfe_design(h, nf, 0, noise_acf=10 ** (-snr / 10), starts=starts)
        assert db(dfe.mmse) == pytest.approx(dfe_ref, abs=5e-3)
        assert db(le.mmse) == pytest.approx(le_ref, abs=5e-3)


def test_finite_converges_to_salz_and_le_31_unbiased():
    """Al-Dhahir and Cioffi 1995: as Nf grows (Nb = nu, Delta = Nf - 1) the finite MMSE reaches Salz's value;
    the 31-tap MMSE-LE unbiased SNR on b is 2.951 / 6.601 / 9.607 dB at 10 / 20 / 30 dB."""
    for snr, le_u in ((10, 2.951), (20, 6.601), (30, 9.607)):
        inf = equalizer_bounds(folded_snr_from_taps(PROAKIS_B, 10 ** (snr / 10)))
        fin = mmse_dfe_design(PROAKIS_B, 41, 2, noise_acf=10 ** (-snr / 10), starts=[0])
        assert db(fin.snr_biased) == pytest.approx(db(inf.mmse_dfe_biased), abs=2e-3)
        le = mmse_dfe_design(PROAKIS_B, 31, 0, noise_acf=10 ** (-snr / 10), starts=range(-30, 3))
        assert db(le.snr) == pytest.approx(le_u, abs=5e-3)


def test_feedback_taps_cancel_postcursors():
    """Al-Dhahir and Cioffi 1995: b_j = w^H h_{Delta+j}, so the combined response has no
    post-cursor ISI within the feedback span."""
    d = mmse_dfe_design(PROAKIS_C, 9, 4, noise_acf=0.01, starts=[0])
    q = np.concatenate([PROAKIS_C, np.zeros(20)])
    for j in range(1, 5):
        c_j = q[np.arange(9) + j]  # the window's samples of past symbol x_{n-j}
        assert np.vdot(d.ff, c_j) == pytest.approx(np.conj(d.fb[j - 1]), abs=1e-12)


def test_water_filling_worked_example():
    """Water-filling worked example (parallel Gaussian channels, closed form of Cover and Thomas
    2006 section 9.4; the figures are a textbook exercise, from memory): three 1 MHz subchannels with gamma = 10, 40, 90
    (S = 10 mW, N0 = 1e-9, H = 1, 2, 3): C = 10.93 Mbit/s, power fractions 0.2787, 0.3537, 0.3676."""
    gamma = np.array([10.0, 40.0, 90.0]) / 3  # per-subchannel SNR if power were split evenly
    bits, p = water_filling(gamma)
    assert 3 * bits == pytest.approx(10.93, abs=0.01)
    np.testing.assert_allclose(p / p.sum(), [0.2787, 0.3537, 0.3676], atol=1e-4)


def test_design_with_singular_band_limited_noise(monkeypatch):
    """Regression (the reviewer's 'noise covariance is not positive definite', aculink link on a
    bundled site): a T/2 raised-cosine noise autocorrelation has an empty band between
    (1 + beta) Rs/2 and Rs (Proakis 2001 eq. 9.2-26), so its Toeplitz matrix is singular and a
    rounding-sized error (here 1e-9 of the power at lag 0) makes it indefinite (smallest
    eigenvalue < 0 by numpy). With a band-limited response the unloaded design fails; the
    loaded one exists with 0 < MMSE < Es (Al-Dhahir and Cioffi 1995)."""
    import scipy.linalg

    from aculink.errors import AculinkError
    from aculink.modem import analytic
    from aculink.modem.pulses import raised_cosine

    t = np.arange(129) / 2 - 10.0  # T/2 samples of a band-limited (raised-cosine) two-path response
    q = raised_cosine(t, 0.25) + 0.5j * raised_cosine(t - 7.3, 0.25)
    acf = 0.03 * raised_cosine(np.arange(64) / 2, 0.25)
    acf[0] -= 0.03e-9
    assert np.linalg.eigvalsh(scipy.linalg.toeplitz(acf)).min() < 0
    d = mmse_dfe_design(q, 64, 0, stride=2, noise_acf=acf, starts=range(-40, 21, 4))
    assert np.isfinite(d.snr) and d.snr > 0 and 0.0 < d.bias < 1.0
    monkeypatch.setattr(analytic, "_LOADING_LADDER", (0.0,))
    monkeypatch.setattr(analytic, "_CONDITION_FLOOR", 0.0)
    with pytest.raises(AculinkError, match="noise autocorrelation"):
        mmse_dfe_design(q, 64, 0, stride=2, noise_acf=acf, starts=range(-40, 21, 4))
