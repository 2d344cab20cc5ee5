"""Planning pictures: workable rate against range, and a range x depth map of the best rate."""

from __future__ import annotations

import numpy as np

from aculink.io.formats import ber_text
from aculink.plots.style import (PALETTE, RATE_CMAP, SEABED_COLOUR, SOURCE_MARK, clip_to_water, figure, geometry_text, save,
                                 rate_axes, site_title, styled)

__all__ = ["envelope_label", "plot_plan", "workable_text", "MAX_FACETS", "facet_values", "under_seabed",
           "plot_rate_map"]


def envelope_label(env_km_kbps, kind, ranges_km) -> str:
    """The legend words of the fielded-system envelope, readable at a glance: what the line is,
    one point on it a planner can check against the table, and the source key."""
    at = float(np.median(ranges_km)) if np.size(ranges_km) else 1.0
    at = float(f"{max(at, 1e-3):.2g}")
    return (f"best reported for fielded modems: rate x range = {env_km_kbps:g} kbit/s x km\n"
            f"({kind}; e.g. {env_km_kbps / at:.3g} kbit/s at {at:g} km) [KilfoyleBaggeroer2000]")


@styled
def plot_plan(ds, site, path=None, *, envelope=None):
    """Net bit rate against range for each receiver, with the fielded-system envelope.

    The envelope is the rate x range product reported for fielded coherent modems: about
    40 km kbit/s in shallow water and 100 km kbit/s in deep water, drawn as rate = E / range.
    ``envelope`` is ``(E in km kbit/s, "shallow water" or "deep water")`` (default: from the
    site's depth); ``site`` may then be just the site's name (a picture redrawn from a file).

    References
    ----------
    Kilfoyle and Baggeroer (2000), "The state of the art in underwater acoustic telemetry",
    IEEE J. Oceanic Eng. 25(1), 4-27.
    """
    from aculink.planning.table import envelope_km_kbps

    fig, ax = figure(size=(8.0, 4.8))
    r_km = ds["range"].values / 1000.0
    rates = ds["net_bit_rate_by_receiver_bps"]
    markers = "osD^v<>p"
    for k, rx in enumerate(ds["receiver"].values):
        kbps = rates.sel(receiver=rx).values / 1000.0
        shown = np.where(kbps > 0, kbps, np.nan)
        ax.plot(r_km, shown, marker=markers[k % len(markers)], ms=3.5, color=PALETTE[k % len(PALETTE)],
                label=f"{rx}")
    best = ds["net_bit_rate_bps"].values / 1000.0
    ax.plot(r_km, np.where(best > 0, best, np.nan), color="#000000", lw=0.8, alpha=0.45,
            label="best of all receivers", zorder=0)
    env, kind = envelope_km_kbps(site) if envelope is None else envelope
    rr = np.linspace(max(r_km.min(), 1e-3), r_km.max(), 200)
    ax.plot(rr, env / rr, ls="--", color="#555555", lw=1.1, label=envelope_label(env, kind, r_km))
    none = r_km[best == 0]  # a row without a result (NaN) is not a row without a workable rate
    if none.size:
        ax.plot(none, np.full(none.size, np.nan), ls="", label=f"no workable rate at {none.size} range(s)")
    rate_axes(ax, r_km, np.concatenate([rates.values.ravel(), env / rr * 1000.0]), "workable net bit rate (kbit/s)")
    geo = geometry_text(ds.attrs.get("source_depth_m"), None, ds.attrs["receiver_depth_m"])
    ax.set_title(site_title(site, geo) + f"\n{workable_text(ds.attrs)}")
    ax.legend(title="receiver", loc="best", fontsize=7.5)
    if path is None:
        return fig
    return save(fig, path)


def workable_text(attrs) -> str:
    """``"workable at BER 1e-4 with 3 dB margin"`` from a result's attributes."""
    return f"workable at BER {ber_text(attrs['target_ber'])} with {attrs['margin_db']:g} dB margin"


#: Most panels along one extra sweep axis (source depth, wind) in a rate map; more are thinned evenly.
MAX_FACETS = 4
_FACET_NAMES = {"source_depth": ("source", "m deep"), "wind": ("wind", "m/s")}


def facet_values(ds, dim, limit=MAX_FACETS):
    """Indices of the values of an extra sweep axis drawn as panels (all, or ``limit`` evenly spaced)."""
    n = ds.sizes[dim]
    return list(range(n)) if n <= limit else sorted({int(round(k)) for k in np.linspace(0, n - 1, limit)})


def _facet_label(dim, value):
    name, unit = _FACET_NAMES.get(dim, (dim, ""))
    return f"{name} {value:g} {unit}".strip()


def under_seabed(site, r_km, z):
    """Cells (depth x range) whose receiver would sit at or below the seabed."""
    bed_at_cells = np.asarray(site.seabed.depth_at(np.asarray(r_km) * 1000.0), dtype=float)
    return np.asarray(z)[:, None] >= bed_at_cells[None, :]


