"""Read a site file (TOML, with an optional CTD cast in CSV) into a validated :class:`Site`.

The file has the sections ``[water] [seabed] [surface] [noise] [source] [receiver] [modem]``
and optional top-level ``name`` and ``description``; the README's site-file reference lists
every key with its unit, default and allowed range. Every mistake raises
:class:`~aculink.errors.AculinkError` with one line naming the file, the key, the value and
the allowed range. Scalar ranges live in :data:`aculink.site.model.LIMITS`; this module adds
the structure (sections, keys, types, lists), the ways of giving the water column, and the
rules that tie sections together (the profile reaches the seabed, the equipment is in the
water, the receiver is on the described track).
"""

from __future__ import annotations

import csv
import math
import sys
from pathlib import Path

import numpy as np

from aculink.errors import AculinkError, check_range, closest
from aculink.site.model import (
    LIMITS,
    MAX_DEPTH_M,
    Modem,
    Noise,
    Receiver,
    Seabed,
    Site,
    Source,
    Surface,
    Water,
    check_field,
)
from aculink.site.profile import SoundSpeedProfile

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10
    import tomli as tomllib

__all__ = [
    "load_site",
    "site_from_dict",
    "read_ctd_csv",
    "munk_speed",
    "EQUATIONS",
    "PROFILES",
    "SECTION_KEYS",
    "CTD_COLUMNS",
]

#: Equations that turn temperature and salinity into sound speed.
EQUATIONS = ("teos10", "unesco", "mackenzie")
#: Analytic profiles and their parameters with defaults (None: required).
PROFILES = {
    "isovelocity": {"sound_speed_mps": 1500.0},
    "linear": {"surface_speed_mps": 1500.0, "gradient_per_s": None},
    "munk": {"axis_depth_m": 1300.0, "scale_depth_m": 1300.0, "axis_speed_mps": 1500.0,
             "epsilon": 0.00737},
}
#: Allowed ranges of the [water] numbers that are not stored on the Water object.
_WATER_LIMITS = {key: (low, high, unit) for key, (low, high, _, _, unit) in LIMITS["water"].items()}
_WATER_COMMON = ("ph", "latitude_deg", "longitude_deg", "density_kgm3")
_WATER_FORMS = {
    "table": ("depth_m", "sound_speed_mps", "temperature_c", "salinity_psu"),
    "equation": ("depth_m", "temperature_c", "salinity_psu", "equation"),
    "ctd": ("ctd_file", "equation"),
}
#: Every key each section accepts (the form of [water] narrows its set further).
SECTION_KEYS = {
    "water": tuple(dict.fromkeys(
        ("depth_m", "sound_speed_mps", "temperature_c", "salinity_psu", "equation", "ctd_file",
         "profile", *[k for p in PROFILES.values() for k in p], *_WATER_COMMON))),
    "seabed": ("depth_m", "range_m", "sediment", "sound_speed_mps", "density_kgm3",
               "attenuation_db_per_wavelength"),
    "surface": ("wind_speed_mps", "rms_height_m"),
    "noise": ("shipping", "extra_db"),
    "source": ("depth_m", "level_db", "speed_mps", "directivity_index_db", "beam"),
    "receiver": ("depth_m", "range_m", "speed_mps", "directivity_index_db", "beam"),
    "modem": ("carrier_hz", "bandwidth_hz", "rolloff", "target_ber", "margin_db"),
}
_TOP_KEYS = ("name", "description", "variability")
_REQUIRED = {"water": (), "seabed": ("depth_m",), "source": ("depth_m",),
             "receiver": ("depth_m", "range_m")}
#: Wind at 10 m assumed when [surface] gives neither wind nor wave height, m/s (a moderate
#: breeze; common practice, no source).
DEFAULT_WIND_SPEED_MPS = 5.0
#: CTD cast columns: one of the depth/pressure pair, then temperature and salinity.
CTD_COLUMNS = ("depth_m", "pressure_dbar", "temperature_c", "salinity_psu")
#: A table or cast may start this far below the surface; its top value is carried up to 0 m.
MAX_TOP_GAP_M = 10.0
#: Closest two profile nodes may be, m (closer nodes make the interpolating cubic meaningless).
MIN_NODE_SPACING_M = 0.01
#: Node spacing used to tabulate a curved analytic profile, m (finer for shallow water).
_ANALYTIC_STEP_M = 2.0


