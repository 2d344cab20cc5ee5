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
(a per-path table of exp(j w j) times the block's start phasor, itself advanced by a
running product from block to block).

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
#: Runs of one Farrow column end on multiples of this many samples (the SIMD width in float32
#: on AVX-512; halved per path while RUN_LANES |a_p| exceeds FIT_MARGIN).
RUN_LANES = 16
#: The Farrow polynomial is fitted on mu in [-FIT_MARGIN, 1 + FIT_MARGIN].
FIT_MARGIN = 0.1


@njit(cache=True, error_model="numpy", fastmath=_FLAGS, inline="always")
def _segment(vr, vi, col0, u0, a, j0, j1, g0r, g0i, dgr, dgi, cr, ci, rot_r, rot_i, ramp, p, n_s,
             out_r, out_i):
    # unsigned indices: the caller keeps them in range, and without numba's negative-index
    # wraparound the loop vectorises (2x measured); every operand is float32 (8 lanes per
    # AVX2 register), the sample counter comes from the float32 table ``ramp``
    pu = np.uint64(p)
    for j in range(j0, j1):
        col = np.uint64(col0 + j)
        jj = np.uint64(j)
        oj = np.uint64(n_s + j)
        fj = ramp[jj]
        u = u0 + a * fj
        sr = vr[4, col] * u + vr[3, col]
        si = vi[4, col] * u + vi[3, col]
        sr = sr * u + vr[2, col]
        si = si * u + vi[2, col]
        sr = sr * u + vr[1, col]
        si = si * u + vi[1, col]
        sr = sr * u + vr[0, col]
        si = si * u + vi[0, col]
        qr = cr * rot_r[pu, jj] - ci * rot_i[pu, jj]
        qi = cr * rot_i[pu, jj] + ci * rot_r[pu, jj]
        gr = g0r + dgr * fj
        gi = g0i + dgi * fj
        tr = gr * qr - gi * qi
        ti = gr * qi + gi * qr
        out_r[oj] += tr * sr - ti * si
        out_i[oj] += tr * si + ti * sr


@njit(cache=True, error_model="numpy", fastmath=_FLAGS)
def apply_time_varying(vr, vi, offset, pos0, a, gr, gi, block, w, ph0, out_r, out_i):
    """Accumulate every path into ``out_r + j out_i``.

    Parameters
    ----------
    vr, vi : (5, Nv) float32
        Farrow branches; input position i is column ``i + offset``.
    offset : int
    pos0 : (P,) float64
        Input position (samples) read by output sample 0.
    a : (P,) float64
        Doppler factors; output sample n reads input position ``pos0 + (1 + a) n``.
    gr, gi : (P, C + 1) float64
        Complex path gain at output samples ``c * block`` (C * block >= number of outputs).
    block : int
        Control spacing and block length.
    w, ph0 : (P,) float64
        Carrier phase of output n is ``ph0 + w n``.
    out_r, out_i : (N,) float32
        Accumulated in place.

    Notes
    -----
    Positions, phases and the carrier phasor of each block are kept in float64; the work per
    sample runs in float32 (relative rounding about 1e-7, far below the interpolator's 1e-4).
    """
    n_paths = pos0.size
    n_out = out_r.size
    nv = vr.shape[1]
    f32 = np.float32
    rot_r = np.empty((n_paths, block), dtype=np.float32)
    rot_i = np.empty((n_paths, block), dtype=np.float32)
    ramp = np.empty(block, dtype=np.float32)
    for j in range(block):
        ramp[j] = j
    for p in range(n_paths):
        for j in range(block):
            rot_r[p, j] = np.cos(w[p] * j)
            rot_i[p, j] = np.sin(w[p] * j)
    n_blocks = (n_out + block - 1) // block
    # carrier phasor at each block start by a running product (rounding ~ n_blocks eps)
    car_r = np.cos(ph0)
    car_i = np.sin(ph0)
    stp_r = np.cos(w * block)
    stp_i = np.sin(w * block)
    for b in range(n_blocks):
        n_s = b * block
        length = min(block, n_out - n_s)
        for p in range(n_paths):
            ap = a[p]
            lanes = RUN_LANES
            while lanes > 1 and lanes * abs(ap) > FIT_MARGIN:
                lanes //= 2
            pos = pos0[p] + n_s + ap * n_s
            i0 = np.floor(pos)
            g0r = gr[p, b]
            g0i = gi[p, b]
            dgr = f32((gr[p, b + 1] - g0r) / block)
            dgi = f32((gi[p, b + 1] - g0i) / block)
            cr = car_r[p]
            ci = car_i[p]
            car_r[p] = cr * stp_r[p] - ci * stp_i[p]
            car_i[p] = cr * stp_i[p] + ci * stp_r[p]
            # runs of constant integer part: column cb + j, polynomial variable ub + a j
            cb = int(i0) + offset
            ub = pos - i0 - 0.5
            js = 0
            while js < length:
                if ap > 0.0:
                    je = int(np.ceil((0.5 - ub) / ap))
                    step = 1
                elif ap < 0.0:
                    je = int(np.floor((ub + 0.5) / (-ap))) + 1
                    step = -1
                else:
                    je = length
                    step = 0
                # end runs on a multiple of ``lanes`` so the vector loop has no scalar tail (the
                # tail cost as much as the rest of the run): the polynomial is then evaluated up
                # to lanes |a| past its unit interval, inside the Farrow fit's margin
                je = min(max(je, js + 1), length)
                je = min((je + lanes - 1) // lanes * lanes, length)
                j0 = max(js, -cb)
                j1 = min(je, nv - cb)
                if j1 > j0:
                    _segment(vr, vi, cb, f32(ub), f32(ap), j0, j1, f32(g0r), f32(g0i), dgr, dgi,
                             f32(cr), f32(ci), rot_r, rot_i, ramp, p, n_s, out_r, out_i)
                cb += step
                ub -= step
                js = je


@njit(cache=True, error_model="numpy", fastmath=_FLAGS)
def farrow_branches(x, c, out):
    """Full convolutions of ``x`` (N,) with every reversed row of ``c`` (M+1, K) into ``out``.

    Works in the dtype of its arguments (float32 in :func:`aculink.channel.apply.apply_channel`).

    ``out[m, q] = sum_l c[m, K-1-l] x[q - l]`` for q in [0, N + K - 1): the same as
    ``numpy.convolve(x, c[m, ::-1])`` for each m (tested against it), computed in cache-sized
    blocks, one contiguous multiply-add per tap.
    """
    n_rows, n_taps = c.shape
    n = x.size
    n_full = n + n_taps - 1
    blk = 4096
    for q0 in range(0, n_full, blk):
        q1 = min(q0 + blk, n_full)
        for m in range(n_rows):
            row = out[m]
            for q in range(q0, q1):
                row[np.uint64(q)] = 0.0
            for l in range(n_taps):
                coef = c[m, n_taps - 1 - l]
                # x index q - l must lie in [0, n)
                lo = max(q0, l)
                hi = min(q1, n + l)
                xs = x[lo - l:hi - l]
                rs = row[lo:hi]
                for k in range(hi - lo):
                    rs[k] += coef * xs[k]
