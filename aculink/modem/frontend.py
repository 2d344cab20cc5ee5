"""Transmit shaping and the receiver front end.

Transmit: symbols at ``sps`` samples per symbol through a unit-energy root-raised-cosine
filter. Receive: the matched filter (the same RRC), frame detection by correlating with the
known preamble, the Doppler time scale, resampling to undo it, decimation to T/2 at the phase
of the strongest arrival, a least-squares channel estimate from the training, a detection test
on it (with resynchronisation on the next candidate peaks when it fails), gain/phase
normalisation and the removal of a residual carrier-frequency offset measured on the training.

Doppler without false lock. On a channel whose strongest arrivals are close in level and
fluctuate with the surface, the strongest peak of the preamble correlation and that of the
tail marker can belong to *different* arrivals; their distance then measures the gap between
the arrivals, not the time scale, and the frame is resampled by a wrong factor. The time scale
is therefore measured from the whole correlation envelope: the envelope ``|c|`` over the
arrival cluster after the preamble is cross-correlated (normalised) with the tail marker's
envelope, so every arrival is matched with itself. The search is bounded by ``max_doppler``,
the largest time scale the site can produce (platform speeds plus the surface, passed by the
simulator from the channel); an estimate is used only when it is *significant*: the envelopes
must be alike (correlation coefficient at least ``ENVELOPE_MIN_CORRELATION``), the best lag
must lie inside the bound (not on its edge) and the scale must exceed ``DOPPLER_SIGNIFICANCE``
standard deviations of its timing floor. No estimate, no resampling.

Coarse acquisition first. A moving platform shifts the carrier by ``a fc``; at a high carrier
and a low symbol rate that rotates the training by a cycle or more, which wipes out the very
peaks the envelope estimate reads (a generated site at 27.4 kHz and 0.95 m/s lost every
frame). :func:`coarse_doppler` therefore searches the rotation of the training on a grid
inside the bound first; when it finds a significant one, the frame is resampled by it and the
envelope estimate only refines it within the grid's resolution (beyond that the envelopes
matched different arrivals).

References
----------
Proakis, J. G., *Digital Communications*, 4th ed., 2001, ch. 6 (matched filter, carrier and
symbol synchronization). Li, B., Zhou, S., Stojanovic, M., Freitag, L. and Willett, P.,
"Multicarrier communication over underwater acoustic channels with nonuniform Doppler
shifts", IEEE J. Oceanic Eng. 33(2), 198-209, 2008 (the wideband Doppler model: time scaling
``s((1 + a) t)`` and carrier shift ``a fc``; Doppler estimated from preamble/postamble timing).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.signal
from scipy.interpolate import make_interp_spline

from aculink.modem.pulses import DEFAULT_SPAN_SYMBOLS, rrc_taps

__all__ = ["MAX_DOPPLER_FACTOR", "DEFAULT_MAX_DOPPLER", "ENVELOPE_MIN_CORRELATION", "DETECT_MIN_SNR",
           "DETECT_OVER_CHANCE", "RESYNC_CANDIDATES", "COARSE_STEP_CYCLES", "COARSE_MIN_GAIN",
           "COARSE_MAX_CANDIDATES", "SYNC_FOR_COARSE", "shape", "matched_filter", "pulse_delay",
           "time_scale", "rms_bandwidth_symbols", "doppler_floor", "DOPPLER_SIGNIFICANCE",
           "correlate_sequence", "Sync", "fit_quality", "estimate_channel", "envelope_lag",
           "measure_doppler", "coarse_doppler", "derotation", "synchronise"]

#: Largest time-scale factor |a| the front end ever searches for (|v| <= 15 m/s at 1500 m/s).
MAX_DOPPLER_FACTOR = 0.01
#: Bound used when the caller does not know the site's motion: 5 m/s at 1500 m/s (a fast
#: vehicle; common practice, no source).
DEFAULT_MAX_DOPPLER = 5.0 / 1500.0
#: Head and tail envelopes less alike than this are not the same channel: no estimate
#: (common practice, no source).
ENVELOPE_MIN_CORRELATION = 0.3
#: A frame is taken as detected when the training explains at least this much more power than
#: it leaves (explained over residual, -3 dB) and at least ``DETECT_OVER_CHANCE`` times what a
#: least-squares fit of the same size explains in noise alone, L / (N - L) (common practice,
#: no source).
DETECT_MIN_SNR = 0.5
DETECT_OVER_CHANCE = 4.0
#: Envelope samples per symbol in the Doppler measurement (the correlation output is
#: interpolated up to this when the simulation runs at fewer samples per symbol).
_ENVELOPE_SAMPLES = 8
#: Candidate preamble peaks tried when the strongest one fails the detection test.
RESYNC_CANDIDATES = 3
#: Coarse Doppler acquisition: the carrier shift ``a fc`` rotates the preamble, and a rotation
#: of a cycle or more over it wipes out its correlation peak (and the head/tail envelopes the
#: fine estimate reads). Candidate scales inside the site's bound are tried on the preamble,
#: spaced so that the rotation left over it is at most ``COARSE_STEP_CYCLES / 2`` of a cycle
#: (0.125 cycle: at most 0.25 dB of correlation loss, sinc^2); one is used only when its peak
#: power exceeds the unshifted one by ``COARSE_MIN_GAIN`` (3 dB), far above the peak's noise
#: after 64 symbols of correlation gain (common practice, no source).
COARSE_STEP_CYCLES = 0.25
COARSE_MIN_GAIN = 2.0
#: Candidates each side of zero in the coarse search, at most (its cost), and the shortest
#: sequence it correlates (the detection preamble).
COARSE_MAX_CANDIDATES = 16
SYNC_FOR_COARSE = 64
#: Upsampling before the cubic-spline interpolation used for time scaling: the spline's error
#: on a signal at 1/16 of its sample rate is below -80 dB (computed for the RRC spectrum).
_INTERP_UPSAMPLE = 4


def shape(symbols, rolloff: float, sps: int) -> np.ndarray:
    """RRC-shaped baseband waveform; symbol k's pulse peak is at sample ``k sps + span sps``."""
    g = rrc_taps(rolloff, sps)
    return scipy.signal.upfirdn(g, np.asarray(symbols, dtype=complex), up=sps)


