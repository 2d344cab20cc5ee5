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
    for key in ("source_depth_m", "receiver_range_m", "receiver_depth_m", "frequency_hz", "arrivals", "n_dropped", "reason"):
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
    (["arrivals", "SITE", "--range-m", "1e9"], "--range-m = 1e+09"),
    (["arrivals", "SITE", "--depth-m", "500"], "--depth-m = 500"),
    (["rays", "SITE", "--angles-deg", "-95:0:3"], "--angles-deg = -95"),
    (["loss", "SITE", "--angles-deg", "-95:0:3"], "--angles-deg = -95 deg: allowed range is [-89, 89] deg"),
    (["loss", "SITE", "--angles-deg", "10:5:3"], "--angles-deg = '10:5:3'"),
    (["loss", "SITE", "--angles-deg", "5"], "at least 2 launch angles"),
    (["loss", "SITE", "--angles-deg", "a:b:c"], "--angles-deg = 'a:b:c'"),
    (["loss", "SITE", "-o", "grid.txt"], "expected a file name ending in .nc"),
    (["loss", "SITE", "-o", "/no/such/folder/grid.nc"], "does not exist"),
])
def test_bad_input_exit_code_2(capsys, argv, text):
    argv = [str(ENV / "shelf_summer.toml") if a == "SITE" else a for a in argv]
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert text in err and err.count("\n") == 1


LOSS_GRID = ["--ranges-m", "500:3000:500", "--depths-m", "5:55:10", "--frequency-hz", "4000"]


def test_loss_json_carries_the_grid(capsys):
    """`aculink loss --json` prints one object with the grid, equal to transmission_loss on the same
    grid and the default +-89 deg fan (contract of DEVELOPERS.md; no outside source)."""
    import numpy as np

    from aculink.propagation import transmission_loss
    from aculink.propagation.loss import default_fan_deg
    from aculink.site.loader import load_site

    assert main(["loss", str(ENV / "shelf_summer.toml"), *LOSS_GRID, "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    site = load_site(ENV / "shelf_summer.toml")
    r, z = np.arange(500.0, 3001.0, 500.0), np.arange(5.0, 56.0, 10.0)
    assert out["range_m"] == r.tolist() and out["depth_m"] == z.tolist()
    assert out["n_beams"] == default_fan_deg(site, 3000.0).size and out["units"] == "dB re 1 m"
    tl = transmission_loss(site, r, z, 4000.0)
    np.testing.assert_allclose(np.array(out["tl_coherent_db"], dtype=float), tl.tl_coherent_db.values, atol=1e-9)
    np.testing.assert_allclose(np.array(out["tl_incoherent_db"], dtype=float), tl.tl_incoherent_db.values,
                               atol=1e-9)
    assert "Caution" in out["caution"] or "caution" in out["caution"].lower()


def test_loss_netcdf_output_is_labelled_and_not_overwritten(tmp_path, capsys):
    """`aculink loss -o FILE.nc` writes a CF-labelled grid; a second run refuses to replace it without
    --overwrite (one line, exit 2, file untouched) and replaces it with (contract; no outside source)."""
    import xarray as xr

    out = tmp_path / "tl.nc"
    argv = ["loss", str(ENV / "shelf_summer.toml"), *LOSS_GRID, "--angles-deg", "-60:60:601", "-o", str(out)]
    assert main(argv) == 0
    assert f"wrote {out}" in capsys.readouterr().out
    with xr.open_dataset(out) as ds:
        assert ds.tl_coherent_db.dims == ("range", "depth") and ds.tl_coherent_db.shape == (6, 6)
        assert ds.tl_incoherent_db.attrs["units"] == "dB re 1 m"
        assert ds.depth.attrs["positive"] == "down" and ds.range.attrs["units"] == "m"
        assert ds.attrs["Conventions"].startswith("CF-") and ds.attrs["n_beams"] == 601
        assert ds.attrs["caution"] and ds.attrs["aculink_version"]
    stamp = out.stat().st_mtime_ns
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert "exists" in err and "--overwrite" in err and err.count("\n") == 1
    assert out.stat().st_mtime_ns == stamp
    assert main(argv + ["--overwrite"]) == 0
    assert not list(tmp_path.glob(".*part"))  # the atomic write leaves no temporary file behind
