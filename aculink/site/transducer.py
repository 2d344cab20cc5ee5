"""Transducer beam patterns: how a source or receiver weighs a path by the angle it leaves or arrives at.

A pattern is axisymmetric about its axis, which lies in the vertical plane of the track and points
along the track toward the other end of the link, ``tilt_deg`` below the horizontal (negative:
tilted up). Two forms:

* ``kind = "piston"``: a circular piston of diameter ``aperture_m`` in a rigid baffle, whose far-field
  pressure response at off-axis angle psi is ``2 J1(x) / x`` with ``x = k a sin(psi)``, ``k = 2 pi f / c``
  and ``a`` the radius; zero behind the baffle (psi > 90 deg) [Kinsler2000]. It depends on frequency.
* ``kind = "table"``: response levels ``level_db`` (dB re the axis, at most 0) at off-axis angles
  ``angle_deg`` (from 0 to 180 deg, increasing), interpolated linearly in dB; the same at every
  frequency.

Both accept ``floor_db`` (default -60 dB re the axis): no direction is weaker than that, since a real
housing leaks (common practice, no source). The response is applied per arrival, to its complex
amplitude, at the launch angle (source) and the arrival angle (receiver), at every frequency of the
channel's grid (:func:`path_gains`). Without a pattern a transducer is omnidirectional and nothing
is multiplied.

Angles follow the Arrivals dataset: launch and arrival angles below the horizontal, positive down,
the arrival angle in the direction of travel. A path launched at theta leaves the source at
``|theta - tilt|`` off its axis; a path arriving with direction of travel alpha comes from the
direction ``(-cos alpha, -sin alpha)``, which is ``|alpha + tilt|`` off an axis pointing back along
the track with tilt below the horizontal.

A receiver with a pattern has the directivity index of that pattern in isotropic noise,
``DI = 10 log10(2 / integral_0^pi b(psi)^2 sin(psi) dpsi)`` at the carrier [Urick1983]; for the baffled
piston this is ``10 log10((ka)^2 / (1 - J1(2ka) / (ka)))`` [Kinsler2000].
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import integrate, special

from aculink.errors import AculinkError

__all__ = ["BeamPattern", "parse_beam", "response", "off_axis_deg", "path_gains", "directivity_index_db",
           "KINDS", "BEAM_KEYS", "BEAM_LIMITS"]

#: The pattern forms a site file may name.
KINDS = ("piston", "table")
#: Keys of a ``beam`` table in ``[source]`` or ``[receiver]``.
BEAM_KEYS = ("kind", "aperture_m", "tilt_deg", "angle_deg", "level_db", "floor_db")
#: Allowed ranges of the pattern's numbers, as (low, high, unit).
BEAM_LIMITS = {
    "aperture_m": (1e-4, 10.0, "m"),
    "tilt_deg": (-90.0, 90.0, "deg"),
    "angle_deg": (0.0, 180.0, "deg"),
    "level_db": (-200.0, 0.0, "dB"),
    "floor_db": (-200.0, 0.0, "dB"),
}
DEFAULT_FLOOR_DB = -60.0


@dataclass(frozen=True)
class BeamPattern:
    """An axisymmetric transducer response (see the module docstring)."""

    kind: str
    tilt_deg: float = 0.0
    aperture_m: float = 0.0
    angle_deg: tuple = ()
    level_db: tuple = ()
    floor_db: float = DEFAULT_FLOOR_DB

    def to_dict(self) -> dict:
        out = {"kind": self.kind, "tilt_deg": self.tilt_deg, "floor_db": self.floor_db}
        if self.kind == "piston":
            out["aperture_m"] = self.aperture_m
        else:
            out["angle_deg"], out["level_db"] = list(self.angle_deg), list(self.level_db)
        return out


def _number(where, key, value):
    low, high, unit = BEAM_LIMITS[key]
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise AculinkError(f"{where} {key} = {value!r}: expected a number in [{low:g}, {high:g}] {unit}")
    if not low <= value <= high:
        raise AculinkError(f"{where} {key} = {value:g} {unit}: allowed range is [{low:g}, {high:g}] {unit}")
    return float(value)


def parse_beam(table, where: str) -> BeamPattern:
    """A :class:`BeamPattern` from a site file's ``beam`` table; one-line errors name ``where`` and the key."""
    if not isinstance(table, dict):
        raise AculinkError(f"{where}: expected a table with kind = \"piston\" or \"table\"")
    unknown = [k for k in table if k not in BEAM_KEYS]
    if unknown:
        raise AculinkError(f"{where} {unknown[0]}: unknown key; allowed keys are {', '.join(BEAM_KEYS)}")
    kind = table.get("kind")
    if kind not in KINDS:
        raise AculinkError(f"{where} kind = {kind!r}: choose one of {', '.join(KINDS)}")
    tilt = _number(where, "tilt_deg", table.get("tilt_deg", 0.0))
    floor = _number(where, "floor_db", table.get("floor_db", DEFAULT_FLOOR_DB))
    if kind == "piston":
        for key in ("angle_deg", "level_db"):
            if key in table:
                raise AculinkError(f"{where} {key}: only for kind = \"table\" (a piston has aperture_m)")
        if "aperture_m" not in table:
            raise AculinkError(f"{where} aperture_m: required for kind = \"piston\" (diameter, m)")
        return BeamPattern("piston", tilt, _number(where, "aperture_m", table["aperture_m"]), floor_db=floor)
    if "aperture_m" in table:
        raise AculinkError(f"{where} aperture_m: only for kind = \"piston\"")
    angles, levels = table.get("angle_deg"), table.get("level_db")
    if not isinstance(angles, list) or not isinstance(levels, list) or len(angles) < 2 or len(angles) != len(levels):
        raise AculinkError(f"{where} angle_deg, level_db: two lists of the same length (at least 2)")
    a = tuple(_number(where, "angle_deg", v) for v in angles)
    lv = tuple(_number(where, "level_db", v) for v in levels)
    if a[0] != 0.0 or any(y <= x for x, y in zip(a, a[1:])):
        raise AculinkError(f"{where} angle_deg = {list(a)}: must start at 0 and increase")
    if lv[0] != 0.0:
        raise AculinkError(f"{where} level_db[0] = {lv[0]:g} dB: the axis (angle 0) is the reference, 0 dB")
    return BeamPattern("table", tilt, angle_deg=a, level_db=lv, floor_db=floor)


