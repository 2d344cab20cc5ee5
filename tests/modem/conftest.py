"""Shared fixtures and slow twins of the modem kernels."""

import numpy as np
import pytest

#: Proakis, Digital Communications, 4th ed. (2001), section 10.2 test channels (REFERENCES.md 8).
PROAKIS_B = np.array([0.407, 0.815, 0.407])
PROAKIS_C = np.array([0.227, 0.460, 0.688, 0.460, 0.227])


def twin_dfe(y, start0, stride, n_sym, n_ff, fb_delays, train, points, *, kind, lam=0.99, delta=1e-2,
             mu=0.5, eps=1e-6, k1=0.0, k2=0.0, pll_start=0, w0=None, scale=1.0, resym=16):
    """Obviously correct per-symbol numpy DFE: textbook RLS (P = (P - k v^H P)/lam, symmetrised
    every ``resym`` symbols), NLMS or fixed taps, with the same second-order PLL."""
    n = n_ff + len(fb_delays)
    w = np.zeros(n, complex) if w0 is None else np.array(w0, complex)
    p = np.eye(n) / delta + 0j
    theta = integ = 0.0
    dec = np.zeros(n_sym, complex)
    z_out = np.zeros(n_sym, complex)
    labels = np.zeros(n_sym, int)
    for t in range(n_sym):
        s = start0 + t * stride
        u = y[s:s + n_ff] * np.exp(-1j * theta)
        past = np.array([dec[t - d] if t - d >= 0 else 0.0 for d in fb_delays], complex)
        v = np.concatenate([u, -past])
        zff = np.vdot(w[:n_ff], v[:n_ff])
        zfb = np.vdot(w[n_ff:], v[n_ff:])
        if kind == "fixed":
            zff, zfb = zff * scale, zfb * scale
        z = zff + zfb
        lab = train[t] if t < len(train) else int(np.argmin(np.abs(z - points)))
        d = points[lab]
        e = d - z
        if kind == "rls":
            pv = p @ v
            k = pv / (lam + np.vdot(v, pv).real)
            w = w + k * np.conj(e)
            p = (p - np.outer(k, v.conj() @ p)) / lam
            if (t + 1) % resym == 0:
                p = 0.5 * (p + p.conj().T)
        elif kind == "nlms":
            w = w + mu * v * np.conj(e) / (eps + np.vdot(v, v).real)
        tgt = d - zfb
        if abs(tgt) ** 2 > 1e-12 and t >= pll_start:
            phi = (zff * np.conj(tgt)).imag / abs(tgt) ** 2
            integ += phi
            theta += k1 * phi + k2 * integ
        dec[t] = d
        z_out[t] = z
        labels[t] = lab
    return z_out, labels, w


@pytest.fixture
def rng():
    return np.random.default_rng(1234)
