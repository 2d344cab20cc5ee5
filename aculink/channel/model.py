"""The baseband channel a modem sees: a sparse list of paths over the modem band.

A :class:`Channel` keeps, for every path p, its absolute delay ``tau_p``, its complex transfer
value ``gain_p(f)`` on a passband grid over [fc - B/2, fc + B/2] *without* the delay phase, its
Doppler factor ``a_p`` and its bounce history. The passband transfer function is

    H(f) = sum_p gain_p(f) exp(-j 2 pi f tau_p),

and the complex-baseband equivalent (x_pass = Re{x exp(+j 2 pi fc t)}) of the same channel is
``H_bb(f) = H(fc + f)``. Dense responses are derived on demand and only around each path, so a
channel spanning thousands of samples with hundreds of paths stays cheap.

Between the grid frequencies a path's gain is interpolated linearly in f (absorption and
boundary losses are smooth across a modem band); outside the band it is held at the edge value.

References
----------
J. G. Proakis and M. Salehi, Digital Communications, 5th ed. (2008), ch. 13: the multipath
channel c(tau; t) = sum_n alpha_n(t) exp(-j 2 pi fc tau_n(t)) delta(tau - tau_n(t)) (memory).
M. Stojanovic and J. Preisig, IEEE Commun. Mag. 47(1), 84-89 (2009): per-path transfer functions
of the acoustic channel (memory for details).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import NamedTuple

import numpy as np
import xarray as xr

from aculink.channel import response as _resp
from aculink.channel.pulses import raised_cosine_spectrum
from aculink.channel.variation import SurfaceMotion, doppler_factors, scattered_doppler_spread_hz
from aculink.errors import AculinkError, check_range

__all__ = ["IMPULSE_RESPONSE_ROLLOFF", "Fluctuation", "SymbolTaps", "Channel", "channel_for_site"]

#: Roll-off of the band taper used by :meth:`Channel.impulse_response` (flat over the band).
IMPULSE_RESPONSE_ROLLOFF = 0.25


class Fluctuation(NamedTuple):
    """Time-variation model of each path (see :attr:`Channel.fluctuation`)."""

    steady_fraction: np.ndarray
    doppler_spread_hz: np.ndarray
    gamma2: np.ndarray


class SymbolTaps(NamedTuple):
    """Sampled pulse-shaped channel: ``taps[k]`` is at delay ``first_delay_s + k * spacing``."""

    taps: np.ndarray
    first_delay_s: float


def _check_band(carrier_hz, bandwidth_hz):
    fc = check_range("carrier_hz", carrier_hz, 0.0, None, low_open=True, unit="Hz")
    b = check_range("bandwidth_hz", bandwidth_hz, 0.0, None, low_open=True, unit="Hz")
    if fc - b / 2.0 <= 0.0:
        raise AculinkError(f"bandwidth_hz = {b:g} Hz reaches below 0 Hz at carrier_hz = {fc:g} Hz: "
                           f"allowed range is (0, {2 * fc:g}) Hz (fc - B/2 must be > 0)")
    return fc, b


class _ResponseCache(dict):
    """Last few transfer functions of one Channel, keyed by their frequency grid's bytes.

    Pickles empty (a channel sent to a worker does not carry it) and is not copied by
    ``dataclasses.replace`` (a new channel starts without it). Entries are limited in number and
    size, so a long-lived channel asked for many grids holds a few MB at most.
    """

    MAX_ENTRIES = 8
    MAX_POINTS = 1 << 16

    def __reduce__(self):
        return (_ResponseCache, ())

    def put(self, key, value):
        if value.size > self.MAX_POINTS:
            return
        while len(self) >= self.MAX_ENTRIES:
            # oldest first; pop with a default so threads sharing a channel cannot trip each other
            self.pop(next(iter(self), None), None)
        self[key] = value


@dataclass(frozen=True, eq=False)
class Channel:
    """Sparse multipath channel over a modem band (see the module docstring).

    Attributes
    ----------
    delay_s : (P,) absolute delays, sorted.
    freq_hz : (F,) passband frequency grid over the band (F >= 1; F = 1 means flat gains).
    gain : (P, F) complex path transfer values without the delay phase (pressure re 1 m).
    doppler : (P,) Doppler factors a_p (tau_p(t) = tau_p - a_p t).
    surface_bounces, bottom_bounces : (P,) int.
    surface_grazing_sin2_sum : (P,) sum of sin^2 of surface grazing angles.
    surface_doppler_spread_hz : (P,) RMS Doppler width of a scattered path's random gain (0 for
        steady paths; computed from the surface when not given).
    scattered : (P,) bool: the path is a sub-path of a rough-surface cluster
        (:mod:`aculink.channel.scatter`): zero-mean random gain of that mean power; the others
        are steady (coherent) paths.
    launch_angle_deg, arrival_angle_deg : (P,) ray angles (NaN when unknown).
    carrier_hz, bandwidth_hz : the band.
    surface : SurfaceMotion or None, for the random surface gains.
    name : str; ``geometry`` : dict of source/receiver depths and range (m), when known.
    """

    delay_s: np.ndarray
    freq_hz: np.ndarray
    gain: np.ndarray
    carrier_hz: float
    bandwidth_hz: float
    doppler: np.ndarray = None
    surface_bounces: np.ndarray = None
    bottom_bounces: np.ndarray = None
    surface_grazing_sin2_sum: np.ndarray = None
    surface_doppler_spread_hz: np.ndarray = None
    launch_angle_deg: np.ndarray = None
    arrival_angle_deg: np.ndarray = None
    surface: SurfaceMotion | None = None
    scattered: np.ndarray = None
    name: str = "channel"
    geometry: dict = field(default_factory=dict)
    reason: str = ""

    def __post_init__(self):
        fc, b = _check_band(self.carrier_hz, self.bandwidth_hz)
        delay = np.atleast_1d(np.asarray(self.delay_s, dtype=float))
        p = delay.size
        freq = np.atleast_1d(np.asarray(self.freq_hz, dtype=float))
        gain = np.asarray(self.gain, dtype=complex).reshape(p, freq.size)
        if not np.all(np.isfinite(delay)) or np.any(delay < 0):
            raise AculinkError("delay_s: delays must be finite and >= 0 s")
        if not np.all(np.isfinite(gain)):
            raise AculinkError("gain: path gains must be finite")
        if freq.size > 1 and np.any(np.diff(freq) <= 0):
            raise AculinkError("freq_hz: the frequency grid must increase")

        def per_path(name, default, dtype=float):
            value = getattr(self, name)
            if value is None:
                return np.full(p, default, dtype=dtype)
            arr = np.atleast_1d(np.asarray(value, dtype=dtype))
            if arr.size != p:
                raise AculinkError(f"{name} has {arr.size} values but there are {p} paths: they must match")
            if dtype is float and np.any(np.isinf(arr)):
                raise AculinkError(f"{name} must be finite")
            return arr

        order = np.argsort(delay, kind="stable")
        values = {
            "delay_s": delay,
            "freq_hz": freq,
            "gain": gain,
            "carrier_hz": fc,
            "bandwidth_hz": b,
            "doppler": per_path("doppler", 0.0),
            "surface_bounces": per_path("surface_bounces", 0, np.int64),
            "bottom_bounces": per_path("bottom_bounces", 0, np.int64),
            "surface_grazing_sin2_sum": per_path("surface_grazing_sin2_sum", 0.0),
            "launch_angle_deg": per_path("launch_angle_deg", np.nan),
            "arrival_angle_deg": per_path("arrival_angle_deg", np.nan),
            "scattered": per_path("scattered", False, bool),
        }
        if self.surface_doppler_spread_hz is None:
            values["surface_doppler_spread_hz"] = np.where(values["scattered"], scattered_doppler_spread_hz(
                values["surface_grazing_sin2_sum"], fc, self.surface), 0.0)
        else:
            values["surface_doppler_spread_hz"] = per_path("surface_doppler_spread_hz", 0.0)
        for key, val in values.items():
            if isinstance(val, np.ndarray) and key != "freq_hz" and val.shape[:1] == (p,):
                val = val[order]
            object.__setattr__(self, key, val)

    # ------------------------------------------------------------------ constructors
    @classmethod
    def from_taps(cls, delays_s, gains, carrier_hz, bandwidth_hz, *, freq_hz=None, doppler=None,
                  name="tap list"):
        """A channel from a tap list: delays (s) and complex gains (flat, or (P, F) on ``freq_hz``).

        Parameters
        ----------
        delays_s : (P,) array_like
            Absolute (or relative) delays, s, >= 0, finite.
        gains : (P,) or (P, F) array_like
            Complex gains without the delay phase (the channel adds exp(-j 2 pi f tau)).
        carrier_hz, bandwidth_hz : float
            The band; fc - B/2 > 0.
        freq_hz : (F,) array_like, optional
            Passband grid of the gains when they depend on frequency.
        doppler : (P,) array_like, optional
            Doppler factors a_p.

        Raises
        ------
        AculinkError
            For a band below 0 Hz, mismatched lengths, NaN or negative delays.
        """
        fc, b = _check_band(carrier_hz, bandwidth_hz)
        delays = np.atleast_1d(np.asarray(delays_s, dtype=float))
        g = np.asarray(gains, dtype=complex)
        if g.ndim == 0:
            g = g.reshape(1)
        if g.shape[0] != delays.size:
            raise AculinkError(f"gains has {g.shape[0]} rows but delays_s has {delays.size}: they must match")
        if g.ndim == 1:
            freq = np.array([fc])
            g = g[:, None]
        else:
            if freq_hz is None:
                raise AculinkError("freq_hz is required when gains has a frequency axis")
            freq = np.asarray(freq_hz, dtype=float)
            if freq.size != g.shape[1]:
                raise AculinkError(f"freq_hz has {freq.size} values but gains has {g.shape[1]} columns")
        return cls(delay_s=delays, freq_hz=freq, gain=g, carrier_hz=fc, bandwidth_hz=b,
                   doppler=doppler, name=name)

    @classmethod
    def from_arrivals(cls, arrivals, site, range_m=None, depth_m=None):
        """The channel at one receiver of an Arrivals dataset (see DEVELOPERS.md).

        Parameters
        ----------
        arrivals : xarray.Dataset
            From :func:`aculink.propagation.find_arrivals`, with dims range, depth, arrival,
            frequency; its frequency grid becomes the channel's (one frequency = flat gains).
        site : aculink.site.model.Site
            Gives the band, the platform speeds (Doppler) and the surface (random gains).
        range_m, depth_m : float, optional
            The receiver to pick (nearest grid point); default the site's receiver.

        Returns
        -------
        Channel
            With no paths (and ``reason``) when the receiver has no arrival.
        """
        r = site.receiver.range_m if range_m is None else float(range_m)
        z = site.receiver.depth_m if depth_m is None else float(depth_m)
        pick = {}
        if "range" in arrivals.dims:
            pick["range"] = int(np.argmin(np.abs(np.atleast_1d(arrivals["range"].values) - r)))
        if "depth" in arrivals.dims:
            pick["depth"] = int(np.argmin(np.abs(np.atleast_1d(arrivals["depth"].values) - z)))
        # one isel for both dimensions (each isel walks every variable of the dataset)
        sel = arrivals.isel(pick) if pick else arrivals
        r = float(sel["range"].values) if "range" in sel.coords else r
        z = float(sel["depth"].values) if "depth" in sel.coords else z
        delay = np.atleast_1d(sel["delay_s"].values).astype(float)
        valid = np.isfinite(delay)
        amp = np.asarray(sel["amplitude"].transpose("arrival", "frequency").values)[valid]
        freq = np.atleast_1d(np.asarray(sel["frequency"].values, dtype=float))

        def take(name, default):
            if name in sel:
                return np.atleast_1d(sel[name].values)[valid]
            return np.full(int(valid.sum()), default)

        launch = take("launch_angle_deg", np.nan).astype(float)
        arrive = take("arrival_angle_deg", np.nan).astype(float)
        if site.source.beam is not None or site.receiver.beam is not None:
            from aculink.site.transducer import path_gains

            amp = amp * path_gains(site, launch, arrive, freq, receiver_depth_m=z)
        c_s, c_r = site.water.profile.speed(np.array([site.source.depth_m, z]))
        c_top = float(site.water.profile.speed(np.array([0.0]))[0])
        with np.errstate(invalid="ignore"):
            a = doppler_factors(np.deg2rad(np.nan_to_num(launch)), np.deg2rad(np.nan_to_num(arrive)),
                                site.source.speed_mps, site.receiver.speed_mps, c_s, c_r)
        motion = SurfaceMotion(site.surface.rms_height_m, site.surface.wind_speed_mps, c_top)
        reason = "" if valid.any() else str(arrivals.attrs.get("reason", "no path reaches the receiver"))
        from aculink.channel.scatter import add_surface_scatter

        c_mean = float(np.mean(site.water.profile.speed(np.linspace(0.0, site.seabed.max_depth_m, 16))))
        return add_surface_scatter(cls(
            delay_s=delay[valid], freq_hz=freq, gain=amp, carrier_hz=site.modem.carrier_hz,
            bandwidth_hz=site.modem.bandwidth_hz, doppler=a,
            surface_bounces=take("surface_bounces", 0).astype(np.int64),
            bottom_bounces=take("bottom_bounces", 0).astype(np.int64),
            surface_grazing_sin2_sum=take("surface_grazing_sin2_sum", 0.0).astype(float),
            launch_angle_deg=launch, arrival_angle_deg=arrive, surface=motion, name=site.name,
            geometry={"source_depth_m": float(site.source.depth_m), "range_m": r,
                      "receiver_depth_m": z},
            reason=reason,
        ), sound_speed_mps=c_mean, keep_grazing_rad=_keep_angle(arrivals, site))

    # ------------------------------------------------------------------ basic properties
    @property
    def n_paths(self) -> int:
        return int(self.delay_s.size)

    @property
    def is_empty(self) -> bool:
        return self.delay_s.size == 0

    @property
    def is_time_varying(self) -> bool:
        """True when a path has a Doppler factor or a random (scattered) gain."""
        moving = bool(np.any(self.doppler != 0.0))
        rough = (self.surface is not None and self.surface.active
                 and bool(np.any(self.scattered & (self.surface_grazing_sin2_sum > 0))))
        return moving or rough

    @property
    def fluctuation(self) -> Fluctuation:
        """Per-path time-variation model for predictions: steady fraction and Doppler width.

        Steady (coherent) paths: fraction 1, width 0. Scattered sub-paths: fraction 0 (zero-mean
        gain) and the rms width ``surface_doppler_spread_hz``; the gain's correlation at a lag is
        :func:`aculink.channel.variation.scattered_correlation` of ``gamma2`` and the elevation
        correlation of ``surface``.
        """
        from aculink.channel.variation import surface_phase_std

        live = self.scattered & (self.surface_grazing_sin2_sum > 0)
        if self.surface is None or not self.surface.active:
            live = np.zeros(self.n_paths, bool)
            gamma2 = np.zeros(self.n_paths)
        else:
            gamma2 = np.where(live, surface_phase_std(self.surface_grazing_sin2_sum, self.carrier_hz,
                                                      self.surface) ** 2, 0.0)
        return Fluctuation(np.where(live, 0.0, 1.0), np.where(live, self.surface_doppler_spread_hz, 0.0),
                           gamma2)

    @property
    def labels(self) -> list[str]:
        """Bounce history of each path, e.g. ``'S1B2'`` (``'D'`` for the direct path)."""
        out = []
        for s, b in zip(self.surface_bounces, self.bottom_bounces):
            text = (f"S{s}" if s else "") + (f"B{b}" if b else "")
            out.append(text or "D")
        return out

    def gain_at(self, freq_hz):
        """Path gains (P, Q) at passband ``freq_hz`` (linear in f, held outside the grid)."""
        return _resp.interpolate_gain(self.gain, self.freq_hz, np.atleast_1d(freq_hz))

    def band_grid(self, n=257):
        """``n`` passband frequencies spanning [fc - B/2, fc + B/2], Hz."""
        return np.linspace(self.carrier_hz - self.bandwidth_hz / 2, self.carrier_hz + self.bandwidth_hz / 2, n)

    def subset(self, index):
        """A channel with only the paths ``index`` (e.g. a boolean mask)."""
        idx = np.arange(self.n_paths)[index]
        per = ("delay_s", "doppler", "surface_bounces", "bottom_bounces", "surface_grazing_sin2_sum",
               "surface_doppler_spread_hz", "launch_angle_deg", "arrival_angle_deg", "scattered")
        kw = {k: getattr(self, k)[idx] for k in per}
        return replace(self, gain=self.gain[idx], **kw)

    # ------------------------------------------------------------------ responses
    def transfer_function(self, freq_hz=None):
        """H(f) = sum_p gain_p(f) exp(-j 2 pi f tau_p) at passband ``freq_hz``.

        Parameters
        ----------
        freq_hz : array_like, optional
            Passband frequencies, Hz (default: 257 points across the band).

        Returns
        -------
        xarray.DataArray
            Complex, dim ``frequency``; pressure re 1 m from the source per unit source pressure.
        """
        f = self.band_grid() if freq_hz is None else np.atleast_1d(np.asarray(freq_hz, dtype=float))
        if self.is_empty:
            h = np.zeros(f.shape, dtype=complex)
        else:
            h = self._transfer_values(f)
        return xr.DataArray(h, dims="frequency", coords={"frequency": ("frequency", f, {"units": "Hz", "long_name": "frequency"})},
                            name="transfer_function",
                            attrs={"units": "1", "long_name": "channel transfer function H(f), pressure re 1 m"})

    def _transfer_values(self, f):
        """H at ``f`` (any shape) as a new array; the last few grids asked for are kept on the
        object (a planner asks for the same band grid at every symbol rate)."""
        cache = self.__dict__.get("_transfer_cache")
        if cache is None:
            cache = _ResponseCache()
            object.__setattr__(self, "_transfer_cache", cache)  # a cache, not a field of the frozen Channel
        key = (f.shape, f.tobytes())
        h = cache.get(key)
        if h is None:
            h = _resp.transfer_sum(self.delay_s, self.gain, self.freq_hz, f.ravel()).reshape(f.shape)
            cache.put(key, h)
        return h.copy()

    def _windows(self, sample_rate_hz, spectrum, support_hz, n_window):
        return _resp.path_windows(self.delay_s, self.gain, self.freq_hz, self.carrier_hz,
                                  sample_rate_hz, spectrum, support_hz, n_window)

    def taper(self, sample_rate_hz):
        """The band taper of :meth:`impulse_response`: ``(spectrum, support_hz, n_window)``.

        Flat (unit) over the band |f| <= B/2 with a raised-cosine edge beyond it of relative
        width ``min(IMPULSE_RESPONSE_ROLLOFF, fs/B - 1)`` (at least 0.02), so that the taper stays
        within the sampled band. It is the raised-cosine spectrum of rate B (1 + e/2) and
        roll-off (e/2)/(1 + e/2), divided by its peak.
        """
        fs = check_range("sample_rate_hz", sample_rate_hz, self.bandwidth_hz, None, unit="Hz")
        edge = float(np.clip(fs / self.bandwidth_hz - 1.0, 0.02, IMPULSE_RESPONSE_ROLLOFF))
        rate = self.bandwidth_hz * (1.0 + edge / 2.0)
        beta = (edge / 2.0) / (1.0 + edge / 2.0)

        def spectrum(f):
            return raised_cosine_spectrum(f / rate, beta)

        return spectrum, 0.5 * rate * (1.0 + beta), _resp.window_length(fs, rate, beta)

    def impulse_response(self, sample_rate_hz):
        """Complex baseband impulse response sampled at ``sample_rate_hz``.

        The channel seen through the band taper of :meth:`taper` (flat over the band), as taps
        ``h[n] = h(t_n) / fs`` so that ``y = x * h`` applies the channel to a signal sampled at
        ``fs``: a single flat path of gain A gives taps summing to ``A exp(-j 2 pi fc tau)``.

        Parameters
        ----------
        sample_rate_hz : float
            At least the bandwidth.

        Returns
        -------
        xarray.DataArray
            Complex taps over dim ``delay`` (absolute delay coordinate, s); attrs give the
            sample rate and ``first_delay_s``. Empty for a channel without paths.

        Raises
        ------
        AculinkError
            When the sample rate is below the bandwidth.
        """
        spectrum, support, n = self.taper(sample_rate_hz)
        fs = float(sample_rate_hz)
        if self.is_empty:
            first, taps = 0, np.zeros(0, dtype=complex)
        else:
            start, values = self._windows(fs, spectrum, support, n)
            first, taps = _resp.assemble(start, values / fs)
        delay = (first + np.arange(taps.size)) / fs
        return xr.DataArray(
            taps, dims="delay", name="impulse_response",
            coords={"delay": ("delay", delay, {"units": "s", "long_name": "absolute delay"})},
            attrs={"units": "1", "long_name": "complex baseband impulse response (taps at the sample rate)",
                   "sample_rate_hz": fs, "carrier_hz": self.carrier_hz, "first_delay_s": first / fs,
                   "first_index": int(first)},
        )

    def symbol_taps(self, symbol_rate_baud, rolloff, samples_per_symbol=1, *, trim=1e-6):
        """Pulse-shaped channel sampled at T / samples_per_symbol.

        ``h(t) = sum_p exp(-j 2 pi fc tau_p) (p * g_p)(t - tau_p)`` with p the raised-cosine pulse
        (root-raised-cosine transmit and receive filters, p(0) = 1) and g_p the path's transfer
        function over the band (exact band-limited evaluation, no truncated pulse), sampled at
        ``first_delay_s + k T / samples_per_symbol``. Leading and trailing taps below ``trim``
        times the largest are dropped.

        Parameters
        ----------
        symbol_rate_baud : float
        rolloff : float
            Raised-cosine roll-off, (0, 1].
        samples_per_symbol : int
            1 (symbol-spaced) or more (fractionally spaced).

        Returns
        -------
        SymbolTaps
            ``(taps, first_delay_s)``.

        References
        ----------
        Proakis and Salehi (2008), sec. 9.2 and ch. 13 ([ProakisSalehi2008]):
        h[k] = h(k T + t0).
        """
        rs = check_range("symbol_rate_baud", symbol_rate_baud, 0.0, None, low_open=True, unit="Bd")
        beta = check_range("rolloff", rolloff, 0.0, 1.0, low_open=True)
        if isinstance(samples_per_symbol, bool) or int(samples_per_symbol) != samples_per_symbol or samples_per_symbol < 1:
            raise AculinkError(f"samples_per_symbol = {samples_per_symbol!r}: expected a whole number >= 1")
        fs = rs * int(samples_per_symbol)
        if self.is_empty:
            return SymbolTaps(np.zeros(0, dtype=complex), 0.0)
        n = _resp.window_length(fs, rs, beta)

        def spectrum(f):
            return raised_cosine_spectrum(f / rs, beta) / rs

        start, values = self._windows(fs, spectrum, 0.5 * rs * (1 + beta), n)
        first, taps = _resp.assemble(start, values)
        mag = np.abs(taps)
        keep = np.flatnonzero(mag >= trim * mag.max())
        lo, hi = keep[0], keep[-1] + 1
        return SymbolTaps(taps[lo:hi], (first + lo) / fs)

    def statistics(self, **kwargs) -> dict:
        """Delay, frequency and Doppler statistics; see :func:`aculink.channel.stats.channel_statistics`."""
        from aculink.channel.stats import channel_statistics

        return channel_statistics(self, **kwargs)


def channel_for_site(site, range_m=None, depth_m=None, *, n_freq=17):
    """Trace the site and return the channel at one receiver over the modem band.

    Parameters
    ----------
    site : Site
    range_m, depth_m : float, optional
        Receiver position (default the site's receiver).
    n_freq : int
        Number of frequencies across [fc - B/2, fc + B/2] at which arrivals are evaluated.

    Returns
    -------
    Channel
    """
    from aculink.propagation import find_arrivals

    if isinstance(n_freq, bool) or int(n_freq) != n_freq or not 1 <= n_freq <= 4097:
        raise AculinkError(f"n_freq = {n_freq!r}: expected a whole number in [1, 4097]")
    r = site.receiver.range_m if range_m is None else check_range("range_m", range_m, 0.0, None, low_open=True, unit="m")
    z = site.receiver.depth_m if depth_m is None else check_range("depth_m", depth_m, 0.0, None, unit="m")
    fc, b = site.modem.carrier_hz, site.modem.bandwidth_hz
    freq = np.array([fc]) if n_freq == 1 else np.linspace(fc - b / 2, fc + b / 2, int(n_freq))
    moved = site.with_geometry(range_m=r, depth_m=z)
    arrivals = find_arrivals(moved, np.array([r]), np.array([z]), freq_hz=freq)
    return Channel.from_arrivals(arrivals, moved, r, z)


def _keep_angle(arrivals, site):
    """The critical grazing angle past which scattered energy is lost, as the eigenray stage used
    it (its ``scatter_keep_angle_rad`` attribute; NaN: none), else the site's bed."""
    from aculink.site.surface import scatter_keep_angle_rad

    value = arrivals.attrs.get("scatter_keep_angle_rad")
    if value is None:
        return scatter_keep_angle_rad(site)
    return None if not np.isfinite(value) else float(value)
