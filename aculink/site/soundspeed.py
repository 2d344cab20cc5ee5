"""Sound speed in sea water from temperature, salinity and depth or pressure.

Three published equations, all numpy-vectorised and broadcasting:

* :func:`sound_speed_mackenzie` - Mackenzie (1981) nine-term equation in depth;
* :func:`sound_speed_unesco` - Chen and Millero (1977) as adopted by UNESCO (Fofonoff and
  Millard 1983), in pressure;
* :func:`sound_speed_teos10` - TEOS-10 through :mod:`gsw` (75-term specific-volume fit),
  converting depth to pressure properly.

Depth is positive downward from the mean surface. Pressure is sea pressure (absolute minus
one standard atmosphere) in dbar, the oceanographers' unit, kept only at this edge. NaN inputs
give NaN outputs; infinite or physically impossible inputs raise
:class:`~aculink.errors.AculinkError`. Inputs inside the physics but outside the range a formula
was fitted to are reported by the ``*_validity_warnings`` helpers, which the site summary
prints.
"""

from __future__ import annotations

import gsw
import numpy as np

from aculink.errors import AculinkError, check_array, validity_note

__all__ = [
    "sound_speed_mackenzie",
    "sound_speed_unesco",
    "sound_speed_teos10",
    "pressure_from_depth",
    "depth_from_pressure",
    "mackenzie_validity_warnings",
    "unesco_validity_warnings",
    "teos10_validity_warnings",
]

#: Ratio T68 / T90 of the IPTS-68 and ITS-90 temperature scales in the ocean range
#: (Saunders 1990, WOCE Newsletter 10; as quoted by Fofonoff and Millard users).
_T68_PER_T90 = 1.00024


def _temperature(value):
    return check_array("temperature_c", value, unit="degC")


def _salinity(value):
    return check_array("salinity_psu", value, 0.0, unit="psu")


def _depth(value):
    return check_array("depth_m", value, 0.0, unit="m")


def _pressure(value):
    return check_array("pressure_dbar", value, 0.0, unit="dbar")


def _latitude(value):
    return check_array("latitude_deg", value, -90.0, 90.0, unit="deg")


def sound_speed_mackenzie(temperature_c, salinity_psu, depth_m):
    """Sound speed from the Mackenzie (1981) nine-term equation.

    .. math::

        c = 1448.96 + 4.591 T - 5.304\\times10^{-2} T^2 + 2.374\\times10^{-4} T^3
            + 1.340 (S - 35) + 1.630\\times10^{-2} D + 1.675\\times10^{-7} D^2
            - 1.025\\times10^{-2} T (S - 35) - 7.139\\times10^{-13} T D^3

    Parameters
    ----------
    temperature_c : array_like
        In-situ temperature, deg C.
    salinity_psu : array_like
        Salinity, parts per thousand (practical salinity is used interchangeably), >= 0.
    depth_m : array_like
        Depth below the surface, m, >= 0 (depth, not pressure).

    Returns
    -------
    numpy.ndarray
        Sound speed, m/s, broadcast over the inputs.

    Raises
    ------
    AculinkError
        For infinite inputs, negative salinity or negative depth.

    Notes
    -----
    Stated validity: T -2 to 30 deg C, S 25 to 40, D 0 to 8000 m, standard error 0.070 m/s.
    Outside it the arithmetic still runs; see :func:`mackenzie_validity_warnings`.

    References
    ----------
    K. V. Mackenzie, "Nine-term equation for sound speed in the oceans", J. Acoust. Soc. Am.
    70(3), 807-812 (1981), eq. (1); check value c(25 degC, 35, 1000 m) = 1550.744 m/s.

    Examples
    --------
    >>> round(float(sound_speed_mackenzie(25.0, 35.0, 1000.0)), 3)
    1550.744
    """
    t = _temperature(temperature_c)
    s = _salinity(salinity_psu) - 35.0
    d = _depth(depth_m)
    return (1448.96 + t * (4.591 + t * (-5.304e-2 + t * 2.374e-4)) + 1.340 * s
            + d * (1.630e-2 + d * 1.675e-7) - 1.025e-2 * t * s - 7.139e-13 * t * d ** 3)