# --------------------------------------------------------------------------- small readers
def _is_number(value) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def _number(section, key, value, low, high, unit="", *, low_open=False, high_open=False):
    return check_range(f"[{section}] {key}", value, low, high, low_open=low_open,
                       high_open=high_open, unit=unit)


def _numbers(section, key, value, low, high, unit="", *, scalar_ok=False, low_open=False):
    """A list of numbers (or, with ``scalar_ok``, one number) as a float array."""
    if scalar_ok and _is_number(value):
        return np.array([_number(section, key, value, low, high, unit, low_open=low_open)])
    if not isinstance(value, list):
        what = "a number or a list of numbers" if scalar_ok else "a list of numbers"
        raise AculinkError(f"[{section}] {key} = {value!r}: expected {what}")
    if len(value) == 0:
        raise AculinkError(f"[{section}] {key} = []: expected at least one number")
    return np.array([_number(section, f"{key}[{i}]", v, low, high, unit, low_open=low_open)
                     for i, v in enumerate(value)])


def _increasing(section, key, values, unit="m"):
    steps = np.diff(values)
    if np.any(steps < MIN_NODE_SPACING_M):
        i = int(np.argmax(steps < MIN_NODE_SPACING_M)) + 1
        raise AculinkError(f"[{section}] {key}[{i}] = {values[i]:g} {unit}: values must be strictly "
                           f"increasing, by at least {MIN_NODE_SPACING_M:g} {unit} (previous value "
                           f"{values[i - 1]:g} {unit})")


def _text(section, key, value, choices=None):
    field = key if section is None else f"[{section}] {key}"
    if not isinstance(value, str):
        raise AculinkError(f"{field} = {value!r}: expected text")
    if choices is not None:
        v = value.strip().lower()
        if v not in choices:
            raise AculinkError(f"{field} = {value!r}: allowed values are "
                               f"{', '.join(repr(c) for c in choices)}{closest(v, choices)}")
        return v
    return value


def _table(data, section):
    value = data.get(section, {})
    if not isinstance(value, dict):
        raise AculinkError(f"[{section}] = {value!r}: expected a section ([{section}] with keys below it)")
    return value


def _check_keys(section, table, allowed, *, form=None):
    for key in table:
        if key in allowed:
            continue
        if form is not None and key in SECTION_KEYS[section]:
            raise AculinkError(f"[{section}] {key} is not used when the water column is given as {form}; "
                               f"keys for this form: {', '.join(allowed)}")
        home = [s for s, keys in SECTION_KEYS.items() if key in keys and s != section]
        hint = f" (it belongs in [{home[0]}])" if home else closest(key, allowed)
        raise AculinkError(f"[{section}] {key}: unknown key{hint}; allowed keys: {', '.join(allowed)}")
    for key in _REQUIRED.get(section, ()):
        if key not in table:
            raise AculinkError(f"[{section}] {key} is missing: it is required")


# --------------------------------------------------------------------------- water column
def munk_speed(depth_m, axis_depth_m=1300.0, scale_depth_m=1300.0, axis_speed_mps=1500.0,
               epsilon=0.00737):
    """Munk's canonical deep-water profile, m/s.

    .. math:: c(z) = c_1 [1 + \\epsilon(\\eta - 1 + e^{-\\eta})], \\quad \\eta = 2 (z - z_1)/B

    Parameters
    ----------
    depth_m : array_like
        Depth, m.
    axis_depth_m, scale_depth_m, axis_speed_mps, epsilon : float
        Axis depth z1, scale depth B, axis speed c1 and the dimensionless epsilon.

    Returns
    -------
    numpy.ndarray
        Sound speed, m/s.

    References
    ----------
    W. H. Munk, "Sound channel in an exponentially stratified ocean, with application to
    SOFAR", J. Acoust. Soc. Am. 55(2), 220-226 (1974); presented as the canonical profile in
    F. B. Jensen, W. A. Kuperman, M. B. Porter and H. Schmidt, Computational Ocean Acoustics,
    2nd ed. (2011), ch. 1.
    """
    eta = 2.0 * (np.asarray(depth_m, dtype=float) - axis_depth_m) / scale_depth_m
    return axis_speed_mps * (1.0 + epsilon * (eta - 1.0 + np.exp(-eta)))


