"""A faster finite-length MMSE-DFE design with the same inputs and answer as
:func:`aculink.modem.analytic.mmse_dfe_design`.

The reference design forms, for every window start, the Gram matrix over *all* channel columns
and subtracts the fed-back ones (``A = Es (G - C_fb C_fb^H) + R_nn``). With the planner's spans
the feedback covers most columns (a T/2 feedforward of 128 taps sees about 280 columns, of
which 200-400 are fed back), so the subtraction costs ``Nf^2 Nb`` operations per start and
dominates a sweep. Here the matrix is formed from the columns that are *not* fed back,
``A = Es K K^H + R_nn`` (one matrix product of ``Nf^2 (columns - Nb)`` operations), which is
the same matrix in exact arithmetic and better conditioned in floating point (no cancellation).
The feedback taps are formed only for the best start. Diagonal loading, the loading ladder, the
start search and the result are those of the reference (Al-Dhahir and Cioffi 1995).
"""

from __future__ import annotations

import numpy as np
from numba import njit

from aculink.errors import AculinkError
from aculink.modem import _kernels
from aculink.modem.analytic import _CONDITION_FLOOR, _LOADING_LADDER, DfeDesign, _noise_matrix, design_arguments


def mmse_dfe_design_fast(q, n_ff: int, n_fb: int = 0, *, stride: int = 1, es: float = 1.0,
                         noise_acf=1.0, starts=None, fb_delays=None) -> DfeDesign:
    """Finite-length MMSE-DFE for a known sampled channel; see
    :func:`aculink.modem.analytic.mmse_dfe_design` for the parameters and the result.

    Notes
    -----
    Column ``c_j[r] = q[t + r + j s]`` is non-zero only for ``j`` in
    ``[ceil((1 - t - Nf) / s), floor((Lq - 1 - t) / s)]``; the kept columns are those of that
    range that are not fed back (the reference column ``c_0`` among them).
    """
    q, n_ff, fb = design_arguments(q, n_ff, n_fb, fb_delays)
    stride = int(stride)
    lq = q.size
    peak = int(np.argmax(np.abs(q)))
    if starts is None:
        starts = range(peak - n_ff + 1, peak + 1)
    r_nn = _noise_matrix(noise_acf, n_ff)
    noise_power = float(np.real(r_nn[0, 0]))
    if not np.isfinite(noise_power) or noise_power < 0:
        raise AculinkError(f"noise autocorrelation at lag 0 = {noise_power:g}: must be a finite power >= 0")
    r_idx = np.arange(n_ff)
    # energy per sample parity: the diagonal of the Gram matrix over all columns,
    # G[r, r] = sum_{k = t + r (mod s)} |q_k|^2 (the reference's conditioning floor uses its mean)
    parity_energy = np.array([float(np.sum(np.abs(q[e::stride]) ** 2)) for e in range(stride)])
    noise_diag = float(np.mean(np.real(np.diagonal(r_nn))))
    qpad = np.concatenate([np.zeros(n_ff, complex), q, np.zeros(n_ff, complex)])

    def columns(t, js):
        # c_j[r] = q[t + r + j s], zero outside the response (q padded by Nf zeros each side)
        idx = t + r_idx[:, None] + js[None, :] * stride + n_ff
        return qpad[np.clip(idx, 0, qpad.size - 1)]

    load_floor = {}
    probe, probe_out = np.zeros(n_ff, complex), np.empty(n_ff, complex)
    state = {}  # per parity: [start, Cholesky factor] of the last matrix formed

    def fresh(t, load):
        j_lo = -((t + n_ff - 1) // stride)          # ceil((1 - t - Nf) / s)
        j_hi = (lq - 1 - t) // stride
        js = np.arange(min(j_lo, 0), max(j_hi, 0) + 1)
        k = np.ascontiguousarray(columns(t, js[~np.isin(js, fb)]))
        a = np.empty((n_ff, n_ff), complex)
        _gram_lower(k, float(es), r_nn, a)
        if t % stride not in load_floor:
            mean_diag = es * float(np.mean(parity_energy[(t + r_idx) % stride])) + noise_diag
            load_floor[t % stride] = _CONDITION_FLOOR * mean_diag
        a[np.diag_indices(n_ff)] += load * noise_power + load_floor[t % stride]
        # the modem stage's Cholesky kernel (already compiled for the simulator): factor in place
        # (lower triangle; the upper one is left as it was and never read)
        return a if _kernels.cholesky_solve(a, probe, probe_out) else None

    def factor_at(t, load):
        """The Cholesky factor of the matrix at start t: updated from the last one of the same
        parity when that costs fewer rank-one steps than a new factorisation."""
        par = t % stride
        last = state.get(par)
        if last is not None:
            d = (t - last[0]) // stride
            fb_set, moved = set(fb.tolist()), set((fb + d).tolist())
            add = sorted(fb_set - moved)      # columns (of the last start) no longer fed back
            drop = sorted(moved - fb_set)     # columns fed back from t on
            if len(add) + len(drop) <= max(4, n_ff // 8):
                fac = last[1].copy()
                ok = True
                for js, sign in ((add, 1.0), (drop, -1.0)):
                    if js:
                        cols = np.sqrt(es) * columns(last[0], np.asarray(js))
                        for i in range(cols.shape[1]):
                            if not _rank1(fac, np.ascontiguousarray(cols[:, i]), sign):
                                ok = False
                                break
                    if not ok:
                        break
                if ok:
                    state[par] = [t, fac]
                    return fac
        fac = fresh(t, load)
        state[par] = None if fac is None else [t, fac]
        return fac

    def evaluate(t, load):
        fac = factor_at(t, load)
        if fac is None:
            return None
        c0 = np.ascontiguousarray(columns(t, np.array([0]))[:, 0])
        sol = np.empty(n_ff, complex)
        _solve(fac, c0, sol)
        mmse = es * (1.0 - es * float(np.real(np.vdot(c0, sol))))
        return mmse, sol

    best = None
    starts = [int(t) for t in starts]
    for load in _LOADING_LADDER:
        state.clear()
        for t in starts:
            res = evaluate(t, load)
            if res is None:
                continue
            if best is None or res[0] < best[0]:
                best = (res[0], es * res[1], t)
        if best is not None:
            break
    if best is None:
        raise AculinkError("MMSE-DFE design: the noise autocorrelation is not a valid (positive semidefinite) "
                           "one; check noise_acf")
    mmse, w, t = best
    cfb = columns(t, fb) if fb.size else np.zeros((n_ff, 0), complex)
    b = np.conj(np.sum(w.conj()[:, None] * cfb, axis=0))  # conj(b_j) = w^H c_j (no threaded BLAS)
    mmse = max(mmse, 1e-300)
    return DfeDesign(ff=w, fb=b, fb_delays=fb, start=t, mmse=mmse, snr_biased=es / mmse,
                     snr=es / mmse - 1.0, bias=1.0 - mmse / es)


@njit(cache=True, error_model="numpy")
def _gram_lower(k, es, r_nn, out):
    """Lower triangle of ``es K K^H + R_nn`` into ``out`` (the rest is left unset). A loop
    rather than BLAS: single-threaded and the same rounding wherever it runs."""
    n, m = k.shape
    for i in range(n):
        for j in range(i + 1):
            re = 0.0
            im = 0.0
            for c in range(m):
                a = k[i, c]
                b = k[j, c]
                re += a.real * b.real + a.imag * b.imag
                im += a.imag * b.real - a.real * b.imag
            out[i, j] = es * complex(re, im) + r_nn[i, j]


@njit(cache=True, error_model="numpy")
def _solve(fac, b, x):
    """Solve ``L L^H x = b`` with the lower factor ``L`` (its upper triangle is not read)."""
    n = fac.shape[0]
    for i in range(n):
        acc = b[i]
        for k in range(i):
            acc -= fac[i, k] * x[k]
        x[i] = acc / fac[i, i].real
    for i in range(n - 1, -1, -1):
        acc = x[i]
        for k in range(i + 1, n):
            acc -= np.conj(fac[k, i]) * x[k]
        x[i] = acc / fac[i, i].real


@njit(cache=True, error_model="numpy")
def _rank1(fac, x, sign):
    """In place: the lower factor of ``L L^H + sign x x^H`` (``sign`` +1 or -1; ``x`` is
    overwritten). Returns False when a downdate leaves the matrix not positive definite.

    Column by column, ``r = sqrt(L_kk^2 + sign |x_k|^2)``, ``l' = (L_kk l + sign conj(x_k) x) / r``
    and the rest of the update carries ``x' = (L_kk x - x_k l) / r`` (Golub and Van Loan,
    *Matrix Computations*, 4th ed. 2013, sec. 6.5.4, for the real case)."""
    n = fac.shape[0]
    for k in range(n):
        lkk = fac[k, k].real
        xk = x[k]
        r2 = lkk * lkk + sign * (xk.real * xk.real + xk.imag * xk.imag)
        if not r2 > 0.0:
            return False
        r = np.sqrt(r2)
        fac[k, k] = r
        cxk = np.conj(xk)
        for i in range(k + 1, n):
            lo = fac[i, k]
            fac[i, k] = (lkk * lo + sign * cxk * x[i]) / r
            x[i] = (lkk * x[i] - xk * lo) / r
    return True
