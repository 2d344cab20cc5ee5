"""Time variation of a channel: per-path Doppler factors and surface-wave phase fluctuations.

Motion. A source moving along the track at ``v_s`` (positive toward increasing range) shortens a
path leaving it at launch angle theta_s by ``v_s cos(theta_s)`` per second; a receiver moving at
``v_r`` lengthens it by ``v_r cos(theta_r)``. The path's delay drifts as
``tau_p(t) = tau_p - a_p t`` with ``a_p = v_s cos(theta_s) / c_s - v_r cos(theta_r) / c_r``
(the speeds of sound at the two ends; for a range-independent sea Snell's law makes this
``p (v_s - v_r)`` with p the ray parameter).

Surface. Following the Kirchhoff picture of :mod:`aculink.channel.scatter`, a surface path is
split into its coherent part (the arrivals' Eckart amplitude ``chi_p gain_smooth``, the mean
field, held steady) and a diffuse cluster of scattered sub-paths carrying the rest of the
incident power. Each scattered sub-path's gain is multiplied by the fluctuating part of a phase
screen,

    z(t) = (exp(j phi(t)) - chi) / sqrt(1 - chi^2),   phi(t) = 2 k sqrt(S) eta(t),

with ``k = 2 pi fc / c_surface``, ``S`` the sum of sin^2 of the path's surface grazing angles
(``surface_grazing_sin2_sum``), ``chi = exp(-2 k^2 sigma^2 S)`` and ``eta`` a zero-mean Gaussian
process with the Pierson-Moskowitz frequency spectrum scaled to the site's rms wave height. Each
bounce would carry an independent elevation process of the same spectrum; their weighted sum is
Gaussian with the same correlation shape and variance ``4 k^2 sigma^2 S``, so one process per
sub-path is exact in distribution. Sub-paths (and paths) are independent of one another: their
patches of the surface are far apart compared with the correlation length of the waves (an
assumption, stated here). ``E[z] = 0`` and ``E|z|^2 = 1`` (``E exp(j phi) = chi`` for a Gaussian
phase), so a cluster's mean power is what :mod:`~aculink.channel.scatter` gave it; its time
correlation is ``(exp(-Gamma^2 (1 - r(dt))) - chi^2) / (1 - chi^2)`` with ``Gamma^2 = 4 k^2
sigma^2 S`` and r the normalised elevation correlation (:func:`scattered_correlation`), and its
rms Doppler width ``2 fc sqrt(S) sigma_w / c / sqrt(1 - chi^2)`` (:func:`scattered_doppler_spread_hz`).

The process is synthesised as ``eta(t) = sum_m A_m cos(w_m t) + B_m sin(w_m t)`` with independent
normal A_m, B_m of variance ``S(w_m) dw_m`` on a fixed logarithmic grid of ``w_m`` (random
amplitudes, not only random phases, so that eta is exactly Gaussian), normalised to the site's
rms height.

References
----------
C. Eckart, J. Acoust. Soc. Am. 25, 566-570 (1953), coherent reflection from a rough surface.
W. J. Pierson and L. Moskowitz, J. Geophys. Res. 69(24), 5181-5190 (1964).
M. Shinozuka and G. Deodatis, Appl. Mech. Rev. 44(4), 191-204 (1991), spectral representation of
Gaussian processes.
B. S. Li, S. Zhou, M. Stojanovic, L. Freitag and P. Willett, IEEE J. Oceanic Eng. 33(2), 198-209
(2008), wideband Doppler as time scaling (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from aculink.site.surface import pierson_moskowitz_spectrum

__all__ = ["N_COMPONENTS", "doppler_factors", "SurfaceMotion", "surface_phase_std",
           "surface_doppler_spread_hz", "scattered_doppler_spread_hz", "scattered_correlation",
           "surface_gain_factors"]

#: Number of spectral components of the surface process and their span around the peak.
N_COMPONENTS = 96
_SPAN_BELOW, _SPAN_ABOVE = 0.45, 8.0


def doppler_factors(launch_angle_rad, arrival_angle_rad, source_speed_mps, receiver_speed_mps,
                    source_sound_speed_mps, receiver_sound_speed_mps):
    """Per-path Doppler (time-scaling) factor a_p, positive when the path shortens.

    Parameters
    ----------
    launch_angle_rad, arrival_angle_rad : array_like
        Ray angles from the horizontal at the source and at the receiver.
    source_speed_mps, receiver_speed_mps : float
        Speeds along the track, positive toward increasing range.
    source_sound_speed_mps, receiver_sound_speed_mps : float
        Sound speed at the two ends.

    Returns
    -------
    numpy.ndarray
        a_p = v_s cos(theta_s)/c_s - v_r cos(theta_r)/c_r (dimensionless).

    References
    ----------
    The kinematic Doppler of a moving source and receiver, projected on the ray direction;
    e.g. Li et al. (2008), IEEE J. Oceanic Eng. 33(2), eq. for the time-scaling factor (memory).
    """
    return (source_speed_mps * np.cos(launch_angle_rad) / source_sound_speed_mps
            - receiver_speed_mps * np.cos(arrival_angle_rad) / receiver_sound_speed_mps)


@dataclass(frozen=True)
class SurfaceMotion:
    """What the surface-phase process needs: rms wave height, wind, sound speed at the top."""

    rms_height_m: float
    wind_speed_mps: float
    sound_speed_mps: float

    @property
    def active(self) -> bool:
        return self.rms_height_m > 0.0 and self.wind_speed_mps > 0.0

    def spectrum_grid(self):
        """Angular frequencies (rad/s) and per-component variances (m^2) summing to sigma^2."""
        from aculink.constants import GRAVITY_MPS2, PIERSON_MOSKOWITZ_BETA, WIND_19P5_OVER_10

        u = self.wind_speed_mps * WIND_19P5_OVER_10
        w_peak = (0.8 * PIERSON_MOSKOWITZ_BETA) ** 0.25 * GRAVITY_MPS2 / u
        edges = np.geomspace(_SPAN_BELOW * w_peak, _SPAN_ABOVE * w_peak, N_COMPONENTS + 1)
        w = np.sqrt(edges[:-1] * edges[1:])
        var = pierson_moskowitz_spectrum(w, self.wind_speed_mps) * np.diff(edges)
        var *= self.rms_height_m ** 2 / var.sum()
        return w, var

    def elevation_velocity_rms_mps(self) -> float:
        """RMS vertical velocity of the synthesised process, m/s (sqrt of sum w^2 var)."""
        if not self.active:
            return 0.0
        w, var = self.spectrum_grid()
        return float(np.sqrt(np.sum(w ** 2 * var)))

    def elevation_correlation(self, lag_s):
        """Normalised autocorrelation of the elevation process at ``lag_s``."""
        w, var = self.spectrum_grid()
        lag = np.asarray(lag_s, dtype=float)
        return np.tensordot(np.cos(np.multiply.outer(lag, w)), var, axes=([-1], [0])) / var.sum()


def surface_phase_std(sin2_sum, carrier_hz, motion: SurfaceMotion):
    """Standard deviation of each path's surface phase, rad: 2 k sigma sqrt(S_p)."""
    k = 2.0 * np.pi * carrier_hz / motion.sound_speed_mps
    return 2.0 * k * motion.rms_height_m * np.sqrt(np.asarray(sin2_sum, dtype=float))


