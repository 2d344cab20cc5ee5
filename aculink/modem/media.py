"""What the modem needs from a channel, for either kind of channel it accepts.

``simulate_link`` and ``predict_link`` take a :class:`aculink.channel.Channel` (a site's
multipath over a passband, with a link budget or a band SNR) or a plain array of
symbol-spaced complex taps (a discrete ISI channel such as the Proakis test channels, with
``snr_db`` meaning Es/sigma^2, sigma^2 the noise variance per symbol-spaced sample; the taps
are used as given, not renormalised). This module turns either into the same few things: the
T/2 (and T/4) matched-filtered response, the noise autocorrelation at T/2, the folded SNR,
the water-filling capacity, and a way to send a waveform through the channel with noise.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from aculink.errors import AculinkError, check_range
from aculink.modem.analytic import folded_snr_from_taps, water_filling
from aculink.modem.pulses import filter_pulse, raised_cosine, raised_cosine_spectrum

__all__ = ["is_channel", "TapMedium", "ChannelMedium", "cached_medium", "make_medium"]


class _Memo(dict):
    """A per-object cache that pickles empty (a channel sent to a worker does not carry it)."""

    def __reduce__(self):
        return (_Memo, ())

    def get_or(self, key, func):
        if key not in self:
            self[key] = func()
        return self[key]


def is_channel(obj) -> bool:
    return hasattr(obj, "delay_s") and hasattr(obj, "transfer_function")


class TapMedium:
    """A symbol-spaced tap list with white noise at ``Es/sigma^2 = snr``."""

    kind = "taps"

    def __init__(self, taps, snr_db, *, doppler=0.0, carrier_hz=None):
        h = np.atleast_1d(np.asarray(taps, dtype=complex))
        if h.ndim != 1 or h.size < 1 or not np.all(np.isfinite(h)) or not np.any(h != 0):
            raise AculinkError("channel taps: expected a non-empty 1-D array of finite complex gains, not all zero")
        if snr_db is None:
            raise AculinkError("snr_db = None: a tap-list channel needs snr_db (Es/N0, dB)")
        self.taps = h
        self.snr_db = check_range("snr_db", snr_db, -30.0, 80.0, unit="dB")
        self.noise_var = 10 ** (-self.snr_db / 10)
        self.doppler = check_range("doppler", doppler, -0.01, 0.01)
        if self.doppler and carrier_hz is None:
            raise AculinkError("carrier_hz = None: a Doppler time scale on a tap list needs the carrier frequency")
        self.carrier_hz = None if carrier_hz is None else check_range("carrier_hz", carrier_hz, 0.0, None, low_open=True, unit="Hz")
        self.snr_in_db = self.snr_db
        self._memo = _Memo()

    def memo(self, key, func):
        """Cache of quantities that do not depend on the receiver (for this medium's life)."""
        return self._memo.get_or(key, func)

    def check_rate(self, rs, beta):
        return None

    def response(self, rs, beta, sps):
        """Matched-filtered response at T/sps: ``q[m] = sum_k h_k c(m/sps - k)``.

        ``c`` is the overall pulse of the simulator's truncated RRC filters
        (:func:`aculink.modem.pulses.filter_pulse`); ``q[0]`` lies ``c``'s half-length before tap 0.
        """
        c, _ = filter_pulse(beta, sps)
        h_up = np.zeros((self.taps.size - 1) * sps + 1, dtype=complex)
        h_up[::sps] = self.taps
        return np.convolve(h_up, c)

    def pulse_acf(self, beta, n_lags, sps=2):
        """Autocorrelation, at lags ``k T/sps``, of white noise through the receive filter (unit
        at lag 0): the same pulse as :meth:`response`, so the two describe one filter."""
        c, centre = filter_pulse(beta, sps)
        out = np.zeros(int(n_lags))
        m = min(out.size, c.size - centre)
        out[:m] = c[centre:centre + m]
        return out

    def noise_acf(self, rs, beta, n_lags, sps=2):
        return self.noise_var * self.pulse_acf(beta, n_lags, sps)

    def es_over_ref(self, rs):
        return 1.0

    def folded_snr(self, rs, beta, n_grid):
        """``snr |H(theta)|^2 C(theta)``, with ``C(theta) = sum_n c(nT) exp(-j n theta)`` the folded
        spectrum of the filters' overall pulse (1 for an ideal Nyquist pulse; Poisson summation)."""
        c, centre = filter_pulse(beta, 1)
        n = int(n_grid)
        theta = 2 * np.pi * np.arange(n) / n  # the grid of folded_snr_from_taps
        fold = np.real(np.exp(-1j * np.outer(theta, np.arange(c.size) - centre)) @ c)
        return folded_snr_from_taps(self.taps, 1.0 / self.noise_var, n) * np.maximum(fold, 0.0)

    def capacity_bps(self, rs, beta, n_grid=4096):
        bits, _ = water_filling(self.folded_snr(rs, beta, n_grid))
        return bits * rs

    def es_n0_db(self, rs, beta):
        return self.snr_db

    def propagate(self, x, sps, rs, seed):
        """Convolve with the taps at symbol spacing, apply the Doppler time scale, add noise."""
        h_up = np.zeros((self.taps.size - 1) * sps + 1, dtype=complex)
        h_up[::sps] = self.taps
        y = np.convolve(x, h_up)
        if self.doppler:
            from aculink.modem.frontend import time_scale

            y = time_scale(y, self.doppler, rs * sps, self.carrier_hz)
        rng = np.random.default_rng(seed)
        # unit-energy pulses: white noise of variance sigma^2 per sample gives Es/N0 = 1/sigma^2
        noise = (rng.standard_normal(y.size) + 1j * rng.standard_normal(y.size)) * math.sqrt(self.noise_var / 2)
        return y + noise

    def spread_s(self, rs):
        return (self.taps.size - 1) / rs

    def variation_noise(self, lag_s):
        return 0.0


class ChannelMedium:
    """A :class:`aculink.channel.Channel` with a link budget's coloured noise, or white noise
    at a given band SNR (received power over the noise power in the channel's band B)."""

    kind = "channel"

    def __init__(self, channel, budget=None, snr_db=None, *, time_varying=True):
        if channel.is_empty:
            reason = getattr(channel, "reason", "") or "no eigenray reaches the receiver"
            raise AculinkError(f"channel {channel.name!r} has no paths ({reason}): nothing to simulate")
        if budget is None and snr_db is None:
            raise AculinkError("budget = None and snr_db = None: give a link budget or snr_db (band SNR, dB)")
        # the receiver's clock starts at the first arrival: only relative delays matter
        self.channel = dataclasses.replace(channel, delay_s=channel.delay_s - channel.delay_s.min())
        self._setup_variation(time_varying)
        self.budget = budget
        self.carrier_hz = float(channel.carrier_hz)
        self.bandwidth_hz = float(channel.bandwidth_hz)
        self.time_varying = bool(time_varying)
        fc, b = self.carrier_hz, self.bandwidth_hz
        self._memo = _Memo()
        if snr_db is not None:
            grid = np.linspace(fc - b / 2, fc + b / 2, 513)
            h2_band = np.abs(self.design.transfer_function(grid).values) ** 2
            self.snr_db = check_range("snr_db", snr_db, -30.0, 80.0, unit="dB")
            self.source_power = 1.0
            # band SNR = P mean|H|^2 / (N0 B): white N0 over the band
            self.n0 = self.source_power * float(np.mean(h2_band)) / (10 ** (self.snr_db / 10) * b)
            self.snr_in_db = self.snr_db
        else:
            self.snr_db = None
            self.source_power = 10 ** (budget.source_level_db / 10)
            self.n0 = None
            self.snr_in_db = float(budget.snr_band_db)

    def _setup_variation(self, time_varying):
        """Mean-power channel and per-path fluctuation for a time-varying channel.

        The channel stage's surface model (``Channel.fluctuation``) keeps a surface path's
        coherent part steady and gives its scattered sub-paths zero-mean gains (steady fraction 0)
        with their rms Doppler width; paths with another Doppler factor than the strongest turn
        against it at ``(a_p - a_0) fc``. Predictions use the mean-power channel (``design``)
        and charge the part of the fluctuation a receiver cannot follow as noise
        (:meth:`variation_noise`).
        """
        ch = self.channel
        self.design = ch
        self._fluct = None
        if not (time_varying and ch.is_time_varying):
            return
        # the channel stage's per-path model: steady (coherent) paths, zero-mean scattered sub-paths
        fl = ch.fluctuation
        power = np.mean(np.abs(ch.gain) ** 2, axis=1)
        strongest = int(np.argmax(power))
        self._fluct = dict(power=power, steady=np.asarray(fl.steady_fraction, dtype=float),
                           spread_hz=np.asarray(fl.doppler_spread_hz, dtype=float),
                           offset_hz=(ch.doppler - ch.doppler[strongest]) * ch.carrier_hz)

    def variation_noise(self, lag_s: float) -> float:
        """Power (response units, times Es) of the channel change a receiver misses over ``lag_s``.

        ``sum_p P_p min(1, 2 (1 - rho_p))`` with ``rho_p = [s_p + (1 - s_p) exp(-2 pi^2 nu_p^2 lag^2)]
        cos(2 pi df_p lag)``: the error of using the path gain ``lag`` old (Gaussian Doppler
        spectrum of rms width nu_p, steady fraction s_p, frequency offset df_p). Our own
        approximation (no source); it is what makes predictions on a rough sea pessimistic
        enough to match the simulation.
        """
        if self._fluct is None:
            return 0.0
        f = self._fluct
        tau = float(lag_s)
        rho = (f["steady"] + (1 - f["steady"]) * np.exp(-2 * np.pi ** 2 * f["spread_hz"] ** 2 * tau ** 2)) * np.cos(
            2 * np.pi * f["offset_hz"] * tau)
        return float(np.sum(f["power"] * np.minimum(1.0, 2.0 * (1.0 - rho))))

    def noise_psd(self, freq_hz):
        """Noise PSD (linear, uPa^2/Hz or the white level) at passband ``freq_hz``."""
        f = np.asarray(freq_hz, dtype=float)
        if self.n0 is not None:
            return np.full(f.shape, self.n0)
        return 10 ** (np.asarray(self._noise_db(f), dtype=float) / 10)

    def _noise_db(self, freq_hz):
        # the budget's NL(f) is before the receiver's directivity index, which the sonar
        # equation adds to the SNR: the noise the receiver sees is NL(f) - DI
        return np.asarray(self.budget.noise_psd_db(freq_hz), dtype=float) - self.budget.directivity_index_db

    def memo(self, key, func):
        """Per-channel cache of quantities that do not depend on the receiver."""
        return self._memo.get_or(key, func)

    def pulse_acf(self, beta, n_lags, sps=2):
        """Autocorrelation at lags ``k T/sps`` of white noise through the receive filter (unit at
        lag 0): the exact raised cosine, as the response (:meth:`response`) is exact too."""
        return raised_cosine(np.arange(int(n_lags)) / sps, beta)

    def check_rate(self, rs, beta):
        b = self.bandwidth_hz
        if rs * (1 + beta) > b * (1 + 1e-9):
            raise AculinkError(
                f"symbol_rate_baud = {rs:g} Bd with rolloff {beta:g} occupies Rs(1+rolloff) = {rs * (1 + beta):g} Hz "
                f"> bandwidth {b:g} Hz: allowed range is (0, {b / (1 + beta):g}] Bd")

    def response(self, rs, beta, sps):
        taps = self.design.symbol_taps(rs, beta, sps).taps
        return np.asarray(taps, dtype=complex)

    def _baseband(self, rs, beta, n=2049):
        f = np.linspace(-0.5 * rs * (1 + beta), 0.5 * rs * (1 + beta), n)
        return f, raised_cosine_spectrum(f / rs, beta) / rs  # |G(f)|^2 of a unit-energy RRC

    def noise_acf(self, rs, beta, n_lags, sps=2):
        """``R[m] = int N(fc + f) |G(f)|^2 exp(j 2 pi f m T/sps) df`` (matched-filter output)."""
        from aculink.channel.response import fourier_sum

        f, g2 = self._baseband(rs, beta)
        n = self.noise_psd(self.carrier_hz + f) * g2
        # the trapezoid rule as weights, summed by rotation (one complex multiply per term)
        w = np.zeros(f.size)
        w[:-1] += np.diff(f) / 2.0
        w[1:] += np.diff(f) / 2.0
        return fourier_sum(n * w, f, np.arange(n_lags) / (sps * rs))

    def es_over_ref(self, rs):
        """Symbol energy ``P_tx T`` (the response is in pressure re 1 m per unit amplitude)."""
        return self.source_power / rs

    def folded_snr(self, rs, beta, n_grid):
        """``gamma(f) = sum_k P_tx |G(f - k Rs)|^2 |H(fc + f - k Rs)|^2 / N(fc + f - k Rs)``."""
        f = (np.arange(n_grid) / n_grid - 0.5) * rs
        ks = (-1, 0, 1)
        fa = np.concatenate([f + k * rs for k in ks])
        g2 = raised_cosine_spectrum(fa / rs, beta) / rs
        use = g2 > 0
        h = np.zeros(fa.size, dtype=complex)
        h[use] = self.design.transfer_function(self.carrier_hz + fa[use]).values
        dens = np.zeros(fa.size)
        dens[use] = self.source_power * g2[use] * np.abs(h[use]) ** 2 / self.noise_psd(self.carrier_hz + fa[use])
        return dens.reshape(len(ks), n_grid).sum(axis=0)

    def capacity_bps(self, rs=None, beta=None, n_grid=1024):
        """Water-filling capacity over the channel's band with the source power, bits/s."""
        fc, b = self.carrier_hz, self.bandwidth_hz
        f = fc - b / 2 + (np.arange(n_grid) + 0.5) * b / n_grid
        h2 = np.abs(self.design.transfer_function(f).values) ** 2
        gamma = self.source_power * h2 / (self.noise_psd(f) * b)
        bits, _ = water_filling(gamma)
        return bits * b

    def es_n0_db(self, rs, beta):
        """Received Es/N0 at the strongest-arrival-free reference: P_tx T mean|H|^2 / mean N."""
        f, g2 = self._baseband(rs, beta)
        h2 = np.abs(self.design.transfer_function(self.carrier_hz + f).values) ** 2
        s = self.source_power * np.trapezoid(g2 * h2, f) / rs
        n = np.trapezoid(g2 * self.noise_psd(self.carrier_hz + f), f)
        return 10 * np.log10(s / n)

    def propagate(self, x, sps, rs, seed):
        from aculink.channel import apply_channel, colored_noise

        fs = rs * sps
        ss = np.random.SeedSequence(seed)
        s_ch, s_noise = (int(s.generate_state(1)[0]) for s in ss.spawn(2))
        amp = math.sqrt(self.source_power * sps)  # unit-energy pulses carry power 1/sps
        y = amp * np.asarray(apply_channel(self.channel, x, fs, time_varying=self.time_varying, seed=s_ch))
        if self.n0 is not None:
            rng = np.random.default_rng(s_noise)
            noise = (rng.standard_normal(y.size) + 1j * rng.standard_normal(y.size)) * math.sqrt(self.n0 * fs / 2)
        else:
            noise = np.asarray(colored_noise(y.size, fs, self.carrier_hz, self._noise_db, s_noise))
        return y + noise

    def spread_s(self, rs):
        return float(self.channel.delay_s.max() - self.channel.delay_s.min())


def cached_medium(channel, budget=None, snr_db=None, *, time_varying=True):
    """The medium of ``channel``, kept on the channel object itself (a Channel) or built anew (a
    tap list, cheap): asking about many candidates on one channel sets it up once, and the cache
    goes when the channel goes, so nothing needs clearing."""
    if not is_channel(channel):
        return make_medium(channel, budget, snr_db, time_varying=time_varying)
    memo = channel.__dict__.get("_modem_media")
    if memo is None:
        memo = _Memo()
        object.__setattr__(channel, "_modem_media", memo)  # a cache, not a field of the frozen Channel
    key = (id(budget), snr_db, bool(time_varying))
    hit = memo.get(key)
    if hit is not None and hit[0] is budget:
        return hit[1]
    medium = make_medium(channel, budget, snr_db, time_varying=time_varying)
    memo[key] = (budget, medium)
    return medium


def make_medium(channel, budget=None, snr_db=None, *, doppler=0.0, carrier_hz=None, time_varying=True):
    """A :class:`ChannelMedium` for a Channel, a :class:`TapMedium` for an array of taps."""
    if is_channel(channel):
        if doppler:
            raise AculinkError("doppler: a Channel carries its own per-path Doppler; the doppler option is for tap lists")
        return ChannelMedium(channel, budget, snr_db, time_varying=time_varying)
    if budget is not None:
        raise AculinkError("budget: a tap-list channel takes snr_db (Es/N0), not a link budget")
    return TapMedium(channel, snr_db, doppler=doppler, carrier_hz=carrier_hz)
