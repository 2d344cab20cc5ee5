"""Property tests: malformed and random site descriptions either load or raise AculinkError.

Nothing else may escape the loader (no KeyError, TypeError, numpy or gsw error), and whatever
loads satisfies the rules the loader promises (equipment in the water, profile reaching the
seabed, receiver on the track).
"""

from __future__ import annotations

import copy
import string

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from aculink.errors import AculinkError
from aculink.site.loader import SECTION_KEYS, load_site, site_from_dict

BASE = {
    "water": {"depth_m": [0.0, 50.0, 100.0], "sound_speed_mps": [1500.0, 1495.0, 1494.0]},
    "seabed": {"depth_m": 100.0, "sediment": "medium sand"},
    "surface": {"wind_speed_mps": 5.0},
    "noise": {"shipping": 0.5},
    "source": {"depth_m": 20.0, "level_db": 180.0},
    "receiver": {"depth_m": 60.0, "range_m": 2000.0},
    "modem": {"carrier_hz": 12000.0, "bandwidth_hz": 6000.0},
}

_KEYS = sorted({k for keys in SECTION_KEYS.values() for k in keys} | {"name", "profile", "bogus"})
scalars = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True),
    st.floats(-20.0, 6000.0),
    st.integers(-10**6, 10**6),
    st.booleans(),
    st.text(string.ascii_letters + " _.-/", max_size=12),
    st.sampled_from(["munk", "linear", "isovelocity", "teos10", "unesco", "mackenzie", "sand", "clay",
                     "medium sand", "cast.csv"]),
)
values = st.recursive(scalars, lambda inner: st.one_of(st.lists(inner, max_size=5),
                                                       st.dictionaries(st.sampled_from(_KEYS), inner, max_size=3)),
                      max_leaves=8)
sections = st.sampled_from(sorted(BASE) + ["name", "description", "extra"])


def _check(data, **kwargs):
    try:
        site = site_from_dict(data, **kwargs)
    except AculinkError as exc:
        assert "\n" not in str(exc)
        return None
    # what loads keeps the loader's promises
    bed = site.seabed
    assert site.water.profile.max_depth_m >= bed.max_depth_m
    assert 0.0 < site.source.depth_m < float(bed.depth_at(0.0))
    assert 0.0 < site.receiver.depth_m < float(bed.depth_at(site.receiver.range_m))
    assert site.receiver.range_m <= bed.max_range_m
    assert np.all(np.isfinite(site.water.profile.speed(np.linspace(0.0, bed.max_depth_m, 7))))
    assert site.modem.bandwidth_hz <= 2.0 * site.modem.carrier_hz
    return site


@settings(max_examples=150, deadline=None)
@given(section=sections, key=st.sampled_from(_KEYS), value=values, drop=st.booleans())
def test_one_mutation_loads_or_raise(section, key, value, drop):
    data = copy.deepcopy(BASE)
    if drop and section in data:
        del data[section]
    elif section in data and isinstance(data[section], dict):
        data[section][key] = value
    else:
        data[section] = value
    _check(data)


@settings(max_examples=100, deadline=None)
@given(st.lists(st.tuples(st.sampled_from(sorted(BASE)), st.sampled_from(_KEYS), values), min_size=1, max_size=6))
def test_several_mutations_load_or_raise(changes):
    data = copy.deepcopy(BASE)
    for section, key, value in changes:
        data[section][key] = value
    _check(data)


@st.composite
def physical_sites(draw):
    """Well-typed sites whose numbers straddle the allowed ranges (so both outcomes occur)."""
    flat = draw(st.booleans())
    beds = [draw(st.floats(-5.0, 6000.0))] if flat else draw(st.lists(st.floats(1.0, 6000.0), min_size=2, max_size=4))
    deepest = max(max(beds), 1.0)
    if draw(st.booleans()):
        water = {"profile": draw(st.sampled_from(["munk", "linear", "isovelocity"]))}
        for key, strat in (("gradient_per_s", st.floats(-0.6, 0.6)), ("axis_depth_m", st.floats(-100, 12000)),
                           ("scale_depth_m", st.floats(-10, 2e4)), ("epsilon", st.floats(-0.01, 0.06))):
            if water["profile"] == {"gradient_per_s": "linear"}.get(key, "munk") and draw(st.booleans()):
                water[key] = draw(strat)
        if water["profile"] == "linear":
            water.setdefault("gradient_per_s", draw(st.floats(-0.6, 0.6)))
    else:
        n = draw(st.integers(1, 6))
        tail = deepest * draw(st.floats(0.9, 1.2))
        depth = sorted([0.0, tail] + draw(st.lists(st.floats(0.0, tail), min_size=max(n - 2, 0), max_size=max(n - 2, 0))))
        temps = st.floats(-5.0, 42.0)
        sal = st.floats(-1.0, 46.0)
        water = {"depth_m": depth,
                 "temperature_c": draw(st.one_of(temps, st.lists(temps, min_size=len(depth), max_size=len(depth)))),
                 "salinity_psu": draw(st.one_of(sal, st.lists(sal, min_size=len(depth), max_size=len(depth)))),
                 "equation": draw(st.sampled_from(["mackenzie", "unesco", "teos10"])),
                 "latitude_deg": draw(st.floats(-95.0, 95.0))}
    seabed = {"depth_m": beds[0] if flat else beds, "sediment": draw(st.sampled_from(["sand", "clay", "rock"]))}
    end = 1e9
    if not flat:
        end = draw(st.floats(100.0, 2e4))
        seabed["range_m"] = list(np.linspace(0.0, end, len(beds)))
    shallowest = min(beds)
    carrier = draw(st.floats(100.0, 1e5))
    return {"water": water, "seabed": seabed,
            "source": {"depth_m": shallowest * draw(st.floats(-0.05, 1.05))},
            "receiver": {"depth_m": shallowest * draw(st.floats(-0.05, 1.05)),
                         "range_m": min(end, 2e4) * draw(st.floats(-0.05, 1.05))},
            "modem": {"carrier_hz": carrier, "bandwidth_hz": carrier * draw(st.floats(0.05, 2.2)),
                      "rolloff": draw(st.floats(-0.1, 1.1))}}


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=physical_sites())
def test_random_physical_sites_load_or_raise(data):
    """Random but well-typed sites: the checks on values and on geometry hold."""
    _check(data)


@settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(text=st.one_of(st.text(max_size=200),
                      st.lists(st.sampled_from(['[water]', '[seabed]', '[source]', '[receiver]', 'depth_m = 50',
                                                'depth_m = [0, 100]', 'sound_speed_mps = [1500, 1490]',
                                                'range_m = 1000', 'x = ', '"a" = "b"', '[water', 'ctd_file = "a.csv"',
                                                'profile = "munk"', 'depth_m = nan', '[[water]]']),
                               max_size=12).map("\n".join)))
def test_random_files_load_or_raise(tmp_path, text):
    path = tmp_path / "random.toml"
    path.write_text(text, encoding="utf-8")
    try:
        load_site(path)
    except AculinkError as exc:
        assert "\n" not in str(exc) and str(path) in str(exc)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(text=st.text(string.printable, max_size=300))
def test_random_ctd_files_load_or_raise(tmp_path, text):
    (tmp_path / "cast.csv").write_text(text, encoding="utf-8")
    data = copy.deepcopy(BASE)
    data["water"] = {"ctd_file": "cast.csv"}
    _check(data, base_dir=tmp_path)