def mackenzie_validity_warnings(temperature_c, salinity_psu, depth_m) -> list[str]:
    """Lines describing inputs outside the Mackenzie (1981) validity range.

    Ranges: temperature -2 to 30 deg C, salinity 25 to 40, depth 0 to 8000 m (Mackenzie 1981,
    J. Acoust. Soc. Am. 70(3), 807-812). An empty list means every input is inside.
    """
    name = "Mackenzie (1981) sound speed"
    notes = [validity_note(name, "temperature", temperature_c, -2.0, 30.0, "degC"),
             validity_note(name, "salinity", salinity_psu, 25.0, 40.0, "psu"),
             validity_note(name, "depth", depth_m, 0.0, 8000.0, "m")]
    return [n for n in notes if n]


# Chen and Millero (1977) coefficients as printed by Fofonoff and Millard (1983), IPTS-68.
# Each row lists the polynomial in T for one power of P (bar).
_CW = ((1402.388, 5.03711, -5.80852e-2, 3.3420e-4, -1.47800e-6, 3.1464e-9),
       (0.153563, 6.8982e-4, -8.1788e-6, 1.3621e-7, -6.1185e-10),
       (3.1260e-5, -1.7107e-6, 2.5974e-8, -2.5335e-10, 1.0405e-12),
       (-9.7729e-9, 3.8504e-10, -2.3643e-12))
_A = ((1.389, -1.262e-2, 7.164e-5, 2.006e-6, -3.21e-8),
      (9.4742e-5, -1.2580e-5, -6.4885e-8, 1.0507e-8, -2.0122e-10),
      (-3.9064e-7, 9.1041e-9, -1.6002e-10, 7.988e-12),
      (1.100e-10, 6.649e-12, -3.389e-13))
_B = ((-1.922e-2, -4.42e-5),
      (7.3637e-5, 1.7945e-7))
_D = ((1.727e-3,),
      (-7.9836e-6,))


def _poly_tp(rows, t, p):
    """Sum over k of P^k times the polynomial in T whose ascending coefficients are rows[k]."""
    return np.polynomial.polynomial.polyval(p, [np.polynomial.polynomial.polyval(t, r) for r in rows],
                                            tensor=False)


def sound_speed_unesco(temperature_c, salinity_psu, pressure_dbar, *, ipts68=False):
    """Sound speed from the UNESCO (Chen and Millero 1977) equation.

    .. math::

        c(S, T, P) = C_w(T, P) + A(T, P) S + B(T, P) S^{3/2} + D(T, P) S^2

    with the polynomial coefficients of Fofonoff and Millard (1983), P in bar.

    Parameters
    ----------
    temperature_c : array_like
        In-situ temperature, deg C, on ITS-90 unless ``ipts68`` is true.
    salinity_psu : array_like
        Practical salinity, >= 0.
    pressure_dbar : array_like
        Sea pressure, dbar, >= 0 (1 dbar = 1e4 Pa; roughly 1 dbar per metre of depth).
    ipts68 : bool, optional
        The published coefficients are on the IPTS-68 scale. By default the temperature is
        taken as ITS-90 and converted with T68 = 1.00024 T90; pass ``True`` when the input is
        already IPTS-68 (as in the published check value).

    Returns
    -------
    numpy.ndarray
        Sound speed, m/s.

    Raises
    ------
    AculinkError
        For infinite inputs, negative salinity or negative pressure.

    Notes
    -----
    Stated validity: T 0 to 40 deg C, S 0 to 40, P 0 to 1000 bar; see
    :func:`unesco_validity_warnings`. This equation runs fast at depth compared with TEOS-10
    (about +0.65 m/s at 6000 dbar).

    References
    ----------
    C.-T. Chen and F. J. Millero, "Speed of sound in seawater at high pressures", J. Acoust.
    Soc. Am. 62(5), 1129-1135 (1977).
    N. P. Fofonoff and R. C. Millard, "Algorithms for computation of fundamental properties of
    seawater", UNESCO Technical Papers in Marine Science 44 (1983), sound speed section and its
    check value c(S=40, T68=40, p=10000 dbar) = 1731.995 m/s.

    Examples
    --------
    >>> round(float(sound_speed_unesco(40.0, 40.0, 10000.0, ipts68=True)), 3)
    1731.995
    """
    t = _temperature(temperature_c)
    if not ipts68:
        t = t * _T68_PER_T90
    s = _salinity(salinity_psu)
    p = _pressure(pressure_dbar) / 10.0
    t, s, p = np.broadcast_arrays(t, s, p)
    cw = _poly_tp(_CW, t, p)
    a = _poly_tp(_A, t, p)
    b = _poly_tp(_B, t, p)
    d = _poly_tp(_D, t, p)
    return cw + s * (a + np.sqrt(s) * b + s * d)


