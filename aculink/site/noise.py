"""Ambient-noise spectral level from the empirical fits to the Wenz curves.

Four sources, each a straight-line-in-log fit, added in power: turbulence (below ~10 Hz),
distant shipping (10-100 Hz), wind-driven surface agitation (100 Hz-100 kHz) and thermal
noise (above ~100 kHz). The spectral density is returned in dB re 1 uPa^2/Hz; the band level
(:func:`noise_band_level_db`) integrates the linear density over frequency and is in
dB re 1 uPa^2.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from scipy import integrate

from aculink.errors import check_array, check_range

__all__ = ["NoiseComponents", "noise_components_db", "noise_psd_db", "noise_band_level_db"]


class NoiseComponents(NamedTuple):
    """The four ambient-noise terms, each in dB re 1 uPa^2/Hz."""

    turbulence_db: np.ndarray
    shipping_db: np.ndarray
    wind_db: np.ndarray
    thermal_db: np.ndarray


def _inputs(freq_hz, shipping, wind_speed_mps):
    f = check_array("freq_hz", freq_hz, 0.0, low_open=True, unit="Hz") / 1000.0
    s = check_array("shipping", shipping, 0.0, 1.0)
    w = check_array("wind_speed_mps", wind_speed_mps, 0.0, unit="m/s")
    return f, s, w


def noise_components_db(freq_hz, shipping, wind_speed_mps) -> NoiseComponents:
    """The turbulence, shipping, wind and thermal noise terms, dB re 1 uPa^2/Hz.

    With f in kHz, shipping activity s in [0, 1] and wind speed w in m/s (log10 throughout):

    .. math::

        N_t &= 17 - 30 \\log f \\\\
        N_s &= 40 + 20 (s - 0.5) + 26 \\log f - 60 \\log(f + 0.03) \\\\
        N_w &= 50 + 7.5 \\sqrt{w} + 20 \\log f - 40 \\log(f + 0.4) \\\\
        N_{th} &= -15 + 20 \\log f

    Parameters
    ----------
    freq_hz : array_like
        Frequency, Hz, > 0.
    shipping : array_like
        Shipping activity, 0 (none) to 1 (heavy).
    wind_speed_mps : array_like
        Wind speed, m/s, >= 0 (the fits are given for wind at the usual 10 m height).

    Returns
    -------
    NoiseComponents
        ``turbulence_db``, ``shipping_db``, ``wind_db``, ``thermal_db``, broadcast arrays.

    References
    ----------
    R. F. W. Coates, Underwater Acoustic Systems (Macmillan, 1989/1990), the empirical noise
    fits; as used by M. Stojanovic, "On the relationship between capacity and distance in an
    underwater acoustic communication channel", ACM SIGMOBILE Mob. Comput. Commun. Rev. 11(4),
    34-43 (2007). The fits parameterize G. M. Wenz, "Acoustic ambient noise in the ocean:
    spectra and sources", J. Acoust. Soc. Am. 34(12), 1936-1956 (1962), Fig. 13.
    """
    f, s, w = _inputs(freq_hz, shipping, wind_speed_mps)
    lf = np.log10(f)
    turbulence = 17.0 - 30.0 * lf
    ship = 40.0 + 20.0 * (s - 0.5) + 26.0 * lf - 60.0 * np.log10(f + 0.03)
    wind = 50.0 + 7.5 * np.sqrt(w) + 20.0 * lf - 40.0 * np.log10(f + 0.4)
    thermal = -15.0 + 20.0 * lf
    return NoiseComponents(*np.broadcast_arrays(turbulence, ship, wind, thermal))


def noise_psd_db(freq_hz, shipping, wind_speed_mps):
    """Ambient-noise power spectral density, dB re 1 uPa^2/Hz: the four Wenz-curve fits of
    :func:`noise_components_db` summed in power.

    Parameters
    ----------
    freq_hz : array_like
        Frequency, Hz, > 0.
    shipping : array_like
        Shipping activity, 0 to 1.
    wind_speed_mps : array_like
        Wind speed, m/s, >= 0.

    Returns
    -------
    numpy.ndarray
        Noise spectral density level, dB re 1 uPa^2/Hz.

    References
    ----------
    R. F. W. Coates, Underwater Acoustic Systems (1989/1990); M. Stojanovic, ACM SIGMOBILE
    Mob. Comput. Commun. Rev. 11(4), 34-43 (2007); G. M. Wenz, J. Acoust. Soc. Am. 34,
    1936-1956 (1962).

    Examples
    --------
    >>> round(float(noise_psd_db(10e3, 0.5, 5.0)), 2)
    46.09
    """
    parts = np.stack(noise_components_db(freq_hz, shipping, wind_speed_mps))
    # logaddexp in base 10 over the four terms, without overflow at any level
    return 10.0 * np.logaddexp.reduce(parts * (np.log(10.0) / 10.0), axis=0) / np.log(10.0)


def _band_level_scalar(f_low_hz, f_high_hz, shipping, wind_speed_mps):
    # integrate over u = ln f so a band of several decades is one smooth integrand
    def integrand(u):
        f = np.exp(u)
        return 10.0 ** (noise_psd_db(f, shipping, wind_speed_mps) / 10.0) * f

    power, _ = integrate.quad(integrand, np.log(f_low_hz), np.log(f_high_hz),
                              epsabs=0.0, epsrel=1e-10, limit=200)
    return 10.0 * np.log10(power)


def noise_band_level_db(f_low_hz, f_high_hz, shipping, wind_speed_mps):
    """Ambient-noise level in a band, dB re 1 uPa^2: the integral of the linear noise power
    spectral density of :func:`noise_psd_db` from ``f_low_hz`` to ``f_high_hz``.

    Parameters
    ----------
    f_low_hz, f_high_hz : array_like
        Band edges, Hz, 0 < f_low_hz < f_high_hz.
    shipping : array_like
        Shipping activity, 0 to 1.
    wind_speed_mps : array_like
        Wind speed, m/s, >= 0.

    Returns
    -------
    numpy.ndarray or float
        Band noise level, dB re 1 uPa^2 (a float for scalar inputs).

    Raises
    ------
    AculinkError
        When a lower edge is not below its upper edge, or for out-of-range inputs.

    Notes
    -----
    Integrated numerically (:func:`scipy.integrate.quad` in log frequency, relative tolerance
    1e-10).

    References
    ----------
    As :func:`noise_psd_db`.

    Examples
    --------
    >>> round(float(noise_band_level_db(10e3, 20e3, 0.5, 5.0)), 2)
    83.25
    """
    lo, hi, s, w = np.broadcast_arrays(
        check_array("f_low_hz", f_low_hz, 0.0, low_open=True, unit="Hz"),
        check_array("f_high_hz", f_high_hz, 0.0, low_open=True, unit="Hz"),
        check_array("shipping", shipping, 0.0, 1.0),
        check_array("wind_speed_mps", wind_speed_mps, 0.0, unit="m/s"))
    out = np.empty(lo.shape)
    for idx in np.ndindex(lo.shape):
        if np.isnan([lo[idx], hi[idx], s[idx], w[idx]]).any():
            out[idx] = np.nan
            continue
        if not lo[idx] < hi[idx]:
            check_range("f_high_hz", hi[idx], lo[idx], low_open=True, unit="Hz")
        out[idx] = _band_level_scalar(lo[idx], hi[idx], s[idx], w[idx])
    return float(out) if out.ndim == 0 else out