def matched_filter(y, rolloff: float, sps: int) -> np.ndarray:
    """Matched-filter output, delayed by ``span sps`` samples (full convolution)."""
    g = rrc_taps(rolloff, sps)
    return scipy.signal.oaconvolve(y, g)


#: Samples from a transmitted symbol to its peak after shaping and matched filtering.
def pulse_delay(sps: int) -> int:
    return 2 * DEFAULT_SPAN_SYMBOLS * sps


def time_scale(x, factor: float, sample_rate_hz: float, carrier_hz: float, *, inverse=False):
    """Apply (or undo, ``inverse=True``) the wideband Doppler of a common time scale ``a``.

    Forward: ``y(t) = x((1 + a) t) exp(j 2 pi a fc t)``; inverse maps such a ``y`` back to
    ``x``. The signal is upsampled by 4 (polyphase, scipy) and interpolated by a cubic spline.
    """
    x = np.asarray(x, dtype=complex)
    a = float(factor)
    if a == 0.0:
        return x.copy()
    n = x.size
    up = scipy.signal.resample_poly(x, _INTERP_UPSAMPLE, 1)
    spline = make_interp_spline(np.arange(up.size), up, k=3)
    m = np.arange(n, dtype=float)
    if inverse:
        pos = m / (1.0 + a)
        out = spline(np.clip(pos * _INTERP_UPSAMPLE, 0, up.size - 1))
        return out * np.exp(-2j * np.pi * a * carrier_hz * pos / sample_rate_hz)
    pos = m * (1.0 + a)
    out = np.where(pos <= n - 1, spline(np.clip(pos * _INTERP_UPSAMPLE, 0, up.size - 1)), 0.0)
    return out * np.exp(2j * np.pi * a * carrier_hz * m / sample_rate_hz)


def rms_bandwidth_symbols(rolloff: float) -> float:
    """RMS bandwidth of the RRC power spectrum in units of Rs: ``sqrt(int f^2 |G|^2 / int |G|^2)``."""
    from aculink.channel.pulses import raised_cosine_spectrum

    f = np.linspace(-0.5 * (1 + rolloff), 0.5 * (1 + rolloff), 4001)
    g2 = raised_cosine_spectrum(f, rolloff)
    return float(np.sqrt(np.trapezoid(f * f * g2, f) / np.trapezoid(g2, f)))


