"""Analytic receiver performance: equalizer SNR bounds, finite-length MMSE-DFE, capacity.

Two descriptions of a channel feed these functions:

* the *folded SNR* ``gamma(theta)`` on a uniform grid over one symbol-rate period: the SNR
  density a receiver sampling at the symbol rate sees after the (whitened) matched filter,
  i.e. ``g |H(theta)|^2`` for a symbol-spaced channel ``h`` with white noise, or, for a
  passband channel with coloured noise, ``sum_k S_tx(f - k Rs) |H(f - k Rs)|^2 / N(f - k Rs)``
  (the sum over the aliases at the symbol rate);
* the sampled channel response ``q`` (symbol- or fractionally spaced) with the noise
  autocorrelation at the same spacing, for finite-length designs.

References
----------
Salz, J., "Optimum mean-square decision feedback equalization", Bell Syst. Tech. J. 52(8),
1341-1373, 1973.
Cioffi, J. M., Dudevoir, G. P., Eyuboglu, M. V. and Forney, G. D., "MMSE decision-feedback
equalizers and coding - Part I: Equalization results", IEEE Trans. Commun. 43(10), 2582-2594,
1995.
Al-Dhahir, N. and Cioffi, J. M., "MMSE decision-feedback equalizers: finite-length results",
IEEE Trans. Inf. Theory 41(4), 961-976, 1995.
Hirt, W. and Massey, J. L., "Capacity of the discrete-time Gaussian channel with intersymbol
interference", IEEE Trans. Inf. Theory 34(3), 380-388, 1988 (water-filling over the folded
spectrum).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.linalg

from aculink.errors import AculinkError
from aculink.modem import _kernels


def folded_snr_from_taps(taps, snr, n_grid: int = 2 ** 16) -> np.ndarray:
    """``gamma(theta) = snr |H(theta)|^2`` on a uniform grid of ``n_grid`` points.

    ``H(theta) = sum_k h_k exp(-j k theta)``; the uniform (trapezoid) grid is spectrally
    accurate for this periodic integrand.
    """
    h = np.asarray(taps, dtype=complex)
    spec = np.fft.fft(h, n_grid)
    return float(snr) * np.abs(spec) ** 2


@dataclass(frozen=True)
class EqualizerBounds:
    """Infinite-length receiver output SNRs (linear) from a folded SNR.

    Attributes: ``mfb``, ``zf_le``, ``mmse_le_biased``, ``mmse_le``, ``zf_dfe``,
    ``mmse_dfe_biased``, ``mmse_dfe`` (unbiased values are the ones without ``_biased``),
    ``capacity_bits`` (water-filling, bits per symbol) and ``flat_information_bits``.
    """

    mfb: float
    zf_le: float
    mmse_le_biased: float
    mmse_le: float
    zf_dfe: float
    mmse_dfe_biased: float
    mmse_dfe: float
    capacity_bits: float
    flat_information_bits: float


def water_filling(gamma) -> tuple[float, np.ndarray]:
    """Water-filling over a uniform grid: returns (bits per symbol, power allocation).

    Allocates ``p(theta) = (mu - 1/gamma)^+`` with ``mean p = 1`` and returns
    ``mean log2(1 + p gamma)``.

    References
    ----------
    Hirt and Massey (1988); Cover and Thomas, *Elements of Information Theory*, 2nd ed., 2006,
    section 9.5.
    """
    g = np.asarray(gamma, dtype=float)
    n = g.size
    inv = np.sort(1.0 / np.maximum(g, 1e-300))
    csum = np.cumsum(inv)
    k = np.arange(1, n + 1)
    mu = (n + csum) / k  # water level if the k best points are used
    ok = mu > inv
    kk = int(np.nonzero(ok)[0][-1]) + 1
    level = mu[kk - 1]
    p = np.maximum(level - 1.0 / np.maximum(g, 1e-300), 0.0)
    return float(np.mean(np.log2(1.0 + p * g))), p


def equalizer_bounds(gamma) -> EqualizerBounds:
    """Matched-filter bound and infinite-length ZF/MMSE linear and DFE output SNRs.

    Parameters
    ----------
    gamma : array
        Folded SNR on a uniform grid over one period (linear).

    References
    ----------
    Salz (1973) for the MMSE-DFE, ``SNR_DFE,B = exp(mean ln(1 + gamma))``; Cioffi et al. (1995)
    for the unbiased values (biased minus one) and the ZF forms.
    """
    g = np.asarray(gamma, dtype=float)
    with np.errstate(divide="ignore"):
        zf_le = 1.0 / np.mean(1.0 / g) if np.all(g > 0) else 0.0
        zf_dfe = float(np.exp(np.mean(np.log(g)))) if np.all(g > 0) else 0.0
    le_b = 1.0 / np.mean(1.0 / (1.0 + g))
    dfe_b = float(np.exp(np.mean(np.log1p(g))))
    cap, _ = water_filling(g)
    return EqualizerBounds(
        mfb=float(np.mean(g)), zf_le=float(zf_le), mmse_le_biased=float(le_b), mmse_le=float(le_b - 1.0),
        zf_dfe=zf_dfe, mmse_dfe_biased=dfe_b, mmse_dfe=dfe_b - 1.0, capacity_bits=cap,
        flat_information_bits=float(np.mean(np.log2(1.0 + g))))


@dataclass(frozen=True, eq=False)
class DfeDesign:
    """A finite-length MMSE-DFE (Nb = 0 gives the MMSE linear equalizer).

    The output for symbol n is ``z_n = sum_r conj(ff[r]) y[n stride + start + r] -
    sum_i conj(fb[i]) x_hat[n - fb_delays[i]]``, with ``y`` indexed like ``q`` (``q[0]`` is
    the first sample of a symbol's response).

    Attributes
    ----------
    ff, fb : complex arrays
        Feedforward (Nf) and feedback (Nb) taps in the ``w^H y`` convention.
    fb_delays : int array
        The past symbols the feedback taps multiply (1..Nb for a full span).
    start : int
        Window start relative to the symbol's response origin, samples.
    mmse : float
        Minimum mean-square error (Es units).
    snr_biased, snr : float
        ``Es / MMSE`` and the unbiased ``Es / MMSE - 1``.
    bias : float
        ``1 - MMSE / Es``; divide the output by it for unbiased decisions.
    """

    ff: np.ndarray
    fb: np.ndarray
    fb_delays: np.ndarray
    start: int
    mmse: float
    snr_biased: float
    snr: float
    bias: float


def _noise_matrix(noise_acf, n):
    acf = np.atleast_1d(np.asarray(noise_acf, dtype=complex))
    col = np.zeros(n, dtype=complex)
    m = min(n, acf.size)
    col[:m] = acf[:m]
    return scipy.linalg.toeplitz(col)  # R[r, c] = acf[r - c], Hermitian for a valid acf


def mmse_dfe_design(q, n_ff: int, n_fb: int = 0, *, stride: int = 1, es: float = 1.0,
                    noise_acf=1.0, starts=None, fb_delays=None) -> DfeDesign:
    """Finite-length MMSE-DFE for a known sampled channel (Al-Dhahir and Cioffi 1995).

    Parameters
    ----------
    q : complex array
        Channel response at the feedforward spacing (``stride`` samples per symbol).
    n_ff : int
        Feedforward taps (>= 1).
    n_fb : int
        Feedback taps (symbol spaced), ``>= 0``; ignored when ``fb_delays`` is given.
    stride : int
        Samples per symbol at the feedforward input (1 symbol-spaced, 2 for T/2).
    es : float
        Symbol energy.
    noise_acf : float or array
        Noise autocorrelation at lags 0, 1, ... samples (a scalar is white noise).
    starts : iterable of int, optional
        Window starts (decision delays) to try; default every start whose window holds the
        strongest sample of ``q``. The best (least MSE) is returned.
    fb_delays : int array, optional
        Feedback delays in symbols (a sparse feedback set); default ``1..n_fb``.

    Returns
    -------
    DfeDesign

    Notes
    -----
    With the window ``Y = [y_{n s + t}, ..., y_{n s + t + Nf - 1}]`` and column
    ``c_j[r] = q[t + r + j s]`` multiplying symbol ``x_{n-j}``, the feedforward filter is
    ``w = Es (Es C C^H + R_nn)^{-1} c_0`` where C holds every column except the fed-back ones,
    ``b_j = w^H c_j`` and ``MMSE = Es (1 - Es c_0^H (Es C C^H + R_nn)^{-1} c_0)``. In the
    symbol-spaced case the decision delay of the reference is ``Delta = Nf - 1 + t``.

    References
    ----------
    Al-Dhahir and Cioffi (1995), eqs. for the finite-length MMSE-DFE with correct past
    decisions; Voois, Lee and Cioffi, IEEE Trans. Inf. Theory 42(2), 618-621, 1996 (delay).
    """
    q = np.asarray(q, dtype=complex)
    n_ff = int(n_ff)
    if n_ff < 1:
        raise AculinkError(f"feedforward taps = {n_ff}: must be >= 1")
    if fb_delays is None:
        if int(n_fb) < 0:
            raise AculinkError(f"feedback taps = {n_fb}: must be >= 0")
        fb = np.arange(1, int(n_fb) + 1)
    else:
        fb = np.unique(np.asarray(fb_delays, dtype=int))
        if fb.size and fb[0] < 1:
            raise AculinkError(f"feedback delay = {fb[0]}: must be >= 1 symbol")
    lq = q.size
    peak = int(np.argmax(np.abs(q)))
    if starts is None:
        starts = range(peak - n_ff + 1, peak + 1)
    r_nn = _noise_matrix(noise_acf, n_ff)
    r_idx = np.arange(n_ff)
    fb_max = int(fb.max(initial=0))

    def columns(t, js):
        idx = t + r_idx[:, None] + js[None, :] * stride
        valid = (idx >= 0) & (idx < lq)
        return np.where(valid, q[np.clip(idx, 0, lq - 1)], 0.0)

    # The Gram matrix over *all* columns, sum_j c_j c_j^H, depends on the start t only through
    # t mod stride (a shift by one symbol re-indexes j), so it is formed once per parity and the
    # fed-back columns are subtracted for each start: far less work than re-forming it.
    gram = {}

    lags = np.arange(n_ff)
    diff = lags[None, :] - lags[:, None]  # r' - r

    def full_gram(t):
        # A[r, r'] = sum_{k = t + r (mod stride)} q[k] conj(q[k + r' - r]) = S_{(t + r) mod s}(r' - r)
        par = t % stride
        if par not in gram:
            corr = []
            for e in range(stride):
                mq = np.zeros_like(q)
                mq[e::stride] = q[e::stride]
                full = np.conj(np.correlate(q, mq, "full"))  # index lq - 1 + d holds S_e(d)
                corr.append(full)
            pr = (par + lags) % stride
            a = np.empty((n_ff, n_ff), complex)
            idx = lq - 1 + diff
            ok = (idx >= 0) & (idx < 2 * lq - 1)
            for e in range(stride):
                rows = pr == e
                a[rows] = np.where(ok[rows], corr[e][np.clip(idx[rows], 0, 2 * lq - 2)], 0.0)
            gram[par] = a
        return gram[par]

    work = np.empty((n_ff, n_ff), complex)
    sol = np.empty(n_ff, complex)

    def evaluate(t):
        c0 = np.ascontiguousarray(columns(t, np.array([0]))[:, 0])
        cfb = np.ascontiguousarray(columns(t, fb)) if fb.size else np.zeros((n_ff, 0), complex)
        _kernels.gram_update(np.ascontiguousarray(es * full_gram(t) + r_nn), es * cfb, work)
        if not _kernels.cholesky_solve(work, c0, sol):
            return None
        mmse = es * (1.0 - es * float(np.real(np.vdot(c0, sol))))
        return mmse, sol.copy(), cfb

    best = None
    for t in starts:
        t = int(t)
        res = evaluate(t)
        if res is None:
            continue
        mmse, sol, cfb = res
        if best is None or mmse < best[0]:
            w = es * sol
            b = np.conj(w.conj() @ cfb)  # b_j such that conj(b_j) = w^H c_j
            best = (mmse, w, b, t)
    if best is None:
        raise AculinkError("MMSE-DFE design: the noise covariance is not positive definite")
    mmse, w, b, t = best
    mmse = max(mmse, 1e-300)
    return DfeDesign(ff=w, fb=b, fb_delays=fb, start=t, mmse=mmse, snr_biased=es / mmse,
                     snr=es / mmse - 1.0, bias=1.0 - mmse / es)


def single_tap_sinr(q_symbol, es: float, noise_var: float) -> float:
    """Output SINR of a receiver that samples the strongest arrival and equalizes nothing.

    ``SINR = Es |q_m|^2 / (Es sum_{k != m} |q_k|^2 + sigma^2)`` for symbol-spaced samples
    ``q`` of the matched-filtered channel at the strongest sample ``m`` (the residual ISI is
    treated as Gaussian noise, common practice, no source).
    """
    p = np.abs(np.asarray(q_symbol, dtype=complex)) ** 2
    m = int(np.argmax(p))
    return float(es * p[m] / (es * (p.sum() - p[m]) + noise_var))


def rls_misadjustment(n_taps: int, forgetting: float) -> float:
    """Excess-MSE ratio of exponentially weighted RLS in a stationary channel.

    ``J_ex / J_min = M (1 - lambda) / (1 + lambda)``.

    References
    ----------
    Eleftheriou, E. and Falconer, D. D., "Tracking properties and steady-state performance of
    RLS adaptive filter algorithms", IEEE Trans. ASSP 34(5), 1097-1110, 1986 (from memory).
    """
    return n_taps * (1.0 - forgetting) / (1.0 + forgetting)


def nlms_misadjustment(step: float) -> float:
    """Excess-MSE ratio of NLMS, ``mu / (2 - mu)`` for step ``mu`` in (0, 2).

    References
    ----------
    Slock, D. T. M., "On the convergence behavior of the LMS and the normalized LMS algorithms",
    IEEE Trans. Signal Process. 41(9), 2811-2825, 1993 (from memory; white-input result).
    """
    return step / (2.0 - step)
