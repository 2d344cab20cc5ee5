"""The energy a rough sea surface scatters: a diffuse cluster around every surface path.

Kirchhoff approximation with Gaussian surface heights (Eckart 1953): at a bounce of grazing angle
theta the coherent (specular) intensity is ``exp(-Gamma^2)`` of the incident, with the Rayleigh
parameter ``Gamma = 2 k sigma sin(theta)``; the rest, ``1 - exp(-Gamma^2)``, is scattered
incoherently (a pressure-release surface absorbs nothing, and shadowing is neglected, so energy is
conserved). Over a path's bounces the coherent factor is ``chi^2 = exp(-4 k^2 sigma^2 S)`` with
``S`` the sum of sin^2 of the grazing angles (``surface_grazing_sin2_sum``); the arrivals already
carry the coherent amplitude ``chi * incident``. :func:`add_surface_scatter` gives each surface
path a cluster of :data:`SUBPATHS` sub-paths of equal mean power carrying the scattered intensity
``(1 - chi^2) |incident|^2`` at every frequency, so that

    coherent + scattered = incident                        (exactly, at every frequency).

Delay: the glistening zone. A facet of the surface tilted by beta in the vertical plane of the
path reflects toward the receiver from a point displaced from the specular point; to second order
that path is longer by ``Delta tau = 2 beta^2 L_h / c`` with ``L_h = L1 L2 / (L1 + L2)`` (L1, L2
the unfolded path lengths before and after the bounce), and a cross-track tilt gamma adds
``2 sin^2(theta) gamma^2 L_h / c`` (derived from the specular geometry; a facet model in the
sense of Cox and Munk). Tilts are Gaussian with the clean-sea mean-square slope of Cox and Munk
(1954), ``s^2 = 0.003 + 5.12e-3 U_12.5``, shared equally between the two directions (the wind
direction relative to the path is not known). In-plane tilts larger than the grazing angle would
need an incoming or outgoing ray from above the surface, so they are excluded (the in-plane tilt
distribution is the Gaussian truncated to ``|beta| < theta``; our modelling choice). The cluster's
sub-paths sit at the conditional means of ``Delta tau`` over equal-probability bins of ``|beta|``.
Bounces are placed evenly along the unfolded path (``L1 / L = (i - 1/2) / n``, equal grazing
angles ``sin^2 theta = S / n``, exact for a range-independent sea), and the excess delay of a path
is that of one bounce times the expected number of bounces that scattered, given that one did,
``n (1 - exp(-Gamma^2 / n)) / (1 - exp(-Gamma^2))`` (1 for weak roughness, n for strong).

Doppler: each sub-path's gain is the fluctuating part of the phase-screen factor,
``z(t) = (exp(j phi(t)) - chi) / sqrt(1 - chi^2)`` with ``phi = 2 k sqrt(S) eta(t)`` and eta the
Pierson-Moskowitz elevation process (:mod:`aculink.channel.variation`), an independent
realisation per sub-path (different patches of the glistening zone). ``z`` has zero mean, unit
power, and the rms Doppler width ``2 fc sqrt(S) sigma_w / c / sqrt(1 - chi^2)`` (sigma_w the rms
vertical surface velocity): ``2 f sin(theta) sigma_w / c`` per bounce for a very rough surface,
and the wave frequency ``sigma_w / (2 pi sigma)`` for a nearly smooth one
(:func:`aculink.channel.variation.scattered_doppler_spread_hz`). The specular path itself keeps its
coherent (mean) gain, steady.

References
----------
C. Eckart, "The scattering of sound from the sea surface", J. Acoust. Soc. Am. 25(3), 566-570
(1953): coherent intensity exp(-Gamma^2), Kirchhoff approximation.
C. Cox and W. Munk, "Measurement of the roughness of the sea surface from photographs of the
sun's glitter", J. Opt. Soc. Am. 44(11), 838-850 (1954): mean-square slope of a clean sea
0.003 + 5.12e-3 U, U the wind at 12.5 m in m/s (from memory).
W. J. Pierson and L. Moskowitz, J. Geophys. Res. 69(24), 5181-5190 (1964): the wave spectrum.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
from scipy import special

from aculink.channel.variation import scattered_doppler_spread_hz, surface_phase_std
from aculink.site.surface import (arriving_scattered_fraction, kept_fraction, mean_square_slope,
                                  path_kept_fraction, rayleigh_parameter_squared)

#: Sub-paths per surface path.
SUBPATHS = 4
#: Clusters with less than this fraction of the incident power are not added (a calm sea).
MIN_SCATTERED_FRACTION = 1e-6
#: Golden angle, rad: deterministic, well-spread nominal phases of the sub-paths.
_GOLDEN_ANGLE = math.pi * (3.0 - math.sqrt(5.0))


def scattered_fraction(gamma2):
    """``1 - exp(-Gamma^2)``: the fraction of the incident intensity scattered (Eckart 1953)."""
    return -np.expm1(-np.asarray(gamma2, dtype=float))


def _phi(x):
    return np.exp(-0.5 * x * x) / math.sqrt(2.0 * math.pi)


def tilt_bin_moments(theta_over_s, n_bins):
    """``E[beta^2 | bin] / s^2`` over ``n_bins`` equal-probability bins of ``|beta|``.

    ``beta`` is Gaussian of rms ``s`` truncated to ``|beta| < theta``. With ``a, b`` the bin
    edges over ``s``, ``E[x^2; a < x < b] = Phi(b) - Phi(a) - (b phi(b) - a phi(a))`` for a
    standard normal x (integration by parts), divided by the bin's probability.

    Parameters
    ----------
    theta_over_s : (P,) array
        Truncation over rms tilt (> 0).
    n_bins : int

    Returns
    -------
    (P, n_bins) ndarray
    """
    t = np.asarray(theta_over_s, dtype=float)[:, None]
    top = special.ndtr(t) - 0.5                       # P(0 < x < t)
    u = np.arange(n_bins + 1)[None, :] / n_bins
    edges = special.ndtri(0.5 + u * top)
    edges[:, -1:] = t                                  # exact top edge (no round trip)
    edges[:, :1] = 0.0
    a, b = edges[:, :-1], edges[:, 1:]
    prob = special.ndtr(b) - special.ndtr(a)
    second = prob - (b * _phi(b) - a * _phi(a))
    with np.errstate(invalid="ignore", divide="ignore"):
        out = second / prob
    # tiny truncation: x is nearly uniform on (a, b): E[x^2] = (a^2 + ab + b^2) / 3
    uniform = (a * a + a * b + b * b) / 3.0
    return np.where(prob > 1e-12, np.clip(out, a * a, b * b), uniform)


def cluster_excess_delays(sin2_sum, n_bounces, path_length_m, gamma2, mss, sound_speed_mps,
                          n_sub=SUBPATHS):
    """Excess delays (P, n_sub) of the sub-paths of each path's cluster, s (see module notes).

    Parameters
    ----------
    sin2_sum : (P,) sum of sin^2 of the surface grazing angles (> 0).
    n_bounces : (P,) surface bounces (at least 1 is used).
    path_length_m : (P,) unfolded path length L.
    gamma2 : (P,) Gamma^2 = 4 k^2 sigma^2 S at the carrier.
    mss : float
        Mean-square slope s^2 (both directions).
    sound_speed_mps : float

    Returns
    -------
    (P, n_sub) ndarray, increasing along each row.
    """
    s = np.asarray(sin2_sum, dtype=float)
    n = np.maximum(np.asarray(n_bounces, dtype=float), 1.0)
    sin2_one = np.clip(s / n, 0.0, 1.0)
    theta = np.arcsin(np.sqrt(sin2_one))
    s_dir = math.sqrt(mss / 2.0)
    # mean over evenly placed bounces of L1 L2 / L = L x (1 - x), x = (i - 1/2) / n
    l_h = np.asarray(path_length_m, dtype=float) * (2.0 * n * n + 1.0) / (12.0 * n * n)
    g2 = np.asarray(gamma2, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        n_scatter = np.where(g2 > 0, n * -np.expm1(-g2 / n) / -np.expm1(-g2), 1.0)
    beta2 = tilt_bin_moments(theta / s_dir, n_sub) * s_dir ** 2
    cross = sin2_one * s_dir ** 2
    return (2.0 * l_h * n_scatter / sound_speed_mps)[:, None] * (beta2 + cross[:, None])


def add_surface_scatter(channel, *, n_sub=SUBPATHS, sound_speed_mps=None, keep_grazing_rad=None):
    """The channel with a diffuse cluster added around every surface-interacting path.

    Parameters
    ----------
    channel : Channel
        Its ``surface`` (rms height, wind, sound speed at the top) and the paths'
        ``surface_grazing_sin2_sum`` and ``surface_bounces``; gains hold the coherent (Eckart)
        amplitude. A channel that already has scattered paths, or no active surface, is
        returned unchanged.
    n_sub : int
        Sub-paths per cluster.
    sound_speed_mps : float, optional
        Mean sound speed for the path lengths ``L = c tau`` (default the surface value).
    keep_grazing_rad : float, optional
        The seabed's critical grazing angle: energy scattered steeper than it is lost
        (:func:`arriving_scattered_fraction`). None keeps all of it (coherent + scattered = incident).

    Returns
    -------
    Channel
        The original paths (``scattered`` False) and the sub-paths (``scattered`` True, same
        bounce history, angles and Doppler factor as their parent, delays past the parent's,
        gains ``sqrt((1 - chi^2(f)) / n_sub) incident(f)`` times a fixed nominal phase).

    References
    ----------
    See the module docstring (Eckart 1953; Cox and Munk 1954).
    """
    motion = channel.surface
    if (channel.is_empty or motion is None or not motion.active or np.any(channel.scattered)):
        return channel
    c_top = float(motion.sound_speed_mps)
    sin2 = channel.surface_grazing_sin2_sum
    gamma2_f = rayleigh_parameter_squared(sin2, channel.freq_hz, motion.rms_height_m, c_top)   # (P, F)
    frac = scattered_fraction(gamma2_f)
    parents = np.flatnonzero((sin2 > 0) & (np.max(frac, axis=1) >= MIN_SCATTERED_FRACTION))
    if parents.size == 0:
        return channel
    # incident = coherent / chi; chi = exp(-Gamma^2 / 2) underflows only for paths with no power
    chi = np.exp(-0.5 * gamma2_f[parents])
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        incident = np.where(chi > 0, channel.gain[parents] / np.where(chi > 0, chi, 1.0), 0.0)
    incident = np.where(np.isfinite(incident), incident, 0.0)
    mss = float(mean_square_slope(motion.wind_speed_mps))
    n_b = np.maximum(channel.surface_bounces[parents], 1)
    kept = path_kept_fraction(sin2[parents], n_b, motion.wind_speed_mps, keep_grazing_rad)
    arriving = frac[parents] if keep_grazing_rad is None else arriving_scattered_fraction(
        gamma2_f[parents], n_b, kept)
    amp = np.sqrt(arriving / n_sub) * incident                     # (Q, F) per sub-path
    gamma2_c = surface_phase_std(sin2[parents], channel.carrier_hz, motion) ** 2
    c_mean = c_top if sound_speed_mps is None else float(sound_speed_mps)
    excess = cluster_excess_delays(sin2[parents], channel.surface_bounces[parents],
                                   c_mean * channel.delay_s[parents], gamma2_c,
                                   mss, c_mean, n_sub)
    q = parents.size
    phase = np.exp(1j * _GOLDEN_ANGLE * np.arange(1, q * n_sub + 1)).reshape(q, n_sub)
    new_gain = (amp[:, None, :] * phase[:, :, None]).reshape(q * n_sub, -1)
    rep = np.repeat(parents, n_sub)

    def both(name):
        value = getattr(channel, name)
        return np.concatenate([value, value[rep]])

    return dataclasses.replace(
        channel,
        delay_s=np.concatenate([channel.delay_s, (channel.delay_s[parents, None] + excess).ravel()]),
        gain=np.concatenate([channel.gain, new_gain]),
        doppler=both("doppler"), surface_bounces=both("surface_bounces"),
        bottom_bounces=both("bottom_bounces"), surface_grazing_sin2_sum=both("surface_grazing_sin2_sum"),
        launch_angle_deg=both("launch_angle_deg"), arrival_angle_deg=both("arrival_angle_deg"),
        scattered=np.concatenate([np.zeros(channel.n_paths, bool), np.ones(q * n_sub, bool)]),
        surface_doppler_spread_hz=None,
    )


def surface_power_budget(channel, freq_hz=None):
    """Band-mean coherent and scattered power of the surface paths: ``(coherent, scattered)``.

    A diagnostic of the energy bookkeeping (coherent + scattered = incident).
    """
    f = channel.band_grid(65) if freq_hz is None else np.atleast_1d(freq_hz)
    p = np.mean(np.abs(channel.gain_at(f)) ** 2, axis=1)
    surf = channel.surface_grazing_sin2_sum > 0
    return float(np.sum(p[surf & ~channel.scattered])), float(np.sum(p[channel.scattered]))


__all__ = ["add_surface_scatter", "kept_fraction", "arriving_scattered_fraction", "cluster_excess_delays", "mean_square_slope", "scattered_fraction",
           "scattered_doppler_spread_hz", "tilt_bin_moments", "surface_power_budget", "SUBPATHS"]
