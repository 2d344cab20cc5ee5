"""The rays, arrivals and loss commands on the bundled environments (contract checks; no outside source)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from aculink.cli import main

ENV = Path(__file__).resolve().parents[2] / "environments"


def test_arrivals_json_fields(capsys):
    """`aculink arrivals --json` prints one object with the documented fields (DEVELOPERS.md)."""
    assert main(["arrivals", str(ENV / "shelf_summer.toml"), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    for key in ("source_depth_m", "range_m", "depth_m", "frequency_hz", "arrivals", "n_dropped", "reason"):
        assert key in out
    assert out["arrivals"], "the bundled shelf has arrivals at its receiver"
    first = out["arrivals"][0]
    for key in ("delay_s", "relative_delay_s", "amplitude", "phase_rad", "level_db", "launch_angle_deg",
                "arrival_angle_deg", "surface_bounces", "bottom_bounces", "caustics", "path_length_m",
                "absorption_db"):
        assert key in first
    assert first["relative_delay_s"] == 0.0
    assert all(a["relative_delay_s"] >= 0 for a in out["arrivals"])


def test_arrivals_table_and_caution(capsys):
    assert main(["arrivals", str(ENV / "harbour_approach.toml"), "--range-m", "1000", "--depth-m", "8"]) == 0
    text = capsys.readouterr().out
    assert "delay ms" in text and "Caution" in text


def test_rays_and_loss_plots(tmp_path, capsys):
    fan = tmp_path / "fan.png"
    tl = tmp_path / "tl.png"
    assert main(["rays", str(ENV / "polar_calm.toml"), "--angles-deg", "-20:20:21", "--plot", str(fan)]) == 0
    assert main(["loss", str(ENV / "polar_calm.toml"), "--ranges-m", "100:5000:100", "--depths-m", "5:345:10",
                 "--plot", str(tl)]) == 0
    assert fan.stat().st_size > 10000 and tl.stat().st_size > 10000
    # an existing plot is not overwritten without --overwrite
    assert main(["rays", str(ENV / "polar_calm.toml"), "--plot", str(fan)]) == 2
    assert "exists" in capsys.readouterr().err


@pytest.mark.parametrize("argv, text", [
    (["arrivals", "SITE", "--range-m", "1e9"], "range_m = 1e+09"),
    (["arrivals", "SITE", "--depth-m", "500"], "depth_m = 500"),
    (["rays", "SITE", "--angles-deg", "-95:0:3"], "angles_deg = -95"),
])
def test_bad_input_exit_code_2(capsys, argv, text):
    argv = [str(ENV / "shelf_summer.toml") if a == "SITE" else a for a in argv]
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert text in err and err.count("\n") == 1
