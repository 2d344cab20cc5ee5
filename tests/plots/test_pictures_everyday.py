"""Pictures a planner reads at a glance: legends, titles, marks, the seabed, and drawing them again.

Drawn from small synthetic results on the bundled shelf site so that each check takes well under
a second. Contract checks of our own pictures (common practice, no source), except the envelope,
whose number and source key come from docs/references.md [KilfoyleBaggeroer2000].
"""

from __future__ import annotations

import json
from pathlib import Path

import matplotlib.image as mpimg
import numpy as np
import pytest
import xarray as xr

from aculink.plots.style import RECEIVER_MARK, SEABED_COLOUR, SOURCE_MARK

ROOT = Path(__file__).resolve().parents[2]
SHELF = ROOT / "environments" / "shelf_summer.toml"


@pytest.fixture(scope="module")
def site():
    from aculink.site.loader import load_site

    return load_site(SHELF)


def _inside_figure(fig, artist):
    fig.canvas.draw()
    box = artist.get_window_extent(fig.canvas.get_renderer())
    w, h = fig.canvas.get_width_height()
    return box.x0 >= -0.5 and box.y0 >= -0.5 and box.x1 <= w + 0.5 and box.y1 <= h + 0.5


def plan_ds(rates_by_rx=None):
    """A small plan result: 4 ranges x 3 receivers."""
    r = np.array([1000.0, 2000.0, 3000.0, 4000.0])
    by = np.array([[0.0, 4000.0, 8000.0], [0.0, 2000.0, 7900.0], [0.0, 0.0, 3900.0], [0.0, 0.0, 0.0]]) \
        if rates_by_rx is None else rates_by_rx
    return xr.Dataset({"net_bit_rate_by_receiver_bps": (("range", "receiver"), by),
                       "net_bit_rate_bps": ("range", by.max(axis=1))},
                      coords={"range": r, "receiver": ["none", "linear", "dfe"]},
                      attrs={"receiver_depth_m": 50.0, "source_depth_m": 20.0, "target_ber": 1e-4, "margin_db": 3.0})


def test_envelope_legend_reads_at_a_glance(site):
    """The dashed line says what it is (the range x rate product reported for fielded modems),
    gives one point to check against the table, and cites its source key."""
    from aculink.plots.plan import plot_plan

    fig = plot_plan(plan_ds(), site)
    texts = [t.get_text() for t in fig.axes[0].get_legend().get_texts()]
    line = next(t for t in texts if "fielded" in t)
    assert "rate x range = 40 kbit/s x km" in line and "shallow water" in line
    assert "e.g. 16 kbit/s at 2.5 km" in line  # 40 / 2.5, at the median range of the table
    key = line[line.index("[") + 1:line.index("]")]
    assert f"**[{key}]**" in (ROOT / "docs" / "references.md").read_text(encoding="utf-8")
    assert "fielded systems, 40 km kbit/s" not in " ".join(texts)
    assert "no workable rate at 1 range(s)" in texts


def test_ber_title_is_not_clipped(site):
    from aculink.io.reports import geometry_text
    from aculink.plots.ber import plot_ber_curves

    snr = np.array([4.0, 8.0, 12.0])
    data = {k: (("receiver", "snr"), np.full((2, 3), 1e-3)) for k in ("ber", "ber_low", "ber_high", "ber_predicted")}
    curves = xr.Dataset(data, coords={"receiver": ["none", "dfe"], "snr": snr})
    detail = "QPSK at 4800 Bd, " + geometry_text(20.0, 4000.0, 50.0)
    fig = plot_ber_curves(curves, site=site, detail=detail)
    title = fig.axes[0].title
    assert site.name in title.get_text() and detail in title.get_text()
    assert _inside_figure(fig, title)


def _marks(ax):
    return [(ln.get_marker(), ln.get_color()) for ln in ax.get_lines()]