def unesco_validity_warnings(temperature_c, salinity_psu, pressure_dbar) -> list[str]:
    """Lines describing inputs outside the UNESCO (Chen and Millero 1977) validity range.

    Ranges: temperature 0 to 40 deg C, salinity 0 to 40, pressure 0 to 1000 bar = 10000 dbar
    (Fofonoff and Millard 1983, UNESCO Tech. Pap. Mar. Sci. 44).
    """
    name = "UNESCO (Chen and Millero 1977) sound speed"
    notes = [validity_note(name, "temperature", temperature_c, 0.0, 40.0, "degC"),
             validity_note(name, "salinity", salinity_psu, 0.0, 40.0, "psu"),
             validity_note(name, "pressure", pressure_dbar, 0.0, 10000.0, "dbar")]
    return [n for n in notes if n]


def pressure_from_depth(depth_m, latitude_deg=45.0):
    """Sea pressure at a depth, dbar, from the TEOS-10 height-to-pressure relation.

    Parameters
    ----------
    depth_m : array_like
        Depth below the mean surface, m, >= 0.
    latitude_deg : array_like, optional
        Latitude, degrees north, -90 to 90 (gravity varies with latitude).

    Returns
    -------
    numpy.ndarray
        Sea pressure, dbar.

    References
    ----------
    IOC, SCOR and IAPSO, "The international thermodynamic equation of seawater - 2010",
    IOC Manuals and Guides 56 (2010), through ``gsw.p_from_z``, which refines the
    Saunders and Fofonoff (1976) relation (Deep-Sea Res. 23, 109-111) with the 75-term
    specific volume of Roquet et al. (2015), Ocean Modelling 90, 29-43.
    """
    d = _depth(depth_m)
    lat = _latitude(latitude_deg)
    return np.asarray(gsw.p_from_z(-d, lat), dtype=float)


def depth_from_pressure(pressure_dbar, latitude_deg=45.0):
    """Depth below the mean surface, m, at a sea pressure, from TEOS-10 (inverse of
    :func:`pressure_from_depth`).

    Parameters
    ----------
    pressure_dbar : array_like
        Sea pressure, dbar, >= 0.
    latitude_deg : array_like, optional
        Latitude, degrees north, -90 to 90.

    Returns
    -------
    numpy.ndarray
        Depth, m, positive downward.

    References
    ----------
    IOC, SCOR and IAPSO, IOC Manuals and Guides 56 (2010), through ``gsw.z_from_p``
    (Saunders and Fofonoff 1976 style, with the TEOS-10 specific volume).
    """
    p = _pressure(pressure_dbar)
    lat = _latitude(latitude_deg)
    return -np.asarray(gsw.z_from_p(p, lat), dtype=float)


def _teos10_state(temperature_c, salinity_psu, depth_m, pressure_dbar, latitude_deg,
                  longitude_deg):
    """(SA, CT, p) for in-situ temperature and practical salinity at a depth or pressure."""
    if (depth_m is None) == (pressure_dbar is None):
        raise AculinkError("sound_speed_teos10: give exactly one of depth_m and pressure_dbar")
    lat = _latitude(latitude_deg)
    lon = check_array("longitude_deg", longitude_deg, -360.0, 360.0, unit="deg")
    p = pressure_from_depth(depth_m, lat) if pressure_dbar is None else _pressure(pressure_dbar)
    t = _temperature(temperature_c)
    sp = _salinity(salinity_psu)
    sa = gsw.SA_from_SP(sp, p, lon, lat)
    ct = gsw.CT_from_t(sa, t, p)
    return np.asarray(sa, float), np.asarray(ct, float), np.asarray(p, float)


