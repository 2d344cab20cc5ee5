"""What varies at a site, and the ensemble members drawn from it.

A site file may add a ``[variability]`` section declaring how the site changes from one
transmission to the next: several water columns (seasons, repeated casts) and seabed types with
weights, the wind as a table of values with probabilities or a Weibull distribution, the
tolerance of the source and receiver positions, and the change of water depth (tide). Each
*member* of the ensemble is one draw of all of these; :func:`member_site` turns a member into an
ordinary :class:`~aculink.site.model.Site` that the rest of the chain uses unchanged. The random
sea surface of the time-varying channel is part of a member too (``surface_seed``).

Keys (the README's site-file reference lists them with units and ranges)::

    [variability]
    wind_speed_mps = [3.0, 8.0, 14.0]        # values of the wind at 10 m ...
    wind_probability = [0.5, 0.35, 0.15]     # ... and their probabilities (sum to 1)
    # or: wind_weibull_scale_mps = 8.0, wind_weibull_shape = 2.0
    range_tolerance_m = 200.0                # receiver somewhere within this of its range
    depth_tolerance_m = 5.0                  # ... and of its depth
    source_depth_tolerance_m = 2.0
    position_distribution = "uniform"        # or "normal" (the tolerance is one standard deviation)
    tide_m = [-1.5, 0.0, 1.5]                # change of water depth, m, with tide_probability
    tide_probability = [0.25, 0.5, 0.25]

    [[variability.water]]                    # alternative water columns, each a whole [water]
    weight = 2.0                             # section plus a weight (weights are normalised)
    ctd_file = "cast_morning.csv"

    [[variability.seabed]]                   # alternative seabed types (the depths stay those of
    weight = 1.0                             # [seabed]); any of sediment, sound_speed_mps,
    sediment = "fine sand"                   # density_kgm3, attenuation_db_per_wavelength

Without water or seabed alternatives the site's own ``[water]`` and ``[seabed]`` are used in every
member; without wind values the site's wind. The nominal member (every factor at the site's own
value, offsets zero) is what a plan without ``--availability`` computes.

References
----------
C. G. Justus, W. R. Hargraves, A. Mikhail and D. Graber, "Methods for estimating wind speed
frequency distributions", J. Appl. Meteorol. 17(3), 350-353 (1978) [Justus1978]: the two-parameter
Weibull distribution of wind speed.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from dataclasses import dataclass

import numpy as np

from aculink.errors import AculinkError, check_int, check_range, closest

__all__ = [
    "FACTORS",
    "KEYS",
    "Member",
    "Variability",
    "parse_variability",
    "nominal_member",
    "draw_members",
    "enumerate_members",
    "member_site",
]

#: The factors a planner can attribute spread to, in the order reports list them.
FACTORS = ("water", "wind", "position", "seabed", "tide")
#: Scalar and list keys of [variability] (water and seabed are arrays of tables).
KEYS = ("wind_speed_mps", "wind_probability", "wind_weibull_scale_mps", "wind_weibull_shape",
        "range_tolerance_m", "depth_tolerance_m", "source_depth_tolerance_m", "position_distribution",
        "tide_m", "tide_probability", "water", "seabed")
#: Seabed keys an alternative may set (its depths are those of [seabed]).
SEABED_KEYS = ("sediment", "sound_speed_mps", "density_kgm3", "attenuation_db_per_wavelength")
#: Allowed ranges: (low, high, unit).
_LIMITS = {
    "wind_speed_mps": (0.0, 50.0, "m/s"),
    "wind_weibull_scale_mps": (0.1, 30.0, "m/s"),
    "wind_weibull_shape": (0.5, 10.0, ""),
    "range_tolerance_m": (0.0, 1.0e5, "m"),
    "depth_tolerance_m": (0.0, 1000.0, "m"),
    "source_depth_tolerance_m": (0.0, 1000.0, "m"),
    "tide_m": (-50.0, 50.0, "m"),
    "weight": (0.0, 1.0e6, ""),
}
#: Closest a moved transducer may come to the surface or the seabed, m.
BOUNDARY_CLEARANCE_M = 0.5
_PROBABILITY_SUM_TOLERANCE = 1e-6


@dataclass(frozen=True)
class Member:
    """One draw of everything that varies (see the module docstring).

    ``water`` and ``seabed`` index the alternatives (-1: the site's own section); ``wind_mps``
    is None for the site's own wind; offsets are in metres; ``weight`` is the member's
    probability weight (1/N for random draws, the product of the factors' probabilities when
    the ensemble is enumerated).
    """

    water: int = -1
    seabed: int = -1
    wind_mps: float | None = None
    tide_m: float = 0.0
    range_offset_m: float = 0.0
    depth_offset_m: float = 0.0
    source_depth_offset_m: float = 0.0
    surface_seed: int = 0
    weight: float = 1.0

    def at_nominal(self, factor: str) -> Member:
        """This member with one factor set back to the site's own value."""
        if factor == "water":
            return dataclasses.replace(self, water=-1)
        if factor == "seabed":
            return dataclasses.replace(self, seabed=-1)
        if factor == "wind":
            return dataclasses.replace(self, wind_mps=None)
        if factor == "tide":
            return dataclasses.replace(self, tide_m=0.0)
        if factor == "position":
            return dataclasses.replace(self, range_offset_m=0.0, depth_offset_m=0.0, source_depth_offset_m=0.0)
        raise AculinkError(f"factor = {factor!r}: choose one of {', '.join(FACTORS)}{closest(factor, FACTORS)}")


@dataclass(frozen=True, eq=False)
class Variability:
    """The parsed ``[variability]`` section (validated; see the module docstring).

    ``water_sites`` and ``seabed_sites`` are the alternatives already built as whole sites, so a
    member needs no re-validation; ``water_weights`` and ``seabed_weights`` are normalised.
    """

    water_sites: tuple = ()
    water_weights: tuple = ()
    seabed_sites: tuple = ()
    seabed_weights: tuple = ()
    wind_values_mps: tuple = ()
    wind_probabilities: tuple = ()
    wind_weibull: tuple | None = None  # (scale_mps, shape)
    range_tolerance_m: float = 0.0
    depth_tolerance_m: float = 0.0
    source_depth_tolerance_m: float = 0.0
    position_distribution: str = "uniform"
    tide_values_m: tuple = ()
    tide_probabilities: tuple = ()

    @property
    def factors(self) -> tuple:
        """The factors this section makes vary, in :data:`FACTORS` order."""
        on = {
            "water": len(self.water_sites) > 0,
            "wind": len(self.wind_values_mps) > 0 or self.wind_weibull is not None,
            "position": max(self.range_tolerance_m, self.depth_tolerance_m, self.source_depth_tolerance_m) > 0,
            "seabed": len(self.seabed_sites) > 0,
            "tide": len(self.tide_values_m) > 0,
        }
        return tuple(f for f in FACTORS if on[f])

    @property
    def is_discrete(self) -> bool:
        """True when every factor takes finitely many values (the ensemble can be enumerated)."""
        return self.wind_weibull is None and "position" not in self.factors

    def enumeration_size(self) -> int:
        """Members in the full enumeration (product of the factors' value counts)."""
        sizes = [max(len(self.water_sites), 1), max(len(self.seabed_sites), 1),
                 max(len(self.wind_values_mps), 1), max(len(self.tide_values_m), 1)]
        return int(np.prod(sizes))

    def to_dict(self) -> dict:
        """A JSON-ready description (alternatives by index and weight)."""
        return {
            "factors": list(self.factors),
            "water_weights": list(self.water_weights), "seabed_weights": list(self.seabed_weights),
            "seabed_types": [s.seabed.sediment or "given" for s in self.seabed_sites],
            "wind_values_mps": list(self.wind_values_mps), "wind_probabilities": list(self.wind_probabilities),
            "wind_weibull_scale_mps": None if self.wind_weibull is None else self.wind_weibull[0],
            "wind_weibull_shape": None if self.wind_weibull is None else self.wind_weibull[1],
            "range_tolerance_m": self.range_tolerance_m, "depth_tolerance_m": self.depth_tolerance_m,
            "source_depth_tolerance_m": self.source_depth_tolerance_m,
            "position_distribution": self.position_distribution,
            "tide_values_m": list(self.tide_values_m), "tide_probabilities": list(self.tide_probabilities),
        }


# --------------------------------------------------------------------------- parsing
def _number(key, value, limits=None):
    low, high, unit = _LIMITS[limits or key]
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise AculinkError(f"[variability] {key} = {value!r}: expected a number in [{low:g}, {high:g}] {unit}".rstrip())
    return check_range(f"[variability] {key}", value, low, high, unit=unit)


def _probabilities(key, value, n, values_key):
    if value is None:
        return tuple([1.0 / n] * n)
    if not isinstance(value, list) or len(value) != n:
        raise AculinkError(f"[variability] {key} = {value!r}: expected {n} probabilities, one per value of "
                           f"{values_key}")
    probs = []
    for i, v in enumerate(value):
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise AculinkError(f"[variability] {key}[{i}] = {v!r}: expected a number in [0, 1]")
        probs.append(check_range(f"[variability] {key}[{i}]", v, 0.0, 1.0))
    total = sum(probs)
    if abs(total - 1.0) > _PROBABILITY_SUM_TOLERANCE:
        raise AculinkError(f"[variability] {key} sums to {total:g}: the probabilities must sum to 1")
    return tuple(probs)


def _weights(key, tables):
    raw = []
    for i, table in enumerate(tables):
        raw.append(_number(f"{key}[{i}] weight", table.get("weight", 1.0), "weight"))
    total = sum(raw)
    if total <= 0.0:
        raise AculinkError(f"[variability] {key}: the weights sum to 0; give at least one positive weight")
    return tuple(w / total for w in raw)


def _tables(key, value):
    if not isinstance(value, list) or not value or not all(isinstance(t, dict) for t in value):
        raise AculinkError(f"[variability] {key} = {value!r}: expected one or more [[variability.{key}]] tables")
    return value


def parse_variability(table, base_data: dict, *, build_site) -> Variability:
    """Validate a ``[variability]`` table and build its alternatives.

    Parameters
    ----------
    table : dict
        The section as parsed from TOML.
    base_data : dict
        The whole site description it belongs to (the alternatives replace its sections).
    build_site : callable
        ``build_site(data) -> Site`` for a modified site description (the loader's own
        builder, so alternatives are validated exactly as the site file is).

    Raises
    ------
    AculinkError
        One line naming the key (``[variability] ...``), the value and the allowed range.
    """
    if not isinstance(table, dict):
        raise AculinkError(f"[variability] = {table!r}: expected a section with keys below it")
    for key in table:
        if key not in KEYS:
            raise AculinkError(f"[variability] {key}: unknown key{closest(key, KEYS)}; allowed keys: {', '.join(KEYS)}")
    out = {}
    if "wind_speed_mps" in table:
        if "wind_weibull_scale_mps" in table or "wind_weibull_shape" in table:
            raise AculinkError("[variability] wind_speed_mps and wind_weibull_*: give the wind as a table of "
                               "values or as a Weibull distribution, not both")
        values = tuple(_number(f"wind_speed_mps[{i}]", v, "wind_speed_mps")
                       for i, v in enumerate(_list("wind_speed_mps", table["wind_speed_mps"])))
        out["wind_values_mps"] = values
        out["wind_probabilities"] = _probabilities("wind_probability", table.get("wind_probability"),
                                                   len(values), "wind_speed_mps")
    elif "wind_probability" in table:
        raise AculinkError("[variability] wind_probability needs wind_speed_mps (the values it weights)")
    if "wind_weibull_scale_mps" in table or "wind_weibull_shape" in table:
        if "wind_weibull_scale_mps" not in table:
            raise AculinkError("[variability] wind_weibull_scale_mps is missing: it is required with wind_weibull_shape")
        scale = _number("wind_weibull_scale_mps", table["wind_weibull_scale_mps"])
        shape = _number("wind_weibull_shape", table.get("wind_weibull_shape", 2.0))
        out["wind_weibull"] = (scale, shape)
    for key in ("range_tolerance_m", "depth_tolerance_m", "source_depth_tolerance_m"):
        if key in table:
            out[key] = _number(key, table[key])
    if "position_distribution" in table:
        value = table["position_distribution"]
        choices = ("uniform", "normal")
        if not isinstance(value, str) or value.strip().lower() not in choices:
            raise AculinkError(f"[variability] position_distribution = {value!r}: allowed values are "
                               f"'uniform', 'normal'{closest(str(value), choices)}")
        out["position_distribution"] = value.strip().lower()
    if "tide_m" in table:
        values = tuple(_number(f"tide_m[{i}]", v, "tide_m") for i, v in enumerate(_list("tide_m", table["tide_m"])))
        out["tide_values_m"] = values
        out["tide_probabilities"] = _probabilities("tide_probability", table.get("tide_probability"),
                                                   len(values), "tide_m")
    elif "tide_probability" in table:
        raise AculinkError("[variability] tide_probability needs tide_m (the values it weights)")
    if "water" in table:
        tables = _tables("water", table["water"])
        sites = []
        for i, water in enumerate(tables):
            section = {k: v for k, v in water.items() if k != "weight"}
            sites.append(_alternative(build_site, base_data, "water", section, f"water[{i}]"))
        out["water_sites"] = tuple(sites)
        out["water_weights"] = _weights("water", tables)
    if "seabed" in table:
        tables = _tables("seabed", table["seabed"])
        sites = []
        for i, bed in enumerate(tables):
            for key in bed:
                if key not in (*SEABED_KEYS, "weight"):
                    raise AculinkError(f"[variability] seabed[{i}] {key}: unknown key{closest(key, SEABED_KEYS)}; "
                                       f"allowed keys: weight, {', '.join(SEABED_KEYS)} (the depths are those of "
                                       "[seabed])")
            given = {k: v for k, v in bed.items() if k != "weight"}
            base = dict(base_data.get("seabed", {}))
            if "sediment" in given:  # a new sediment replaces the old one's numbers
                for key in SEABED_KEYS:
                    base.pop(key, None)
            base.update(given)
            sites.append(_alternative(build_site, base_data, "seabed", base, f"seabed[{i}]"))
        out["seabed_sites"] = tuple(sites)
        out["seabed_weights"] = _weights("seabed", tables)
    return Variability(**out)


def _list(key, value):
    if not isinstance(value, list) or not value:
        raise AculinkError(f"[variability] {key} = {value!r}: expected a non-empty list of numbers")
    return value


def _alternative(build_site, base_data, section, replacement, label):
    data = {k: v for k, v in base_data.items() if k != "variability"}
    data[section] = replacement
    try:
        return build_site(data)
    except AculinkError as exc:
        msg = str(exc)
        # the builder names the section it checked; say which alternative it was
        raise AculinkError(f"[variability] {label}: {msg.split(': ', 1)[-1] if msg.count(': ') else msg}") from None


# --------------------------------------------------------------------------- members
def nominal_member() -> Member:
    """The member with every factor at the site's own value."""
    return Member()


def _categorical(rng, probs, n):
    return rng.choice(len(probs), size=n, p=np.asarray(probs) / np.sum(probs))


def draw_members(variability: Variability | None, n: int, seed: int) -> list[Member]:
    """``n`` members drawn independently from the declared distributions.

    Reproducible: the same ``(variability, n, seed)`` gives the same members, and the first
    ``k`` members of a longer draw are those of a shorter one (each member has its own stream
    spawned from ``seed``), so an ensemble can grow batch by batch.
    """
    n = check_int("members", n, 1)
    var = variability or Variability()
    children = np.random.SeedSequence(int(seed)).spawn(int(n))
    members = []
    for child in children:
        rng = np.random.default_rng(child)
        u = rng.random(8)  # fixed draw count per member: factors do not shift each other's streams
        kw = {"surface_seed": int(rng.integers(0, 2**31 - 1)), "weight": 1.0 / n}
        if var.water_sites:
            kw["water"] = int(np.searchsorted(np.cumsum(var.water_weights), u[0] * np.sum(var.water_weights),
                                              side="right").clip(0, len(var.water_sites) - 1))
        if var.seabed_sites:
            kw["seabed"] = int(np.searchsorted(np.cumsum(var.seabed_weights), u[1] * np.sum(var.seabed_weights),
                                               side="right").clip(0, len(var.seabed_sites) - 1))
        if var.wind_values_mps:
            i = int(np.searchsorted(np.cumsum(var.wind_probabilities), u[2], side="right"))
            kw["wind_mps"] = float(var.wind_values_mps[min(i, len(var.wind_values_mps) - 1)])
        elif var.wind_weibull is not None:
            scale, shape = var.wind_weibull
            kw["wind_mps"] = float(min(scale * (-math.log1p(-u[2])) ** (1.0 / shape), _LIMITS["wind_speed_mps"][1]))
        if var.tide_values_m:
            i = int(np.searchsorted(np.cumsum(var.tide_probabilities), u[3], side="right"))
            kw["tide_m"] = float(var.tide_values_m[min(i, len(var.tide_values_m) - 1)])
        for key, tol, x in (("range_offset_m", var.range_tolerance_m, u[4]),
                            ("depth_offset_m", var.depth_tolerance_m, u[5]),
                            ("source_depth_offset_m", var.source_depth_tolerance_m, u[6])):
            if tol > 0:
                kw[key] = _offset(x, tol, var.position_distribution)
        members.append(Member(**kw))
    return members


def _offset(u, tolerance, distribution):
    if distribution == "normal":
        from scipy.special import ndtri

        return float(tolerance * ndtri(min(max(u, 1e-12), 1 - 1e-12)))
    return float(tolerance * (2.0 * u - 1.0))


def enumerate_members(variability: Variability | None, seed: int = 0) -> list[Member]:
    """Every combination of a discrete ensemble, weighted by the product of its probabilities.

    Raises
    ------
    AculinkError
        When a factor is continuous (position tolerance, Weibull wind): draw members instead.
    """
    var = variability or Variability()
    if not var.is_discrete:
        raise AculinkError("[variability]: position tolerances and Weibull winds are continuous; the ensemble "
                           "cannot be enumerated (draw members instead)")
    waters = list(enumerate(var.water_weights)) or [(-1, 1.0)]
    beds = list(enumerate(var.seabed_weights)) or [(-1, 1.0)]
    winds = list(zip(var.wind_values_mps, var.wind_probabilities)) or [(None, 1.0)]
    tides = list(zip(var.tide_values_m, var.tide_probabilities)) or [(0.0, 1.0)]
    seeds = np.random.SeedSequence(int(seed)).generate_state(len(waters) * len(beds) * len(winds) * len(tides))
    members = []
    for k, ((w, pw), (b, pb), (u, pu), (t, pt)) in enumerate(itertools.product(waters, beds, winds, tides)):
        members.append(Member(water=w, seabed=b, wind_mps=u, tide_m=float(t), surface_seed=int(seeds[k] >> 1),
                              weight=float(pw * pb * pu * pt)))
    return members


def member_site(site, member: Member):
    """The site as it is in one member (alternatives, wind and tide applied).

    Positions are not moved here (the planner moves its receivers by the member's offsets and
    keeps them in the water, :func:`moved_depth`); the source depth offset is applied, kept
    :data:`BOUNDARY_CLEARANCE_M` inside the water.
    """
    var = getattr(site, "variability", None)
    out = site
    if member.water >= 0 or member.seabed >= 0:
        if var is None:
            raise AculinkError("member uses alternatives but the site has no [variability] section")
        water = var.water_sites[member.water].water if member.water >= 0 else site.water
        seabed = var.seabed_sites[member.seabed].seabed if member.seabed >= 0 else site.seabed
        out = out.replace(water=water, seabed=seabed)
    if member.wind_mps is not None:
        from aculink.site.surface import site_with_wind

        out = site_with_wind(out, member.wind_mps)
    if member.tide_m != 0.0:
        out = _with_tide(out, member.tide_m)
    if member.source_depth_offset_m != 0.0:
        bed = float(np.min(out.seabed.depth_at(np.array([0.0]))))
        z = moved_depth(out.source.depth_m, member.source_depth_offset_m, bed)
        out = out.with_geometry(source_depth_m=z)
    return out


def moved_depth(depth_m, offset_m, seabed_m):
    """``depth_m + offset_m`` kept :data:`BOUNDARY_CLEARANCE_M` inside the water column."""
    low = BOUNDARY_CLEARANCE_M
    high = max(float(seabed_m) - BOUNDARY_CLEARANCE_M, low)
    return float(np.clip(float(depth_m) + float(offset_m), low, high))


def _with_tide(site, tide_m):
    """The water deeper (or shallower) by ``tide_m`` everywhere along the track.

    The transducers keep their depths below the surface; the profile's deepest value is carried
    down when the water gets deeper than the profile reaches.
    """
    from aculink.site.profile import SoundSpeedProfile

    bed = site.seabed
    new_depth = bed.depth_m + tide_m
    if np.any(new_depth <= 0.0):
        raise AculinkError(f"[variability] tide_m = {tide_m:g} m: leaves no water at the shallowest point "
                           f"({float(np.min(bed.depth_m)):g} m)")
    seabed = dataclasses.replace(bed, depth_m=new_depth)
    water = site.water
    prof = water.profile
    if prof.max_depth_m < float(np.max(new_depth)):
        z = np.append(prof.depth_m, float(np.max(new_depth)))
        def extend(a):
            return None if a is None else np.append(a, a[-1])

        prof = SoundSpeedProfile(depth_m=z, speed_mps=extend(prof.speed_mps), temperature_c=extend(prof.temperature_c),
                                 salinity_psu=extend(prof.salinity_psu), source=prof.source)
        water = dataclasses.replace(water, profile=prof)
    return site.replace(water=water, seabed=seabed)
