"""Channel statistics: delay spreads, coherence bandwidth, band-averaged TL, Doppler spread.

Definitions (all from the path list, path power = |gain_p(f)|^2 averaged over the band):

* ``rms_delay_spread_s``: power-weighted standard deviation of the path delays.
* ``spread_90_s``, ``spread_99_s``: the shortest delay window that holds 90% (99%) of the path
  energy.
* ``significant_paths``: paths within ``significant_db`` (20 dB unless told) of the strongest.
* ``coherence_bandwidth_hz``: the smallest frequency offset at which the magnitude of the
  frequency correlation function R(df) = sum_p P_p exp(-j 2 pi df tau_p) / sum_p P_p (the Fourier
  transform of the power-delay profile: the correlation of H(f) of a WSSUS channel) falls to 0.5;
  inf when it never does (one path).
* ``tl_coherent_db``: -10 log10 of the band mean of E|H(f)|^2, the mean over the sea's
  realisations: |H_steady(f)|^2 of the steady paths' coherent sum plus the power of the
  scattered sub-paths (zero-mean gains, so their cross terms average out);
  ``tl_incoherent_db``: -10 log10 of the band mean of sum_p |gain_p(f)|^2 (dB re 1 m). Both
  include the power the rough surface scatters (:mod:`aculink.channel.scatter`).
* ``doppler_spread_hz``: rms width of the Doppler power spectrum: paths at a_p fc, the
  scattered sub-paths widened by their rms Doppler width (steady paths stay at a_p fc);
  ``doppler_shift_hz`` its power-weighted mean.
* ``coherence_time_s``: the smallest lag at which |R(dt)| falls to 0.5, with
  R(dt) = sum_p P_p exp(j 2 pi a_p fc dt) rho_p(dt) / sum_p P_p and rho_p the correlation of the
  path's gain: 1 for a steady path, :func:`aculink.channel.variation.scattered_correlation` for a
  scattered one; inf for a channel that does not change (a Doppler shift common to all paths
  does not count).
* ``scattered_fraction``: the share of the incoherent power in scattered sub-paths.

References
----------
P. A. Bello, "Characterization of randomly time-variant linear channels", IEEE Trans. Commun.
Syst. 11(4), 360-393 (1963): frequency and time correlation functions of WSSUS channels (memory).
T. S. Rappaport, Wireless Communications, 2nd ed. (2002), sec. 5.4: rms delay spread and the
0.5-correlation coherence bandwidth (memory).
"""

from __future__ import annotations

import numpy as np
from scipy import optimize

from aculink.channel.variation import scattered_correlation

__all__ = ["SIGNIFICANT_DB", "path_powers", "rms_delay_spread", "energy_spread", "coherence_bandwidth",
           "channel_statistics", "mean_square_transfer", "doppler_statistics"]

#: Significant-path threshold below the strongest path, dB (common practice, no source).
SIGNIFICANT_DB = 20.0


def path_powers(channel, n_freq=65):
    """Band-averaged power |gain_p(f)|^2 of each path."""
    if channel.is_empty:
        return np.zeros(0)
    return np.mean(np.abs(channel.gain_at(channel.band_grid(n_freq))) ** 2, axis=1)


def rms_delay_spread(delay_s, power):
    """Power-weighted standard deviation of the delays, s."""
    w = power / power.sum()
    mean = np.sum(w * delay_s)
    return float(np.sqrt(max(np.sum(w * (delay_s - mean) ** 2), 0.0)))


def energy_spread(delay_s, power, fraction):
    """Shortest delay window holding ``fraction`` of the energy, s (paths sorted by delay)."""
    c = np.concatenate([[0.0], np.cumsum(power)])
    need = fraction * c[-1] * (1.0 - 1e-12)
    # for each first path i, the smallest j with c[j] - c[i] >= need: paths i .. j-1
    j = np.searchsorted(c, c[:-1] + need, side="left")
    ok = j <= delay_s.size
    return float(np.min(delay_s[j[ok] - 1] - delay_s[ok]))


def _first_drop(func, step, limit, chunk=512):
    """Smallest x > 0 with func(x) <= 0.5, scanning a grid of ``step`` in chunks up to ``limit``
    (inf when none) and refining the crossing with Brent's method."""
    if not np.isfinite(step) or step <= 0:
        return np.inf
    step = max(step, limit / 2e6)
    lo = 0.0
    prev = None
    while lo < limit:
        x = lo + step * np.arange(chunk + 1)
        v = func(x)
        below = np.flatnonzero(v <= 0.5)
        if below.size:
            i = below[0]
            if i == 0:
                return float(lo) if prev is None else float(optimize.brentq(
                    lambda s: func(np.array([s]))[0] - 0.5, lo - step, lo))
            return float(optimize.brentq(lambda s: func(np.array([s]))[0] - 0.5, x[i - 1], x[i]))
        prev = v[-1]
        lo = x[-1]
    return np.inf