def doppler_floor(rolloff: float, n_sync: int, snr: float, n_frame_symbols: int) -> float:
    """Standard deviation of the time-scale estimate from two peak timings.

    Each peak time has the Cramer-Rao bound ``sigma_t / T = 1 / (2 pi B_rms T sqrt(2 E/N0))``
    with ``E/N0 = n_sync SNR`` (Kay, Fundamentals of Statistical Signal Processing: Estimation
    Theory, 1993, ch. 3, time-delay estimation, from memory); the scale is their difference
    over the frame, so ``sigma_a = sqrt 2 sigma_t / (n_frame T)``.
    """
    sig_t = 1.0 / (2 * np.pi * rms_bandwidth_symbols(rolloff) * np.sqrt(2.0 * n_sync * max(snr, 1e-3)))
    return float(np.sqrt(2.0) * sig_t / n_frame_symbols)


#: A time-scale estimate is applied only when it exceeds this many standard deviations of its
#: noise floor: compensating a scale that is only noise makes a receiver without timing
#: tracking drift off the symbol instants (measured: 0.05 dB at 7 dB over 3000-symbol frames).
DOPPLER_SIGNIFICANCE = 3.0


def correlate_sequence(r, symbols, sps: int) -> np.ndarray:
    """``c[n] = sum_k conj(s_k) r[n + k sps]`` for every start n (valid part only)."""
    s = np.asarray(symbols, dtype=complex)
    s_up = np.zeros((s.size - 1) * sps + 1, dtype=complex)
    s_up[::sps] = s
    return scipy.signal.correlate(r, s_up, mode="valid")


def _peak(c, lo: int, hi: int):
    """Index (with parabolic refinement) and complex value of the largest |c| in [lo, hi)."""
    lo = max(0, int(lo))
    hi = min(c.size, int(hi))
    if hi - lo < 1:
        return None, 0.0
    seg = np.abs(c[lo:hi]) ** 2
    k = int(np.argmax(seg)) + lo
    frac = _parabolic_offset(np.abs(c[k - 1:k + 2]) ** 2, 1) if 0 < k < c.size - 1 else 0.0
    return k + frac, c[k]


@dataclass(frozen=True)
class Sync:
    """Front-end result for one frame."""

    stream: np.ndarray       # matched-filter output at T/2, gain-, phase- and frequency-normalised
    start: int               # T/2 index of symbol 0's strongest arrival
    q: np.ndarray            # LS channel estimate at T/2 (normalised: q[q_peak] = 1)
    q_peak: int              # index of the strongest sample in q
    noise_var: float         # noise variance per T/2 sample after normalisation
    doppler: float           # time-scale factor a applied (0 when no significant estimate)
    detected: bool           # the training was found where the preamble peak said
    doppler_note: str = ""   # why no time scale was applied ("" when one was, or none searched)
    resyncs: int = 0         # candidate peaks tried after the strongest failed the detection test
    detect_snr: float = 0.0  # training power explained over residual, at the chosen peak
    freq_offset: float = 0.0  # residual carrier offset removed, rad per symbol


def fit_quality(power_obs: float, power_resid: float, n_rows: int, n_taps: int) -> tuple[float, bool]:
    """Detection statistic of a least-squares training fit and the detection decision.

    ``snr = (|obs|^2 - |resid|^2) / |resid|^2``; in noise alone a fit of L coefficients to N
    rows explains about ``L / (N - L)`` of the residual (chi-square degrees of freedom: Kay,
    Fundamentals of Statistical Signal Processing: Detection Theory, 1998, ch. 7, from memory).
    """
    resid = max(power_resid, 1e-300)
    snr = max(power_obs - power_resid, 0.0) / resid
    if n_rows < 2 * n_taps:  # a fit that is not well overdetermined explains noise as well
        return float(snr), False
    chance = n_taps / (n_rows - n_taps)
    return float(snr), bool(snr >= max(DETECT_MIN_SNR, DETECT_OVER_CHANCE * chance))


