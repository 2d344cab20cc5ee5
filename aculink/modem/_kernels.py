"""Numba loops of the receivers: adaptive DFE (RLS, NLMS), fixed-filter DFE, all with a PLL.

Every kernel processes one frame of received samples at ``stride`` samples per symbol
(``stride = 2`` for a T/2 fractionally spaced equalizer). For symbol ``n`` the feedforward
window is ``y[start0 + n stride + r]``, r = 0..Nf-1; the feedback taps multiply the past
decisions ``d[n - fb_delays[i]]``. The equalizer output is

    z_n = a^H (u_n exp(-j theta_n)) - b^H d_past = w^H v_n,   v_n = [u_n exp(-j theta_n); -d_past]

(the phase-coherent structure of Stojanovic, Catipovic and Proakis 1994). Symbols before
``n_train`` are training (decisions are the known symbols); afterwards decisions are the
nearest constellation point. From symbol ``pll_start`` on (adaptive receivers hold the loop
until their taps have converged during the training, else the loop chases the phase of
half-trained taps), the phase estimate follows a second-order loop,
``theta <- theta + K1 Phi + K2 sum Phi`` with ``Phi`` the normalized phase error of the
feedforward output against its target ``d - b^H(-d_past)``.

Real and imaginary parts are kept in separate arrays. The RLS inverse-correlation matrix is
updated in the Hermitian rank-one form ``P <- (P - pi pi^H / gamma) / lambda`` with
``pi = P v``, fused with the matrix-vector product ``P v`` of the next symbol (one pass over P
per symbol), and projected back onto the Hermitian matrices every
``RESYMMETRISE_EVERY`` symbols: in the plain recursion with forgetting factor < 1 the rounding
asymmetry grows like lambda^-n and the filter diverges.
"""

from __future__ import annotations

import numpy as np
from numba import njit

_FLAGS = {"nsz", "arcp", "contract", "reassoc"}

#: Symbols between projections of the RLS matrix P back onto the Hermitian matrices.
RESYMMETRISE_EVERY = 16


@njit(cache=True, error_model="numpy", inline="always")
def _decide(zr, zi, pts_r, pts_i):
    best = 0
    bd = np.inf
    for m in range(pts_r.size):
        dr = zr - pts_r[m]
        di = zi - pts_i[m]
        d2 = dr * dr + di * di
        if d2 < bd:
            bd = d2
            best = m
    return best


@njit(cache=True, error_model="numpy", inline="always")
def _decide_and_record(t, zr, zi, theta, n_train, train, pts_r, pts_i, out_zr, out_zi, out_dec,
                       out_err2, out_theta, dec_r, dec_i):
    """Symbol t's decision (the training symbol while training), error and outputs, shared by
    every equalizer loop; returns (decision re, im, error re, im)."""
    if t < n_train:
        lab = train[t]
    else:
        lab = _decide(zr, zi, pts_r, pts_i)
    dr = pts_r[lab]
    di = pts_i[lab]
    er = dr - zr
    ei = di - zi
    out_zr[t] = zr
    out_zi[t] = zi
    out_dec[t] = lab
    out_err2[t] = er * er + ei * ei
    out_theta[t] = theta
    dec_r[t] = dr
    dec_i[t] = di
    return dr, di, er, ei


@njit(cache=True, error_model="numpy", inline="always")
def _build_regressor(vr, vi, yr, yi, s, n_ff, c, sn, dec_r, dec_i, n, fb_delays):
    for r in range(n_ff):
        a = yr[s + r]
        b = yi[s + r]
        vr[r] = a * c + b * sn
        vi[r] = b * c - a * sn
    for i in range(fb_delays.size):
        k = n - fb_delays[i]
        if k >= 0:
            vr[n_ff + i] = -dec_r[k]
            vi[n_ff + i] = -dec_i[k]
        else:
            vr[n_ff + i] = 0.0
            vi[n_ff + i] = 0.0