def test_loss_picture_uses_the_shared_equipment_marks(site):
    """The TL picture marks the source and the receiver as every other picture does."""
    from aculink.plots.loss import plot_loss

    r = np.linspace(100.0, 4000.0, 12)
    z = np.linspace(2.0, 60.0, 10)
    tl = 20 * np.log10(r)[:, None] + np.zeros(z.size)[None, :]
    ds = xr.Dataset({"tl_coherent_db": (("range", "depth"), tl), "tl_incoherent_db": (("range", "depth"), tl)},
                    coords={"range": r, "depth": z},
                    attrs={"source_depth_m": 20.0, "frequency_hz": 12000.0, "tl_cap_db": 300.0})
    fig = plot_loss(site, ds)
    marks = _marks(fig.axes[0])
    assert (SOURCE_MARK["marker"], SOURCE_MARK["color"]) in marks
    assert (RECEIVER_MARK["marker"], RECEIVER_MARK["color"]) in marks
    legend = [t.get_text() for t in fig.legends[0].get_texts()]
    assert "source 20 m deep" in legend and "receiver at 4 km, 50 m deep" in legend


def sweep_ds(site, value_under_seabed):
    """A 3 x 4 sweep whose deepest row lies under the seabed (58.8 to 60.3 m deep here); every water
    cell has 5 kbit/s. The 50 m row's cells reach down to 60 m, below the seabed at 1 km."""
    r = np.array([1000.0, 2000.0, 3000.0])
    z = np.array([10.0, 30.0, 50.0, 70.0])
    rate = np.full((r.size, z.size), 5000.0)
    rate[:, -1] = value_under_seabed
    return xr.Dataset({"net_bit_rate_bps": (("range", "depth"), rate)}, coords={"range": r, "depth": z},
                      attrs={"target_ber": 1e-4, "margin_db": 3.0, "source_depth_m": 20.0})


def test_rate_map_has_no_grey_end_without_unworkable_water_cells(site):
    """Zeros only under the seabed are not "none workable" cells: no grey extension on the bar."""
    from aculink.plots.plan import plot_rate_map

    fig = plot_rate_map(sweep_ds(site, 0.0), site)
    bar = fig.axes[-1]
    assert "none workable" not in bar.get_ylabel()
    assert all(p.get_facecolor()[:3] != pytest.approx((0.851, 0.851, 0.851), abs=0.01)
               for p in bar.patches if hasattr(p, "get_facecolor"))


def test_rate_map_draws_no_cell_under_the_seabed(site, tmp_path):
    """A cell centred in the water but reaching below the seabed is cut at the seabed line: the
    pixels just under the line show the seabed, not the rate colour."""
    from aculink.plots.plan import plot_rate_map

    ds = sweep_ds(site, np.nan)
    fig = plot_rate_map(ds, site)
    ax = fig.axes[0]
    for child in ax.collections:  # take the seabed fill away: only the clip keeps the cells out
        if child.get_zorder() == 3:
            child.remove()
    fig.canvas.draw()
    img = np.asarray(fig.canvas.buffer_rgba())[..., :3] / 255.0
    h = img.shape[0]
    bed = float(site.seabed.depth_at(1000.0))
    assert bed < 59.5  # the 50 m row's cells reach down to 60 m: look 0.5 m under the seabed
    x, y = ax.transData.transform((1.0, bed + 0.5))
    pixel = img[int(round(h - y)), int(round(x))]
    assert np.allclose(pixel, 1.0, atol=0.02), pixel  # the figure's white, not viridis yellow
    x, y = ax.transData.transform((1.0, 45.0))
    assert not np.allclose(img[int(round(h - y)), int(round(x))], 1.0, atol=0.05)
    assert SEABED_COLOUR  # the fill this test removed is the seabed colour of every picture


