"""Absorption of sound in sea water, dB/km, from three published formulas.

* :func:`absorption_francois_garrison` - Francois and Garrison (1982), boric acid, magnesium
  sulphate and pure-water terms with temperature, salinity, depth and pH;
* :func:`absorption_ainslie_mccolm` - Ainslie and McColm (1998), a simpler fit to the same
  physics;
* :func:`absorption_thorp` - Thorp (1967) in its dB/km form with the later high-frequency
  terms; frequency only.

Frequencies are in Hz at the interface (converted to kHz inside, where the formulas live) and
depths in m; the result is in dB/km because that is how every published table prints it.
Multiply by range in km, or by ``range_m / 1000``, to get a loss in dB.
"""

from __future__ import annotations

import numpy as np

from aculink.errors import check_array, validity_note

__all__ = [
    "absorption_francois_garrison",
    "absorption_ainslie_mccolm",
    "absorption_thorp",
    "francois_garrison_validity_warnings",
    "ainslie_mccolm_validity_warnings",
]


def _freq_khz(freq_hz):
    return check_array("freq_hz", freq_hz, 0.0, low_open=True, unit="Hz") / 1000.0


def _inputs(temperature_c, salinity_psu, depth_m, ph):
    t = check_array("temperature_c", temperature_c, -273.15, low_open=True, unit="degC")
    s = check_array("salinity_psu", salinity_psu, 0.0, unit="psu")
    z = check_array("depth_m", depth_m, 0.0, unit="m")
    p = check_array("ph", ph, 0.0, 14.0)
    return t, s, z, p


def _relaxation(a, fr, f):
    """Single-relaxation absorption a fr f^2 / (fr^2 + f^2)."""
    return a * fr * f * f / (fr * fr + f * f)


def absorption_francois_garrison(freq_hz, temperature_c, salinity_psu, depth_m, ph=8.0):
    """Sound absorption in sea water, dB/km, after Francois and Garrison (1982).

    .. math::

        \\alpha = \\frac{A_1 P_1 f_1 f^2}{f_1^2 + f^2} + \\frac{A_2 P_2 f_2 f^2}{f_2^2 + f^2}
                  + A_3 P_3 f^2

    with f in kHz. Boric acid: :math:`A_1 = (8.86/c)\\,10^{0.78\\,pH - 5}`, :math:`P_1 = 1`,
    :math:`f_1 = 2.8\\sqrt{S/35}\\,10^{4 - 1245/(273 + T)}`. Magnesium sulphate:
    :math:`A_2 = 21.44 (S/c)(1 + 0.025 T)`, :math:`P_2 = 1 - 1.37\\times10^{-4} z
    + 6.2\\times10^{-9} z^2`, :math:`f_2 = 8.17\\,10^{8 - 1990/(273 + T)} / (1 + 0.0018 (S - 35))`.
    Pure water: :math:`P_3 = 1 - 3.83\\times10^{-5} z + 4.9\\times10^{-10} z^2` and a cubic
    :math:`A_3(T)` with separate coefficients for T <= 20 and T > 20 deg C. The formula carries
    its own sound speed :math:`c = 1412 + 3.21 T + 1.19 S + 0.0167 z`.

    Parameters
    ----------
    freq_hz : array_like
        Frequency, Hz, > 0.
    temperature_c : array_like
        Temperature, deg C.
    salinity_psu : array_like
        Salinity, >= 0.
    depth_m : array_like
        Depth, m, >= 0.
    ph : array_like, optional
        pH, 0 to 14 (default 8.0).

    Returns
    -------
    numpy.ndarray
        Absorption coefficient, dB/km.

    Raises
    ------
    AculinkError
        For non-positive frequency, negative salinity or depth, pH outside 0..14, infinities.

    Notes
    -----
    The boric-acid constant is 8.86; some transcriptions print 8.68, which makes the boric
    term 2% low. Stated validity 200 Hz to 1 MHz and depth below 5 km (see
    :func:`francois_garrison_validity_warnings`); within 5% in the MgSO4 and pure-water domains.

    References
    ----------
    R. E. Francois and G. R. Garrison, "Sound absorption based on ocean measurements. Part I:
    Pure water and magnesium sulfate contributions", J. Acoust. Soc. Am. 72(3), 896-907
    (1982); "Part II: Boric acid contribution and equation for total absorption",
    J. Acoust. Soc. Am. 72(6), 1879-1890 (1982), the total-absorption equation.
    """
    f = _freq_khz(freq_hz)
    t, s, z, ph = _inputs(temperature_c, salinity_psu, depth_m, ph)
    c = 1412.0 + 3.21 * t + 1.19 * s + 0.0167 * z
    kelvin = 273.0 + t

    a1 = 8.86 / c * 10.0 ** (0.78 * ph - 5.0)
    f1 = 2.8 * np.sqrt(s / 35.0) * 10.0 ** (4.0 - 1245.0 / kelvin)

    a2 = 21.44 * s / c * (1.0 + 0.025 * t)
    p2 = 1.0 - 1.37e-4 * z + 6.2e-9 * z * z
    f2 = 8.17 * 10.0 ** (8.0 - 1990.0 / kelvin) / (1.0 + 0.0018 * (s - 35.0))

    a3 = np.where(t <= 20.0,
                  4.937e-4 + t * (-2.59e-5 + t * (9.11e-7 + t * -1.50e-8)),
                  3.964e-4 + t * (-1.146e-5 + t * (1.45e-7 + t * -6.5e-10)))
    p3 = 1.0 - 3.83e-5 * z + 4.9e-10 * z * z

    return _relaxation(a1, f1, f) + _relaxation(a2 * p2, f2, f) + a3 * p3 * f * f


