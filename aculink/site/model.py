"""The typed description of a deployment site: frozen dataclasses, SI units inside.

A :class:`Site` is what every later stage reads. It is built by
:func:`aculink.site.loader.load_site` from a TOML file, or directly in Python. Validation of
user values happens in the loader (which knows file and key names) and in ``__post_init__``
here for anything that would make the physics meaningless.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from aculink.errors import AculinkError, check_range
from aculink.site.profile import SoundSpeedProfile

__all__ = ["LIMITS", "INTEGER_LIMITS", "MAX_DEPTH_M", "MAX_RANGE_M", "check_field", "Water", "Seabed",
           "Surface", "Noise", "Source", "Receiver", "Modem", "Site"]

#: Allowed ranges of every scalar field, as ``(low, high, low_open, high_open, unit)``. The
#: loader and ``__post_init__`` both check against this table, so each range lives in one
#: place; the README's site-file reference states the same numbers.
LIMITS = {
    "water": {
        # the profile's numbers (not stored on Water itself; the loader checks them)
        "depth_m": (0.0, 11000.0, False, False, "m"),
        "temperature_c": (-3.0, 40.0, False, False, "degC"),
        "salinity_psu": (0.0, 45.0, False, False, "psu"),
        "pressure_dbar": (0.0, 12000.0, False, False, "dbar"),
        "sound_speed_mps": (1300.0, 1800.0, False, False, "m/s"),
        "surface_speed_mps": (1300.0, 1800.0, False, False, "m/s"),
        "axis_speed_mps": (1300.0, 1800.0, False, False, "m/s"),
        "gradient_per_s": (-0.5, 0.5, False, False, "1/s"),
        "axis_depth_m": (0.0, 11000.0, False, False, "m"),
        "scale_depth_m": (10.0, 1.0e4, False, False, "m"),
        "epsilon": (0.0, 0.05, False, False, ""),
        "ph": (6.5, 9.0, False, False, ""),
        "latitude_deg": (-90.0, 90.0, False, False, "deg"),
        "longitude_deg": (-360.0, 360.0, False, False, "deg"),
        "density_kgm3": (990.0, 1100.0, False, False, "kg/m^3"),
    },
    "seabed": {
        "sound_speed_mps": (1000.0, 8000.0, False, False, "m/s"),
        "density_kgm3": (1000.0, 5000.0, False, False, "kg/m^3"),
        "attenuation_db_per_wavelength": (0.0, 10.0, False, False, "dB/wavelength"),
    },
    "surface": {
        "wind_speed_mps": (0.0, 50.0, False, False, "m/s"),
        "rms_height_m": (0.0, 20.0, False, False, "m"),
    },
    "noise": {
        "shipping": (0.0, 1.0, False, False, ""),
        "wind_speed_mps": (0.0, 50.0, False, False, "m/s"),
        "extra_db": (-40.0, 60.0, False, False, "dB"),
    },
    "source": {
        "depth_m": (0.0, 11000.0, True, False, "m"),
        "level_db": (100.0, 240.0, False, False, "dB re 1 uPa at 1 m"),
        "speed_mps": (-50.0, 50.0, False, False, "m/s"),
        "directivity_index_db": (0.0, 40.0, False, False, "dB"),
    },
    "receiver": {
        "depth_m": (0.0, 11000.0, True, False, "m"),
        "range_m": (0.0, 1.0e7, True, False, "m"),
        "speed_mps": (-50.0, 50.0, False, False, "m/s"),
        "directivity_index_db": (0.0, 40.0, False, False, "dB"),
    },
    "modem": {
        "carrier_hz": (0.0, 1.0e6, True, False, "Hz"),
        "bandwidth_hz": (0.0, 2.0e6, True, False, "Hz"),
        "rolloff": (0.0, 1.0, False, False, ""),
        "target_ber": (0.0, 0.5, True, True, ""),
        "margin_db": (0.0, 40.0, False, False, "dB"),
    },
    # numbers typed on the command line that are not site keys (run control)
    "run": {
        "symbols": (100, 10_000_000, False, False, ""),
        "max_errors": (1, 10_000_000, False, False, ""),
        "workers": (0, 1024, False, False, ""),  # 0 or 1: a serial sweep
        "chunk_ranges": (1, 100_000, False, False, ""),
        "seed": (0, 2**63 - 1, False, False, ""),
        "dynamic_range_db": (0.0, 200.0, True, False, "dB"),
        "snr_db": (-30.0, 100.0, False, False, "dB"),
    },
}
#: Keys of LIMITS["run"] that take whole numbers.
INTEGER_LIMITS = ("symbols", "max_errors", "workers", "chunk_ranges", "seed")

#: Deepest water any site may have, m (the deepest ocean trench is about 11 km).
MAX_DEPTH_M = 11000.0
#: Longest track a seabed description may cover, m.
MAX_RANGE_M = 1.0e7


def check_field(section: str, name: str, value) -> float:
    """Check one scalar against :data:`LIMITS` and return it as float (AculinkError if out of range)."""
    low, high, low_open, high_open, unit = LIMITS[section][name]
    return check_range(f"[{section}] {name}", value, low, high, low_open=low_open,
                       high_open=high_open, unit=unit)


def _check_fields(obj, section: str) -> None:
    """Validate every limited field of a frozen dataclass in place (values become floats)."""
    for name in LIMITS[section]:
        if hasattr(obj, name):
            object.__setattr__(obj, name, check_field(section, name, getattr(obj, name)))


@dataclass(frozen=True, eq=False)
class Water:
    """The water column: sound-speed profile and chemistry used by absorption.

    ``latitude_deg`` and ``longitude_deg`` are the site's position, used where pressure and
    TEOS-10 salinity need them.
    """

    profile: SoundSpeedProfile
    ph: float = 8.0
    latitude_deg: float = 45.0
    density_kgm3: float = 1025.0
    longitude_deg: float = 0.0

    def __post_init__(self):
        if not isinstance(self.profile, SoundSpeedProfile):
            raise AculinkError(f"[water] profile = {type(self.profile).__name__}: expected a SoundSpeedProfile")
        _check_fields(self, "water")


@dataclass(frozen=True, eq=False)
class Seabed:
    """Seabed depth along the track (piecewise linear in range) and a fluid half-space below.

    ``range_m`` and ``depth_m`` have equal length; with a single point the seabed is flat at all
    ranges, otherwise it is defined from ``range_m[0] = 0`` to ``range_m[-1]``.
    """

    range_m: np.ndarray
    depth_m: np.ndarray
    sound_speed_mps: float
    density_kgm3: float
    attenuation_db_per_wavelength: float
    sediment: str | None = None

    def __post_init__(self):
        r = np.atleast_1d(np.asarray(self.range_m, dtype=float))
        d = np.atleast_1d(np.asarray(self.depth_m, dtype=float))
        if r.shape != d.shape:
            raise AculinkError(f"seabed range_m has {r.size} values but depth_m has {d.size}: they must match")
        if r.size == 0:
            raise AculinkError("[seabed] depth_m is empty: give at least one depth")
        for i, (ri, di) in enumerate(zip(r, d)):
            check_range(f"[seabed] depth_m[{i}]", di, 0.0, MAX_DEPTH_M, low_open=True, unit="m")
            check_range(f"[seabed] range_m[{i}]", ri, 0.0, MAX_RANGE_M, unit="m")
        if r.size > 1:
            if r[0] != 0.0:
                raise AculinkError(f"[seabed] range_m[0] = {r[0]:g} m: the track must start at range 0 m")
            steps = np.diff(r)
            if np.any(steps <= 0):
                i = int(np.argmax(steps <= 0)) + 1
                raise AculinkError(f"[seabed] range_m[{i}] = {r[i]:g} m: ranges must be strictly increasing "
                                   f"(previous value {r[i - 1]:g} m)")
        object.__setattr__(self, "range_m", r)
        object.__setattr__(self, "depth_m", d)
        _check_fields(self, "seabed")
        if self.sediment is not None and not isinstance(self.sediment, str):
            raise AculinkError(f"[seabed] sediment = {self.sediment!r}: expected a sediment name (text)")

    @property
    def is_flat(self) -> bool:
        return self.depth_m.size == 1 or bool(np.all(self.depth_m == self.depth_m[0]))

    @property
    def max_range_m(self) -> float:
        """Last range the seabed description covers (inf for a single flat depth)."""
        return float("inf") if self.range_m.size == 1 else float(self.range_m[-1])

    @property
    def max_depth_m(self) -> float:
        return float(np.max(self.depth_m))

    def depth_at(self, range_m):
        """Seabed depth at the given ranges, m (piecewise-linear interpolation)."""
        if self.range_m.size == 1:
            return np.full(np.shape(range_m), float(self.depth_m[0]))
        return np.interp(range_m, self.range_m, self.depth_m)


@dataclass(frozen=True)
class Surface:
    """Sea surface: wind at 10 m and the rms wave height it implies (or that was given)."""

    wind_speed_mps: float = 0.0
    rms_height_m: float = 0.0

    def __post_init__(self):
        _check_fields(self, "surface")


@dataclass(frozen=True)
class Noise:
    """Ambient noise: shipping activity 0..1, wind speed (from the surface) and an offset."""

    shipping: float = 0.5
    wind_speed_mps: float = 0.0
    extra_db: float = 0.0

    def __post_init__(self):
        _check_fields(self, "noise")


@dataclass(frozen=True)
class Source:
    """The transmitter. ``level_db`` is the on-axis source level, dB re 1 uPa at 1 m."""

    depth_m: float
    level_db: float = 180.0
    speed_mps: float = 0.0
    directivity_index_db: float = 0.0
    #: Elevation pattern (:class:`aculink.site.transducer.BeamPattern`); None: omnidirectional.
    beam: object = None

    def __post_init__(self):
        _check_fields(self, "source")


@dataclass(frozen=True)
class Receiver:
    """The receiver. ``directivity_index_db`` adds to the SNR in the sonar equation."""

    depth_m: float
    range_m: float
    speed_mps: float = 0.0
    directivity_index_db: float = 0.0
    #: Elevation pattern (:class:`aculink.site.transducer.BeamPattern`); None: omnidirectional.
    #: With a pattern the directivity index is the pattern's (leave ``directivity_index_db`` at 0).
    beam: object = None

    def __post_init__(self):
        _check_fields(self, "receiver")
        if self.beam is not None and self.directivity_index_db != 0.0:
            raise AculinkError("[receiver] directivity_index_db and beam: give one (a beam pattern has its own "
                               "directivity index)")


@dataclass(frozen=True)
class Modem:
    """The modem's band and the planning targets."""

    carrier_hz: float = 12000.0
    bandwidth_hz: float = 6000.0
    rolloff: float = 0.25
    target_ber: float = 1e-4
    margin_db: float = 3.0

    def __post_init__(self):
        _check_fields(self, "modem")
        if self.bandwidth_hz > 2.0 * self.carrier_hz:
            raise AculinkError(
                f"[modem] bandwidth_hz = {self.bandwidth_hz:g} Hz: allowed range is (0, {2.0 * self.carrier_hz:g}] Hz "
                f"(the carrier, carrier_hz = {self.carrier_hz:g} Hz, must be at least half the bandwidth)")

    @property
    def band_hz(self) -> tuple[float, float]:
        """Lower and upper band edges, Hz."""
        return self.carrier_hz - 0.5 * self.bandwidth_hz, self.carrier_hz + 0.5 * self.bandwidth_hz

    @property
    def max_symbol_rate_baud(self) -> float:
        """Highest symbol rate whose root-raised-cosine spectrum fits the band, B / (1 + rolloff)."""
        return self.bandwidth_hz / (1.0 + self.rolloff)


