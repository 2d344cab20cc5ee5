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

from aculink.errors import AculinkError
from aculink.site.profile import SoundSpeedProfile


@dataclass(frozen=True, eq=False)
class Water:
    """The water column: sound-speed profile and chemistry used by absorption."""

    profile: SoundSpeedProfile
    ph: float = 8.0
    latitude_deg: float = 45.0
    density_kgm3: float = 1025.0


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
        object.__setattr__(self, "range_m", r)
        object.__setattr__(self, "depth_m", d)

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


@dataclass(frozen=True)
class Noise:
    """Ambient noise: shipping activity 0..1, wind speed (from the surface) and an offset."""

    shipping: float = 0.5
    wind_speed_mps: float = 0.0
    extra_db: float = 0.0


@dataclass(frozen=True)
class Source:
    """The transmitter. ``level_db`` is the on-axis source level, dB re 1 uPa at 1 m."""

    depth_m: float
    level_db: float = 180.0
    speed_mps: float = 0.0
    directivity_index_db: float = 0.0


@dataclass(frozen=True)
class Receiver:
    """The receiver. ``directivity_index_db`` adds to the SNR in the sonar equation."""

    depth_m: float
    range_m: float
    speed_mps: float = 0.0
    directivity_index_db: float = 0.0


@dataclass(frozen=True)
class Modem:
    """The modem's band and the planning targets."""

    carrier_hz: float = 12000.0
    bandwidth_hz: float = 6000.0
    rolloff: float = 0.25
    target_ber: float = 1e-4
    margin_db: float = 3.0


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

    def with_geometry(self, *, range_m=None, depth_m=None, source_depth_m=None) -> "Site":
        """A copy with the receiver moved and/or the source depth changed."""
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

    def replace(self, **sections) -> "Site":
        """A copy with whole sections replaced, e.g. ``site.replace(surface=Surface(10, 0.5))``."""
        return dataclasses.replace(self, **sections)
