"""Sparse evaluation of band-limited path responses on a sample grid.

Each path's contribution to a sampled response is a short window centred on its delay. The
window is computed for all paths at once: the product of a pulse spectrum W(f) and the path's
transfer function over the band is sampled on the grid of an N-point inverse DFT (spacing
fs/N), folded modulo N (which makes the result exact samples of the continuous response,
whatever the pulse bandwidth relative to fs), shifted by the path's fractional delay and
inverse-transformed along the path axis. The cost is O(P N log N) with N a few hundred, and
the dense response is assembled by one scatter-add, so channels with thousands of taps and
hundreds of paths stay cheap.

Time aliasing of the DFT window is the only approximation; the window is sized so that the
raised-cosine tails outside it are below ``_TAIL_TOLERANCE`` of the peak.
"""

from __future__ import annotations

import numpy as np

from aculink.channel import _kernels

__all__ = ["window_length", "interpolation_weights", "interpolate_gain", "transfer_sum", "fourier_sum",
           "path_windows", "assemble"]

#: Relative size of the pulse tail that a response window may leave out (common practice).
_TAIL_TOLERANCE = 1e-5
_MAX_WINDOW = 1 << 14


def window_length(sample_rate_hz, symbol_rate_baud, rolloff):
    """DFT window (samples, a power of two) holding a raised-cosine pulse to ``_TAIL_TOLERANCE``.

    The envelope of the raised-cosine tail is about (T / pi t) (T / 2 beta t)^2 (from the
    pulse formula), so the half-window in symbols is (1 / (pi beta^2 tol))^(1/3).
    """
    half_symbols = (1.0 / (np.pi * rolloff ** 2 * _TAIL_TOLERANCE)) ** (1.0 / 3.0)
    n = int(np.ceil(2.0 * half_symbols * sample_rate_hz / symbol_rate_baud))
    return int(min(max(16, 1 << int(np.ceil(np.log2(max(n, 2))))), _MAX_WINDOW))


def interpolation_weights(freq_grid_hz, freq_hz):
    """Index and weight for linear interpolation on ``freq_grid_hz`` (held at the ends).

    Returns ``(i0, w)`` such that ``value = g[..., i0] * (1 - w) + g[..., i0 + 1] * w``; a
    one-point grid gives ``i0 = 0, w = 0`` (and callers pad the gain to two columns).
    """
    grid = np.asarray(freq_grid_hz, dtype=float)
    f = np.asarray(freq_hz, dtype=float)
    if grid.size == 1:
        return np.zeros(f.shape, dtype=np.int64), np.zeros(f.shape)
    fc = np.clip(f, grid[0], grid[-1])
    i0 = np.clip(np.searchsorted(grid, fc, side="right") - 1, 0, grid.size - 2)
    w = (fc - grid[i0]) / (grid[i0 + 1] - grid[i0])
    return i0, w


def interpolate_gain(gain, freq_grid_hz, freq_hz):
    """Path gains (P, F) on ``freq_grid_hz`` linearly interpolated to ``freq_hz`` -> (P, Q).

    ``g[:, i0] (1 - w) + g[:, i0 + 1] w`` (:func:`interpolation_weights`), evaluated by a numba
    loop straight into the result (the numpy form built three (P, Q) temporaries by fancy
    indexing, the largest cost of a planner's spectra).
    """
    gain = np.asarray(gain, dtype=complex)
    shape = np.shape(freq_hz)
    if gain.shape[1] == 1:
        return np.repeat(gain, np.size(freq_hz), axis=1).reshape(gain.shape[0], *shape)
    i0, w = interpolation_weights(freq_grid_hz, freq_hz)
    out = np.empty((gain.shape[0], int(np.size(freq_hz))), dtype=complex)
    _kernels.interpolate_rows(np.ascontiguousarray(gain.real), np.ascontiguousarray(gain.imag),
                              np.ascontiguousarray(i0, dtype=np.int64).ravel(),
                              np.ascontiguousarray(w, dtype=float).ravel(), out)
    return out.reshape(gain.shape[0], *shape)


#: Largest phase error (rad) the phasor recurrence of :func:`transfer_sum` may add, beyond the
#: rounding of the direct evaluation (which is about eps 2 pi f tau: 7e-11 rad at 12 kHz, 4 s).
_PHASE_TOLERANCE = 1e-10


