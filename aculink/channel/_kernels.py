"""Numba kernels of the channel stage (no Python objects inside).

The frequency-response kernels at the end (:func:`transfer_sum`, :func:`fold_windows`,
:func:`interpolate_rows`, :func:`scatter_windows`) serve :mod:`aculink.channel.response`; the rest
applies a time-varying sparse channel.

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
            for lag in range(n_taps):
                coef = c[m, n_taps - 1 - lag]
                # x index q - lag must lie in [0, n)
                lo = max(q0, lag)
                hi = min(q1, n + lag)
                xs = x[lo - lag:hi - lag]
                rs = row[lo:hi]
                for k in range(hi - lo):
                    rs[k] += coef * xs[k]


# --------------------------------------------------------------------- frequency responses
#: Flags of the frequency-response kernels: no approximate functions (the seeds' sin/cos must
#: be exact to rounding), reassociation so that the sum over paths vectorises.
_SUM_FLAGS = {"nsz", "arcp", "contract", "reassoc"}
#: Frequencies per run of the phasor recurrence (one exact sin/cos per path and run).
RUN_FREQS = 64


@njit(cache=True, error_model="numpy")
def interpolate_rows(gr, gi, i0, w, out):
    """``out[p, q] = g[p, i0[q]] (1 - w[q]) + g[p, i0[q] + 1] w[q]`` with ``g = gr + j gi``.

    The same arithmetic as the numpy form in :func:`aculink.channel.response.interpolate_gain`
    (no fused operations), written straight into ``out`` (P, Q) complex without the
    temporaries of fancy indexing.
    """
    n_p, n_q = out.shape
    for p in range(n_p):
        for q in range(n_q):
            k = i0[q]
            wq = w[q]
            vq = 1.0 - wq
            out[p, q] = complex(gr[p, k] * vq + gr[p, k + 1] * wq, gi[p, k] * vq + gi[p, k + 1] * wq)


@njit(cache=True, error_model="numpy", fastmath=_SUM_FLAGS)
def _accumulate_run(er, ei, sr, si, ga_r, ga_i, dg_r, dg_i, w, k0, k1, out):
    # H(f_k) = sum_p (ga_p + w_k dg_p) e_p, then e_p *= s_p: one complex rotation per term
    n_p = er.size
    for k in range(k0, k1):
        wk = w[k]
        acc_r = 0.0
        acc_i = 0.0
        for p in range(n_p):
            g_r = ga_r[p] + wk * dg_r[p]
            g_i = ga_i[p] + wk * dg_i[p]
            e_r = er[p]
            e_i = ei[p]
            acc_r += g_r * e_r - g_i * e_i
            acc_i += g_r * e_i + g_i * e_r
            er[p] = e_r * sr[p] - e_i * si[p]
            ei[p] = e_r * si[p] + e_i * sr[p]
        out[k] = complex(acc_r, acc_i)


@njit(cache=True, error_model="numpy")
def transfer_sum(delay, gr_t, gi_t, i0, w, freq, freq_tol, out):
    """``out[q] = sum_p g_p(f_q) exp(-j 2 pi f_q tau_p)``, g linear between grid columns.

    Parameters
    ----------
    delay : (P,) float64
    gr_t, gi_t : (F, P) float64
        Real and imaginary gains, grid column by row (F >= 2: a one-point grid is padded).
    i0, w : (Q,) int64, float64
        Interpolation index and weight of each frequency
        (:func:`aculink.channel.response.interpolation_weights`).
    freq : (Q,) float64
        Frequencies, Hz, in any order.
    freq_tol : float
        Largest departure (Hz) of a frequency from a straight line through its run that still
        lets the run use the recurrence.
    out : (Q,) complex128

    Notes
    -----
    Frequencies are taken in runs of up to :data:`RUN_FREQS`. A run that lies on a uniform
    grid (every f_q within ``freq_tol`` of ``f_a + (q - a) df``, as for a linspace) seeds the
    phasors ``exp(-j 2 pi f_a tau_p)`` exactly and advances them by the rotation
    ``exp(-j 2 pi df tau_p)``: P sin/cos pairs per run instead of per frequency, rounding
    growing by about 2 eps per step (1e-14 over a run), and a phase error of at most
    ``2 pi tau freq_tol`` from the straight line. Other runs are halved until uniform (a run
    of one frequency is exact).
    """
    n_p = delay.size
    n_q = freq.size
    two_pi = 2.0 * np.pi
    er = np.empty(n_p)
    ei = np.empty(n_p)
    sr = np.empty(n_p)
    si = np.empty(n_p)
    ga_r = np.empty(n_p)
    ga_i = np.empty(n_p)
    dg_r = np.empty(n_p)
    dg_i = np.empty(n_p)
    seg = -1
    q = 0
    while q < n_q:
        n = min(RUN_FREQS, n_q - q)
        # the longest uniform run from q, also on one gain segment (halving)
        while n > 1:
            df = (freq[q + n - 1] - freq[q]) / (n - 1)
            # (a NaN frequency fails every test, so it ends up alone in a run of one)
            ok = i0[q + n - 1] == i0[q] and np.isfinite(df)
            if ok:
                for k in range(1, n - 1):
                    if not abs(freq[q + k] - (freq[q] + k * df)) <= freq_tol or i0[q + k] != i0[q]:
                        ok = False
                        break
            if ok:
                break
            n = n // 2
        df = (freq[q + n - 1] - freq[q]) / (n - 1) if n > 1 else 0.0
        if i0[q] != seg:
            seg = i0[q]
            for p in range(n_p):
                ga_r[p] = gr_t[seg, p]
                ga_i[p] = gi_t[seg, p]
                dg_r[p] = gr_t[seg + 1, p] - gr_t[seg, p]
                dg_i[p] = gi_t[seg + 1, p] - gi_t[seg, p]
        for p in range(n_p):
            ph = -two_pi * (delay[p] * freq[q])
            er[p] = np.cos(ph)
            ei[p] = np.sin(ph)
            st = -two_pi * (delay[p] * df)
            sr[p] = np.cos(st)
            si[p] = np.sin(st)
        _accumulate_run(er, ei, sr, si, ga_r, ga_i, dg_r, dg_i, w, q, q + n, out)
        q += n


@njit(cache=True, error_model="numpy")
def fold_windows(eps, g, q, weight, n, out):
    """``out[p, q mod n] += g[p, k] weight[k] exp(2 pi j (eps_p - n/2) q_k / n)`` for each k.

    Along consecutive integers ``q`` the phasor ``exp(2 pi j eps_p q / n)`` advances by the
    rotation ``exp(2 pi j eps_p / n)`` per bin, reseeded exactly every :data:`RUN_FREQS` bins
    and at any gap in ``q``; the factor ``exp(-j pi q)`` of the half-window shift is ``(-1)^q``
    (n even).
    """
    n_p, n_k = g.shape
    two_pi = 2.0 * np.pi
    for p in range(n_p):
        st = two_pi * eps[p] / n
        s_r = np.cos(st)
        s_i = np.sin(st)
        e_r = 1.0
        e_i = 0.0
        for k in range(n_k):
            qk = q[k]
            if k % RUN_FREQS == 0 or qk != q[k - 1] + 1:
                ph = two_pi * ((eps[p] * qk) / n)
                e_r = np.cos(ph)
                e_i = np.sin(ph)
            sign = 1.0 if qk % 2 == 0 else -1.0
            gw = g[p, k] * weight[k]
            v_r = (gw.real * e_r - gw.imag * e_i) * sign
            v_i = (gw.real * e_i + gw.imag * e_r) * sign
            b = qk % n
            out[p, b] = out[p, b] + complex(v_r, v_i)
            t = e_r * s_r - e_i * s_i
            e_i = e_r * s_i + e_i * s_r
            e_r = t


#: Taps of the Farrow structure (fixed at compile time so the tap loop unrolls).
FARROW_TAPS = 16


@njit(cache=True, error_model="numpy", fastmath=_FLAGS)
def farrow_correlate(xp, c, out):
    """``out[m, q] = sum_j c[m, j] xp[q + j]`` for q in [0, out.shape[1]), j in [0, FARROW_TAPS).

    With ``xp`` the input padded by ``FARROW_TAPS - 1`` zeros on each side this is
    ``numpy.convolve(x, c[m, ::-1])`` for each m (the full convolution). Cache-sized blocks of
    the output, each row in one pass with the taps in registers (one load of the input per
    multiply-add instead of a load and a store of the output too).
    """
    n_rows = c.shape[0]
    n_full = out.shape[1]
    blk = 4096
    for q0 in range(0, n_full, blk):
        q1 = min(q0 + blk, n_full)
        for m in range(n_rows):
            row = out[m]
            for q in range(q0, q1):
                uq = np.uint64(q)
                acc = xp[uq] * c[m, 0]
                for j in range(1, FARROW_TAPS):
                    acc += xp[uq + np.uint64(j)] * c[m, j]
                row[uq] = acc


@njit(cache=True, error_model="numpy")
def scatter_windows(offset, values, dense):
    """``dense[offset[p] + k] += values[p, k]`` for every path p and window sample k (in path
    order, so each sample sums its paths in the order of the rows)."""
    n_p, n = values.shape
    for p in range(n_p):
        o = offset[p]
        for k in range(n):
            dense[o + k] += values[p, k]
