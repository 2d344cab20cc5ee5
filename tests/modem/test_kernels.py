"""Each numba kernel against its slow numpy twin (tests/modem/conftest.py): same outputs."""

import numpy as np
import pytest

from aculink.modem import _kernels
from aculink.modem.constellations import constellation

from .conftest import PROAKIS_B, twin_dfe


def _signal(rng, n_sym, stride, mod="qpsk"):
    c = constellation(mod)
    lab = rng.integers(0, c.order, n_sym + 20)
    x = c.points[lab]
    y = np.convolve(np.repeat(x, stride) if stride > 1 else x, np.repeat(PROAKIS_B, stride) / stride)
    y = y + 0.05 * (rng.standard_normal(y.size) + 1j * rng.standard_normal(y.size))
    return y * np.exp(0.3j), lab, c.points


def _run(kind, y, start0, stride, n_sym, n_ff, fbd, train, pts, **kw):
    n = n_ff + fbd.size
    out = [np.zeros(n_sym), np.zeros(n_sym), np.zeros(n_sym, np.int64), np.zeros(n_sym), np.zeros(n_sym)]
    w0 = kw.pop("w0", np.zeros(n, complex))
    wr, wi = w0.real.copy(), w0.imag.copy()
    args = (y.real.copy(), y.imag.copy(), start0, stride, n_sym, n_ff, fbd, train, train.size,
            pts.real.copy(), pts.imag.copy())
    k1, k2, ps = kw["k1"], kw["k2"], kw["pll_start"]
    if kind == "rls":
        _kernels.rls_dfe(*args, kw["lam"], kw["delta"], k1, k2, ps, 0.0, *out, wr, wi, np.zeros(3, np.int64))
    elif kind == "nlms":
        _kernels.nlms_dfe(*args, kw["mu"], 1e-6, k1, k2, ps, 0.0, *out, wr, wi, np.zeros(3, np.int64))
    else:
        _kernels.fixed_dfe(*args, kw["scale"], k1, k2, ps, 0.0, *out, wr, wi, np.zeros(3, np.int64))
    return out[0] + 1j * out[1], out[2], wr + 1j * wi


@pytest.mark.parametrize("kind", ["rls", "nlms", "fixed"])
@pytest.mark.parametrize("stride,fb", [(1, [1, 2]), (2, [1, 2, 5])])
def test_kernel_matches_numpy_twin(kind, stride, fb, rng):
    """Computed: the numba kernel and the per-symbol numpy twin agree to 1e-8 over 300 symbols
    (training then decision directed, PLL on)."""
    n_sym, n_ff = 300, 6
    y, lab, pts = _signal(rng, n_sym, stride)
    fbd = np.array(fb, dtype=np.int64)
    train = lab[:120].astype(np.int64)
    kw = dict(lam=0.99, delta=1e-2, mu=0.4, k1=0.02, k2=2e-4, pll_start=40, scale=1.1)
    w0 = None
    if kind == "fixed":
        w0 = rng.standard_normal(n_ff + fbd.size) * 0.1 + 0j
        w0[0] = 1.0
    z, labels, w = _run(kind, y, 0, stride, n_sym, n_ff, fbd, train, pts,
                        **dict(kw, **({"w0": w0} if w0 is not None else {})))
    zt, lt, wt = twin_dfe(y, 0, stride, n_sym, n_ff, fbd, train, pts, kind=kind, lam=kw["lam"],
                          delta=kw["delta"], mu=kw["mu"], k1=kw["k1"], k2=kw["k2"],
                          pll_start=kw["pll_start"], w0=w0, scale=kw["scale"])
    np.testing.assert_allclose(z, zt, atol=1e-8)
    np.testing.assert_array_equal(labels, lt)
    np.testing.assert_allclose(w, wt, atol=1e-8)


def test_rls_long_run_stays_hermitian_and_finite(rng):
    """Common practice, no source: exponentially weighted RLS (lambda = 0.98) over 30,000
    symbols does not diverge (no restart, final MSE at the converged level)."""
    n_sym = 30000
    y, lab, pts = _signal(rng, n_sym, 1)
    fbd = np.array([1, 2], dtype=np.int64)
    n = 8 + 2
    out = [np.zeros(n_sym), np.zeros(n_sym), np.zeros(n_sym, np.int64), np.zeros(n_sym), np.zeros(n_sym)]
    wr, wi = np.zeros(n), np.zeros(n)
    restarts = _kernels.rls_dfe(y.real.copy(), y.imag.copy(), 0, 1, n_sym, 8, fbd, lab[:n_sym].astype(np.int64),
                                n_sym, pts.real.copy(), pts.imag.copy(), 0.98, 1e-2, 0.0, 0.0, 0, 0.0, *out, wr, wi, np.zeros(3, np.int64))
    assert restarts == 0
    assert np.all(np.isfinite(out[3]))
    assert np.mean(out[3][-5000:]) < 2 * np.mean(out[3][5000:10000])


def test_gram_update_and_cholesky_match_numpy_scipy(rng):
    """Computed: the single-threaded design kernels agree with numpy (c c^H) and
    scipy.linalg.cho_solve to 1e-10, and report a matrix that is not positive definite."""
    import scipy.linalg

    n, k = 24, 9
    c = rng.standard_normal((n, k)) + 1j * rng.standard_normal((n, k))
    a = rng.standard_normal((n, 3 * n)) + 1j * rng.standard_normal((n, 3 * n))
    base = a @ a.conj().T + np.eye(n)
    out = np.empty((n, n), complex)
    _kernels.gram_update(base, c, out)
    np.testing.assert_allclose(out, base - c @ c.conj().T, atol=1e-10)
    b = rng.standard_normal(n) + 1j * rng.standard_normal(n)
    x = np.empty(n, complex)
    assert _kernels.cholesky_solve(base.copy(), b, x)
    np.testing.assert_allclose(x, scipy.linalg.cho_solve(scipy.linalg.cho_factor(base), b), atol=1e-10)
    assert not _kernels.cholesky_solve(-np.eye(3) + 0j, np.ones(3, complex), np.empty(3, complex))