def estimate_channel(stream, start: int, training, n_pre: int, n_post: int, *, full=False):
    """Least-squares T/2 channel estimate from the training symbols.

    Model ``stream[base + 2 j + u] += q[u] x_j`` with ``base = start - n_pre`` and
    ``u = 0..n_pre+n_post``; rows are the samples to which only training symbols contribute
    (for a single tap, only the symbol instants). An L-tap estimate from N training symbols
    costs about a factor 1 + L/N in output SNR (data-aided least squares; Kay, Fundamentals of
    Statistical Signal Processing: Estimation Theory, 1993, ch. 4, from memory).
    Returns ``(q, residual noise variance per sample)``, and with ``full=True`` also
    ``(detection snr, detected)`` from :func:`fit_quality`.
    """
    x = np.asarray(training, dtype=complex)
    n_tr = x.size
    length = n_pre + n_post + 1
    base = start - n_pre
    if length == 1:  # one tap: only the symbol instants carry it without ISI from the T/2 pulse
        rows = base + 2 * np.arange(n_tr)
        rows = rows[rows >= 0]
    else:
        rows = np.arange(max(base, 0), base + 2 * (n_tr - 1) + 1)
    rows = rows[rows < stream.size]
    u = np.arange(length)
    jj2 = rows[:, None] - base - u[None, :]
    j = jj2 // 2
    ok = (jj2 % 2 == 0) & (j >= 0) & (j < n_tr)
    a = np.where(ok, x[np.clip(j, 0, n_tr - 1)], 0.0)
    obs = stream[rows]
    q, *_ = np.linalg.lstsq(a, obs, rcond=None)
    resid = obs - a @ q
    dof = max(rows.size - length, 1)
    r2 = float(np.sum(np.abs(resid) ** 2))
    if not full:
        return q, r2 / dof
    return q, r2 / dof, *fit_quality(float(np.sum(np.abs(obs) ** 2)), r2, rows.size, length)


def _parabolic_offset(y, k) -> float:
    """Offset in [-1/2, 1/2] of the vertex of the parabola through ``y[k - 1], y[k], y[k + 1]``
    from ``k`` (0 at an edge or where the three points do not curve down)."""
    if not 0 < k < len(y) - 1:
        return 0.0
    y0, y1, y2 = y[k - 1], y[k], y[k + 1]
    den = y0 - 2 * y1 + y2
    return float(np.clip(0.5 * (y0 - y2) / den, -0.5, 0.5)) if den < 0 else 0.0


def envelope_lag(env_head, env_tail, max_shift: int):
    """Lag of ``env_tail`` against ``env_head`` by cross-correlation of the envelopes.

    ``env_tail`` is ``2 max_shift`` samples longer than ``env_head``; lag 0 is its centre. The
    lag maximises the plain cross-correlation (so the match must carry the energy: a weak
    stretch of the same shape does not win), refined by a parabola through its neighbours.
    Returns ``(lag, rho, inside)``: the lag in samples, the correlation coefficient there
    (normalised by both segments' energies, for the significance test), and whether the best
    lag lies strictly inside ``[-max_shift, max_shift]`` (on the edge the true one may be beyond).
    """
    h = np.asarray(env_head, dtype=float)
    t = np.asarray(env_tail, dtype=float)
    num = scipy.signal.correlate(t, h, mode="valid")
    k = int(np.argmax(num))
    frac = _parabolic_offset(num, k)
    seg = t[k:k + h.size]
    rho = num[k] / max(float(np.linalg.norm(h) * np.linalg.norm(seg)), 1e-300)
    return k - max_shift + frac, float(rho), bool(0 < k < num.size - 1)


def _preamble_snr(r, k0: float, sync_head, sps: int) -> float:
    """SNR seen by the preamble at peak ``k0`` (residual ISI counts as noise: a conservative floor)."""
    n0c = int(round(k0))
    seg = r[n0c:n0c + sps * len(sync_head):sps]
    if seg.size != len(sync_head):
        return 1.0
    hs = np.asarray(sync_head)
    gain = np.vdot(hs, seg) / np.vdot(hs, hs)
    return float(abs(gain) ** 2 / max(np.mean(np.abs(seg - gain * hs) ** 2), 1e-300))


def _candidates(c, hi: int, guard: int, n: int) -> list[int]:
    """The ``n`` strongest peaks of ``|c[:hi]|`` at least ``guard`` samples apart."""
    env = np.abs(c[:max(int(hi), 1)]).copy()
    out = []
    for _ in range(n):
        k = int(np.argmax(env))
        if env[k] <= 0:
            break
        out.append(k)
        env[max(k - guard, 0):k + guard + 1] = 0.0
    return out