def _water_form(water):
    if "profile" in water:
        name = _text("water", "profile", water["profile"], tuple(PROFILES))
        return f"profile = '{name}'", name
    if "ctd_file" in water:
        return "ctd_file", "ctd"
    if "sound_speed_mps" in water:
        return "depth_m + sound_speed_mps", "table"
    if "temperature_c" in water or "salinity_psu" in water:
        return "depth_m + temperature_c + salinity_psu", "equation"
    raise AculinkError("[water]: no water column given; use one of depth_m + sound_speed_mps, "
                       "depth_m + temperature_c + salinity_psu (with equation), ctd_file, "
                       f"or profile = {' | '.join(repr(p) for p in PROFILES)}")


def _speed_from_ts(equation, temperature_c, salinity_psu, depth_m, pressure_dbar, lat, lon):
    """Sound speed on the nodes by the named equation (depth or pressure, whichever is known)."""
    from aculink.site import soundspeed as ss

    if equation == "mackenzie":
        return ss.sound_speed_mackenzie(temperature_c, salinity_psu, depth_m)
    if equation == "unesco":
        p = ss.pressure_from_depth(depth_m, lat) if pressure_dbar is None else pressure_dbar
        return ss.sound_speed_unesco(temperature_c, salinity_psu, p)
    if pressure_dbar is None:
        return ss.sound_speed_teos10(temperature_c, salinity_psu, depth_m=depth_m,
                                     latitude_deg=lat, longitude_deg=lon)
    return ss.sound_speed_teos10(temperature_c, salinity_psu, pressure_dbar=pressure_dbar,
                                 latitude_deg=lat, longitude_deg=lon)


def _speed_limits(speeds, where):
    low, high, unit = _WATER_LIMITS["sound_speed_mps"]
    bad = (speeds < low) | (speeds > high) | ~np.isfinite(speeds)
    if np.any(bad):
        i = int(np.argmax(bad))
        raise AculinkError(f"[water] {where}: sound speed {speeds[i]:g} m/s at node {i}: allowed range is "
                           f"[{low:g}, {high:g}] m/s (check the temperature and salinity units)")


def _surface_top(depth_m, *columns, key="depth_m"):
    """Check the first node is near the surface; carry the top values up to 0 m when below it."""
    if depth_m[0] > MAX_TOP_GAP_M:
        raise AculinkError(f"[water] {key}[0] = {depth_m[0]:g} m: the shallowest value must be within "
                           f"[0, {MAX_TOP_GAP_M:g}] m of the surface")
    if depth_m[0] < MIN_NODE_SPACING_M:  # at the surface, to the nearest centimetre
        return (np.concatenate(([0.0], depth_m[1:])), *columns)
    return (np.concatenate(([0.0], depth_m)),
            *[None if c is None else np.concatenate(([c[0]], c)) for c in columns])


def _ts_columns(water, n):
    """temperature_c and salinity_psu on n nodes (each a number or a list of n)."""
    out = []
    for key in ("temperature_c", "salinity_psu"):
        low, high, unit = _WATER_LIMITS[key]
        v = _numbers("water", key, water[key], low, high, unit, scalar_ok=True)
        if v.size == 1:
            v = np.full(n, v[0])
        elif v.size != n:
            raise AculinkError(f"[water] {key} has {v.size} values but depth_m has {n}: give one number "
                               "or one value per depth")
        out.append(v)
    return out