@njit(cache=True, error_model="numpy", fastmath=_FLAGS)
def rls_dfe(yr, yi, start0, stride, n_sym, n_ff, fb_delays, train, n_train, pts_r, pts_i,
            lam, delta, k1, k2, pll_start, theta0, out_zr, out_zi, out_dec, out_err2, out_theta, wr, wi):
    """Exponentially weighted RLS DFE with a second-order PLL (see module docstring).

    ``wr, wi`` hold the initial taps (normally zero) and receive the final ones. Returns the
    number of times the recursion had to be restarted (0 in normal operation).
    """
    n = n_ff + fb_delays.size
    pr = np.zeros((n, n))
    pim = np.zeros((n, n))
    for i in range(n):
        pr[i, i] = 1.0 / delta
    vr = np.zeros(n)
    vi = np.zeros(n)
    qr = np.zeros(n)  # pi = P v for the current symbol
    qi = np.zeros(n)
    nqr = np.zeros(n)
    nqi = np.zeros(n)
    dec_r = np.zeros(n_sym)
    dec_i = np.zeros(n_sym)
    il = 1.0 / lam
    theta = theta0
    integ = 0.0
    restarts = 0
    _build_regressor(vr, vi, yr, yi, start0, n_ff, np.cos(theta), np.sin(theta), dec_r, dec_i, 0, fb_delays)
    for i in range(n):
        qr[i] = pr[i, i] * vr[i]
        qi[i] = pr[i, i] * vi[i]
    for t in range(n_sym):
        # output, split into feedforward and feedback parts: z = w^H v
        ffr = 0.0
        ffi = 0.0
        for j in range(n_ff):
            ffr += wr[j] * vr[j] + wi[j] * vi[j]
            ffi += wr[j] * vi[j] - wi[j] * vr[j]
        fbr = 0.0
        fbi = 0.0
        for j in range(n_ff, n):
            fbr += wr[j] * vr[j] + wi[j] * vi[j]
            fbi += wr[j] * vi[j] - wi[j] * vr[j]
        zr = ffr + fbr
        zi = ffi + fbi
        dr, di, er, ei = _decide_and_record(t, zr, zi, theta, n_train, train, pts_r, pts_i,
                                            out_zr, out_zi, out_dec, out_err2, out_theta, dec_r, dec_i)
        # gain: gamma = lambda + v^H P v (real for Hermitian P)
        g = lam
        for j in range(n):
            g += vr[j] * qr[j] + vi[j] * qi[j]
        if not (g > 0.0) or not np.isfinite(g):
            restarts += 1
            for i in range(n):
                for j in range(n):
                    pr[i, j] = 0.0
                    pim[i, j] = 0.0
                pr[i, i] = 1.0 / delta
            g = lam
            for j in range(n):
                qr[j] = vr[j] / delta
                qi[j] = vi[j] / delta
                g += vr[j] * qr[j] + vi[j] * qi[j]
        ig = 1.0 / g
        # w <- w + k e*, k = P v / gamma
        for j in range(n):
            kr = qr[j] * ig
            ki = qi[j] * ig
            wr[j] += kr * er + ki * ei
            wi[j] += ki * er - kr * ei
        # second-order PLL on the feedforward output against its target d - fb
        tr = dr - fbr
        ti = di - fbi
        tt = tr * tr + ti * ti
        if tt > 1e-12 and t >= pll_start:
            phi = (ffi * tr - ffr * ti) / tt
            integ += phi
            theta += k1 * phi + k2 * integ
        if t + 1 == n_sym:
            break
        _build_regressor(vr, vi, yr, yi, start0 + (t + 1) * stride, n_ff, np.cos(theta), np.sin(theta),
                         dec_r, dec_i, t + 1, fb_delays)
        # fused: P <- (P - pi pi^H / gamma) / lambda, and P v_next, in one pass over P
        for i in range(n):
            ar = qr[i] * ig
            ai = qi[i] * ig
            accr = 0.0
            acci = 0.0
            for j in range(n):
                xr = (pr[i, j] - (ar * qr[j] + ai * qi[j])) * il
                xi = (pim[i, j] - (ai * qr[j] - ar * qi[j])) * il
                pr[i, j] = xr
                pim[i, j] = xi
                accr += xr * vr[j] - xi * vi[j]
                acci += xr * vi[j] + xi * vr[j]
            nqr[i] = accr
            nqi[i] = acci
        if (t + 1) % RESYMMETRISE_EVERY == 0:
            # the rounding's anti-Hermitian part grows like lambda^-n: project it out
            for i in range(n):
                pim[i, i] = 0.0
                for j in range(i + 1, n):
                    a = 0.5 * (pr[i, j] + pr[j, i])
                    b = 0.5 * (pim[i, j] - pim[j, i])
                    pr[i, j] = a
                    pr[j, i] = a
                    pim[i, j] = b
                    pim[j, i] = -b
            for i in range(n):
                accr = 0.0
                acci = 0.0
                for j in range(n):
                    accr += pr[i, j] * vr[j] - pim[i, j] * vi[j]
                    acci += pr[i, j] * vi[j] + pim[i, j] * vr[j]
                nqr[i] = accr
                nqi[i] = acci
        for j in range(n):
            qr[j] = nqr[j]
            qi[j] = nqi[j]
    return restarts