def _draw_map(ax, values, r_km, z, site, norm, cmap):
    """One panel: the rate cells in the water (clipped at the seabed), the seabed on top; returns the mesh."""
    under = under_seabed(site, r_km, z)
    shown = np.where(values > 0, values, norm.vmin * 1e-3)
    shown = np.where(np.isfinite(values) & ~under, shown, np.nan)
    mesh = ax.pcolormesh(r_km, z, shown, cmap=cmap, shading="nearest", norm=norm)
    dr = float(np.min(np.diff(r_km))) if r_km.size > 1 else max(float(r_km[0]), 1e-3)
    dz = float(np.min(np.diff(z))) if z.size > 1 else 1.0
    right = float(r_km.max()) + 0.5 * dr
    rr = np.linspace(0.0, right, 400)
    bed = np.asarray(site.seabed.depth_at(rr * 1000.0), dtype=float)
    clip_to_water(mesh, ax, site, right)
    bottom = max(float(bed.max()), float(z.max()) + 0.5 * dz) * 1.08
    ax.fill_between(rr, bed, bottom, color=SEABED_COLOUR, zorder=3, lw=0)
    ax.plot(rr, bed, color="#6B5334", lw=1.0, zorder=4, label="seabed")
    ax.set_xlim(0.0, right)
    ax.set_ylim(bottom, 0.0)
    ax.grid(False)
    return mesh


@styled
def plot_rate_map(ds, site, path=None):
    """Range x depth map of the best workable net bit rate, with the seabed drawn.

    With extra sweep axes (source depth, wind) one panel is drawn per value (rows: wind,
    columns: source depth; at most :data:`MAX_FACETS` per axis, evenly spaced, and the title
    says so), all on one colour scale. Cells under the seabed are left out; the colour bar has
    a grey "none workable" end only when some cell has no workable rate.
    """
    import matplotlib as mpl
    import matplotlib.pyplot as plt

    rate = ds["net_bit_rate_bps"]
    extra = [d for d in rate.dims if d not in ("range", "depth")]
    col_dim = "source_depth" if "source_depth" in extra else (extra[0] if extra else None)
    row_dim = next((d for d in extra if d != col_dim), None)
    if len(extra) > 2:
        from aculink.errors import AculinkError

        raise AculinkError(f"rate map: at most two extra sweep axes can be drawn, not {', '.join(extra)}")
    cols = facet_values(ds, col_dim) if col_dim else [None]
    rows = facet_values(ds, row_dim) if row_dim else [None]
    r_km = ds["range"].values / 1000.0
    z = ds["depth"].values
    all_values = rate.values / 1000.0
    finite = all_values[np.isfinite(all_values) & (all_values > 0)]
    vmax = float(finite.max()) if finite.size else 1.0
    vmin = float(finite.min()) if finite.size else 0.1
    if vmin >= vmax:
        vmin = vmax / 10.0
    # the grey "none workable" end only for cells in the water (a cell under the seabed is no result)
    in_water = ~under_seabed(site, r_km, z)
    cells = rate.transpose(..., "depth", "range").values
    none_workable = bool(np.any((cells == 0) & in_water))
    cmap = mpl.colormaps[RATE_CMAP].with_extremes(bad=(0.0, 0.0, 0.0, 0.0), under="#D9D9D9")
    norm = mpl.colors.LogNorm(vmin=vmin, vmax=vmax) if vmax / vmin > 20 else mpl.colors.Normalize(vmin, vmax)
    size = (min(4.6 + 3.6 * len(cols), 15.0), min(1.6 + 3.2 * len(rows), 11.0))
    fig, axes = figure(len(rows), len(cols), size=size if extra else (8.4, 4.8), sharex=True, sharey=True,
                       squeeze=False)
    src_fixed = float(ds["source_depth"].values) if "source_depth" in ds.coords and "source_depth" not in extra \
        else ds.attrs.get("source_depth_m")
    for i, ri in enumerate(rows):
        for j, cj in enumerate(cols):
            ax = axes[i, j]
            sel, label = {}, []
            for dim, k in ((row_dim, ri), (col_dim, cj)):
                if dim is not None:
                    sel[dim] = k
                    label.append(_facet_label(dim, float(ds[dim].values[k])))
            panel = rate.isel(sel).transpose("depth", "range").values / 1000.0
            mesh = _draw_map(ax, panel, r_km, z, site, norm, cmap)
            src = float(ds["source_depth"].values[cj]) if col_dim == "source_depth" else src_fixed
            if src is not None and np.isfinite(src):
                ax.plot(0.0, src, clip_on=False, zorder=7, **SOURCE_MARK)
            if extra:
                ax.set_title(", ".join(label), fontsize=9, loc="left")
            if i == len(rows) - 1:
                ax.set_xlabel("range (km)")
            if j == 0:
                ax.set_ylabel("receiver depth (m)")
    bar = fig.colorbar(mesh, ax=axes, extend="min" if none_workable else "neither", shrink=0.9)
    bar.set_label("best workable net bit rate (kbit/s)" + ("; grey: none workable" if none_workable else ""))
    thinned = [d for d in extra if ds.sizes[d] > MAX_FACETS]
    bits = [geometry_text(src_fixed)] if src_fixed is not None and col_dim != "source_depth" else []
    title = site_title(site, ", ".join(bits))
    title += f"\n{workable_text(ds.attrs)}"
    if thinned:
        title += "; " + ", ".join(f"{MAX_FACETS} of {ds.sizes[d]} {_FACET_NAMES.get(d, (d,))[0]} values shown"
                                  for d in thinned)
    fig.suptitle(title, fontweight="bold", fontsize=10.5)
    handles = [plt.Line2D([], [], color="#6B5334", lw=6, alpha=0.6, label="seabed")]
    if src_fixed is not None or col_dim == "source_depth":
        handles.append(plt.Line2D([], [], label="source", **{**SOURCE_MARK, "ms": 10}))
    fig.legend(handles=handles, loc="outside lower center", ncol=2, fontsize=8)
    if path is None:
        return fig
    return save(fig, path)