def read_ctd_csv(path):
    """Read a CTD cast from CSV.

    The first line that is not blank and does not start with ``#`` is the header. Columns (any
    order, names case-insensitive, other columns ignored): ``depth_m`` or ``pressure_dbar``,
    ``temperature_c`` (in-situ, ITS-90) and ``salinity_psu`` (practical salinity).

    Parameters
    ----------
    path : str or Path
        The CSV file.

    Returns
    -------
    dict
        ``{"depth_m" or "pressure_dbar": array, "temperature_c": array, "salinity_psu": array}``.

    Raises
    ------
    AculinkError
        For a missing or unreadable file, missing columns, text where numbers belong, fewer
        than two rows, or non-increasing depths.
    """
    path = Path(path)
    if not path.is_file():
        raise AculinkError(f"[water] ctd_file = '{path}': file not found")
    try:
        lines = path.read_text(encoding="utf-8-sig").splitlines()
    except (OSError, UnicodeDecodeError) as exc:
        raise AculinkError(f"[water] ctd_file = '{path}': cannot be read as UTF-8 text "
                           f"({type(exc).__name__})") from None
    numbered = [(i + 1, line) for i, line in enumerate(lines)
                if line.strip() and not line.lstrip().startswith("#")]
    if not numbered:
        raise AculinkError(f"{path}: empty CTD file: expected a header line and data rows")
    rows = list(csv.reader([line for _, line in numbered]))
    header = [h.strip().lower() for h in rows[0]]
    where = "depth_m" if "depth_m" in header else "pressure_dbar" if "pressure_dbar" in header else None
    missing = [c for c in ("temperature_c", "salinity_psu") if c not in header]
    if where is None:
        missing.insert(0, "depth_m or pressure_dbar")
    if missing:
        raise AculinkError(f"{path}: CTD header is missing column {', '.join(missing)} (found: "
                           f"{', '.join(header)}); required: depth_m or pressure_dbar, temperature_c, "
                           "salinity_psu")
    wanted = (where, "temperature_c", "salinity_psu")
    index = {c: header.index(c) for c in wanted}
    data = {c: [] for c in wanted}
    for (line_no, _), row in zip(numbered[1:], rows[1:]):
        for c in wanted:
            low, high, unit = _WATER_LIMITS[c]
            cell = row[index[c]].strip() if index[c] < len(row) else ""
            try:
                value = float(cell)
            except ValueError:
                raise AculinkError(f"{path}, line {line_no}: {c} = {cell!r}: expected a number in "
                                   f"[{low:g}, {high:g}] {unit}") from None
            data[c].append(check_range(f"{path}, line {line_no}: {c}", value, low, high, unit=unit))
    if len(data[where]) < 2:
        raise AculinkError(f"{path}: CTD file has {len(data[where])} data rows: expected at least 2")
    out = {c: np.array(v) for c, v in data.items()}
    z = out[where]
    steps = np.diff(z)
    if np.any(steps < MIN_NODE_SPACING_M):
        i = int(np.argmax(steps < MIN_NODE_SPACING_M)) + 1
        raise AculinkError(f"{path}, line {numbered[i + 1][0]}: {where} = {z[i]:g} does not increase "
                           f"(previous {z[i - 1]:g}): use the downcast only, strictly increasing by at "
                           f"least {MIN_NODE_SPACING_M:g}")
    return out


def _analytic_profile(form, water, bottom_m):
    """Tabulate profile = isovelocity | linear | munk from the surface down to the seabed."""
    params = {}
    for key, default in PROFILES[form].items():
        if key in water:
            low, high, unit = _WATER_LIMITS[key]
            params[key] = _number("water", key, water[key], low, high, unit)
        elif default is None:
            raise AculinkError(f"[water] {key} is missing: it is required with profile = '{form}'")
        else:
            params[key] = default
    bottom_m = max(bottom_m, 1.0)
    if form == "isovelocity":
        return np.array([0.0, bottom_m]), np.full(2, params["sound_speed_mps"])
    if form == "linear":
        z = np.array([0.0, bottom_m])
        return z, params["surface_speed_mps"] + params["gradient_per_s"] * z
    n = max(int(math.ceil(bottom_m / _ANALYTIC_STEP_M)), 200) + 1
    z = np.linspace(0.0, bottom_m, n)
    if 0.0 < params["axis_depth_m"] < bottom_m:  # put a node on the axis itself
        z = np.unique(np.append(z, params["axis_depth_m"]))
    return z, munk_speed(z, **params)