def off_axis_deg(pattern: BeamPattern, angle_deg, end: str):
    """Off-axis angle, deg in [0, 180], of paths with launch (``end="source"``) or arrival
    (``end="receiver"``) angles ``angle_deg`` (below the horizontal)."""
    ang = np.asarray(angle_deg, dtype=float)
    psi = ang - pattern.tilt_deg if end == "source" else ang + pattern.tilt_deg
    return np.abs((psi + 180.0) % 360.0 - 180.0)


def response(pattern: BeamPattern, psi_deg, freq_hz, sound_speed_mps: float):
    """Pressure response re the axis at off-axis angles ``psi_deg`` (shape P) and frequencies
    ``freq_hz`` (shape F): an array (P, F), real (the piston's side lobes alternate in sign)."""
    psi = np.deg2rad(np.asarray(psi_deg, dtype=float))[:, None]
    f = np.atleast_1d(np.asarray(freq_hz, dtype=float))[None, :]
    floor = 10.0 ** (pattern.floor_db / 20.0)
    if pattern.kind == "piston":
        x = (2 * np.pi * f / sound_speed_mps) * (pattern.aperture_m / 2) * np.sin(psi)
        with np.errstate(invalid="ignore", divide="ignore"):
            b = np.where(np.abs(x) < 1e-8, 1.0, 2.0 * special.j1(x) / x)
        b = np.where(psi > np.pi / 2, 0.0, b)  # the baffle
        mag = np.maximum(np.abs(b), floor)
        return np.where(b < 0, -mag, mag)
    level = np.interp(np.rad2deg(psi[:, 0]), pattern.angle_deg, pattern.level_db)
    mag = np.maximum(10.0 ** (level / 20.0), floor)
    return np.broadcast_to(mag[:, None], (psi.shape[0], f.shape[1])).copy()


def path_gains(site, launch_deg, arrival_deg, freq_hz, receiver_depth_m=None):
    """Per-path factor (P, F) of the site's source and receiver patterns (ones without patterns).

    Unknown angles (NaN) get the axis response: a path without angles is not weighted.
    """
    launch = np.asarray(launch_deg, dtype=float)
    arrival = np.asarray(arrival_deg, dtype=float)
    f = np.atleast_1d(np.asarray(freq_hz, dtype=float))
    out = np.ones((launch.size, f.size))
    z_r = site.receiver.depth_m if receiver_depth_m is None else receiver_depth_m
    for end, pattern, angle, depth in (("source", site.source.beam, launch, site.source.depth_m),
                                       ("receiver", site.receiver.beam, arrival, z_r)):
        if pattern is None:
            continue
        c = float(site.water.profile.speed(np.array([depth]))[0])
        g = response(pattern, off_axis_deg(pattern, np.nan_to_num(angle), end), f, c)
        g[~np.isfinite(angle)] = 1.0
        out = out * g
    return out


def directivity_index_db(pattern: BeamPattern, freq_hz: float, sound_speed_mps: float) -> float:
    """Directivity index of ``pattern`` in isotropic noise, dB: 10 log10(2 / int_0^pi b^2 sin psi dpsi)."""
    def power(psi):
        return float(response(pattern, [np.rad2deg(psi)], [freq_hz], sound_speed_mps)[0, 0] ** 2) * math.sin(psi)

    # break the integral at the table's knots or the piston's nulls so quad sees smooth pieces
    if pattern.kind == "table":
        knots = [math.radians(a) for a in pattern.angle_deg] + [math.pi]
    else:
        ka = math.pi * freq_hz / sound_speed_mps * pattern.aperture_m
        zeros = special.jn_zeros(1, 200)
        knots = [0.0] + [math.asin(z / ka) for z in zeros if z < ka] + [math.pi / 2, math.pi]
    knots = sorted(set(knots))
    total = sum(integrate.quad(power, a, b, limit=200)[0] for a, b in zip(knots, knots[1:]) if b > a)
    return 10.0 * math.log10(2.0 / total)
