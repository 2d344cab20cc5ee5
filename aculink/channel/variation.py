"""Time variation of a channel: per-path Doppler factors and surface-wave phase fluctuations.

Motion. A source moving along the track at ``v_s`` (positive toward increasing range) shortens a
path leaving it at launch angle theta_s by ``v_s cos(theta_s)`` per second; a receiver moving at
``v_r`` lengthens it by ``v_r cos(theta_r)``. The path's delay drifts as
``tau_p(t) = tau_p - a_p t`` with ``a_p = v_s cos(theta_s) / c_s - v_r cos(theta_r) / c_r``
(the speeds of sound at the two ends; for a range-independent sea Snell's law makes this
``p (v_s - v_r)`` with p the ray parameter).

Surface. A path that touched the surface is given a random phase ``phi_p(t) = 2 k sqrt(S_p)
eta_p(t)`` with ``k = 2 pi fc / c_surface``, ``S_p`` the sum of sin^2 of its surface grazing
angles (``surface_grazing_sin2_sum``) and ``eta_p`` a zero-mean Gaussian process with the
Pierson-Moskowitz frequency spectrum scaled to the site's rms wave height. Each bounce of a path
would carry an independent elevation process of the same spectrum; their weighted sum is
Gaussian with the same correlation shape and variance ``4 k^2 sigma^2 S_p``, so one process per
path is exact in distribution. Different paths are independent (their bounce points are far
apart compared with the correlation length of the waves: an assumption, stated here).

Energy bookkeeping. The arrivals' amplitudes already include the Eckart coherent factor
``chi_p = exp(-2 k^2 sigma^2 S_p)``. The time-varying gain is ``gain_p * exp(j phi_p(t))``: a
unit-modulus fluctuation, so the path's mean power stays the Eckart (coherent) power of the
arrivals, and its mean complex gain is ``chi_p gain_p`` (``E[exp(j phi)] = chi_p`` for a Gaussian
phase): of the path's power the fraction ``chi_p^2`` is steady and the rest fluctuates with the
surface Doppler spread. The energy roughness scatters out of the specular direction is taken as
lost to the link: it reaches the receiver spread over delay and angle, like reverberation, and a
coherent receiver cannot use it. Restoring it to the specular path (a pure phase screen, mean
power of a smooth surface) would give a steep multi-bounce path under a gale its full
smooth-surface power, fluctuating at the wave frequency, which no sea data support; the choice
here is the conservative one (our modelling decision, no source).

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
    """RMS Doppler spread of each path from the surface motion, Hz.

    The gain exp(j phi) has constant modulus, so the second moment of its spectrum is the mean
    square of phi'/(2 pi): ``2 fc sqrt(S_p) v_rms / c`` with v_rms the rms vertical velocity of
    the surface (a closed form of the model above, for any roughness).
    """
    s = np.asarray(sin2_sum, dtype=float)
    if motion is None or not motion.active:
        return np.zeros(s.shape)
    return 2.0 * carrier_hz * np.sqrt(s) * motion.elevation_velocity_rms_mps() / motion.sound_speed_mps


def surface_gain_factors(sin2_sum, carrier_hz, motion: SurfaceMotion | None, times_s, seed):
    """Random unit-modulus gain factor exp(j phi_p(t)) of every path at ``times_s``.

    Parameters
    ----------
    sin2_sum : (P,) array
        Sum of sin^2 of the surface grazing angles per path (0 for paths that did not touch it).
    carrier_hz : float
    motion : SurfaceMotion or None
    times_s : (T,) array
        Absolute times, s.
    seed : int or numpy.random.Generator or None

    Returns
    -------
    (P, T) complex ndarray
        1 for paths without a surface bounce or a calm sea; seeded and reproducible.
    """
    s = np.asarray(sin2_sum, dtype=float)
    t = np.asarray(times_s, dtype=float)
    out = np.ones((s.size, t.size), dtype=complex)
    if motion is None or not motion.active:
        return out
    rough = np.flatnonzero(s > 0)
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
    # unit modulus: the path keeps the Eckart power of the arrivals (see the module notes)
    out[rough] = np.exp(1j * scale[:, None] * eta)
    return out


def _evaluate_process(a, b, w, t):
    """Sum of the spectral components at times t, on a coarse grid and linearly interpolated.

    The fastest component is sampled 32 times per period, so linear interpolation is within
    (2 pi / 32)^2 / 8 = 0.5% of that (weakest) component's amplitude.
    """
    if t.size == 0:
        return np.zeros((a.shape[0], 0))
    step = 2.0 * np.pi / w.max() / 32.0
    t0, t1 = float(t.min()), float(t.max())
    n = int(np.ceil((t1 - t0) / step)) + 2
    if n >= t.size:
        grid = t
    else:
        grid = t0 + step * np.arange(n)
    if grid is t:
        phase = np.multiply.outer(w, grid)
        return a @ np.cos(phase) + b @ np.sin(phase)
    # uniform grid: exp(j w t_k) by a running product (rounding grows as k eps, < 1e-11 here)
    rot = np.empty((w.size, grid.size), dtype=complex)
    rot[:, 0] = np.exp(1j * w * grid[0])
    rot[:, 1:] = np.exp(1j * w * step)[:, None]
    rot = np.cumprod(rot, axis=1)
    eta = ((a - 1j * b) @ rot).real
    pos = (t - t0) / step
    i0 = np.clip(np.floor(pos).astype(np.int64), 0, n - 2)
    frac = pos - i0
    return eta[:, i0] * (1.0 - frac) + eta[:, i0 + 1] * frac