def francois_garrison_validity_warnings(freq_hz, depth_m) -> list[str]:
    """Lines describing inputs outside the Francois-Garrison (1982) validity range.

    Ranges: frequency 200 Hz to 1 MHz, depth 0 to 5000 m (Francois and Garrison 1982b,
    J. Acoust. Soc. Am. 72(6), 1879-1890).
    """
    name = "Francois-Garrison (1982) absorption"
    notes = [validity_note(name, "frequency", freq_hz, 200.0, 1.0e6, "Hz"),
             validity_note(name, "depth", depth_m, 0.0, 5000.0, "m")]
    return [n for n in notes if n]


def absorption_ainslie_mccolm(freq_hz, temperature_c, salinity_psu, depth_m, ph=8.0):
    """Sound absorption in sea water, dB/km, after Ainslie and McColm (1998).

    .. math::

        \\alpha = 0.106 \\frac{f_1 f^2}{f_1^2 + f^2} e^{(pH - 8)/0.56}
                + 0.52 \\left(1 + \\frac{T}{43}\\right)\\frac{S}{35}\\frac{f_2 f^2}{f_2^2 + f^2}
                  e^{-z/6}
                + 0.00049 f^2 e^{-(T/27 + z/17)}

    with f in kHz, z in **km**, :math:`f_1 = 0.78\\sqrt{S/35}\\,e^{T/26}` kHz and
    :math:`f_2 = 42\\,e^{T/17}` kHz.

    Parameters
    ----------
    freq_hz : array_like
        Frequency, Hz, > 0.
    temperature_c : array_like
        Temperature, deg C.
    salinity_psu : array_like
        Salinity, >= 0.
    depth_m : array_like
        Depth, m, >= 0 (converted to km inside the formula).
    ph : array_like, optional
        pH, 0 to 14 (default 8.0).

    Returns
    -------
    numpy.ndarray
        Absorption coefficient, dB/km.

    Notes
    -----
    The authors state agreement with Francois and Garrison (1982) to within 10% for
    100 Hz to 1 MHz, -6 to 35 deg C, pH 7.7 to 8.3, S 5 to 50 and z 0 to 7 km; see
    :func:`ainslie_mccolm_validity_warnings`.

    References
    ----------
    M. A. Ainslie and J. G. McColm, "A simplified formula for viscous and chemical absorption
    in sea water", J. Acoust. Soc. Am. 103(3), 1671-1672 (1998).
    """
    f = _freq_khz(freq_hz)
    t, s, z, ph = _inputs(temperature_c, salinity_psu, depth_m, ph)
    z_km = z / 1000.0
    f1 = 0.78 * np.sqrt(s / 35.0) * np.exp(t / 26.0)
    f2 = 42.0 * np.exp(t / 17.0)
    boric = _relaxation(0.106 * np.exp((ph - 8.0) / 0.56), f1, f)
    mgso4 = _relaxation(0.52 * (1.0 + t / 43.0) * (s / 35.0) * np.exp(-z_km / 6.0), f2, f)
    water = 0.00049 * f * f * np.exp(-(t / 27.0 + z_km / 17.0))
    return boric + mgso4 + water


def ainslie_mccolm_validity_warnings(freq_hz, temperature_c, salinity_psu, depth_m,
                                     ph=8.0) -> list[str]:
    """Lines describing inputs outside the domain where Ainslie and McColm (1998) claim 10%
    agreement with Francois and Garrison: 100 Hz to 1 MHz, -6 to 35 deg C, S 5 to 50,
    pH 7.7 to 8.3, depth 0 to 7000 m (J. Acoust. Soc. Am. 103(3), 1671-1672).
    """
    name = "Ainslie-McColm (1998) absorption"
    notes = [validity_note(name, "frequency", freq_hz, 100.0, 1.0e6, "Hz"),
             validity_note(name, "temperature", temperature_c, -6.0, 35.0, "degC"),
             validity_note(name, "salinity", salinity_psu, 5.0, 50.0, "psu"),
             validity_note(name, "pH", ph, 7.7, 8.3),
             validity_note(name, "depth", depth_m, 0.0, 7000.0, "m")]
    return [n for n in notes if n]


def absorption_thorp(freq_hz):
    """Sound absorption, dB/km, from Thorp's (1967) formula in its dB/km form.

    .. math::

        \\alpha = \\frac{0.11 f^2}{1 + f^2} + \\frac{44 f^2}{4100 + f^2}
                  + 2.75\\times10^{-4} f^2 + 0.003

    with f in kHz. Thorp's fit implicitly assumes about 4 deg C and about 1 km depth; it has no
    temperature, salinity, depth or pH dependence and differs from Francois-Garrison by tens of
    per cent in warm or shallow water. Use it for comparisons with the communications
    literature, not for a site.

    Parameters
    ----------
    freq_hz : array_like
        Frequency, Hz, > 0.

    Returns
    -------
    numpy.ndarray
        Absorption coefficient, dB/km.

    References
    ----------
    W. H. Thorp, "Analytic description of the low-frequency attenuation coefficient",
    J. Acoust. Soc. Am. 42(1), 270 (1967) (dB/kyd form with 0.1 and 40); the dB/km form with
    the 2.75e-4 f^2 + 0.003 terms as used by M. Stojanovic, "On the relationship between
    capacity and distance in an underwater acoustic communication channel", ACM SIGMOBILE
    Mob. Comput. Commun. Rev. 11(4), 34-43 (2007).
    """
    f2 = _freq_khz(freq_hz) ** 2
    return 0.11 * f2 / (1.0 + f2) + 44.0 * f2 / (4100.0 + f2) + 2.75e-4 * f2 + 0.003