def measure_doppler(r, c_head, k0: float, sync_tail, sps: int, nominal: int, window: tuple[int, int],
                    max_doppler: float) -> tuple[float | None, str]:
    """Time scale of the frame from the head and tail correlation envelopes (module docstring).

    ``window = (pre, post)``: the envelope samples kept before and after the head peak ``k0``
    (the arrival cluster). Returns ``(a, "")`` or ``(None, reason)``.
    """
    pre, post = window
    max_shift = int(math.ceil(nominal * max_doppler / max(1.0 - max_doppler, 1e-9))) + 1
    c_tail = correlate_sequence(r, sync_tail, sps)
    h0 = int(round(k0)) - pre
    lo = h0 - max_shift
    if h0 < 0:
        pre += h0
        h0, lo = 0, -max_shift
    head = np.abs(c_head[h0:h0 + pre + post + 1])
    lo_t, hi_t = lo + nominal, lo + nominal + head.size + 2 * max_shift
    if lo_t < 0 or hi_t > c_tail.size or head.size < 3:
        return None, "tail marker outside the received block"
    up = max(1, _ENVELOPE_SAMPLES // sps)  # the envelope's fine structure needs more than T/2
    if up > 1:
        head = np.abs(scipy.signal.resample_poly(c_head[h0:h0 + pre + post + 1], up, 1))
        tail = np.abs(scipy.signal.resample_poly(c_tail[lo_t:hi_t], up, 1))
        head, tail = head[:(pre + post) * up + 1], tail[:(pre + post + 2 * max_shift) * up + 1]
    else:
        tail = np.abs(c_tail[lo_t:hi_t])
    lag, rho, inside = envelope_lag(head, tail, max_shift * up)
    if rho < ENVELOPE_MIN_CORRELATION:
        # the cluster changed over the frame (a fading surface path beside a steady one): follow
        # the first significant arrival alone, which is the steadiest (direct or refracted path)
        first = _first_arrival_window(head, sps * up)
        if first is not None:
            a0, a1 = first
            lag1, rho1, inside1 = envelope_lag(head[a0:a1], tail[a0:a1 + 2 * max_shift * up], max_shift * up)
            if rho1 >= ENVELOPE_MIN_CORRELATION:
                lag, rho, inside = lag1, rho1, inside1
    lag /= up
    if rho < ENVELOPE_MIN_CORRELATION:
        return None, f"head and tail envelopes differ (correlation {rho:.2f})"
    if not inside:
        return None, "time scale at the bound of what the site can produce"
    return nominal / (nominal + lag) - 1.0, ""


def _first_arrival_window(env, half_width: int):
    """Sample span ``(start, stop)`` of the first arrival in an envelope: around the first sample
    within 6 dB (in amplitude, half) of the largest, ``half_width`` samples each side (a pulse's
    main lobe); None when that is not a shorter span than the whole envelope."""
    env = np.asarray(env, dtype=float)
    if env.size == 0 or not np.isfinite(env).all() or env.max() <= 0:
        return None
    i = int(np.argmax(env >= 0.5 * env.max()))
    # climb to the local peak of that arrival
    while i + 1 < env.size and env[i + 1] > env[i]:
        i += 1
    a0, a1 = max(0, i - half_width), min(env.size, i + half_width + 1)
    return (a0, a1) if (a1 - a0 >= 3 and a1 - a0 < env.size) else None


def coarse_doppler(r, training, sps: int, hi: float, a_max: float, sample_rate_hz: float,
                   carrier_hz: float) -> tuple[float, float]:
    """Coarse time scale from the carrier shift it gives the training: ``(a, step)``, the scale
    (0 when none is significant) and the grid step, the resolution the fine estimate refines within.

    The matched-filter output ``r`` is derotated by ``exp(-j 2 pi a fc n / fs)`` for candidate
    scales on a grid inside ``[-a_max, a_max]`` (module constants), the correlation peak power
    of the first ``n`` training symbols is found for each in ``[0, hi)``, and the best is
    refined by a parabola through its neighbours. The longer the sequence the finer the grid:
    ``n`` is the whole training, at least the preamble, but at most what keeps the grid to
    ``COARSE_MAX_CANDIDATES`` each side. Over the sequence the time scale moves the symbols by
    far less than one, so only the rotation matters here (Li et al. 2008: the carrier shift of
    the wideband model is ``a fc``).
    """
    rs = sample_rate_hz / sps
    longest = COARSE_MAX_CANDIDATES * COARSE_STEP_CYCLES * rs / (carrier_hz * max(a_max, 1e-12))
    n_seq = int(np.clip(longest, SYNC_FOR_COARSE, len(training)))
    sync_head = np.asarray(training)[:n_seq]
    step = COARSE_STEP_CYCLES * rs / (n_seq * carrier_hz)
    k_max = int(math.floor(a_max / step))
    if k_max < 1:
        return 0.0, step
    grid = np.arange(-k_max, k_max + 1) * step
    n = np.arange(r.size)
    power = np.empty(grid.size)
    for i, a in enumerate(grid):
        c = correlate_sequence(r * np.exp(-2j * np.pi * a * carrier_hz * n / sample_rate_hz), sync_head, sps)
        _, v = _peak(c, 0, hi)
        power[i] = abs(v) ** 2
    best = int(np.argmax(power))
    if not power[best] >= COARSE_MIN_GAIN * power[k_max]:
        return 0.0, step
    frac = _parabolic_offset(power, best)
    return float(np.clip(grid[best] + frac * step, -a_max, a_max)), step


def derotation(q_first, q_second, gap_symbols: float, snr: float, n_symbols: int) -> float:
    """Residual carrier offset (rad per symbol) from two channel estimates ``gap_symbols`` apart,
    or 0 when it is not significant: the angle of ``<q1, q2>`` has a standard deviation of about
    ``1 / sqrt(n snr)`` per estimate (Kay 1993, ch. 3, phase estimation, from memory), and it is
    used only beyond ``DOPPLER_SIGNIFICANCE`` of those (both estimates' noise)."""
    c = np.vdot(q_first, q_second)
    if not abs(c) > 0:
        return 0.0
    dphi = float(np.angle(c))
    sigma = math.sqrt(2.0 / max(n_symbols * snr, 1e-3))
    return dphi / gap_symbols if abs(dphi) > DOPPLER_SIGNIFICANCE * sigma else 0.0


def synchronise(y, *, rolloff, sps, sync_head, sync_tail, training, n_frame_symbols,
                n_pre, n_post, sample_rate_hz, carrier_hz, track_doppler=True,
                max_doppler=DEFAULT_MAX_DOPPLER, spread_samples=None) -> Sync:
    """Matched filter, detection, Doppler estimate and compensation, T/2 decimation, estimate.

    Parameters
    ----------
    y : complex array
        Received baseband samples at ``sps`` per symbol (frame somewhere inside).
    sync_head, sync_tail : complex arrays
        The detection preamble (first training symbols) and the tail marker.
    training : complex array
        All training symbols (for the channel estimate).
    n_frame_symbols : int
        Symbols from the first preamble symbol to the first tail-marker symbol.
    n_pre, n_post : int
        Channel estimate extent before and after the strongest arrival, T/2 samples.
    max_doppler : float
        Largest time scale |a| the site can produce (platform speeds and the surface over the
        sound speed); the search is bounded by it (capped at ``MAX_DOPPLER_FACTOR``).
    spread_samples : int, optional
        Multipath spread at ``sps`` samples per symbol: the envelope window either side of
        the preamble peak (default from ``n_pre`` and ``n_post``).
    """
    half = sps // 2
    a_max = float(np.clip(max_doppler, 0.0, MAX_DOPPLER_FACTOR))
    spread = int(spread_samples) if spread_samples is not None else (n_pre + n_post) * half
    window = (spread + 2 * sps, spread + 2 * sps)
    nominal = n_frame_symbols * sps
    r = matched_filter(y, rolloff, sps)
    c = correlate_sequence(r, sync_head, sps)
    hi_head = c.size - nominal * (1 - a_max)
    k_first, _ = _peak(c, 0, hi_head)
    if k_first is None:
        k_first, _ = _peak(c, 0, c.size)
    k0 = k_first if k_first is not None else 0.0
    doppler = 0.0
    note = ""
    if track_doppler and k_first is not None and a_max > 0:
        floor = DOPPLER_SIGNIFICANCE * doppler_floor(rolloff, len(sync_head), _preamble_snr(r, k0, sync_head, sps),
                                                     n_frame_symbols)
        # two passes: after the first compensation head and tail sit at the same fractional
        # sample offset, so the bias of the parabolic refinement cancels in the second estimate
        y0 = y

        def compensated(a):
            # the frame resampled by the time scale a, filtered, and its preamble peak again
            y_a = time_scale(y0, a, sample_rate_hz, carrier_hz, inverse=True)
            r_a = matched_filter(y_a, rolloff, sps)
            c_a = correlate_sequence(r_a, sync_head, sps)
            k_a, _ = _peak(c_a, 0, hi_head)
            return y_a, r_a, c_a, 0.0 if k_a is None else k_a

        # a platform's carrier shift can rotate the preamble by a cycle or more and wipe out
        # the peaks the fine estimate reads: acquire it coarsely first (the significance test
        # of the coarse step is its own, the fine one then refines from there)
        a0, a_res = coarse_doppler(r, training, sps, hi_head, a_max, sample_rate_hz, carrier_hz)
        if a0:
            doppler = a0
            y, r, c, k0 = compensated(a0)
            floor = DOPPLER_SIGNIFICANCE * doppler_floor(rolloff, len(sync_head),
                                                         _preamble_snr(r, k0, sync_head, sps), n_frame_symbols)
        for _ in range(3 if a0 else 2):
            a_step, why = measure_doppler(r, c, k0, sync_tail, sps, nominal, window, a_max)
            if a_step is None:
                if doppler == 0.0:
                    note = why
                break
            a = (1.0 + doppler) * (1.0 + a_step) - 1.0
            if abs(a) > a_max:
                note = "" if doppler else "time scale beyond what the site can produce"
                break
            if doppler == 0.0 and abs(a) < floor:
                note = "time scale below its noise floor"
                break
            if abs(a_step) < 1e-7 or (a0 and abs(a_step) < floor):
                break
            if a0 and abs(a - a0) > a_res:
                # beyond the coarse estimate's resolution: the envelopes matched different
                # arrivals (the surface moved them), keep the coarse scale
                break
            doppler = a
            y, r, c, k0 = compensated(a)
    # detection, and resynchronisation on the next candidate peaks when the training is not
    # where the strongest peak says
    best = None
    tried = 0
    for cand in [int(round(k0))] + [k for k in _candidates(c, hi_head, 2 * window[0], RESYNC_CANDIDATES + 1)
                                    if abs(k - k0) > window[0]][:RESYNC_CANDIDATES]:
        res = _acquire(r, cand, training, sps, n_pre, n_post)
        if best is None or res[5] > best[5]:
            best = res
        if res[6]:
            best = res
            break
        tried += 1
    stream, start, q, nv, g, snr_fit, detected = best
    freq = 0.0
    if detected:
        stream /= g
        q = q / g
        nv = nv / abs(g) ** 2
        freq = _frequency_offset(stream, start, training, n_pre, n_post, snr_fit)
        if freq:
            stream *= np.exp(-1j * freq * (np.arange(stream.size) - start) / 2.0)
    return Sync(stream, start, q, n_pre, nv, doppler, detected, note, tried if detected else tried - 1,
                snr_fit, freq)


def _acquire(r, n0: int, training, sps: int, n_pre: int, n_post: int):
    """Timing refined on the whole training around peak ``n0``, T/2 decimation and the LS fit."""
    half = sps // 2
    # more correlation gain than the preamble alone: the 64-symbol peak can pick a
    # neighbouring sample (T/sps off) at low SNR
    ref = correlate_sequence(r[max(n0 - sps, 0):], training, sps)
    if ref.size:
        n0 = max(n0 - sps, 0) + int(np.argmax(np.abs(ref[:2 * sps + 1])))
    phase = n0 % half
    stream = r[phase::half].copy()
    start = (n0 - phase) // half
    q, nv, snr_fit, detected = estimate_channel(stream, start, training, n_pre, n_post, full=True)
    g = q[n_pre]
    return stream, start, q, nv, g, snr_fit, detected and bool(abs(g) > 0)


def _frequency_offset(stream, start: int, training, n_pre: int, n_post: int, snr: float) -> float:
    """Carrier offset left after the time scale (rad per symbol), from the channel estimated on
    each half of the training (:func:`derotation`); the PLL then starts near lock."""
    x = np.asarray(training)
    h = x.size // 2
    if h < 2 * (n_pre + n_post + 1):  # each half must determine its estimate well
        return 0.0
    q1, _ = estimate_channel(stream, start, x[:h], n_pre, n_post)
    q2, _ = estimate_channel(stream[2 * h:], start, x[h:2 * h], n_pre, n_post)
    return derotation(q1, q2, float(h), snr, h)
