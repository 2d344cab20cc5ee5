"""Numba kernel for applying a time-varying sparse channel (no Python objects inside).

The signal to be delayed is given as the five branch outputs of a Farrow fractional-delay
structure, ``v_m[i] = sum_k c[m, k] u[i + k]``, so that ``u(i + mu) = sum_m v_m[i] (mu - 1/2)^m``
for 0 <= mu < 1 (the branches are shared by all paths and computed once, outside, by FFT
convolution). Per path and output sample the kernel then only evaluates a degree-4 polynomial
at a fractional position that advances by ``1 + a_p`` input samples per output sample: exact
per-sample time scaling, no frozen delays. The loop runs over output blocks, then paths, then the
samples of a block, so every inner loop walks contiguous memory and the part of the branches in
use stays in cache. Gains are given at control samples every ``block`` outputs and interpolated
linearly (the slow surface factor); the carrier rotation exp(j (ph0 + w n)) is exact per sample
(a per-path table of exp(j w j) times the block's start phasor).

References
----------
C. W. Farrow, "A continuously variable digital delay element", Proc. IEEE ISCAS 1988,
2641-2645 (memory).
"""

from __future__ import annotations

import numpy as np
from numba import njit

#: Polynomial degree of the Farrow structure (five branches), fixed at compile time.
FARROW_DEGREE = 4

_FLAGS = {"nsz", "arcp", "contract", "afn", "reassoc"}


@njit(cache=True, error_model="numpy", fastmath=_FLAGS, inline="always")
def _segment(vr, vi, col0, u0, a, j0, j1, g0r, g0i, dgr, dgi, cr, ci, rot_r, rot_i, p, n_s,
             out_r, out_i):
    for j in range(j0, j1):
        col = col0 + j
        u = u0 + a * j
        sr = vr[4, col]
        si = vi[4, col]
        sr = sr * u + vr[3, col]
        si = si * u + vi[3, col]
        sr = sr * u + vr[2, col]
        si = si * u + vi[2, col]
        sr = sr * u + vr[1, col]
        si = si * u + vi[1, col]
        sr = sr * u + vr[0, col]
        si = si * u + vi[0, col]
        qr = cr * rot_r[p, j] - ci * rot_i[p, j]
        qi = cr * rot_i[p, j] + ci * rot_r[p, j]
        gr = g0r + dgr * j
        gi = g0i + dgi * j
        tr = gr * qr - gi * qi
        ti = gr * qi + gi * qr
        out_r[n_s + j] += tr * sr - ti * si
        out_i[n_s + j] += tr * si + ti * sr


@njit(cache=True, error_model="numpy", fastmath=_FLAGS)
def apply_time_varying(vr, vi, offset, pos0, a, gr, gi, block, w, ph0, out_r, out_i):
    """Accumulate every path into ``out_r + j out_i``.

    Parameters
    ----------
    vr, vi : (5, Nv) float64
        Farrow branches; input position i is column ``i + offset``.
    offset : int
    pos0 : (P,) float64
        Input position (samples) read by output sample 0.
    a : (P,) float64
        Doppler factors; output sample n reads input position ``pos0 + (1 + a) n``.
    gr, gi : (P, C + 1) float64
        Complex path gain at output samples ``c * block`` (C * block >= number of outputs).
    block : int
        Control spacing and block length; ``|a| * block < 1``.
    w, ph0 : (P,) float64
        Carrier phase of output n is ``ph0 + w n``.
    out_r, out_i : (N,) float64
        Accumulated in place.
    """
    n_paths = pos0.size
    n_out = out_r.size
    nv = vr.shape[1]
    rot_r = np.empty((n_paths, block))
    rot_i = np.empty((n_paths, block))
    for p in range(n_paths):
        for j in range(block):
            rot_r[p, j] = np.cos(w[p] * j)
            rot_i[p, j] = np.sin(w[p] * j)
    n_blocks = (n_out + block - 1) // block
    for b in range(n_blocks):
        n_s = b * block
        length = min(block, n_out - n_s)
        for p in range(n_paths):
            ap = a[p]
            pos = pos0[p] + n_s + ap * n_s
            i0 = np.floor(pos)
            mu0 = pos - i0
            if ap > 0.0:
                jc = int(np.ceil((1.0 - mu0) / ap))
                step = 1
            elif ap < 0.0:
                jc = int(np.floor(mu0 / (-ap))) + 1
                step = -1
            else:
                jc = length
                step = 0
            jc = min(max(jc, 0), length)
            g0r = gr[p, b]
            g0i = gi[p, b]
            dgr = (gr[p, b + 1] - g0r) / block
            dgi = (gi[p, b + 1] - g0i) / block
            ph = ph0[p] + w[p] * n_s
            cr = np.cos(ph)
            ci = np.sin(ph)
            # first run: integer part i0 + j, fraction mu0 + a j
            col0 = int(i0) + offset
            j0 = max(0, -col0)
            j1 = min(jc, nv - col0)
            if j1 > j0:
                _segment(vr, vi, col0, mu0 - 0.5, ap, j0, j1, g0r, g0i, dgr, dgi, cr, ci,
                         rot_r, rot_i, p, n_s, out_r, out_i)
            if jc < length:
                col1 = col0 + step
                j0 = max(jc, -col1)
                j1 = min(length, nv - col1)
                if j1 > j0:
                    _segment(vr, vi, col1, mu0 - step - 0.5, ap, j0, j1, g0r, g0i, dgr, dgi,
                             cr, ci, rot_r, rot_i, p, n_s, out_r, out_i)
