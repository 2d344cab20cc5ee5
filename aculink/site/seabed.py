"""The seabed as a lossy fluid half-space: Rayleigh reflection and the sediment presets.

Phase convention: aculink uses exp(+j omega t) time dependence throughout (a path of delay tau
contributes exp(-j 2 pi f tau)). Most acoustics texts tabulate reflection coefficients for
exp(-i omega t); a coefficient here is the complex conjugate of the tabulated one, so a phase
of -136 degrees in such a table is +136 degrees here. A lossy sediment then has a wavenumber
with a *negative* imaginary part, k2 = (omega / c2)(1 - j delta).
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass
from importlib import resources
from types import MappingProxyType

import numpy as np

from aculink.constants import (
    DB_PER_WAVELENGTH_PER_LOSS_PARAMETER,
    NOMINAL_SOUND_SPEED_MPS,
    SEAWATER_DENSITY_KGM3,
)
from aculink.errors import AculinkError, check_array, check_range, closest

__all__ = [
    "rayleigh_reflection",
    "bottom_loss_db",
    "critical_grazing_angle_rad",
    "intromission_grazing_angle_rad",
    "Sediment",
    "SEDIMENTS",
    "sediment_properties",
]


def _speed(field, value):
    return check_array(field, value, 0.0, low_open=True, unit="m/s")


def _density(field, value):
    return check_array(field, value, 0.0, low_open=True, unit="kg/m^3")


def rayleigh_reflection(grazing_rad, water_speed_mps, water_density_kgm3, bed_speed_mps,
                        bed_density_kgm3, attenuation_db_per_wavelength):
    """Plane-wave pressure reflection coefficient of a lossy fluid seabed (Rayleigh).

    Water is medium 1 (rho1, c1), the seabed medium 2 (rho2, c2) with compressional attenuation
    alpha in dB per wavelength. With the grazing angle theta in the water,

    .. math::

        m = \\rho_2/\\rho_1, \\quad \\delta = \\alpha / (40 \\pi \\log_{10} e), \\quad
        n = (c_1/c_2)(1 + i\\delta),

        R = \\frac{m \\sin\\theta - \\sqrt{n^2 - \\cos^2\\theta}}
                 {m \\sin\\theta + \\sqrt{n^2 - \\cos^2\\theta}}

    in the exp(-i omega t) convention, with the root of non-negative imaginary part (the
    transmitted wave decays away from the interface). This function returns the complex
    conjugate of that, which is the same coefficient in aculink's exp(+j omega t) convention.

    Parameters
    ----------
    grazing_rad : array_like
        Grazing angle in the water, rad, 0 to pi/2.
    water_speed_mps, water_density_kgm3 : array_like
        Sound speed (m/s) and density (kg/m^3) of the water at the seabed, > 0.
    bed_speed_mps, bed_density_kgm3 : array_like
        Compressional sound speed (m/s) and density (kg/m^3) of the sediment, > 0.
    attenuation_db_per_wavelength : array_like
        Compressional attenuation of the sediment, dB per wavelength, >= 0.

    Returns
    -------
    numpy.ndarray of complex
        Reflection coefficient (reflected over incident pressure), exp(+j omega t) convention.

    Raises
    ------
    AculinkError
        For angles outside [0, pi/2], non-positive speeds or densities, negative attenuation.

    Notes
    -----
    At normal incidence R = (m c2/c1 - 1)/(m c2/c1 + 1) for a lossless bed. For a lossless
    bed faster than the water, |R| = 1 below the critical grazing angle
    (:func:`critical_grazing_angle_rad`); a bed slower and denser than the water has an angle of
    intromission where R = 0 (:func:`intromission_grazing_angle_rad`).

    References
    ----------
    Lord Rayleigh, The Theory of Sound, vol. 2 (Macmillan, 1878/1896), reflection at a fluid
    interface. F. B. Jensen, W. A. Kuperman, M. B. Porter and H. Schmidt, Computational Ocean
    Acoustics, 2nd ed. (Springer, 2011), sect. 1.6, the fluid-fluid reflection coefficient and
    attenuation in dB per wavelength (exp(-i omega t) convention). L. M. Brekhovskikh and
    Yu. P. Lysanov, Fundamentals of Ocean Acoustics, 3rd ed. (Springer, 2003), ch. 2.
    """
    theta = check_array("grazing_rad", grazing_rad, 0.0, np.pi / 2, unit="rad")
    c1 = _speed("water_speed_mps", water_speed_mps)
    rho1 = _density("water_density_kgm3", water_density_kgm3)
    c2 = _speed("bed_speed_mps", bed_speed_mps)
    rho2 = _density("bed_density_kgm3", bed_density_kgm3)
    alpha = check_array("attenuation_db_per_wavelength", attenuation_db_per_wavelength, 0.0,
                        unit="dB/wavelength")
    delta = alpha / DB_PER_WAVELENGTH_PER_LOSS_PARAMETER
    m_sin = (rho2 / rho1) * np.sin(theta)
    n = (c1 / c2) * (1.0 + 1j * delta)
    # n^2 - cos^2 written as (n^2 - 1) + sin^2: no cancellation at grazing incidence
    root = np.sqrt((n * n - 1.0) + np.sin(theta) ** 2 + 0j)
    root = np.where(root.imag < 0.0, -root, root)
    m_sin, root, m = np.broadcast_arrays(m_sin, root, rho2 / rho1)
    den = m_sin + root
    # den vanishes (to below any meaningful float) only at grazing incidence on a lossless bed
    # of the water's own speed, where the limit theta -> 0 of R is (m - 1)/(m + 1)
    tiny = np.abs(den) < 1e-150
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        r = np.where(tiny, (m - 1.0) / (m + 1.0), (m_sin - root) / np.where(tiny, 1, den))
    return np.conj(r)


def bottom_loss_db(grazing_rad, water_speed_mps, water_density_kgm3, bed_speed_mps,
                   bed_density_kgm3, attenuation_db_per_wavelength):
    """Bottom reflection loss, dB: -20 log10 |R| of :func:`rayleigh_reflection`.

    Returns
    -------
    numpy.ndarray
        Loss per bounce, dB (>= 0 for a passive seabed; inf where R = 0).

    References
    ----------
    As :func:`rayleigh_reflection`; the loss definition is that of Jensen et al. (2011),
    Computational Ocean Acoustics, 2nd ed., sect. 1.6.
    """
    r = np.abs(rayleigh_reflection(grazing_rad, water_speed_mps, water_density_kgm3,
                                   bed_speed_mps, bed_density_kgm3,
                                   attenuation_db_per_wavelength))
    with np.errstate(divide="ignore"):
        return -20.0 * np.log10(r)


def critical_grazing_angle_rad(water_speed_mps, bed_speed_mps):
    """Critical grazing angle arccos(c1/c2), rad; NaN where the bed is not faster than the water.

    Below this angle a lossless fluid bed reflects totally (|R| = 1).

    References
    ----------
    Snell's law at a fluid-fluid interface; Jensen et al., Computational Ocean Acoustics,
    2nd ed. (2011), sect. 1.6.
    """
    c1 = _speed("water_speed_mps", water_speed_mps)
    c2 = _speed("bed_speed_mps", bed_speed_mps)
    ratio = c1 / c2
    with np.errstate(invalid="ignore"):
        return np.where(ratio < 1.0, np.arccos(np.minimum(ratio, 1.0)), np.nan)


def intromission_grazing_angle_rad(water_speed_mps, water_density_kgm3, bed_speed_mps,
                                   bed_density_kgm3):
    """Angle of intromission (total transmission into a lossless bed), rad; NaN if none.

    Setting R = 0 in the lossless Rayleigh coefficient gives
    :math:`\\sin^2\\theta_I = (n^2 - 1)/(m^2 - 1)` with n = c1/c2 and m = rho2/rho1; the angle
    exists when that lies in (0, 1), typically for a bed slower and denser than the water
    (soft muds and clays).

    References
    ----------
    Brekhovskikh and Lysanov, Fundamentals of Ocean Acoustics, 3rd ed. (2003), ch. 2;
    Jensen et al., Computational Ocean Acoustics, 2nd ed. (2011), sect. 1.6.
    """
    n2 = (_speed("water_speed_mps", water_speed_mps) / _speed("bed_speed_mps", bed_speed_mps)) ** 2
    m2 = (_density("bed_density_kgm3", bed_density_kgm3)
          / _density("water_density_kgm3", water_density_kgm3)) ** 2
    with np.errstate(invalid="ignore", divide="ignore"):
        sin2 = (n2 - 1.0) / (m2 - 1.0)
        ok = (sin2 > 0.0) & (sin2 < 1.0)
        return np.where(ok, np.arcsin(np.sqrt(np.where(ok, sin2, 0.0))), np.nan)


@dataclass(frozen=True)
class Sediment:
    """One sediment preset: ratios to the water and compressional attenuation.

    Attributes
    ----------
    name : str
        Preset name (lower case).
    mean_grain_size_phi : float
        Mean grain size Mz, phi units (-log2 of the diameter in mm).
    density_ratio : float
        Sediment density over water density.
    sound_speed_ratio : float
        Sediment sound speed over water sound speed.
    loss_parameter : float
        delta = Im k / Re k in the sediment.
    attenuation_db_per_wavelength : float
        Compressional attenuation, dB per wavelength (= 54.575 delta).
    handbook_name : str
        The source table's row label.
    alias_of : str or None
        For aculink's own aliases ("sand", "silt", "mud"), the preset they stand for.
    """

    name: str
    mean_grain_size_phi: float
    density_ratio: float
    sound_speed_ratio: float
    loss_parameter: float
    attenuation_db_per_wavelength: float
    handbook_name: str
    alias_of: str | None = None


def _load_sediments():
    text = resources.files("aculink").joinpath("data/sediments.csv").read_text(encoding="utf-8")
    rows = list(csv.DictReader(io.StringIO("".join(
        line for line in text.splitlines(keepends=True) if not line.startswith("#")))))
    table = {}
    for row in rows:
        if row["alias_of"]:
            continue
        table[row["name"]] = Sediment(
            name=row["name"],
            mean_grain_size_phi=float(row["mean_grain_size_phi"]),
            density_ratio=float(row["density_ratio"]),
            sound_speed_ratio=float(row["sound_speed_ratio"]),
            loss_parameter=float(row["loss_parameter"]),
            attenuation_db_per_wavelength=float(row["attenuation_db_per_wavelength"]),
            handbook_name=row["handbook_name"],
        )
    for row in rows:
        if row["alias_of"]:
            target = table[row["alias_of"]]
            table[row["name"]] = Sediment(**{**target.__dict__, "name": row["name"],
                                             "alias_of": target.name})
    return MappingProxyType(table)


#: Read-only mapping of sediment name -> :class:`Sediment`, from aculink/data/sediments.csv
#: (APL-UW TR 9407, 1994, plus the aliases "sand", "silt" and "mud" of our choosing).
SEDIMENTS = _load_sediments()


def _normalise(name: str) -> str:
    return " ".join(str(name).replace("_", " ").lower().split())


def sediment_properties(name, water_speed_mps=NOMINAL_SOUND_SPEED_MPS,
                        water_density_kgm3=SEAWATER_DENSITY_KGM3):
    """Sound speed, density and attenuation of a named sediment under the given water.

    Parameters
    ----------
    name : str
        A key of :data:`SEDIMENTS` (case, extra spaces and underscores are forgiven).
    water_speed_mps : float, optional
        Sound speed in the water just above the seabed, m/s (default 1500).
    water_density_kgm3 : float, optional
        Water density, kg/m^3 (default 1025).

    Returns
    -------
    tuple of float
        ``(speed_mps, density_kgm3, attenuation_db_per_wavelength)`` of the sediment.

    Raises
    ------
    AculinkError
        For an unknown name (suggesting the closest valid one) or non-positive water values.

    References
    ----------
    APL-UW High-Frequency Ocean Environmental Acoustic Models Handbook, APL-UW TR 9407
    (Applied Physics Laboratory, University of Washington, October 1994), bottom section,
    sediment table by mean grain size.

    Examples
    --------
    >>> sediment_properties("medium sand", 1500.0, 1000.0)
    (1767.3, 1845.0, 0.886)
    """
    key = _normalise(name)
    if key not in SEDIMENTS:
        raise AculinkError(f"sediment = {name!r}: unknown sediment{closest(key, SEDIMENTS)}; "
                           f"valid names: {', '.join(sorted(SEDIMENTS))}")
    c_w = check_range("water_speed_mps", water_speed_mps, 0.0, low_open=True, unit="m/s")
    rho_w = check_range("water_density_kgm3", water_density_kgm3, 0.0, low_open=True,
                        unit="kg/m^3")
    sed = SEDIMENTS[key]
    return (sed.sound_speed_ratio * c_w, sed.density_ratio * rho_w,
            sed.attenuation_db_per_wavelength)
