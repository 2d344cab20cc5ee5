"""The planner's fast MMSE-DFE design against the reference design and a naive numpy twin
(Al-Dhahir and Cioffi 1995: w = Es (Es C C^H + R_nn)^-1 c_0, MMSE = Es (1 - Es c_0^H w / Es))."""

import numpy as np
import pytest

from aculink.errors import AculinkError
from aculink.modem import analytic, mmse_dfe_design
from aculink.modem._design_fast import mmse_dfe_design_fast
from aculink.modem.pulses import raised_cosine

from .conftest import PROAKIS_B, PROAKIS_C


def multipath_half(seed, n_paths=6, span_symbols=60.0, beta=0.25):
    """T/2 samples of a band-limited multipath response (raised-cosine pulses at random delays)."""
    rng = np.random.default_rng(seed)
    t = np.arange(int(2 * (span_symbols + 20))) / 2 - 10.0
    delays = np.sort(rng.uniform(0.0, span_symbols, n_paths))
    gains = (rng.normal(size=n_paths) + 1j * rng.normal(size=n_paths)) * np.exp(-delays / 20.0)
    return sum(g * raised_cosine(t - d, beta) for g, d in zip(gains, delays))


def coloured_acf(noise, n, beta=0.25):
    return noise * raised_cosine(np.arange(n) / 2, beta) + 1e-3 * noise * (np.arange(n) == 0)


def assert_same(ref, fast, rtol=1e-7):
    assert fast.start == ref.start
    assert fast.mmse == pytest.approx(ref.mmse, rel=rtol)
    assert fast.snr == pytest.approx(ref.snr, rel=rtol)
    np.testing.assert_array_equal(fast.fb_delays, ref.fb_delays)
    np.testing.assert_allclose(fast.ff, ref.ff, rtol=0, atol=rtol * np.max(np.abs(ref.ff)))
    if ref.fb.size:
        np.testing.assert_allclose(fast.fb, ref.fb, rtol=0, atol=rtol * np.max(np.abs(ref.fb)))


@pytest.mark.parametrize("h,nf,nb", [(PROAKIS_B, 11, 2), (PROAKIS_C, 9, 4), (PROAKIS_C, 21, 0)])
@pytest.mark.parametrize("snr_db", [10.0, 25.0])
def test_symbol_spaced_proakis(h, nf, nb, snr_db):
    """Proakis (2001) sec. 10.2 channels b and c, every start: the reference's answer."""
    kw = dict(noise_acf=10 ** (-snr_db / 10), starts=range(-nf, len(h) + 1))
    assert_same(mmse_dfe_design(h, nf, nb, **kw), mmse_dfe_design_fast(h, nf, nb, **kw))


@pytest.mark.parametrize("seed", [1, 2, 3])
@pytest.mark.parametrize("n_ff,n_fb,step", [(128, 90, 4), (128, 300, 4), (64, 40, 1), (40, 0, 3)])
def test_half_spaced_planner_spans(seed, n_ff, n_fb, step):
    """T/2 feedforward with the planner's long spans and coarse start ladders (which the fast
    design walks by rank-one updates of one factorisation): the reference's answer."""
    q = multipath_half(seed)
    peak = int(np.argmax(np.abs(q)))
    kw = dict(stride=2, noise_acf=coloured_acf(1e-2, n_ff), starts=range(peak - n_ff + 1, peak + 1, step))
    assert_same(mmse_dfe_design(q, n_ff, n_fb, **kw), mmse_dfe_design_fast(q, n_ff, n_fb, **kw))


def test_sparse_feedback_delays():
    """A sparse feedback set (not a run 1..Nb): the reference's answer."""
    q = multipath_half(7)
    peak = int(np.argmax(np.abs(q)))
    kw = dict(stride=2, noise_acf=coloured_acf(3e-3, 80), starts=range(peak - 79, peak + 1, 4),
              fb_delays=[1, 2, 3, 17, 18, 40, 41, 42])
    assert_same(mmse_dfe_design(q, 80, 0, **kw), mmse_dfe_design_fast(q, 80, 0, **kw))


def test_against_naive_formula_every_start():
    """Each start's MMSE against the textbook solve with numpy (the same diagonal loading)."""
    q = multipath_half(11, span_symbols=20.0)
    n_ff, n_fb, es = 48, 25, 2.0
    acf = coloured_acf(5e-2, n_ff)
    r_nn = analytic._noise_matrix(acf, n_ff)
    peak = int(np.argmax(np.abs(q)))
    for t in range(peak - n_ff + 1, peak + 1, 5):
        got = mmse_dfe_design_fast(q, n_ff, n_fb, stride=2, es=es, noise_acf=acf, starts=[t])
        idx = t + np.arange(n_ff)[:, None] + 2 * np.arange(-200, 200)[None, :]
        cols = np.where((idx >= 0) & (idx < q.size), q[np.clip(idx, 0, q.size - 1)], 0.0)
        j = np.arange(-200, 200)
        full = cols @ cols.conj().T
        kept = cols[:, (j < 1) | (j > n_fb)]
        a = es * (kept @ kept.conj().T) + r_nn
        a += np.eye(n_ff) * (analytic.DIAGONAL_LOADING * acf[0]
                             + analytic._CONDITION_FLOOR * np.mean(np.real(np.diag(es * full + r_nn))))
        c0 = cols[:, j == 0][:, 0]
        w = es * np.linalg.solve(a, c0)
        mmse = es * (1.0 - np.real(np.vdot(c0, w)))
        assert got.mmse == pytest.approx(mmse, rel=1e-9)
        np.testing.assert_allclose(got.ff, w, atol=1e-9 * np.max(np.abs(w)))
        np.testing.assert_allclose(got.fb, np.conj(w.conj() @ cols[:, (j >= 1) & (j <= n_fb)]),
                                   atol=1e-9 * np.max(np.abs(w)) * np.max(np.abs(q)))


def test_invalid_noise_is_refused_like_the_reference(monkeypatch):
    """A noise autocorrelation that is not positive semidefinite, with the loading switched off:
    the same one-line error as the reference."""
    from aculink.modem import _design_fast

    t = np.arange(129) / 2 - 10.0  # the reference's own check case (test_analytic)
    q = raised_cosine(t, 0.25) + 0.5j * raised_cosine(t - 7.3, 0.25)
    acf = 0.03 * raised_cosine(np.arange(64) / 2, 0.25)
    acf[0] -= 0.03e-9
    kw = dict(stride=2, noise_acf=acf, starts=range(-40, 21, 4))
    assert_same(mmse_dfe_design(q, 64, 0, **kw), mmse_dfe_design_fast(q, 64, 0, **kw))
    monkeypatch.setattr(_design_fast, "_LOADING_LADDER", (0.0,))
    monkeypatch.setattr(_design_fast, "_CONDITION_FLOOR", 0.0)
    with pytest.raises(AculinkError, match="noise autocorrelation"):
        mmse_dfe_design_fast(q, 64, 0, **kw)
    with pytest.raises(AculinkError, match="feedforward taps"):
        mmse_dfe_design_fast(q, 0, 4)