def _build_water(water, base_dir, bottom_m):
    form_text, form = _water_form(water)
    allowed = (*(_WATER_FORMS.get(form) or ("profile", *PROFILES[form], "temperature_c", "salinity_psu")),
               *_WATER_COMMON)
    _check_keys("water", water, allowed, form=form_text)
    common = {k: check_field("water", k, water[k]) for k in _WATER_COMMON if k in water}
    lat = common.get("latitude_deg", Water.__dataclass_fields__["latitude_deg"].default)
    lon = common.get("longitude_deg", Water.__dataclass_fields__["longitude_deg"].default)
    equation = _text("water", "equation", water.get("equation", "teos10"), EQUATIONS)
    temperature = salinity = None
    if form in PROFILES:
        z, c = _analytic_profile(form, water, bottom_m)
        if "temperature_c" in water or "salinity_psu" in water:
            # uniform values, used only by absorption along the rays
            temperature, salinity = (
                np.full(z.shape, _number("water", k, water.get(k, d), *_WATER_LIMITS[k]))
                for k, d in (("temperature_c", 10.0), ("salinity_psu", 35.0)))
        source = form
    elif form == "table":
        if "depth_m" not in water:
            raise AculinkError("[water] depth_m is missing: it is required with sound_speed_mps")
        z = _numbers("water", "depth_m", water["depth_m"], *_WATER_LIMITS["depth_m"])
        _increasing("water", "depth_m", z)
        c = _numbers("water", "sound_speed_mps", water["sound_speed_mps"], *_WATER_LIMITS["sound_speed_mps"])
        if c.size != z.size:
            raise AculinkError(f"[water] sound_speed_mps has {c.size} values but depth_m has {z.size}: "
                               "they must match")
        if "temperature_c" in water or "salinity_psu" in water:
            if not ("temperature_c" in water and "salinity_psu" in water):
                raise AculinkError("[water] temperature_c and salinity_psu go together: give both or neither")
            temperature, salinity = _ts_columns(water, z.size)
        z, c, temperature, salinity = _surface_top(z, c, temperature, salinity)
        source = "table"
    else:
        pressure = None
        if form == "equation":
            for key in ("depth_m", "temperature_c", "salinity_psu"):
                if key not in water:
                    raise AculinkError(f"[water] {key} is missing: it is required with temperature_c "
                                       "and salinity_psu")
            z = _numbers("water", "depth_m", water["depth_m"], *_WATER_LIMITS["depth_m"])
            _increasing("water", "depth_m", z)
            temperature, salinity = _ts_columns(water, z.size)
        else:
            from aculink.site.soundspeed import depth_from_pressure

            name = _text("water", "ctd_file", water["ctd_file"])
            cast = read_ctd_csv(Path(base_dir) / name)
            temperature, salinity = cast["temperature_c"], cast["salinity_psu"]
            if "depth_m" in cast:
                z = cast["depth_m"]
            else:
                pressure = cast["pressure_dbar"]
                z = depth_from_pressure(pressure, lat)
        n_given = z.size
        z, temperature, salinity, pressure = _surface_top(z, temperature, salinity, pressure)
        if pressure is not None and z.size > n_given:
            pressure[0] = 0.0  # the node carried up to the surface
        c = np.asarray(_speed_from_ts(equation, temperature, salinity, z, pressure, lat, lon), dtype=float)
        _speed_limits(c, f"equation = '{equation}'")
        source = equation
    profile = SoundSpeedProfile(depth_m=z, speed_mps=c, temperature_c=temperature,
                                salinity_psu=salinity, source=source)
    return Water(profile=profile, **common)


# --------------------------------------------------------------------------- other sections
def _build_seabed(seabed, water_speed_mps, water_density_kgm3):
    if _is_number(seabed["depth_m"]):
        if "range_m" in seabed:
            raise AculinkError("[seabed] range_m needs depth_m as a list of the same length "
                               "(one depth per range)")
        depth = np.array([check_range("[seabed] depth_m", seabed["depth_m"], 0.0, MAX_DEPTH_M,
                                      low_open=True, unit="m")])
        rng = np.array([0.0])
    else:
        depth = _numbers("seabed", "depth_m", seabed["depth_m"], 0.0, MAX_DEPTH_M, "m", low_open=True)
        if "range_m" not in seabed:
            if depth.size > 1:
                raise AculinkError(f"[seabed] range_m is missing: depth_m has {depth.size} values, "
                                   "give range_m with one range per depth (from 0 m)")
            rng = np.array([0.0])
        else:
            rng = _numbers("seabed", "range_m", seabed["range_m"], 0.0, 1.0e7, "m")
            if rng.size != depth.size:
                raise AculinkError(f"[seabed] range_m has {rng.size} values but depth_m has {depth.size}: "
                                   "they must match")
    props = {}
    sediment = None
    if "sediment" in seabed:
        from aculink.site.seabed import SEDIMENTS, sediment_properties

        given = _text("seabed", "sediment", seabed["sediment"])
        try:
            speed, density, att = sediment_properties(given, water_speed_mps=water_speed_mps,
                                                      water_density_kgm3=water_density_kgm3)
        except AculinkError as exc:
            raise AculinkError(f"[seabed] {exc}") from None
        props = {"sound_speed_mps": speed, "density_kgm3": density, "attenuation_db_per_wavelength": att}
        canonical = " ".join(given.replace("_", " ").lower().split())
        sediment = canonical if canonical in SEDIMENTS else given
    for key in ("sound_speed_mps", "density_kgm3", "attenuation_db_per_wavelength"):
        if key in seabed:
            props[key] = check_field("seabed", key, seabed[key])
    missing = [k for k in ("sound_speed_mps", "density_kgm3", "attenuation_db_per_wavelength") if k not in props]
    if missing:
        raise AculinkError(f"[seabed] {missing[0]} is missing: give sediment = '<preset>' or all of "
                           "sound_speed_mps, density_kgm3 and attenuation_db_per_wavelength")
    return Seabed(range_m=rng, depth_m=depth, sediment=sediment, **props)