def surface_doppler_spread_hz(sin2_sum, carrier_hz, motion: SurfaceMotion | None):
    """RMS phase rate of the whole phase-screen factor exp(j phi) of each path, Hz.

    The factor has constant modulus, so the second moment of its spectrum is the mean square of
    phi'/(2 pi): ``2 fc sqrt(S_p) v_rms / c`` with v_rms the rms vertical velocity of the
    surface, for any roughness (``2 f sin(theta) sigma_w / c`` per bounce).
    """
    s = np.asarray(sin2_sum, dtype=float)
    if motion is None or not motion.active:
        return np.zeros(s.shape)
    return 2.0 * carrier_hz * np.sqrt(s) * motion.elevation_velocity_rms_mps() / motion.sound_speed_mps


def scattered_doppler_spread_hz(sin2_sum, carrier_hz, motion: SurfaceMotion | None):
    """RMS Doppler width of the scattered gain z(t) of each path, Hz (0 where nothing scatters).

    The spectrum of exp(j phi) is a line of weight chi^2 at 0 plus the scattered part, so the
    scattered part's second moment is that of the whole factor (:func:`surface_doppler_spread_hz`)
    divided by ``1 - chi^2``: ``2 fc sqrt(S) v_rms / (c sqrt(1 - exp(-Gamma^2)))``. Limits:
    ``2 f sqrt(S) v_rms / c`` for a rough surface (Gamma >> 1), the rms wave frequency
    ``v_rms / (2 pi sigma)`` for a nearly smooth one.
    """
    s = np.asarray(sin2_sum, dtype=float)
    if motion is None or not motion.active:
        return np.zeros(s.shape)
    total = surface_doppler_spread_hz(s, carrier_hz, motion)
    gamma2 = surface_phase_std(s, carrier_hz, motion) ** 2
    frac = -np.expm1(-gamma2)
    out = np.zeros(s.shape)
    live = frac > 0
    out[live] = total[live] / np.sqrt(frac[live])
    return out