def transfer_sum(delay_s, gain, freq_grid_hz, freq_hz):
    """``H(f) = sum_p g_p(f) exp(-j 2 pi f tau_p)`` at ``freq_hz`` (1-D), gains linear in f.

    Equal (to rounding and a phase error below ``_PHASE_TOLERANCE``) to
    ``einsum("pq,pq->q", interpolate_gain(gain, grid, f), exp(-2j pi outer(tau, f)))``, without
    the (P, Q) arrays: frequencies on a uniform grid (runs of
    :data:`aculink.channel._kernels.RUN_FREQS`) advance each path's phasor by one complex
    rotation instead of a complex exponential (see :func:`aculink.channel._kernels.transfer_sum`).
    """
    delay = np.ascontiguousarray(delay_s, dtype=float)
    f = np.ascontiguousarray(freq_hz, dtype=float)
    gain = np.asarray(gain, dtype=complex)
    if gain.shape[1] == 1:
        gain = np.repeat(gain, 2, axis=1)
        grid = np.array([0.0, 1.0])
        i0, w = np.zeros(f.size, dtype=np.int64), np.zeros(f.size)
    else:
        grid = np.asarray(freq_grid_hz, dtype=float)
        i0, w = interpolation_weights(grid, f)
    out = np.empty(f.size, dtype=complex)
    if delay.size == 0 or f.size == 0:
        out[:] = 0.0
        return out
    tau_max = float(np.max(np.abs(delay)))
    f_max = float(np.max(np.abs(f)))
    # a straight line through a run may miss its frequencies by a few ulps (linspace rounding)
    tol = max(_PHASE_TOLERANCE / (2.0 * np.pi * tau_max) if tau_max > 0 else np.inf,
              16.0 * np.finfo(float).eps * f_max)
    _kernels.transfer_sum(delay, np.ascontiguousarray(gain.real.T), np.ascontiguousarray(gain.imag.T),
                          np.ascontiguousarray(i0, dtype=np.int64), np.ascontiguousarray(w, dtype=float),
                          f, float(min(tol, 1e300)), out)
    return out


def fourier_sum(weights, freq_hz, times_s):
    """``S(t_m) = sum_k w_k exp(+j 2 pi f_k t_m)`` (1-D ``weights`` and ``freq_hz``, 1-D ``times_s``).

    A trapezoid-rule Fourier integral (e.g. a noise autocorrelation from its PSD) is this sum with
    ``w_k = N(f_k)`` times the trapezoid weights. Evaluated by :func:`transfer_sum` with the
    roles swapped (frequencies as delays, times as frequencies): uniform times cost one complex
    rotation per term instead of an exponential.
    """
    w = np.asarray(weights, dtype=complex).reshape(-1, 1)
    t = np.asarray(times_s, dtype=float)
    return transfer_sum(np.asarray(freq_hz, dtype=float), w, np.zeros(1), -t.ravel()).reshape(t.shape)


def path_windows(delay_s, gain, freq_grid_hz, carrier_hz, sample_rate_hz, spectrum, support_hz,
                 n_window):
    """Sampled band-limited response of every path, each on its own window.

    Path p contributes ``exp(-j 2 pi fc tau_p) * g_p(t - tau_p)`` with
    ``g_p(t) = integral W(f) G_p(fc + f) exp(j 2 pi f t) df`` over ``|f| <= support_hz``.

    Parameters
    ----------
    delay_s : (P,) array
    gain : (P, F) complex array on ``freq_grid_hz`` (passband, Hz)
    carrier_hz, sample_rate_hz : float
    spectrum : callable
        W(f) on baseband frequencies, real.
    support_hz : float
        W is zero beyond this baseband frequency.
    n_window : int
        Window length in samples (power of two).

    Returns
    -------
    start : (P,) int64
        Sample index (at ``sample_rate_hz``, time 0 = index 0) of each window's first sample.
    values : (P, n_window) complex
        The sampled response (continuous-time amplitude, per second of ``W``'s units).
    """
    delay_s = np.asarray(delay_s, dtype=float)
    n = int(n_window)
    df = sample_rate_hz / n
    q = np.arange(int(np.ceil(-support_hz / df)), int(np.floor(support_hz / df)) + 1)
    fq = q * df
    taper = spectrum(fq)
    keep = taper != 0.0
    q, fq, taper = q[keep], fq[keep], taper[keep]
    centre = np.rint(delay_s * sample_rate_hz).astype(np.int64)
    eps = centre - delay_s * sample_rate_hz          # in [-0.5, 0.5] samples
    g = interpolate_gain(gain, freq_grid_hz, carrier_hz + fq)
    folded = np.zeros((delay_s.size, n), dtype=complex)
    # spec = g exp(2 pi j (eps - n/2) q / n) taper df folded onto bins q mod n: q runs over
    # consecutive integers, so the kernel rotates a phasor instead of one exp per bin
    _kernels.fold_windows(np.ascontiguousarray(eps, dtype=float), np.ascontiguousarray(g),
                          np.ascontiguousarray(q, dtype=np.int64), np.ascontiguousarray(taper * df, dtype=float),
                          n, folded)
    values = np.fft.ifft(folded, axis=1) * n
    values *= np.exp(-2j * np.pi * carrier_hz * delay_s)[:, None]
    return centre - n // 2, values


def assemble(start, values):
    """Scatter-add path windows into one dense array; returns ``(first_index, dense)``."""
    if start.size == 0:
        return 0, np.zeros(0, dtype=complex)
    n = values.shape[1]
    first = int(start.min())
    length = int(start.max()) - first + n
    dense = np.zeros(length, dtype=complex)
    _kernels.scatter_windows(np.ascontiguousarray(start - first, dtype=np.int64),
                             np.ascontiguousarray(values, dtype=complex), dense)
    return first, dense