def _build_surface(surface):
    from aculink.site.surface import rms_wave_height_pierson_moskowitz

    _check_keys("surface", surface, SECTION_KEYS["surface"])
    vals = {k: check_field("surface", k, surface[k]) for k in SECTION_KEYS["surface"] if k in surface}
    if "wind_speed_mps" not in vals:
        if "rms_height_m" in vals:
            # Pierson-Moskowitz height grows as the square of the wind speed
            per_unit = float(rms_wave_height_pierson_moskowitz(1.0))
            vals["wind_speed_mps"] = math.sqrt(vals["rms_height_m"] / per_unit)
            check_field("surface", "wind_speed_mps", vals["wind_speed_mps"])
        else:
            vals["wind_speed_mps"] = DEFAULT_WIND_SPEED_MPS
    if "rms_height_m" not in vals:
        vals["rms_height_m"] = float(rms_wave_height_pierson_moskowitz(vals["wind_speed_mps"]))
    return Surface(**vals)


def _simple(section, table, cls, **extra):
    _check_keys(section, table, SECTION_KEYS[section])
    values = dict(table)
    if "beam" in values:
        from aculink.site.transducer import parse_beam

        values["beam"] = parse_beam(values["beam"], f"[{section}.beam]")
    return cls(**values, **extra)


def _check_geometry(seabed, source, receiver):
    """Source and receiver inside the water at their ranges; receiver on the described track."""
    if receiver.range_m > seabed.max_range_m:
        raise AculinkError(f"[receiver] range_m = {receiver.range_m:g} m: allowed range is (0, "
                           f"{seabed.max_range_m:g}] m (the last [seabed] range_m)")
    for section, obj, r in (("source", source, 0.0), ("receiver", receiver, receiver.range_m)):
        bed = float(seabed.depth_at(r))
        check_range(f"[{section}] depth_m", obj.depth_m, 0.0, bed, low_open=True, high_open=True,
                    unit=f"m (between the surface and the seabed, {bed:g} m deep at range {r:g} m)")


# --------------------------------------------------------------------------- entry points
def site_from_dict(data, *, base_dir=".", name=None, text="", path=None) -> Site:
    """Build a validated :class:`Site` from a parsed site file (a dict of sections).

    Parameters
    ----------
    data : dict
        The site description with the same sections and keys as a site file.
    base_dir : str or Path
        Folder that a relative ``[water] ctd_file`` is found in.
    name : str, optional
        Site name used when ``data`` has no ``name`` (default ``"site"``).
    text : str
        The source text, kept on the Site (embedded in sweep outputs).
    path : str, optional
        The file the data came from; error messages start with it.

    Returns
    -------
    Site

    Raises
    ------
    AculinkError
        One line naming the file, the key, the value and the allowed range.
    """
    label = str(path) if path else (name or "site")
    try:
        return _site_from_dict(data, base_dir, name or "site", text, path)
    except AculinkError as exc:
        msg = str(exc)
        raise AculinkError(msg if msg.startswith(label) else f"{label}: {msg}") from None