def scattered_correlation(gamma2, elevation_correlation):
    """Normalised correlation of z(t) at a lag whose elevation correlation is r.

    ``E[z(t + dt) conj z(t)] = (exp(-Gamma^2 (1 - r)) - exp(-Gamma^2)) / (1 - exp(-Gamma^2))``
    for a Gaussian phase of variance Gamma^2 (characteristic function of the phase difference);
    broadcasts ``gamma2`` against ``elevation_correlation``.
    """
    g2 = np.minimum(np.asarray(gamma2, dtype=float), 600.0)
    r = np.asarray(elevation_correlation, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        out = -np.expm1(-g2 * r) * np.exp(-g2 * (1.0 - r)) / -np.expm1(-g2)
    # Gamma -> 0: the limit is r (z -> j phi / Gamma)
    return np.where(g2 > 1e-12, out, r + 0.0 * g2)


def surface_gain_factors(sin2_sum, carrier_hz, motion: SurfaceMotion | None, times_s, seed, scattered=None):
    """Random gain factor of every path at ``times_s``: z_p(t) for scattered paths, 1 otherwise.

    Parameters
    ----------
    sin2_sum : (P,) array
        Sum of sin^2 of the surface grazing angles per path (0 for paths that did not touch it).
    carrier_hz : float
    motion : SurfaceMotion or None
    times_s : (T,) array
        Absolute times, s.
    seed : int or numpy.random.Generator or None
    scattered : (P,) bool array, optional
        Which paths are scattered sub-paths (default none: every factor is 1).

    Returns
    -------
    (P, T) complex ndarray
        ``z_p(t)`` (zero mean, unit power) for scattered paths, 1 for the others (steady);
        seeded and reproducible.
    """
    s = np.asarray(sin2_sum, dtype=float)
    t = np.asarray(times_s, dtype=float)
    out = np.ones((s.size, t.size), dtype=complex)
    if motion is None or not motion.active or scattered is None:
        return out
    rough = np.flatnonzero((s > 0) & np.asarray(scattered, dtype=bool))
    if rough.size == 0:
        return out
    rng = np.random.default_rng(seed)
    w, var = motion.spectrum_grid()
    # draw for every path (not only rough ones) so a path's draw does not depend on the others
    a = rng.standard_normal((s.size, w.size)) * np.sqrt(var)
    b = rng.standard_normal((s.size, w.size)) * np.sqrt(var)
    eta = _evaluate_process(a[rough], b[rough], w, t)
    std = surface_phase_std(s[rough], carrier_hz, motion)
    scale = std / motion.rms_height_m
    chi = np.exp(-0.5 * std ** 2)[:, None]
    norm = np.sqrt(-np.expm1(-std ** 2))[:, None]
    # zero mean, unit power: the cluster keeps the scattered power it was given
    out[rough] = (np.exp(1j * scale[:, None] * eta) - chi) / norm
    return out


def _evaluate_process(a, b, w, t):
    """Sum of the spectral components at times t.

    On a uniform time grid (the control grid of :func:`aculink.channel.apply.apply_channel`)
    the components are advanced by a running product, exactly; otherwise they are evaluated
    on a coarse uniform grid and linearly interpolated: the fastest component is sampled 32
    times per period, so linear interpolation is within (2 pi / 32)^2 / 8 = 0.5% of that
    (weakest) component's amplitude.
    """
    if t.size == 0:
        return np.zeros((a.shape[0], 0))
    t0, t1 = float(t.min()), float(t.max())
    if t.size > 2:
        d = np.diff(t)
        if d[0] > 0 and np.all(np.abs(d - d[0]) <= 1e-9 * d[0]):
            return _uniform_sum(a, b, w, float(t[0]), float(d[0]), t.size)
    step = 2.0 * np.pi / w.max() / 32.0
    n = int(np.ceil((t1 - t0) / step)) + 2
    if n >= t.size:
        phase = np.multiply.outer(w, t)
        return a @ np.cos(phase) + b @ np.sin(phase)
    eta = _uniform_sum(a, b, w, t0, step, n)
    pos = (t - t0) / step
    i0 = np.clip(np.floor(pos).astype(np.int64), 0, n - 2)
    frac = pos - i0
    return eta[:, i0] * (1.0 - frac) + eta[:, i0 + 1] * frac


def _uniform_sum(a, b, w, start, step, n):
    """``sum_m a_m cos(w_m t_k) + b_m sin(w_m t_k)`` at ``t_k = start + k step``, k < n:
    exp(j w t_k) by a running product (rounding grows as k eps, about 1e-10 at a million)."""
    rot = np.empty((w.size, n), dtype=complex)
    rot[:, 0] = np.exp(1j * w * start)
    rot[:, 1:] = np.exp(1j * w * step)[:, None]
    rot = np.cumprod(rot, axis=1)
    return ((a - 1j * b) @ rot).real
