"""The sweep's rate map with extra sweep axes (facets), cells under the seabed, the colour bar's ends.

Contract checks of our own pictures on synthetic sweep results (no outside source).
"""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

from aculink.plots.plan import MAX_FACETS, facet_values, plot_rate_map
from aculink.site.bundled import bundled_site_path
from aculink.site.loader import load_site


def _sweep(rate, ranges, depths, **extra):
    dims = tuple(extra) + ("range", "depth")
    coords = {"range": ranges, "depth": depths, **extra}
    return xr.Dataset({"net_bit_rate_bps": (dims, rate)}, coords=coords,
                      attrs={"target_ber": 1e-4, "margin_db": 3.0})


@pytest.fixture(scope="module")
def harbour():
    return load_site(bundled_site_path("harbour_approach"))


def _bar(fig):
    return [ax for ax in fig.axes if ax.get_label() == "<colorbar>"]


def test_two_extra_axes_draw_one_panel_each(harbour, tmp_path):
    """Source depths x winds: a 2 x 3 grid of panels on one colour bar (this raised a TypeError)."""
    rng = np.random.default_rng(1)
    ranges, depths = np.array([1000.0, 2000.0, 3000.0]), np.array([4.0, 8.0, 12.0])
    rate = rng.uniform(1e3, 5e3, (3, 2, 3, 3))
    ds = _sweep(rate, ranges, depths, source_depth=np.array([3.0, 5.0, 7.0]), wind=np.array([2.0, 10.0]))
    path = plot_rate_map(ds, harbour, tmp_path / "map.png")
    assert (tmp_path / "map.png").stat().st_size > 10_000 and path.endswith("map.png")


def test_panels_titles_and_thinning(harbour, monkeypatch):
    """More values than MAX_FACETS are thinned evenly and the title says how many are shown."""
    import aculink.plots.plan as plan

    shown = {}
    monkeypatch.setattr(plan, "save", lambda fig, path: shown.setdefault("fig", fig))
    winds = np.arange(0.0, 14.0, 2.0)
    ds = _sweep(np.full((winds.size, 2, 2), 2e3), np.array([1000.0, 2000.0]), np.array([5.0, 9.0]), wind=winds)
    plot_rate_map(ds, harbour, "unused.png")
    fig = shown["fig"]
    titles = [ax.get_title(loc="left") for ax in fig.axes if ax.get_title(loc="left")]
    assert titles == [f"wind {w:g} m/s" for w in winds[facet_values(ds, "wind")]]
    assert len(titles) == MAX_FACETS
    assert f"{MAX_FACETS} of {winds.size} wind values shown" in fig._suptitle.get_text()


def test_cells_under_the_seabed_are_left_out(harbour, monkeypatch):
    """At 1000 m the harbour seabed is 14.5 m deep (linear between 11 m at 500 m and 18 m at
    1500 m, the site file's own points): a cell at 16 m there is not drawn; the colour bar has no
    grey 'none workable' end when every cell has a workable rate."""
    import aculink.plots.plan as plan

    shown = {}
    monkeypatch.setattr(plan, "save", lambda fig, path: shown.setdefault("fig", fig))
    ds = _sweep(np.full((2, 2), 3e3), np.array([1000.0, 2500.0]), np.array([5.0, 16.0]))
    plot_rate_map(ds, harbour, "unused.png")
    fig = shown["fig"]
    mesh = [c for c in fig.axes[0].collections if hasattr(c, "get_array") and c.get_array() is not None][0]
    cells = np.ma.masked_invalid(np.asarray(mesh.get_array(), dtype=float)).reshape(2, 2)
    assert np.ma.is_masked(cells[1, 0]) and not np.ma.is_masked(cells[1, 1])
    bar = _bar(fig)[0]
    assert "grey" not in bar.get_ylabel()
    ds0 = _sweep(np.array([[3e3, 0.0], [3e3, 3e3]]), np.array([1000.0, 2500.0]), np.array([5.0, 9.0]))
    shown.clear()
    plot_rate_map(ds0, harbour, "unused.png")
    assert "grey: none workable" in _bar(shown["fig"])[0].get_ylabel()
