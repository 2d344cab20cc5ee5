"""Applying a channel to a complex baseband waveform.

Two methods, chosen by the channel (measured in ``tests/benchmarks/bench_channel.py``: for a time-varying channel the
sparse path loop wins by about 7x over block-updated FFTs; for a fixed one FFT overlap-add wins
above a few tens of paths, and our per-path band-limited windows make it the winner earlier):

* Fixed channel (``time_varying=False``, or no motion and no surface variation): convolution
  with :meth:`Channel.impulse_response` at the sample rate by FFT overlap-add
  (:func:`scipy.signal.oaconvolve`). Exact per-path transfer functions over the band.
* Time-varying channel: the numba sparse path loop of :mod:`aculink.channel._kernels`, with
  per-sample exact time scaling ``tau_p(t) = tau_p - a_p t`` and the matching carrier rotation
  ``exp(-j 2 pi fc tau_p(t))``, and the random surface gains of
  :mod:`aculink.channel.variation`. The frequency dependence common to the paths is applied once
  as a prefilter: ``gain_p(f) ~ gain_p(fc) Phi(f)`` with the least-squares common shape
  ``Phi(f) = sum_p conj(gain_p(fc)) gain_p(f) / sum_p |gain_p(fc)|^2`` (exact when every path
  has the same shape, e.g. a frequency-flat tap list; the residual is reported by
  :func:`band_shape_residual`). The prefilter includes the band taper of the impulse response,
  so both methods agree on in-band signals when nothing moves.

Time grids. Input sample ``x[n]`` leaves the source at ``t0_s + n / fs``; the geometry of the
channel is the one at time 0, and a path's delay at reception time t is ``tau_p - a_p t``.
Output sample ``y[m]`` is the received signal at ``start_s + m / fs``, where ``start_s`` (returned
with ``return_start=True``) is ``t0_s`` plus a whole number of samples before the earliest
energy. The output covers every sample the channel can put energy into.
"""

from __future__ import annotations

import functools

import numpy as np
from scipy import fft as sp_fft
from scipy import signal

from aculink.channel import _kernels
from aculink.channel import response as _resp
from aculink.channel.variation import surface_gain_factors
from aculink.errors import AculinkError, check_range

__all__ = ["FARROW_TAPS", "FARROW_KAISER_BETA", "farrow_coefficients", "common_shape", "band_shape_residual",
           "apply_channel", "prefilter", "control_block", "prefilter_convolve", "farrow_input", "gains_at"]

#: Farrow fractional-delay design: taps, Kaiser window shape (about 1e-4 rms error for
#: signals up to 0.35 of the sample rate, measured against exact band-limited tones).
FARROW_TAPS = _kernels.FARROW_TAPS
FARROW_KAISER_BETA = 8.0
#: Largest rms phase advance 2 pi nu_rms dt of a scattered gain between two control samples,
#: rad. Linear interpolation of a process with a Gaussian Doppler spectrum of rms width nu_rms
#: leaves an rms error of about 0.16 (2 pi nu_rms dt)^2 of its amplitude (chord error
#: (w dt)^2 / 8 of a tone, rms over the interval, fourth spectral moment 3 nu_rms^4; derived):
#: 0.1 % at 0.08 rad.
_MAX_CONTROL_PHASE_STEP = 0.08
#: Longest control spacing and its granularity, samples (the kernel's run length).
_MAX_BLOCK, _BLOCK_STEP = 256, 16