def coherence_bandwidth(delay_s, power):
    """0.5 crossing of |sum_p P_p exp(-j 2 pi df tau_p)| / sum_p P_p, Hz (inf if none)."""
    w = power / power.sum()
    spread = rms_delay_spread(delay_s, power)
    if spread == 0.0:
        return np.inf
    tau = delay_s - delay_s[0]

    def corr(df):
        return np.abs(np.exp(-2j * np.pi * np.outer(df, tau)) @ w)

    # the grid resolves the fastest oscillation of R (period 1 / delay span)
    return _first_drop(corr, 1.0 / (16.0 * max(tau.max(), spread)), 20.0 / spread)


def channel_statistics(channel, *, significant_db=SIGNIFICANT_DB, n_freq=257) -> dict:
    """All statistics of :mod:`aculink.channel.stats` as a dict (units in the key names).

    An empty channel gives NaN spreads, infinite TL and ``paths = 0``.
    """
    out = {"paths": channel.n_paths, "significant_db": float(significant_db)}
    if channel.is_empty:
        out.update(rms_delay_spread_s=np.nan, mean_delay_s=np.nan, spread_90_s=np.nan,
                   spread_99_s=np.nan, significant_paths=0, coherence_bandwidth_hz=np.nan,
                   tl_coherent_db=np.inf, tl_incoherent_db=np.inf, first_delay_s=np.nan,
                   doppler_shift_hz=np.nan, doppler_spread_hz=np.nan, coherence_time_s=np.nan,
                   time_varying=False)
        return out
    power = path_powers(channel)
    tau = channel.delay_s
    total = power.sum()
    f = channel.band_grid(n_freq)
    incoherent = np.mean(np.sum(np.abs(channel.gain_at(f)) ** 2, axis=0))
    mean_square = np.mean(mean_square_transfer(channel, f))
    scattered = np.sum(power[channel.scattered]) / total if total > 0 else 0.0
    with np.errstate(divide="ignore"):
        out.update(
            first_delay_s=float(tau[0]),
            mean_delay_s=float(np.sum(power * tau) / total) if total > 0 else np.nan,
            rms_delay_spread_s=rms_delay_spread(tau, power) if total > 0 else np.nan,
            spread_90_s=energy_spread(tau, power, 0.9) if total > 0 else np.nan,
            spread_99_s=energy_spread(tau, power, 0.99) if total > 0 else np.nan,
            significant_paths=int(np.sum(power >= power.max() * 10 ** (-significant_db / 10))) if total > 0 else 0,
            coherence_bandwidth_hz=coherence_bandwidth(tau, power) if total > 0 else np.nan,
            tl_coherent_db=float(-10 * np.log10(mean_square)),
            tl_incoherent_db=float(-10 * np.log10(incoherent)),
            scattered_fraction=float(scattered),
        )
    out.update(doppler_statistics(channel))
    return out


def mean_square_transfer(channel, freq_hz):
    """E|H(f)|^2 over the sea's realisations: |sum of steady paths|^2 + scattered power."""
    g = channel.gain_at(freq_hz)
    steady = ~channel.scattered
    h = np.einsum("pq,pq->q", g[steady], np.exp(-2j * np.pi * np.outer(channel.delay_s[steady], freq_hz)))
    return np.abs(h) ** 2 + np.sum(np.abs(g[channel.scattered]) ** 2, axis=0)


def doppler_statistics(channel) -> dict:
    """Doppler shift, Doppler spread and coherence time of the time-varying model."""
    fc = channel.carrier_hz
    power = path_powers(channel)
    motion = channel.surface
    fl = channel.fluctuation
    rough = motion is not None and motion.active and bool(np.any(fl.steady_fraction < 1))
    if power.sum() == 0:
        return {"doppler_shift_hz": np.nan, "doppler_spread_hz": np.nan, "coherence_time_s": np.nan,
                "time_varying": False}
    w = power / power.sum()
    nu = channel.doppler * fc
    sig = fl.doppler_spread_hz
    mean = float(np.sum(w * nu))
    spread = float(np.sqrt(max(np.sum(w * (nu ** 2 + sig ** 2)) - mean ** 2, 0.0)))
    out = {"doppler_shift_hz": mean, "doppler_spread_hz": spread,
           "time_varying": bool(channel.is_time_varying)}
    if spread <= 1e-12 * max(abs(mean), 1.0):
        out["coherence_time_s"] = np.inf
        return out

    def corr(dt):
        rho = np.ones((dt.size, nu.size))
        if rough:
            r = motion.elevation_correlation(dt)                  # (T,)
            live = fl.steady_fraction < 1
            rho[:, live] = scattered_correlation(fl.gamma2[live][None, :], r[:, None])
        return np.abs((np.exp(2j * np.pi * np.outer(dt, nu - mean)) * rho) @ w)

    span = max(float(np.ptp(nu)), spread)
    out["coherence_time_s"] = _first_drop(corr, 1.0 / (16.0 * span), 50.0 / spread)
    return out
