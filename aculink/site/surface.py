"""The sea surface: coherent reflection from a rough surface and a wind-driven wave spectrum.

The surface is pressure-release (R0 = -1) roughened by waves with Gaussian elevations of rms
height sigma. The waves come from the Pierson-Moskowitz spectrum of a fully developed sea, which
is parameterised by the wind speed at 19.5 m above the sea. Site files give the wind at the
usual 10 m anemometer height; this module converts it with
:data:`aculink.constants.WIND_19P5_OVER_10` (a neutral logarithmic wind profile) unless the
caller says the wind is already at 19.5 m.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

from aculink.constants import (
    GRAVITY_MPS2,
    PIERSON_MOSKOWITZ_ALPHA,
    PIERSON_MOSKOWITZ_BETA,
    WIND_19P5_OVER_10,
)
from aculink.errors import AculinkError, check_array, check_range

__all__ = [
    "surface_coherent_reflection",
    "pierson_moskowitz_spectrum",
    "rms_wave_height_pierson_moskowitz",
    "significant_wave_height_pierson_moskowitz",
    "surface_vertical_velocity_rms",
    "site_with_wind",
    "mean_square_slope",
    "kept_fraction",
    "arriving_scattered_fraction",
    "surviving_energy_fraction",
    "rayleigh_parameter_squared",
    "path_kept_fraction",
    "scatter_keep_angle_rad",
]

#: Wind heights (m) whose conversion to 19.5 m is known here.
_WIND_FACTORS = {10.0: WIND_19P5_OVER_10, 19.5: 1.0}


def _wind_19p5(wind_speed_mps, height_m):
    u = check_array("wind_speed_mps", wind_speed_mps, 0.0, unit="m/s")
    try:
        return u * _WIND_FACTORS[float(height_m)]
    except (KeyError, TypeError, ValueError):
        raise AculinkError(f"height_m = {height_m!r}: wind height must be 10 or 19.5 m") from None


def surface_coherent_reflection(grazing_rad, freq_hz, rms_height_m, sound_speed_mps):
    """Coherent (specular) reflection coefficient of a rough pressure-release sea surface.

    .. math::

        R_{coh} = -\\exp(-2 k^2 \\sigma^2 \\sin^2\\theta) = -\\exp(-\\Gamma^2 / 2),
        \\quad k = 2\\pi f / c, \\quad \\Gamma = 2 k \\sigma \\sin\\theta

    where Gamma is the Rayleigh roughness parameter; the loss is 20 log10 e * Gamma^2 / 2
    = 4.343 Gamma^2 dB per bounce. The coefficient is real, so it is the same in either
    time convention.

    Parameters
    ----------
    grazing_rad : array_like
        Grazing angle at the surface, rad, 0 to pi/2.
    freq_hz : array_like
        Frequency, Hz, >= 0.
    rms_height_m : array_like
        Rms surface elevation sigma, m, >= 0.
    sound_speed_mps : array_like
        Sound speed at the surface, m/s, > 0.

    Returns
    -------
    numpy.ndarray
        Real reflection coefficient in [-1, 0).

    Notes
    -----
    Kirchhoff (tangent-plane) approximation for Gaussian surface heights; it neglects
    shadowing, so it overestimates the loss at very low grazing angles when Gamma is large.

    References
    ----------
    C. Eckart, "The scattering of sound from the sea surface", J. Acoust. Soc. Am. 25(3),
    566-570 (1953).
    """
    theta = check_array("grazing_rad", grazing_rad, 0.0, np.pi / 2, unit="rad")
    f = check_array("freq_hz", freq_hz, 0.0, unit="Hz")
    sigma = check_array("rms_height_m", rms_height_m, 0.0, unit="m")
    c = check_array("sound_speed_mps", sound_speed_mps, 0.0, low_open=True, unit="m/s")
    k = 2.0 * np.pi * f / c
    return -np.exp(-2.0 * (k * sigma * np.sin(theta)) ** 2)


def pierson_moskowitz_spectrum(omega, wind_speed_mps, *, height_m=10.0):
    """Pierson-Moskowitz elevation spectrum of a fully developed sea, m^2 s/rad.

    .. math::

        S(\\omega) = \\frac{\\alpha g^2}{\\omega^5}
                     \\exp\\left[-\\beta \\left(\\frac{\\omega_0}{\\omega}\\right)^4\\right],
        \\quad \\omega_0 = g / U_{19.5}, \\quad \\alpha = 8.1\\times10^{-3}, \\ \\beta = 0.74

    one-sided in angular frequency, so that the elevation variance is the integral of S over
    omega from 0 to infinity.

    Parameters
    ----------
    omega : array_like
        Angular frequency, rad/s, >= 0 (S = 0 at omega = 0).
    wind_speed_mps : array_like
        Wind speed, m/s, >= 0, at ``height_m``.
    height_m : float, optional
        Height of the wind speed: 10 (default; converted to 19.5 m with
        ``WIND_19P5_OVER_10``) or 19.5.

    Returns
    -------
    numpy.ndarray
        Spectral density, m^2 s/rad.

    References
    ----------
    W. J. Pierson and L. Moskowitz, "A proposed spectral form for fully developed wind seas
    based on the similarity theory of S. A. Kitaigorodskii", J. Geophys. Res. 69(24),
    5181-5190 (1964).
    """
    w = check_array("omega", omega, 0.0, unit="rad/s")
    u = _wind_19p5(wind_speed_mps, height_m)
    w, u = np.broadcast_arrays(w, u)
    out = np.zeros(w.shape)
    live = (w > 0.0) & (u > 0.0)
    wl, w0 = w[live], GRAVITY_MPS2 / u[live]
    out[live] = (PIERSON_MOSKOWITZ_ALPHA * GRAVITY_MPS2 ** 2 / wl ** 5
                 * np.exp(-PIERSON_MOSKOWITZ_BETA * (w0 / wl) ** 4))
    out[np.isnan(w) | np.isnan(u)] = np.nan
    return out


def rms_wave_height_pierson_moskowitz(wind_speed_mps, *, height_m=10.0):
    """Rms surface elevation sigma_eta of a fully developed Pierson-Moskowitz sea, m.

    The variance is the zeroth spectral moment, obtained in closed form with the substitution
    x = beta (omega0/omega)^4:

    .. math::

        \\sigma_\\eta^2 = \\int_0^\\infty S(\\omega)\\,d\\omega
                        = \\frac{\\alpha g^2}{4 \\beta \\omega_0^4}
                        = \\frac{\\alpha U_{19.5}^4}{4 \\beta g^2},
        \\qquad \\sigma_\\eta = 0.05231\\,U_{19.5}^2 / g

    Parameters
    ----------
    wind_speed_mps : array_like
        Wind speed, m/s, >= 0, at ``height_m`` (default 10 m, the site-file convention;
        converted to 19.5 m with ``aculink.constants.WIND_19P5_OVER_10`` = 1.06).
    height_m : float, optional
        10 or 19.5.

    Returns
    -------
    numpy.ndarray
        Rms elevation, m (the significant wave height is four times this).

    References
    ----------
    W. J. Pierson and L. Moskowitz, J. Geophys. Res. 69(24), 5181-5190 (1964).
    """
    u = _wind_19p5(wind_speed_mps, height_m)
    return np.sqrt(PIERSON_MOSKOWITZ_ALPHA / (4.0 * PIERSON_MOSKOWITZ_BETA)) * u * u / GRAVITY_MPS2


def significant_wave_height_pierson_moskowitz(wind_speed_mps, *, height_m=10.0):
    """Significant wave height Hs = 4 sigma_eta = 0.2092 U_19.5^2 / g of a fully developed
    Pierson-Moskowitz sea, m.

    Parameters
    ----------
    wind_speed_mps : array_like
        Wind speed, m/s, >= 0, at ``height_m`` (10 m by default, converted to 19.5 m).
    height_m : float, optional
        10 or 19.5.

    Returns
    -------
    numpy.ndarray
        Significant wave height (spectral, 4 sqrt(m0)), m.

    References
    ----------
    W. J. Pierson and L. Moskowitz, J. Geophys. Res. 69(24), 5181-5190 (1964); Hs = 4 sqrt(m0)
    is the usual spectral definition of significant wave height.
    """
    return 4.0 * rms_wave_height_pierson_moskowitz(wind_speed_mps, height_m=height_m)


def surface_vertical_velocity_rms(wind_speed_mps, *, height_m=10.0):
    """Rms vertical velocity of the sea surface in a fully developed Pierson-Moskowitz sea, m/s.

    The vertical velocity spectrum is omega^2 S(omega), so with x = beta (omega0/omega)^4,
    omega^-3 d omega = -omega^2 dx / (4 beta omega0^4) and omega^2 = (beta omega0^4 / x)^(1/2):

    .. math::

        \\sigma_v^2 = \\int_0^\\infty \\omega^2 S(\\omega)\\,d\\omega
                    = \\alpha g^2 \\int_0^\\infty \\omega^{-3}
                      e^{-\\beta \\omega_0^4 / \\omega^4}\\,d\\omega
                    = \\frac{\\alpha g^2}{4 \\sqrt{\\beta}\\,\\omega_0^2}
                      \\int_0^\\infty x^{-1/2} e^{-x}\\,dx
                    = \\frac{\\alpha g^2 \\Gamma(1/2)}{4 \\sqrt{\\beta}\\,\\omega_0^2}
                    = \\frac{\\alpha U_{19.5}^2}{4} \\sqrt{\\frac{\\pi}{\\beta}}

    using omega0 = g/U_19.5. It sets the Doppler spread of surface-reflected paths.

    Parameters
    ----------
    wind_speed_mps : array_like
        Wind speed, m/s, >= 0, at ``height_m`` (10 m by default, converted to 19.5 m).
    height_m : float, optional
        10 or 19.5.

    Returns
    -------
    numpy.ndarray
        Rms vertical surface velocity, m/s (about 0.065 U_19.5).

    References
    ----------
    W. J. Pierson and L. Moskowitz, J. Geophys. Res. 69(24), 5181-5190 (1964), the spectrum;
    the second moment is derived above.
    """
    u = _wind_19p5(wind_speed_mps, height_m)
    return np.sqrt(PIERSON_MOSKOWITZ_ALPHA * np.sqrt(np.pi / PIERSON_MOSKOWITZ_BETA) / 4.0) * u


def site_with_wind(site, wind_speed_mps, *, field="wind speed"):
    """A copy of ``site`` with the wind at 10 m set for both the surface and the noise.

    The rms wave height follows the fully developed sea of the new wind
    (:func:`rms_wave_height_pierson_moskowitz`, [PiersonMoskowitz1964]). ``None`` returns the
    site unchanged. ``field`` names the value in an error message.

    Raises
    ------
    AculinkError
        For a wind outside the site file's allowed range.
    """
    if wind_speed_mps is None:
        return site
    import dataclasses

    from aculink.site.model import LIMITS

    low, high, _, _, unit = LIMITS["surface"]["wind_speed_mps"]
    w = check_range(field, wind_speed_mps, low, high, unit=unit)
    surface = dataclasses.replace(site.surface, wind_speed_mps=w,
                                  rms_height_m=float(rms_wave_height_pierson_moskowitz(w)))
    noise = dataclasses.replace(site.noise, wind_speed_mps=w)
    return site.replace(surface=surface, noise=noise)


#: Cox and Munk (1954) clean-surface mean-square slope: s^2 = A + B U_12.5 (from memory).
COX_MUNK_A, COX_MUNK_B = 3.0e-3, 5.12e-3
#: Roughness length of the neutral logarithmic wind profile, m (the one behind
#: ``aculink.constants.WIND_19P5_OVER_10``); gives U_12.5 / U_10 = 1.020.
_Z0_M = 1.5e-4
WIND_12P5_OVER_10 = math.log(12.5 / _Z0_M) / math.log(10.0 / _Z0_M)


def mean_square_slope(wind_speed_mps):
    """Mean-square slope of a clean sea surface (both directions together).

    Parameters
    ----------
    wind_speed_mps : array_like
        Wind at 10 m, m/s (converted to 12.5 m with a neutral log profile, factor 1.020).

    Returns
    -------
    numpy.ndarray
        ``s^2 = 0.003 + 5.12e-3 U_12.5`` (dimensionless).

    References
    ----------
    Cox and Munk (1954), J. Opt. Soc. Am. 44(11), 838-850, clean-surface fit (from memory).
    """
    u = np.asarray(wind_speed_mps, dtype=float) * WIND_12P5_OVER_10
    return COX_MUNK_A + COX_MUNK_B * u


def kept_fraction(sin2_one, mss, keep_grazing_rad):
    """Share of the energy scattered at one bounce that leaves below ``keep_grazing_rad``.

    A facet tilted by beta in the vertical plane sends the reflection out at grazing angle
    theta + 2 beta; beta is the Cox-Munk in-plane tilt (rms ``sqrt(mss / 2)``) truncated to
    ``|beta| < theta`` as in :func:`cluster_excess_delays`. Energy sent steeper than the seabed's
    critical grazing angle leaves the waveguide through the bed within a few bounces, so it does not
    reach the receiver (our modelling choice; the critical angle from Snell's law [Jensen2011]).

    Parameters
    ----------
    sin2_one : (P,) sin^2 of one bounce's grazing angle.
    mss : float
        Mean-square slope (both directions).
    keep_grazing_rad : float or None
        The seabed's critical grazing angle; None (no critical angle) keeps everything.

    Returns
    -------
    (P,) ndarray in [0, 1].
    """
    sin2_one = np.asarray(sin2_one, dtype=float)
    if keep_grazing_rad is None:
        return np.ones_like(sin2_one)
    theta = np.arcsin(np.sqrt(np.clip(sin2_one, 0.0, 1.0)))
    s_dir = math.sqrt(mss / 2.0)
    top = np.minimum((keep_grazing_rad - theta) / 2.0, theta)
    with np.errstate(invalid="ignore", divide="ignore"):
        kept = (special.ndtr(top / s_dir) - special.ndtr(-theta / s_dir)) / (
            special.ndtr(theta / s_dir) - special.ndtr(-theta / s_dir))
    return np.clip(np.nan_to_num(kept, nan=1.0), 0.0, 1.0)


def arriving_scattered_fraction(gamma2, n_bounces, kept):
    """Share of a path's incident energy that arrives scattered, over its ``n`` bounces.

    At each bounce the coherent share ``exp(-Gamma^2 / n)`` goes on specularly and the scattered
    rest goes on at the rate ``kept`` (:func:`kept_fraction`), so the energy that arrives is
    ``(exp(-Gamma^2/n) + (1 - exp(-Gamma^2/n)) kept)^n`` of the incident, of which ``exp(-Gamma^2)``
    is coherent. With ``kept = 1`` this is ``1 - exp(-Gamma^2)`` [Eckart1953] (nothing lost).
    """
    g2 = np.asarray(gamma2, dtype=float)
    return np.clip(surviving_energy_fraction(g2, n_bounces, kept) - np.exp(-g2), 0.0, 1.0)


def surviving_energy_fraction(gamma2, n_bounces, kept):
    """Share of a surface path's incident (smooth-surface) energy that reaches the receiver,
    coherent and scattered together: ``(exp(-Gamma^2/n) + (1 - exp(-Gamma^2/n)) kept)^n`` (see
    :func:`arriving_scattered_fraction`); 1 when nothing is lost past the critical angle."""
    g2 = np.asarray(gamma2, dtype=float)
    n = np.maximum(np.asarray(n_bounces, dtype=float), 1.0)
    kept = np.asarray(kept, dtype=float)
    if g2.ndim == n.ndim + 1:
        n, kept = n[..., None], kept[..., None]
    per = np.exp(-g2 / n)
    return np.exp(n * np.log(per + (1.0 - per) * kept))


def scatter_keep_angle_rad(site):
    """The seabed's critical grazing angle at the deepest water, rad (energy scattered steeper
    leaves through the bed); None for a bed that is not faster than the water."""
    from aculink.site.seabed import critical_grazing_angle_rad

    c_w = float(site.water.profile.speed(np.array([site.seabed.max_depth_m]))[0])
    theta = float(critical_grazing_angle_rad(c_w, float(site.seabed.sound_speed_mps)))
    return None if not np.isfinite(theta) else theta


def rayleigh_parameter_squared(sin2_sum, freq_hz, rms_height_m, sound_speed_mps):
    """``Gamma^2 = 4 k^2 sigma^2 S`` of a path, with ``S`` the sum of sin^2 of its surface grazing
    angles and ``k = 2 pi f / c`` [Eckart1953]: shape ``sin2_sum.shape + (F,)``. Its coherent
    intensity is ``exp(-Gamma^2)`` of the incident (:func:`surface_coherent_reflection` per bounce)."""
    k = 2.0 * np.pi * np.atleast_1d(np.asarray(freq_hz, dtype=float)) / sound_speed_mps
    return 4.0 * (k * rms_height_m) ** 2 * np.asarray(sin2_sum, dtype=float)[..., None]


def path_kept_fraction(sin2_sum, n_bounces, wind_speed_mps, keep_grazing_rad):
    """:func:`kept_fraction` of a path at its mean bounce (``sin^2 = S / n``, equal grazing angles)
    with the Cox-Munk slope of the wind."""
    n = np.maximum(np.asarray(n_bounces), 1)
    return kept_fraction(np.asarray(sin2_sum, dtype=float) / n, float(mean_square_slope(wind_speed_mps)),
                         keep_grazing_rad)