@functools.cache
def farrow_coefficients():
    """``(k, c)``: tap offsets k (K,) and coefficients c (M+1, K) of the Farrow structure.

    ``u(i + mu) ~ sum_m (mu - 1/2)^m sum_k c[m, k] u[i + k]``: a least-squares polynomial fit in
    mu of the Kaiser-windowed sinc interpolator ``sinc(mu - k) w(mu - k)``, on Chebyshev-spaced
    mu over [-m, 1 + m] with the margin m = ``_kernels.FIT_MARGIN`` (the kernel lets a run of
    one column go a few samples past mu = 1 or below 0; the margin costs 2x in rms error, still
    about 1e-4 at a quarter of the sample rate and 6e-4 at 0.35).

    References
    ----------
    Farrow (1988), Proc. IEEE ISCAS, 2641-2645 (memory); J. F. Kaiser, "Nonrecursive digital
    filter design using the I0-sinh window function", Proc. IEEE ISCAS 1974, 20-23 (memory).
    """
    k = np.arange(-FARROW_TAPS // 2 + 1, FARROW_TAPS // 2 + 1)
    m = _kernels.FIT_MARGIN
    mu = 0.5 - (0.5 + m) * np.cos(np.linspace(0.0, np.pi, 401))
    t = mu[:, None] - k[None, :]
    half = FARROW_TAPS / 2.0
    win = np.i0(FARROW_KAISER_BETA * np.sqrt(np.clip(1.0 - (t / half) ** 2, 0.0, None))) / np.i0(FARROW_KAISER_BETA)
    basis = np.vander(mu - 0.5, _kernels.FARROW_DEGREE + 1, increasing=True)
    c, *_ = np.linalg.lstsq(basis, np.sinc(t) * win, rcond=None)
    return k, c


def common_shape(channel):
    """Least-squares common band shape Phi(f) on the channel's grid (Phi(fc) = 1)."""
    g_fc = channel.gain_at(channel.carrier_hz)[:, 0]
    power = np.sum(np.abs(g_fc) ** 2)
    if power == 0.0:
        return np.ones(channel.freq_hz.size, dtype=complex)
    return (np.conj(g_fc) @ channel.gain) / power


def band_shape_residual(channel, n=65):
    """Relative rms error of ``gain_p(f) ~ gain_p(fc) Phi(f)`` over the band (0 when exact)."""
    if channel.is_empty:
        return 0.0
    f = channel.band_grid(n)
    g = channel.gain_at(f)
    phi = _resp.interpolate_gain(common_shape(channel)[None, :], channel.freq_hz, f)[0]
    g_fc = channel.gain_at(channel.carrier_hz)[:, 0]
    err = g - g_fc[:, None] * phi[None, :]
    return float(np.sqrt(np.sum(np.abs(err) ** 2) / np.sum(np.abs(g) ** 2)))


def _check_input(x, sample_rate_hz, channel):
    fs = check_range("sample_rate_hz", sample_rate_hz, channel.bandwidth_hz, None, unit="Hz")
    arr = np.asarray(x)
    if arr.ndim != 1:
        raise AculinkError(f"x has shape {arr.shape}: expected a 1-D complex baseband waveform")
    arr = np.asarray(arr, dtype=complex)
    # one sum is finite only if every sample is (NaN and inf propagate); a finite signal whose
    # sum overflows falls through to the full check
    if not np.isfinite(arr.sum()) and not np.all(np.isfinite(arr)):
        raise AculinkError("x contains NaN or inf samples")
    return arr, fs


def apply_channel(channel, x, sample_rate_hz, *, time_varying=True, seed=None, t0_s=0.0,
                  return_start=False):
    """Pass complex baseband samples through the channel.

    Parameters
    ----------
    channel : Channel
    x : (N,) array_like
        Complex baseband waveform at ``sample_rate_hz`` (pressure re 1 m at the source: the
        output is then the received pressure), transmitted from ``t0_s`` on.
    sample_rate_hz : float
        At least the channel bandwidth.
    time_varying : bool
        Apply Doppler time scaling and random surface gains (when the channel has them).
    seed : int, optional
        Seed of the surface process (same seed, same output).
    t0_s : float
        Transmit time of ``x[0]``, s (moves the geometry along for moving platforms and picks
        the stretch of the surface process).
    return_start : bool
        Also return ``start_s``, the reception time of ``y[0]``.

    Returns
    -------
    y : (M,) complex ndarray
        Fixed channel: ``M = N + L - 1`` with L the length of ``impulse_response(fs)``, and
        ``y`` equals the full convolution of ``x`` with those taps (``start_s = t0_s +`` the
        delay of tap 0). Time-varying: from a whole sample before the earliest arrival over the
        transmission to past the latest, plus the interpolator's and taper's half-lengths.
        An empty channel gives zeros of length N.
    start_s : float, only with ``return_start=True``.

    Raises
    ------
    AculinkError
        For a sample rate below the band, a non-1-D or non-finite input.
    """
    xs, fs = _check_input(x, sample_rate_hz, channel)
    t0 = check_range("t0_s", t0_s, None, None, unit="s")
    if channel.is_empty:
        y, start = np.zeros(xs.size, dtype=complex), t0
    elif time_varying and channel.is_time_varying:
        y, start = _apply_varying(channel, xs, fs, seed, t0)
    else:
        ir = channel.impulse_response(fs)
        y = signal.oaconvolve(xs, ir.values) if xs.size else np.zeros(max(ir.size - 1, 0), complex)
        start = t0 + ir.attrs["first_index"] / fs
    return (y, start) if return_start else y


def prefilter(channel, sample_rate_hz):
    """The common-shape prefilter taps and the lag (samples) of its first tap."""
    spectrum, support, n = channel.taper(sample_rate_hz)
    shape = common_shape(channel)[None, :]
    start, values = _resp.path_windows(np.zeros(1), shape, channel.freq_hz, channel.carrier_hz,
                                       sample_rate_hz, spectrum, support, n)
    return values[0] / sample_rate_hz, int(start[0])


def control_block(channel, sample_rate_hz):
    """Samples between gain control points: a multiple of 16, at most 256, that keeps the rms
    phase advance of the fastest scattered gain between control points below
    ``_MAX_CONTROL_PHASE_STEP``."""
    block = _MAX_BLOCK
    spread = float(np.max(channel.surface_doppler_spread_hz)) if channel.n_paths else 0.0
    if spread > 0:
        samples = _MAX_CONTROL_PHASE_STEP * sample_rate_hz / (2.0 * np.pi * spread)
        block = min(block, int(samples // _BLOCK_STEP) * _BLOCK_STEP)
        if block < _BLOCK_STEP:
            block = max(1, 1 << int(np.floor(np.log2(max(samples, 1.0)))))
    return block


#: FFT length of the prefilter's overlap-add (at least 4 prefilter lengths): measured fastest of
#: 2048-8192 for 512 taps on 1e6 samples, and 30 % faster than scipy.signal.oaconvolve there.
_PREFILTER_FFT = 8192


def prefilter_convolve(x, taps):
    """Full convolution of ``x`` with ``taps`` in single precision (complex64), by FFT overlap-add.

    Blocks of ``L = nfft - len(taps) + 1`` input samples are transformed together (one batched
    FFT along the rows) and each block's tail of ``len(taps) - 1`` samples is added to the start
    of the next; the same result as ``scipy.signal.oaconvolve`` on complex64 to its rounding
    (about 1e-7 relative, tested), with fewer passes over the data.
    """
    x = np.asarray(x)
    h = np.asarray(taps, dtype=np.complex64)
    m = h.size
    if x.size == 0 or m == 0:
        return signal.oaconvolve(x.astype(np.complex64), h)
    n_full = x.size + m - 1
    nfft = max(_PREFILTER_FFT, 1 << int(np.ceil(np.log2(4 * m))))
    nfft = min(nfft, max(1 << int(np.ceil(np.log2(n_full))), 1 << int(np.ceil(np.log2(2 * m)))))
    block = nfft - m + 1
    nb = -(-x.size // block)
    xb = np.zeros((nb, block), dtype=np.complex64)
    xb.reshape(-1)[:x.size] = x
    spec = sp_fft.fft(xb, nfft, axis=1)
    spec *= sp_fft.fft(h, nfft)
    yb = sp_fft.ifft(spec, axis=1, overwrite_x=True)
    out = np.zeros((nb + 1, block), dtype=np.complex64)
    out[:nb] = yb[:, :block]
    out[1:, :m - 1] += yb[:, block:]      # m - 1 <= block since nfft >= 2 m - 2
    return out.reshape(-1)[:n_full]


def farrow_input(x, taps, c):
    """Farrow branches (float32 real and imaginary parts) of the prefiltered input.

    The prefilter runs as a single-precision FFT convolution (:func:`prefilter_convolve`) and
    the branches in float32: the kernel's work per sample is in float32 (twice the SIMD lanes of
    float64; rounding about 1e-7, far below the interpolator's 1e-4).
    """
    u = prefilter_convolve(x, taps)
    c32 = np.ascontiguousarray(c, dtype=np.float32)
    n_taps = c.shape[1]
    vr = np.empty((c.shape[0], u.size + n_taps - 1), dtype=np.float32)
    vi = np.empty_like(vr)
    if n_taps != _kernels.FARROW_TAPS:
        _kernels.farrow_branches(np.ascontiguousarray(u.real), c32, vr)
        _kernels.farrow_branches(np.ascontiguousarray(u.imag), c32, vi)
        return vr, vi
    # zero-padded copies of the two parts: the branches are then plain correlations
    pad = n_taps - 1
    xp = np.zeros(u.size + 2 * pad, dtype=np.float32)
    xp[pad:pad + u.size] = u.real
    _kernels.farrow_correlate(xp, c32, vr)
    xp[pad:pad + u.size] = u.imag
    _kernels.farrow_correlate(xp, c32, vi)
    return vr, vi


def _output_grid(channel, n_in, fs, t0, lead):
    """First output index (samples after t0) and output length for a time-varying channel."""
    tau, a = channel.delay_s, channel.doppler
    # reception times span about [t0 + tau, t0 + tau + n/fs]; tau_p(t) = tau_p - a_p t
    t_a = t0 + tau
    t_b = t0 + tau + n_in / fs
    early = np.minimum(tau - a * t_a, tau - a * t_b)
    late = np.maximum(tau - a * t_a, tau - a * t_b)
    first = int(np.floor(early.min() * fs)) - lead
    last = int(np.ceil(late.max() * fs)) + n_in + lead
    # Doppler stretching changes the received duration by a factor (1 - a)^-1
    last += int(np.ceil(np.max(np.abs(a)) * n_in * 2)) + 1
    return first, last - first


def gains_at(channel, times_s, seed):
    """Complex gain of every path at band centre times its random factor (1 for steady paths,
    the zero-mean scattered gain z(t) for the sub-paths of a surface cluster), (P, T)."""
    g_fc = channel.gain_at(channel.carrier_hz)[:, 0]
    factors = surface_gain_factors(channel.surface_grazing_sin2_sum, channel.carrier_hz,
                                   channel.surface, times_s, seed, scattered=channel.scattered)
    return g_fc[:, None] * factors


def _apply_varying(channel, x, fs, seed, t0):
    taps, lag = prefilter(channel, fs)
    k, c = farrow_coefficients()
    k_hi = int(k[-1])
    # u_full[q] = u(q + lag): the prefiltered input; branch m is u_full convolved with the
    # reversed Farrow row m, so branch column q holds v_m at input index q + lag - k_hi
    vr, vi = farrow_input(x, taps, c)
    offset = k_hi - lag
    lead = taps.size + FARROW_TAPS
    first, n_out = _output_grid(channel, x.size, fs, t0, lead)
    block = control_block(channel, fs)
    a = channel.doppler.astype(float)
    tau = channel.delay_s
    pos0 = first * (1.0 + a) + a * t0 * fs - tau * fs
    wc = 2.0 * np.pi * channel.carrier_hz
    ph0 = -wc * tau + wc * a * (t0 + first / fs)
    w = wc * a / fs
    n_ctrl = (n_out + block - 1) // block + 1
    times = t0 + (first + block * np.arange(n_ctrl)) / fs
    g = gains_at(channel, times, seed)
    out_r = np.zeros(n_out, dtype=np.float32)
    out_i = np.zeros(n_out, dtype=np.float32)
    _kernels.apply_time_varying(
        vr, vi, int(offset),
        pos0, a, np.ascontiguousarray(g.real), np.ascontiguousarray(g.imag), int(block), w, ph0,
        out_r, out_i)
    y = np.empty(n_out, dtype=complex)
    y.real = out_r
    y.imag = out_i
    return y, t0 + first / fs