def _site_from_dict(data, base_dir, name, text, path):
    if not isinstance(data, dict):
        raise AculinkError(f"site description = {type(data).__name__}: expected a table of sections")
    allowed = (*_TOP_KEYS, *SECTION_KEYS)
    for key in data:
        if key not in allowed:
            home = [s for s, keys in SECTION_KEYS.items() if key in keys]
            hint = f" (a key of [{home[0]}]?)" if home else closest(key, allowed)
            raise AculinkError(f"{key}: unknown section or key{hint}; allowed: {', '.join(allowed)}")
    for section in _REQUIRED:
        if section not in data:
            raise AculinkError(f"[{section}] section is missing: it is required")
    sections = {s: _table(data, s) for s in SECTION_KEYS}
    site_name = name if "name" not in data else _text(None, "name", data["name"]).strip() or name
    description = "" if "description" not in data else _text(None, "description", data["description"])

    _check_keys("seabed", sections["seabed"], SECTION_KEYS["seabed"])
    # the water must reach the deepest seabed point; read the seabed depths first for that
    bed_depths = sections["seabed"]["depth_m"]
    bed_list = [bed_depths] if _is_number(bed_depths) else bed_depths
    if not isinstance(bed_list, list) or not bed_list:
        raise AculinkError(f"[seabed] depth_m = {bed_depths!r}: expected a number or a list of numbers")
    bottom = max(check_range(f"[seabed] depth_m[{i}]" if len(bed_list) > 1 else "[seabed] depth_m", v,
                             0.0, MAX_DEPTH_M, low_open=True, unit="m") for i, v in enumerate(bed_list))
    water = _build_water(sections["water"], base_dir, bottom)
    if water.profile.max_depth_m < bottom:
        given = sections["water"]
        what = f"ctd_file = '{given['ctd_file']}'" if "ctd_file" in given else "depth_m"
        raise AculinkError(f"[water] {what} ends at {water.profile.max_depth_m:g} m: the profile must reach "
                           f"the deepest seabed point, {bottom:g} m ([seabed] depth_m)")
    seabed = _build_seabed(sections["seabed"], float(water.profile.speed(bottom)), water.density_kgm3)
    surface = _build_surface(sections["surface"])
    noise = _simple("noise", sections["noise"], Noise, wind_speed_mps=surface.wind_speed_mps)
    source = _simple("source", sections["source"], Source)
    receiver = _simple("receiver", sections["receiver"], Receiver)
    modem = _simple("modem", sections["modem"], Modem)
    _check_geometry(seabed, source, receiver)
    variability = None
    if "variability" in data:  # alternatives are whole sites, validated as this file is
        from aculink.site.variability import parse_variability

        variability = parse_variability(
            data["variability"], data,
            build_site=lambda alt: _site_from_dict(alt, base_dir, name, text, path))
    return Site(name=site_name, water=water, seabed=seabed, surface=surface, noise=noise,
                source=source, receiver=receiver, modem=modem, description=description,
                path=None if path is None else str(path), text=text, variability=variability)


def load_site(path) -> Site:
    """Load and validate a site file.

    Parameters
    ----------
    path : str or Path
        The TOML site file. A ``[water] ctd_file`` is found relative to its folder.

    Returns
    -------
    Site
        With ``name`` from the file (or the file name without extension), ``path`` and
        ``text`` (the file's content).

    Raises
    ------
    AculinkError
        For a missing or unreadable file, a TOML syntax error (with its line) and every
        invalid value, each as one line naming the file, the key, the value and the range.

    Examples
    --------
    >>> site = load_site("environments/shelf_summer.toml")  # doctest: +SKIP
    >>> site.receiver.range_m  # doctest: +SKIP
    4000.0
    """
    path = Path(path)
    if not path.exists():
        raise AculinkError(f"{path}: site file not found")
    if not path.is_file():
        raise AculinkError(f"{path}: is not a file (expected a TOML site file)")
    try:
        text = path.read_text(encoding="utf-8")
    except UnicodeDecodeError:
        raise AculinkError(f"{path}: not UTF-8 text (expected a TOML site file)") from None
    except OSError as exc:
        raise AculinkError(f"{path}: cannot be read ({exc.strerror})") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        msg = str(exc)
        if "line" not in msg:  # "at end of document": say which line that is
            msg = msg.replace("end of document", f"end of document, line {max(text.count(chr(10)), 1)}")
        raise AculinkError(f"{path}: TOML syntax error: {msg}") from None
    return site_from_dict(data, base_dir=path.parent, name=path.stem, text=text, path=str(path))