@njit(cache=True, error_model="numpy", fastmath=_FLAGS)
def nlms_dfe(yr, yi, start0, stride, n_sym, n_ff, fb_delays, train, n_train, pts_r, pts_i,
             mu, eps, k1, k2, pll_start, theta0, out_zr, out_zi, out_dec, out_err2, out_theta, wr, wi):
    """Normalized LMS DFE with a second-order PLL: ``w <- w + mu v e* / (eps + |v|^2)``."""
    n = n_ff + fb_delays.size
    vr = np.zeros(n)
    vi = np.zeros(n)
    dec_r = np.zeros(n_sym)
    dec_i = np.zeros(n_sym)
    theta = theta0
    integ = 0.0
    for t in range(n_sym):
        _build_regressor(vr, vi, yr, yi, start0 + t * stride, n_ff, np.cos(theta), np.sin(theta),
                         dec_r, dec_i, t, fb_delays)
        ffr = 0.0
        ffi = 0.0
        nrm = eps
        for j in range(n_ff):
            ffr += wr[j] * vr[j] + wi[j] * vi[j]
            ffi += wr[j] * vi[j] - wi[j] * vr[j]
            nrm += vr[j] * vr[j] + vi[j] * vi[j]
        fbr = 0.0
        fbi = 0.0
        for j in range(n_ff, n):
            fbr += wr[j] * vr[j] + wi[j] * vi[j]
            fbi += wr[j] * vi[j] - wi[j] * vr[j]
            nrm += vr[j] * vr[j] + vi[j] * vi[j]
        zr = ffr + fbr
        zi = ffi + fbi
        dr, di, er, ei = _decide_and_record(t, zr, zi, theta, n_train, train, pts_r, pts_i,
                                            out_zr, out_zi, out_dec, out_err2, out_theta, dec_r, dec_i)
        s = mu / nrm
        for j in range(n):
            wr[j] += s * (vr[j] * er + vi[j] * ei)
            wi[j] += s * (vi[j] * er - vr[j] * ei)
        tr = dr - fbr
        ti = di - fbi
        tt = tr * tr + ti * ti
        if tt > 1e-12 and t >= pll_start:
            phi = (ffi * tr - ffr * ti) / tt
            integ += phi
            theta += k1 * phi + k2 * integ
    return 0


@njit(cache=True, error_model="numpy", fastmath=_FLAGS)
def fixed_dfe(yr, yi, start0, stride, n_sym, n_ff, fb_delays, train, n_train, pts_r, pts_i,
              scale, k1, k2, pll_start, theta0, out_zr, out_zi, out_dec, out_err2, out_theta, wr, wi):
    """A DFE with fixed taps ``w`` (e.g. a designed MMSE-DFE) and a second-order PLL.

    The output is multiplied by ``scale`` (1/bias for unbiased decisions). With one
    feedforward tap and no feedback it is the plain symbol-by-symbol receiver.
    """
    n = n_ff + fb_delays.size
    vr = np.zeros(n)
    vi = np.zeros(n)
    dec_r = np.zeros(n_sym)
    dec_i = np.zeros(n_sym)
    theta = theta0
    integ = 0.0
    for t in range(n_sym):
        _build_regressor(vr, vi, yr, yi, start0 + t * stride, n_ff, np.cos(theta), np.sin(theta),
                         dec_r, dec_i, t, fb_delays)
        ffr = 0.0
        ffi = 0.0
        for j in range(n_ff):
            ffr += wr[j] * vr[j] + wi[j] * vi[j]
            ffi += wr[j] * vi[j] - wi[j] * vr[j]
        fbr = 0.0
        fbi = 0.0
        for j in range(n_ff, n):
            fbr += wr[j] * vr[j] + wi[j] * vi[j]
            fbi += wr[j] * vi[j] - wi[j] * vr[j]
        ffr *= scale
        ffi *= scale
        fbr *= scale
        fbi *= scale
        zr = ffr + fbr
        zi = ffi + fbi
        dr, di, er, ei = _decide_and_record(t, zr, zi, theta, n_train, train, pts_r, pts_i,
                                            out_zr, out_zi, out_dec, out_err2, out_theta, dec_r, dec_i)
        tr = dr - fbr
        ti = di - fbi
        tt = tr * tr + ti * ti
        if tt > 1e-12 and t >= pll_start:
            phi = (ffi * tr - ffr * ti) / tt
            integ += phi
            theta += k1 * phi + k2 * integ
    return 0


@njit(cache=True, error_model="numpy")
def gram_update(base, c, out):
    """``out = base - c c^H`` for complex ``c`` (n, k): the MMSE-DFE matrix without the
    fed-back columns. Single-threaded on purpose: the matrices are small (n <= 128) and a
    threaded BLAS on a shared two-core host spends more time synchronising than computing."""
    n, k = c.shape
    for i in range(n):
        for j in range(n):
            acc = base[i, j]
            for m in range(k):
                acc -= c[i, m] * np.conj(c[j, m])
            out[i, j] = acc


@njit(cache=True, error_model="numpy")
def cholesky_solve(a, b, x):
    """Solve ``a x = b`` for Hermitian positive definite ``a`` by Cholesky (``a`` is
    overwritten with L). Returns False when ``a`` is not positive definite."""
    n = a.shape[0]
    for j in range(n):
        d = a[j, j].real
        for k in range(j):
            d -= a[j, k].real * a[j, k].real + a[j, k].imag * a[j, k].imag
        if not d > 0.0:
            return False
        d = np.sqrt(d)
        a[j, j] = d
        for i in range(j + 1, n):
            acc = a[i, j]
            for k in range(j):
                acc -= a[i, k] * np.conj(a[j, k])
            a[i, j] = acc / d
    for i in range(n):  # L y = b
        acc = b[i]
        for k in range(i):
            acc -= a[i, k] * x[k]
        x[i] = acc / a[i, i].real
    for i in range(n - 1, -1, -1):  # L^H x = y
        acc = x[i]
        for k in range(i + 1, n):
            acc -= np.conj(a[k, i]) * x[k]
        x[i] = acc / a[i, i].real
    return True
