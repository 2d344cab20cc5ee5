"""The ray-fan picture: shading by level, by launch angle and by reflections, eigenrays on top.

Reference checks: in isovelocity water over a flat seabed the ray amplitude is 1/(path length)
(spherical spreading; the image construction, Jensen et al. 2011, Computational Ocean Acoustics,
sect. 3.3 and 1.4), times the seabed coefficient once per seabed bounce; the per-bounce loss is
set by a constant coefficient passed in, so the expected level is a closed form.
"""

from __future__ import annotations

import importlib.util
from pathlib import Path

import numpy as np
import pytest

from aculink.plots.rays import SHADES, boundary_counts, plot_rays
from aculink.propagation import trace_rays
from aculink.propagation.fan_levels import ray_levels
from aculink.site.bundled import bundled_site_path
from aculink.site.loader import load_site

_conftest = importlib.util.spec_from_file_location("prop_conftest",
                                                   Path(__file__).parents[1] / "propagation" / "conftest.py")
_mod = importlib.util.module_from_spec(_conftest)
_conftest.loader.exec_module(_mod)
build_site = _mod.build_site


@pytest.fixture(scope="module")
def shelf():
    site = load_site(bundled_site_path("shelf_summer"))
    return site, trace_rays(site, angles_deg=np.linspace(-12.0, 12.0, 25))


def _colourbar_label(fig):
    return [ax.get_ylabel() for ax in fig.axes if ax.get_label() == "<colorbar>"]


def _legend_texts(fig):
    return [t.get_text() for leg in fig.legends for t in leg.get_texts()]


@pytest.mark.parametrize("shade", sorted(SHADES))
def test_each_shade_has_its_colour_bar(shelf, shade, tmp_path):
    """Every shading draws a colour bar with its own words and the same equipment legend (contract)."""
    site, fan = shelf
    fig = plot_rays(site, fan, shade=shade)
    assert _colourbar_label(fig) == [SHADES[shade]]
    texts = _legend_texts(fig)
    assert "source 20 m deep" in texts
    assert any(t.startswith("receiver at 4 km") for t in texts)
    # no fixed per-class colour code for boundary history anywhere in the legend
    assert not any(w in " ".join(texts) for w in ("surface only", "seabed only", "refracted only"))
    out = plot_rays(site, fan, tmp_path / f"{shade}.png")
    assert Path(out).stat().st_size > 10_000


def test_eigenrays_drawn_on_top(shelf):
    """Eigenrays to the receiver get one highlight style and a legend entry with their count (contract)."""
    from aculink.plots.rays import eigenray_paths

    site, fan = shelf
    eig = eigenray_paths(site, fan, 30.0)
    assert eig is not None and eig.sizes["ray"] >= 1
    fig = plot_rays(site, fan, eigenrays=eig)
    assert f"eigenrays within 20 dB of the strongest ({eig.sizes['ray']})" in _legend_texts(fig)
    # only the significant ones: no more than the arrivals within 20 dB of the strongest
    from aculink.propagation import find_arrivals

    arr = find_arrivals(site, site.receiver.range_m, site.receiver.depth_m, dynamic_range_db=30.0)
    level = 10 * np.log10(np.sum(np.abs(arr.amplitude.values.reshape(arr.sizes["arrival"], -1)) ** 2, axis=1))
    assert eig.sizes["ray"] == int(np.sum(level >= np.nanmax(level) - 20.0))
    # every eigenray ends at the receiver range
    np.testing.assert_allclose(np.nanmax(eig.range_m.values, axis=1), site.receiver.range_m, rtol=1e-9)


def test_unknown_shade_is_refused(shelf):
    from aculink.errors import AculinkError

    site, fan = shelf
    with pytest.raises(AculinkError, match="did you mean 'level'"):
        plot_rays(site, fan, shade="levle")


def test_level_is_spherical_spreading_and_bounce_loss():
    """Isovelocity, flat seabed 100 m, |R| = 0.5 per seabed bounce (6.02 dB), no roughness: the level
    at range r is -20 log10(image path length) - 6.02 n_bottom (closed form, image method; Jensen et
    al. 2011 sect. 1.4 and 3.3). 200 Hz keeps Francois-Garrison absorption below 0.01 dB/km."""
    site = build_site(receiver_range_m=3000.0, source_depth_m=30.0)
    fan = trace_rays(site, angles_deg=[2.0, 8.0, 14.0], max_range_m=3000.0, bottom_reflection=lambda g: 0.5 + 0 * g)
    ranges, level = ray_levels(site, fan, freq_hz=200.0, bottom_reflection=lambda g: 0.5 + 0 * g)
    length = ranges[None, :] / np.cos(np.radians(fan.launch_angle_deg.values))[:, None]
    nb = fan.bottom_bounces.values  # bounces by the end: compare at the last range
    expected = -20 * np.log10(length[:, -1]) + 20 * np.log10(0.5) * nb
    np.testing.assert_allclose(level[:, -1], expected, atol=0.05)
    assert len(set(nb)) == 3  # the three rays met the seabed a different number of times


def test_extra_lossy_bounce_is_drawn_fainter():
    """Two rays ending at the same range, one with an extra seabed bounce at |R| = 0.3: its last
    stretch gets a lower colour value (by 20 log10(1/0.3) = 10.5 dB less the path-length difference;
    closed form as above) and so a darker, fainter colour on the level map."""
    site = build_site(receiver_range_m=2000.0)
    refl = lambda g: 0.3 + 0 * g  # noqa: E731
    fan = trace_rays(site, angles_deg=[5.0, 8.0], max_range_m=2000.0, bottom_reflection=refl)
    nb = fan.bottom_bounces.values
    assert nb[1] == nb[0] + 1
    fig = plot_rays(site, fan, bottom_reflection=refl, freq_hz=200.0)
    lc = [c for c in fig.axes[1].collections if c.get_array() is not None][0]
    vals = np.asarray(lc.get_array())
    cos = np.cos(np.radians([5.0, 8.0]))
    expected_gap = 20 * np.log10(0.3) + 20 * np.log10(cos[1] / cos[0])
    # last segment of each ray: the two last values in drawing order (ray 0 then ray 1)
    segs = lc.get_segments()
    ends = [i for i in range(len(segs)) if np.isclose(segs[i][1][0], 2.0)]
    assert len(ends) == 2
    gap = vals[ends[1]] - vals[ends[0]]
    assert gap == pytest.approx(expected_gap, abs=0.3)
    rgba = lc.to_rgba(vals[ends])
    assert rgba[1][:3].sum() < rgba[0][:3].sum()  # cividis: darker is weaker


def test_boundary_counts_match_the_tracer(shelf):
    """Reflections counted along each path end at the tracer's own surface + seabed totals
    (consistency of two outputs of the tracer; no outside source)."""
    site, fan = shelf
    for i in range(fan.sizes["ray"]):
        counts = boundary_counts(site, fan.range_m.values[i], fan.depth_m.values[i])
        ok = np.isfinite(fan.range_m.values[i])
        assert counts[ok][-1] == fan.surface_bounces.values[i] + fan.bottom_bounces.values[i]
