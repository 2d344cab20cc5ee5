"""Adaptive equalizers and the PLL against textbook convergence facts ([AlDhahirCioffi1995], [Rice2009])."""

import numpy as np
import pytest

from aculink.modem import _kernels, mmse_dfe_design, pll_gains
from aculink.modem.constellations import constellation

from .conftest import PROAKIS_B, PROAKIS_C

QPSK = constellation("qpsk")


def _frames(rng, h, snr_db, n_sym):
    lab = rng.integers(0, 4, n_sym + 40)
    y = np.convolve(QPSK.points[lab], h)
    y = y + np.sqrt(10 ** (-snr_db / 10) / 2) * (rng.standard_normal(y.size) + 1j * rng.standard_normal(y.size))
    return y, lab.astype(np.int64)


def _run(kind, y, lab, start0, n_sym, n_ff, n_fb, n_train, *, lam=0.999, mu=0.5, delta=1e-3):
    fbd = np.arange(1, n_fb + 1, dtype=np.int64)
    out = [np.zeros(n_sym), np.zeros(n_sym), np.zeros(n_sym, np.int64), np.zeros(n_sym), np.zeros(n_sym)]
    n = n_ff + n_fb
    wr, wi = np.zeros(n), np.zeros(n)
    args = (np.ascontiguousarray(y.real), np.ascontiguousarray(y.imag), start0, 1, n_sym, n_ff, fbd, lab, n_train,
            QPSK.points.real.copy(), QPSK.points.imag.copy())
    if kind == "rls":
        _kernels.rls_dfe(*args, lam, delta, 0.0, 0.0, 0, 0.0, *out, wr, wi, np.zeros(3, np.int64))
    else:
        _kernels.nlms_dfe(*args, mu, 1e-6, 0.0, 0.0, 0, 0.0, *out, wr, wi, np.zeros(3, np.int64))
    return out[3]


@pytest.mark.parametrize("h,nu,snr", [(PROAKIS_B, 2, 20), (PROAKIS_C, 4, 20), (PROAKIS_B, 2, 10)])
def test_rls_dfe_reaches_finite_mmse(h, nu, snr, rng):
    """Al-Dhahir and Cioffi (1995): the converged RLS DFE (Nf = 11, Nb = nu, symbol spaced, same
    decision delay) has MSE within 0.5 dB of the finite-length MMSE-DFE; with lambda = 0.999 the
    misadjustment M(1-lambda)/(1+lambda) is 0.03 dB (Eleftheriou and Falconer 1986)."""
    design = mmse_dfe_design(h, 11, nu, noise_acf=10 ** (-snr / 10), starts=range(-10, nu + 1))
    n_sym = 6000
    y, lab = _frames(rng, h, snr, n_sym)
    err2 = _run("rls", y[max(design.start, 0):], lab, max(-design.start, 0) and 0, n_sym, 11, nu, n_sym) if design.start >= 0 else None
    if err2 is None:  # window starts before symbol 0's response: pad the front
        ypad = np.concatenate([np.zeros(-design.start, complex), y])
        err2 = _run("rls", ypad, lab, 0, n_sym, 11, nu, n_sym)
    mse_db = 10 * np.log10(np.mean(err2[2000:]))
    assert mse_db == pytest.approx(10 * np.log10(design.mmse), abs=0.5)


def test_rls_converges_in_about_twice_the_taps(rng):
    """Haykin, Adaptive Filter Theory 4th ed. ch. 9 (memory; [AlDhahirCioffi1995]): with lambda = 1 and
    small delta, J(n) = J_min (1 + M/(n - M - 1)), i.e. within 3 dB of the final MSE after about
    2M samples. Ensemble of 200 runs, M = 13 taps on Proakis b at 20 dB: the 3-dB point lies in
    [1.5 M, 2.5 M]."""
    n_sym, runs, m = 300, 200, 13
    j = np.zeros(n_sym)
    for _ in range(runs):
        y, lab = _frames(rng, PROAKIS_B, 20, n_sym)
        j += _run("rls", y, lab, 0, n_sym, 11, 2, n_sym, lam=1.0, delta=1e-3)
    j /= runs
    final = j[200:].mean()
    knee = int(np.argmax(j <= 2 * final))
    assert 1.5 * m <= knee <= 2.5 * m


@pytest.mark.parametrize("mu", [0.1, 0.5, 1.0, 1.5, 1.9])
def test_nlms_stable_inside_0_2(mu, rng):
    """Haykin ch. 6 / [AlDhahirCioffi1995]: NLMS is stable for 0 < mu < 2 (the MSE settles far below
    the untrained level)."""
    y, lab = _frames(rng, PROAKIS_B, 25, 6000)
    err2 = _run("nlms", y, lab, 0, 6000, 11, 2, 6000, mu=mu)
    assert np.all(np.isfinite(err2))
    assert np.mean(err2[-1000:]) < 0.2 * np.mean(err2[:20])


def test_nlms_diverges_beyond_2(rng):
    """Haykin ch. 6: for mu > 2 the a posteriori error is amplified by |1 - mu| > 1 each step, so
    the filter does not converge (the MSE ends no better than at the start)."""
    y, lab = _frames(rng, PROAKIS_B, 25, 3000)
    err2 = _run("nlms", y, lab, 0, 3000, 11, 2, 3000, mu=2.5)
    assert not np.mean(err2[-500:]) < 0.2 * np.mean(err2[:20])


def _pll_run(freq_cycles, k1, k2, n=6000):
    lab = np.random.default_rng(5).integers(0, 4, n).astype(np.int64)
    ph = 2 * np.pi * freq_cycles * np.arange(n) + 0.7
    y = QPSK.points[lab] * np.exp(1j * ph)
    out = [np.zeros(n), np.zeros(n), np.zeros(n, np.int64), np.zeros(n), np.zeros(n)]
    _kernels.fixed_dfe(y.real.copy(), y.imag.copy(), 0, 1, n, 1, np.zeros(0, np.int64), lab, n,
                       QPSK.points.real.copy(), QPSK.points.imag.copy(), 1.0, k1, k2, 0, 0.0, *out,
                       np.ones(1), np.zeros(1), np.zeros(3, np.int64))
    return np.angle(np.exp(1j * (ph - out[4])))


def test_pll_tracks_frequency_offset_without_steady_error():
    """[Rice2009]: a type-2 (second-order, with integrator) loop tracks a constant frequency
    offset (a phase ramp) with zero steady-state phase error; a type-1 loop (K2 = 0) keeps the
    error 2 pi f / K1 (control theory, Gardner, Phaselock Techniques, from memory)."""
    k1, k2 = pll_gains(0.01)
    f = 2e-3  # cycles per symbol
    err = _pll_run(f, k1, k2)
    assert np.max(np.abs(err[-500:])) < 1e-6
    err1 = _pll_run(f, k1, 0.0)
    assert np.mean(err1[-500:]) == pytest.approx(2 * np.pi * f / k1, rel=0.05)
