"""Shared fixtures and slow twins of the modem kernels."""

import numpy as np
import pytest

#: Proakis, Digital Communications, 4th ed. (2001), section 10.2 test channels ([Salz1973]).
PROAKIS_B = np.array([0.407, 0.815, 0.407])
PROAKIS_C = np.array([0.227, 0.460, 0.688, 0.460, 0.227])


def twin_dfe(y, start0, stride, n_sym, n_ff, fb_delays, train, points, *, kind, lam=0.99, delta=1e-2,
             mu=0.5, eps=1e-6, k1=0.0, k2=0.0, pll_start=0, w0=None, scale=1.0, resym=16, info=None):
    """Obviously correct per-symbol numpy DFE: textbook RLS (P = (P - k v^H P)/lam, symmetrised
    every ``resym`` symbols and scaled back to trace n/delta when above it), NLMS or fixed taps,
    the same second-order PLL (detector normalised by a running mean of the target power), and
    the same divergence monitor written out plainly (snapshot, restore, give up)."""
    from aculink.modem import _kernels as K

    n = n_ff + len(fb_delays)
    w = np.zeros(n, complex) if w0 is None else np.array(w0, complex)
    p = np.eye(n) / delta + 0j
    theta = integ = 0.0
    power = mse = ffp = ref = ref_ff = 1.0
    ref_w2 = 0.0
    d2 = np.abs(points[:, None] - points[None, :]) ** 2
    rand_mse = d2[~np.eye(points.size, dtype=bool)].min() / 6.0
    snap = (w.copy(), p.copy(), 0.0, 0.0, 0)
    recoveries, gave_up = 0, -1
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
                if np.trace(p).real > n / delta:
                    p = p * (n / delta) / np.trace(p).real
        elif kind == "nlms":
            w = w + mu * v * np.conj(e) / (eps + np.vdot(v, v).real)
        tgt = d - zfb
        power += K.PLL_POWER_ALPHA * (abs(tgt) ** 2 - power)
        if t >= pll_start and power > 1e-12:
            phi = (zff * np.conj(tgt)).imag / power
            integ += phi
            theta += k1 * phi + k2 * integ
        if gave_up < 0:
            mse += K.MONITOR_ALPHA * (abs(e) ** 2 - mse)
            ffp += K.MONITOR_ALPHA * (abs(zff) ** 2 - ffp)
            code = 0
            w2 = np.vdot(w, w).real
            kk = t - len(train) + 1
            if kk == 0:
                ref, ref_ff, ref_w2, code = max(mse, K.MSE_FLOOR), ffp, w2, 1
            elif kk > 0:
                if (not np.isfinite(z) or (mse > K.DIVERGE_RATIO * ref and mse > rand_mse)
                        or ffp < K.FF_COLLAPSE * ref_ff):
                    code = 2
                elif kk % K.MONITOR_EVERY == 0 and not w2 <= K.TAP_GROWTH * ref_w2:
                    code = 2
                elif (kk % K.SNAPSHOT_EVERY == 0 and mse <= K.HEALTHY_RATIO * ref
                      and w2 <= np.sqrt(K.TAP_GROWTH) * ref_w2 and ffp >= np.sqrt(K.FF_COLLAPSE) * ref_ff):
                    code = 1
            if code == 1:
                snap = (w.copy(), p.copy(), theta, integ, t)
            elif code == 2 and recoveries >= K.MAX_RECOVERIES:
                gave_up = t
            elif code == 2:
                recoveries += 1
                w, p = snap[0].copy(), snap[1].copy()
                theta, integ = snap[2] + k2 * snap[3] * (t - snap[4]), snap[3]
                mse, ffp = ref, ref_ff
        dec[t] = d
        z_out[t] = z
        labels[t] = lab
    if info is not None:
        info[:] = [recoveries, gave_up]
    return z_out, labels, w


@pytest.fixture
def rng():
    return np.random.default_rng(1234)