@dataclass(frozen=True, eq=False)
class Site:
    """Everything known about one deployment: sea, seabed, surface, noise, equipment, band."""

    name: str
    water: Water
    seabed: Seabed
    surface: Surface
    noise: Noise
    source: Source
    receiver: Receiver
    modem: Modem
    description: str = ""
    path: str | None = None
    text: str = ""
    #: What varies at the site (:class:`aculink.site.variability.Variability`), or None.
    variability: object = None

    def __post_init__(self):
        for section, kind in (("water", Water), ("seabed", Seabed), ("surface", Surface), ("noise", Noise),
                              ("source", Source), ("receiver", Receiver), ("modem", Modem)):
            if not isinstance(getattr(self, section), kind):
                raise AculinkError(f"[{section}] = {type(getattr(self, section)).__name__}: expected a {kind.__name__}")
        if not isinstance(self.name, str) or not isinstance(self.description, str):
            raise AculinkError("name and description must be text")
        if self.water.profile.max_depth_m < self.seabed.max_depth_m:
            raise AculinkError(
                f"[water] profile ends at {self.water.profile.max_depth_m:g} m but [seabed] depth_m reaches "
                f"{self.seabed.max_depth_m:g} m: the profile must reach the deepest seabed point")

    def with_geometry(self, *, range_m=None, depth_m=None, source_depth_m=None) -> Site:
        """A copy with the receiver moved and/or the source depth changed.

        The new values are checked against :data:`LIMITS` (finite, positive depth and range)
        but not against the seabed: a caller sweeping a grid decides what to do with points
        below the seabed (the loader checks the file's own geometry).
        """
        site = self
        if range_m is not None or depth_m is not None:
            rx = dataclasses.replace(
                self.receiver,
                range_m=self.receiver.range_m if range_m is None else float(range_m),
                depth_m=self.receiver.depth_m if depth_m is None else float(depth_m),
            )
            site = dataclasses.replace(site, receiver=rx)
        if source_depth_m is not None:
            site = dataclasses.replace(site, source=dataclasses.replace(self.source, depth_m=float(source_depth_m)))
        return site

    def replace(self, **sections) -> Site:
        """A copy with whole sections replaced, e.g. ``site.replace(surface=Surface(10, 0.5))``."""
        return dataclasses.replace(self, **sections)
