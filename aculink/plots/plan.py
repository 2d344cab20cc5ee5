"""Planning pictures: workable rate against range, and a range x depth map of the best rate."""

from __future__ import annotations

import numpy as np

from aculink.plots.style import (PALETTE, RATE_CMAP, SEABED_COLOUR, figure, geometry_text, save,
                                 site_title, styled)


@styled
def plot_plan(ds, site, path):
    """Net bit rate against range for each receiver, with the fielded-system envelope.

    The envelope is the rate x range product reported for fielded coherent modems: about
    40 km kbit/s in shallow water and 100 km kbit/s in deep water, drawn as rate = E / range.

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
    env, kind = envelope_km_kbps(site)
    rr = np.linspace(max(r_km.min(), 1e-3), r_km.max(), 200)
    ax.plot(rr, env / rr, ls="--", color="#555555", lw=1.1,
            label=f"fielded systems, {env:g} km kbit/s ({kind})")
    none = r_km[np.nan_to_num(best) == 0]
    if none.size:
        ax.plot(none, np.full(none.size, np.nan), ls="", label=f"no workable rate at {none.size} range(s)")
    finite = np.concatenate([rates.values.ravel(), env / rr * 1000.0])
    finite = finite[np.isfinite(finite) & (finite > 0)] / 1000.0
    ax.set_yscale("log")
    if finite.size:
        ax.set_ylim(finite.min() / 2.0, finite.max() * 2.0)
    ax.set_xlim(0, r_km.max() * 1.03)
    ax.set_xlabel("range (km)")
    ax.set_ylabel("workable net bit rate (kbit/s)")
    geo = geometry_text(ds.attrs.get("source_depth_m"), None, None)
    ax.set_title(site_title(site, f"{geo}, receiver {ds.attrs['receiver_depth_m']:g} m deep")
                 + f"\nworkable at BER {ds.attrs['target_ber']:.0e} with {ds.attrs['margin_db']:g} dB margin")
    ax.legend(title="receiver", loc="best", fontsize=7.5)
    ax.text(0.01, 0.01, "planning estimate; check source levels against local permits",
            transform=ax.transAxes, fontsize=7.5, color="#666666")
    return save(fig, path)


@styled
def plot_rate_map(ds, site, path):
    """Range x depth map of the best workable net bit rate, with the seabed drawn.

    With extra sweep axes (source depth, wind) the first value of each is drawn and named in
    the title.
    """
    import matplotlib as mpl

    rate = ds["net_bit_rate_bps"]
    extra = {}
    for dim in [d for d in rate.dims if d not in ("range", "depth")]:
        extra[dim] = float(ds[dim].values[0])
        rate = rate.isel({dim: 0})
    rate = rate.transpose("depth", "range")
    r_km = ds["range"].values / 1000.0
    z = ds["depth"].values
    fig, ax = figure(size=(8.4, 4.8))
    values = rate.values / 1000.0
    cmap = mpl.colormaps[RATE_CMAP].with_extremes(bad=(0.0, 0.0, 0.0, 0.0), under="#D9D9D9")
    finite = values[np.isfinite(values) & (values > 0)]
    vmax = finite.max() if finite.size else 1.0
    vmin = finite.min() if finite.size else 0.1
    shown = np.where(values > 0, values, vmin * 1e-3)
    shown = np.where(np.isfinite(values), shown, np.nan)
    mesh = ax.pcolormesh(r_km, z, shown, cmap=cmap, shading="nearest", vmin=vmin, vmax=vmax)
    bar = fig.colorbar(mesh, ax=ax, extend="min")
    bar.set_label("best workable net bit rate (kbit/s); grey: none workable")
    rr = np.linspace(0.0, max(r_km.max() * 1.02, 1e-3), 400)
    bed = np.asarray(site.seabed.depth_at(rr * 1000.0), dtype=float)
    bottom = max(float(bed.max()), float(z.max())) * 1.08
    ax.fill_between(rr, bed, bottom, color=SEABED_COLOUR, zorder=3, lw=0)
    ax.plot(rr, bed, color="#6B5334", lw=1.0, zorder=4, label="seabed")
    src = extra.get("source_depth", float(ds["source_depth"].values) if "source_depth" in ds.coords else None)
    if src is not None:
        ax.plot([0.0], [src], marker="*", ms=11, color="#D55E00", zorder=5, ls="", label="source",
                clip_on=False)
    ax.set_xlim(0.0, rr.max())
    ax.set_ylim(bottom, 0.0)
    ax.set_xlabel("range (km)")
    ax.set_ylabel("receiver depth (m)")
    bits = [geometry_text(src)] if src is not None else []
    if "wind" in extra:
        bits.append(f"wind {extra['wind']:g} m/s")
    ax.set_title(site_title(site, ", ".join(bits))
                 + f"\nworkable at BER {ds.attrs['target_ber']:.0e} with {ds.attrs['margin_db']:g} dB margin")
    ax.legend(loc="lower left")
    ax.grid(False)
    return save(fig, path)
