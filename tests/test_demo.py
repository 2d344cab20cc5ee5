"""The first-run experience: ``aculink demo`` writes a complete, readable folder."""

from __future__ import annotations

import csv
from html.parser import HTMLParser

import matplotlib.image as mpimg
import pytest
import xarray as xr

from aculink.cli import main

EXPECTED = ("site_summary.txt", "site.png", "rays.png", "arrivals.txt", "arrivals.csv", "channel.txt",
            "channel.png", "plan.txt", "plan.csv", "plan.png", "ber_vs_snr.png", "ber_vs_snr.csv",
            "sweep.nc", "sweep.png", "index.html")


class _Refs(HTMLParser):
    def __init__(self):
        super().__init__()
        self.refs = []

    def handle_starttag(self, tag, attrs):
        for key, value in attrs:
            if key in ("src", "href"):
                self.refs.append(value)


@pytest.fixture(scope="module")
def demo_folder(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo") / "aculink-demo"
    assert main(["demo", "--out", str(out)]) == 0
    return out


@pytest.mark.slow
def test_demo_writes_every_file_and_each_parses(demo_folder, capsys):
    """Every promised file exists and opens with a general-purpose reader (matplotlib for PNG,
    the csv module, xarray for NetCDF, html.parser for the page); the page links only files
    that exist (common practice, no source)."""
    for name in EXPECTED:
        assert (demo_folder / name).is_file(), name
    for png in demo_folder.glob("*.png"):
        img = mpimg.imread(png)
        assert img.ndim == 3 and img.shape[0] > 200 and img.shape[1] > 300
    for table in demo_folder.glob("*.csv"):
        with open(table, newline="", encoding="utf-8") as f:
            rows = list(csv.DictReader(f))
        assert rows, table
    with open(demo_folder / "plan.csv", newline="", encoding="utf-8") as f:
        plan = list(csv.DictReader(f))
    assert {"range_m", "net_bit_rate_bps", "modulation", "receiver", "margin_db"} <= set(plan[0])
    with xr.open_dataset(demo_folder / "sweep.nc") as ds:
        assert {"range", "depth"} <= set(ds.dims)
        assert ds["net_bit_rate_bps"].attrs["units"]
    parser = _Refs()
    parser.feed((demo_folder / "index.html").read_text(encoding="utf-8"))
    assert parser.refs
    for ref in parser.refs:
        assert (demo_folder / ref).is_file(), ref
    assert "Caution" in (demo_folder / "index.html").read_text(encoding="utf-8")


@pytest.mark.slow
def test_demo_refuses_a_non_empty_folder(demo_folder, capsys):
    """Nothing is overwritten without --overwrite: one line on stderr, exit code 2."""
    before = (demo_folder / "plan.csv").read_bytes()
    capsys.readouterr()
    assert main(["demo", "--out", str(demo_folder)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--overwrite" in err[0]
    assert (demo_folder / "plan.csv").read_bytes() == before
