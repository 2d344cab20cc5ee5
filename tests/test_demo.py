"""The first-run experience: ``aculink demo`` writes a complete, readable folder."""

from __future__ import annotations

import csv
from html.parser import HTMLParser
from pathlib import Path

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


def _bundled_names():
    from aculink.site.bundled import bundled_site_path

    return sorted(p.stem for p in bundled_site_path("shelf_summer").parent.glob("*.toml"))


@pytest.mark.slow
@pytest.mark.parametrize("name", _bundled_names())
def test_quick_demo_runs_on_every_bundled_site(name, tmp_path, capsys):
    """Every bundled site goes through the whole chain: the demo picks ranges and depths in its
    water (a receiver depth below the seabed at a short range stopped the harbour site before),
    and prints the conclusion and the caution on stdout (common practice, no source)."""
    out = tmp_path / name
    assert main(["demo", "--site", name, "--quick", "--out", str(out)]) == 0
    captured = capsys.readouterr()
    assert captured.err == ""  # stage timings go to stdout with the rest
    for file in EXPECTED:
        assert (out / file).is_file(), file
    assert "Caution:" in captured.out
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]  # no build folder left


def test_failed_demo_leaves_no_folder(tmp_path, monkeypatch, capsys):
    """A step that fails leaves neither the output folder nor its build folder behind; one line on
    stderr, exit code 2 (common practice, no source)."""
    from aculink.cli import demo
    from aculink.errors import AculinkError

    def broken(*args, **kwargs):
        raise AculinkError("a step failed on purpose")

    monkeypatch.setattr(demo, "step_rays", broken)
    out = tmp_path / "never"
    assert main(["demo", "--out", str(out), "--quick"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert err == ["aculink: error: a step failed on purpose"]
    assert list(tmp_path.iterdir()) == []


def test_failed_demo_keeps_the_old_folder(tmp_path, monkeypatch, capsys):
    """With --overwrite, a failure leaves the earlier folder exactly as it was."""
    from aculink.cli import demo
    from aculink.errors import AculinkError

    def broken(*args, **kwargs):
        raise AculinkError("a step failed on purpose")

    monkeypatch.setattr(demo, "step_rays", broken)
    out = tmp_path / "old"
    out.mkdir()
    (out / "keep.txt").write_text("earlier result")
    assert main(["demo", "--out", str(out), "--quick", "--overwrite"]) == 2
    assert [p.name for p in tmp_path.iterdir()] == ["old"]
    assert (out / "keep.txt").read_text() == "earlier result"


def test_demo_geometry_stays_in_the_water():
    """The ranges and depths the demo picks lie inside each bundled site's track and water
    (contract; no outside source)."""
    import numpy as np

    from aculink.cli.demo import Geometry
    from aculink.site.bundled import bundled_site_path
    from aculink.site.loader import load_site

    for name in _bundled_names():
        site = load_site(bundled_site_path(name))
        for quick in (False, True):
            geo = Geometry(site, quick)
            bed = np.asarray(site.seabed.depth_at(geo.plan_ranges_m))
            assert np.all(geo.plan_depth_m < bed), name
            if site.seabed.range_m.size > 1:
                assert geo.sweep_ranges_m.max() <= site.seabed.max_range_m
            assert geo.sweep_depths_m.max() < np.max(site.seabed.depth_at(geo.sweep_ranges_m))


def _imports(path):
    import ast

    tree = ast.parse(path.read_text(encoding="utf-8"))
    names = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.module:
            names.add(node.module)
        elif isinstance(node, ast.Import):
            names.update(a.name for a in node.names)
    return names, tree


def test_reports_live_in_their_stage_not_in_the_cli():
    """The demo calls the same reports as the commands, from the report module, never from another
    command's module; and no command module defines a text or JSON report of its own (contract of
    our layering; no outside source)."""
    import ast

    cli = Path(__file__).resolve().parents[1] / "aculink" / "cli"
    names, _ = _imports(cli / "demo.py")
    assert not [n for n in names if n.startswith("aculink.cli") and n != "aculink.cli._common"], names
    for path in sorted(cli.glob("*.py")):
        _, tree = _imports(path)
        defined = [n.name for n in ast.walk(tree) if isinstance(n, ast.FunctionDef)]
        assert not [d for d in defined if d.startswith(("format_", "report", "arrivals_table", "eigenray", "conclusion",
                                                        "heading", "sent_text"))], (path.name, defined)
    # nothing outside the command line imports it (the package's __main__ aside)
    for path in (cli.parent).rglob("*.py"):
        if cli in path.parents or path.name == "__main__.py":
            continue
        names, _ = _imports(path)
        assert not [n for n in names if n.startswith("aculink.cli")], path
