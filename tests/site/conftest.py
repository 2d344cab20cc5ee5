"""Shared helpers for the site tests: a valid base site and a small TOML writer."""

from __future__ import annotations

import copy
import json
import math

import pytest

#: A small valid site of our own: 100 m of water over sand, a 2 km link.
BASE = {
    "name": "test site",
    "water": {"depth_m": [0.0, 50.0, 100.0], "sound_speed_mps": [1500.0, 1495.0, 1494.0]},
    "seabed": {"depth_m": 100.0, "sediment": "medium sand"},
    "surface": {"wind_speed_mps": 5.0},
    "noise": {"shipping": 0.5},
    "source": {"depth_m": 20.0, "level_db": 180.0},
    "receiver": {"depth_m": 60.0, "range_m": 2000.0},
    "modem": {"carrier_hz": 12000.0, "bandwidth_hz": 6000.0},
}


@pytest.fixture
def base():
    """A fresh deep copy of :data:`BASE`."""
    return copy.deepcopy(BASE)


def _value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, int):
        return str(v)
    if isinstance(v, str):
        return json.dumps(v)  # JSON string escapes are valid TOML basic-string escapes
    if isinstance(v, list):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{json.dumps(k)} = {_value(x)}" for k, x in v.items()) + "}"
    raise TypeError(type(v))


def to_toml(data: dict) -> str:
    """Write a site dict as TOML text (top-level scalars first, then one table per section)."""
    lines = [f"{json.dumps(k)} = {_value(v)}" for k, v in data.items() if not isinstance(v, dict)]
    for key, table in data.items():
        if isinstance(table, dict):
            lines.append(f"\n[{json.dumps(key)}]")
            lines += [f"{json.dumps(k)} = {_value(v)}" for k, v in table.items()]
    return "\n".join(lines) + "\n"


@pytest.fixture
def write_site(tmp_path):
    """Write a dict (or raw text) to ``tmp_path/name`` and return the path."""

    def write(data, name="site.toml"):
        path = tmp_path / name
        path.write_text(data if isinstance(data, str) else to_toml(data), encoding="utf-8")
        return path

    return write