def sound_speed_teos10(temperature_c, salinity_psu, *, depth_m=None, pressure_dbar=None,
                       latitude_deg=45.0, longitude_deg=0.0):
    """Sound speed from TEOS-10 (the 75-term specific-volume fit) through :mod:`gsw`.

    In-situ temperature and practical salinity are turned into Absolute Salinity
    (``gsw.SA_from_SP``, which needs position for the salinity anomaly) and Conservative
    Temperature (``gsw.CT_from_t``), and ``gsw.sound_speed(SA, CT, p)`` is evaluated. A depth
    is converted to pressure with :func:`pressure_from_depth` at the given latitude.

    Parameters
    ----------
    temperature_c : array_like
        In-situ temperature, deg C, ITS-90.
    salinity_psu : array_like
        Practical salinity (PSS-78), >= 0.
    depth_m : array_like, optional
        Depth, m, >= 0. Give exactly one of ``depth_m`` and ``pressure_dbar``.
    pressure_dbar : array_like, optional
        Sea pressure, dbar, >= 0.
    latitude_deg : array_like, optional
        Latitude, degrees north (default 45).
    longitude_deg : array_like, optional
        Longitude, degrees east (default 0); only the salinity anomaly depends on it.

    Returns
    -------
    numpy.ndarray
        Sound speed, m/s.

    Raises
    ------
    AculinkError
        When both or neither of depth and pressure are given, or for out-of-range inputs.

    Notes
    -----
    The 75-term expression is fitted inside the "oceanographic funnel" (up to 8000 dbar);
    :func:`teos10_validity_warnings` reports points outside it using ``gsw.infunnel``.

    References
    ----------
    IOC, SCOR and IAPSO, "The international thermodynamic equation of seawater - 2010:
    calculation and use of thermodynamic properties", IOC Manuals and Guides 56 (2010).
    F. Roquet, G. Madec, T. J. McDougall and P. M. Barker, "Accurate polynomial expressions for
    the density and specific volume of seawater using the TEOS-10 standard", Ocean Modelling
    90, 29-43 (2015).
    T. J. McDougall and P. M. Barker, "Getting started with TEOS-10 and the Gibbs Seawater
    (GSW) Oceanographic Toolbox", SCOR/IAPSO WG127 (2011).
    """
    sa, ct, p = _teos10_state(temperature_c, salinity_psu, depth_m, pressure_dbar,
                              latitude_deg, longitude_deg)
    return np.asarray(gsw.sound_speed(sa, ct, p), dtype=float)


def teos10_validity_warnings(temperature_c, salinity_psu, *, depth_m=None, pressure_dbar=None,
                             latitude_deg=45.0, longitude_deg=0.0) -> list[str]:
    """Lines describing points outside the TEOS-10 75-term fit's oceanographic funnel.

    Uses ``gsw.infunnel(SA, CT, p)`` (McDougall and Barker 2011; Roquet et al. 2015, Ocean
    Modelling 90, 29-43), after the same conversions as :func:`sound_speed_teos10`, plus the
    funnel's upper Conservative Temperature bound of 40 deg C (McDougall et al. 2003, J. Atmos.
    Oceanic Technol. 20, 730-741; from memory), which ``gsw.infunnel`` does not test.
    """
    sa, ct, p = _teos10_state(temperature_c, salinity_psu, depth_m, pressure_dbar,
                              latitude_deg, longitude_deg)
    sa, ct, p = np.broadcast_arrays(sa, ct, p)
    ok = np.isnan(sa) | np.isnan(ct) | np.isnan(p)
    with np.errstate(invalid="ignore"):
        ok |= np.asarray(gsw.infunnel(sa, ct, p), dtype=bool)
    notes = []
    n_out = int((~ok).sum())
    if n_out:
        count = "" if ok.size == 1 else f" ({n_out} of {ok.size} points)"
        notes.append(f"TEOS-10 (75-term) sound speed: temperature, salinity or pressure{count} "
                     f"outside the fit's oceanographic funnel (pressure up to "
                     f"{p[~ok].max():g} dbar)")
    # gsw.infunnel (3.6) does not test the funnel's upper temperature bound of 40 degC
    hot = validity_note("TEOS-10 (75-term) sound speed", "conservative temperature", ct,
                        -np.inf, 40.0, "degC")
    return notes + ([hot] if hot else [])