def test_redraw_sweep_gives_the_same_picture(site, tmp_path, capsys):
    """`aculink redraw OUT.nc --plot` draws exactly what the sweep drew, from the file alone."""
    from aculink.cli import main
    from aculink.io.netcdf import write_netcdf
    from aculink.plots.plan import plot_rate_map

    ds = sweep_ds(site, np.nan)
    ds.attrs.update({"site_text": site.text, "site_path": str(SHELF), "site_name": site.name})
    write_netcdf(ds, tmp_path / "s.nc")
    plot_rate_map(ds, site, tmp_path / "direct.png")
    assert main(["redraw", str(tmp_path / "s.nc"), "--plot", str(tmp_path / "again.png")]) == 0
    assert capsys.readouterr().out.strip() == f"wrote {tmp_path / 'again.png'}"
    np.testing.assert_array_equal(mpimg.imread(tmp_path / "direct.png"), mpimg.imread(tmp_path / "again.png"))
    assert main(["redraw", str(tmp_path / "s.nc"), "--plot", str(tmp_path / "again.png")]) == 2
    assert "--overwrite" in capsys.readouterr().err


def test_redraw_plan_json_gives_the_same_picture(site, tmp_path, capsys):
    """A plan JSON holds each receiver's rate and the envelope: the picture is drawn again the same."""
    from aculink.cli import main
    from aculink.cli.redraw import plan_dataset
    from aculink.plots.plan import plot_plan

    ds = plan_ds()
    rows = [{"range_m": float(r), "net_bit_rate_bps": float(b),
             "net_bit_rate_by_receiver_bps": dict(zip(["none", "linear", "dfe"], map(float, by)))}
            for r, b, by in zip(ds["range"].values, ds["net_bit_rate_bps"].values,
                                ds["net_bit_rate_by_receiver_bps"].values)]
    doc = {"kind": "aculink plan", "site": site.name, "receivers": ["none", "linear", "dfe"], "rows": rows,
           "envelope_km_kbps": 40.0, "envelope_water": "shallow water", **ds.attrs}
    (tmp_path / "p.json").write_text(json.dumps(doc))
    back = plan_dataset(doc)
    np.testing.assert_array_equal(back["net_bit_rate_by_receiver_bps"].values, ds["net_bit_rate_by_receiver_bps"].values)
    plot_plan(ds, site, tmp_path / "direct.png")
    assert main(["redraw", str(tmp_path / "p.json"), "--plot", str(tmp_path / "again.png")]) == 0
    np.testing.assert_array_equal(mpimg.imread(tmp_path / "direct.png"), mpimg.imread(tmp_path / "again.png"))


@pytest.mark.parametrize("name, content, words", [
    ("p.csv", "range_m\n1\n", "redraw from the JSON"), ("p.json", "{}", "not the JSON of aculink plan"),
    ("p.json", "not json", "not a JSON file"), ("s.nc", "not netcdf", "not a NetCDF file"),
    ("p.txt", "x", "expected a sweep .nc or a plan .json"),
])
def test_redraw_refuses_what_it_cannot_draw(tmp_path, capsys, name, content, words):
    from aculink.cli import main

    (tmp_path / name).write_text(content)
    assert main(["redraw", str(tmp_path / name), "--plot", str(tmp_path / "x.png")]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and words in err[0]
    assert not (tmp_path / "x.png").exists()


def test_arrivals_picture_reads_the_report_keys(site):
    """The arrivals picture is drawn from the report's own keys (receiver_range_m, ...): the fuzz
    run found it still reading the old ones after the rename."""
    from aculink.io.reports import RENAMED_KEYS
    from aculink.plots.arrivals import plot_arrivals

    rows = [{"relative_delay_s": t, "level_db": lv, "surface_bounces": s, "bottom_bounces": b}
            for t, lv, s, b in ((0.0, -70.0, 0, 1), (0.002, -64.0, 1, 1), (0.01, -80.0, 2, 3))]
    summary = {"site": site.name, "source_depth_m": 20.0, "receiver_range_m": 4000.0, "receiver_depth_m": 50.0,
               "frequency_hz": 12000.0, "dynamic_range_db": 40.0, "arrivals": rows, "reason": None}
    for old in RENAMED_KEYS["arrivals"]:
        assert old not in summary
    fig = plot_arrivals(summary)
    assert "receiver at 4 km, 50 m deep" in fig.axes[0].get_title()
    assert "12 kHz" in fig.axes[0].get_ylabel()
