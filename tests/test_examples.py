"""Every script in examples/ runs, on small grids (the scripts are what users copy)."""

from __future__ import annotations

import importlib.util
from pathlib import Path

import pytest
import xarray as xr

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


def _load(name):
    spec = importlib.util.spec_from_file_location(f"example_{name}", EXAMPLES / f"{name}.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_size_modem_from_ctd(capsys):
    """The CTD-cast example plans the bundled summer shelf (a TEOS-10 profile from the cast)."""
    plan = _load("size_modem_from_ctd").main(["--ranges-m", "1000:3000:1000"])
    assert plan.sizes["range"] == 3
    assert "CTD-derived" in capsys.readouterr().out


def test_summer_vs_winter(capsys):
    seasons = _load("summer_vs_winter").main(["--ranges-m", "1000,3000"])
    assert set(seasons) == {"shelf_summer", "shelf_winter"}
    assert "winter kbit/s" in capsys.readouterr().out


def test_sweep_and_slice(tmp_path, capsys):
    out = _load("sweep_and_slice").main(["--out", str(tmp_path / "s.nc"), "--ranges-m", "1000,2000",
                                          "--depths-m", "20,40"])
    with xr.open_dataset(out) as ds:
        assert ds.sizes["range"] == 2 and ds.sizes["depth"] == 2
    assert "best depth" in capsys.readouterr().out


def test_replay_impulse_response(capsys):
    """The replay example: on its three-cluster probe the DFE beats the receiver without
    equalizer (the textbook ordering, Proakis, Digital Communications, ch. 10)."""
    results = _load("replay_impulse_response").main(["--symbols", "3000"])
    assert results["dfe"].snr_out_db > results["none"].snr_out_db + 3.0


@pytest.mark.slow
def test_sweep_on_dask_scheduler(tmp_path, capsys):
    """Without an address the example starts a local cluster on 127.0.0.1 and sweeps through it."""
    out = _load("sweep_on_dask_scheduler").main(["--out", str(tmp_path / "d.nc"), "--ranges-m", "1000,2000",
                                                  "--depths-m", "20"])
    with xr.open_dataset(out) as ds:
        assert ds.sizes["range"] == 2
