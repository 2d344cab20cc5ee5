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

__all__ = ["window_length", "interpolation_weights", "interpolate_gain", "path_windows", "assemble"]

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
    """Path gains (P, F) on ``freq_grid_hz`` linearly interpolated to ``freq_hz`` -> (P, Q)."""
    gain = np.asarray(gain, dtype=complex)
    i0, w = interpolation_weights(freq_grid_hz, freq_hz)
    if gain.shape[1] == 1:
        return np.repeat(gain, np.size(freq_hz), axis=1).reshape(gain.shape[0], *np.shape(freq_hz))
    return gain[:, i0] * (1.0 - w) + gain[:, i0 + 1] * w


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
    shift = np.exp(2j * np.pi * np.outer(eps - n // 2, q) / n)
    spec = g * shift * (taper * df)
    folded = np.zeros((delay_s.size, n), dtype=complex)
    bins = np.mod(q, n)
    # q runs over consecutive integers, so each run of n of them lands on distinct bins
    for lo in range(0, q.size, n):
        folded[:, bins[lo:lo + n]] += spec[:, lo:lo + n]
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
    idx = ((start - first)[:, None] + np.arange(n)).ravel()
    re = np.bincount(idx, weights=values.real.ravel(), minlength=length)
    im = np.bincount(idx, weights=values.imag.ravel(), minlength=length)
    return first, re + 1j * im
