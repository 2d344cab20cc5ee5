"""Availability pictures: the rate band against range, and a map of closure probability."""

from __future__ import annotations

import numpy as np

from aculink.plots.style import FIELD_CMAP, PALETTE, SEABED_COLOUR, figure, rate_axes, save, site_title, styled

__all__ = ["plot_availability", "plot_closure_map"]


@styled
def plot_availability(ds, site, path):
    """Net rate against range available 50 %, 90 % and 99 % of the time (a shaded band), the
    median member's best rate and the nominal site's rate."""
    fig, ax = figure(size=(8.0, 4.8))
    r_km = ds["range"].values / 1000.0
    probs = [float(p) for p in ds["probability"].values]

    def kbps(p):
        v = ds["available_net_bit_rate_bps"].sel(probability=p).values / 1000.0
        return np.where(v > 0, v, np.nan)

    low, high = kbps(max(probs)), kbps(min(probs))
    ax.fill_between(r_km, np.nan_to_num(low, nan=0.0), high, step="mid", color=PALETTE[5], alpha=0.28, lw=0,
                    label=f"between {100 * min(probs):g} % and {100 * max(probs):g} % availability")
    styles = {0: ("-", 2.0), 1: ("-", 1.2), 2: (":", 1.2)}
    for k, p in enumerate(sorted(probs)):
        ls, lw = styles.get(k, ("-.", 1.0))
        ax.plot(r_km, kbps(p), drawstyle="steps-mid", ls=ls, lw=lw, color=PALETTE[0],
                label=f"available {100 * p:g} % of the time")
    med = ds["median_net_bit_rate_bps"].values / 1000.0
    ax.plot(r_km, np.where(med > 0, med, np.nan), "o", ms=3.5, color=PALETTE[1], label="median member's best rate")
    nom = ds["nominal_net_bit_rate_bps"].values / 1000.0
    ax.plot(r_km, np.where(nom > 0, nom, np.nan), "x", ms=4.5, color="#333333", label="nominal site (no variability)")
    rate_axes(ax, r_km, np.concatenate([ds["available_net_bit_rate_bps"].values.ravel(), med * 1000.0,
                                         nom * 1000.0]), "net bit rate (kbit/s)")
    n = int(ds.attrs["members"])
    how = {"nominal": "nominal site only", "enumerated": f"{n} members, enumerated",
           "drawn": f"{n} members, drawn"}[ds.attrs["ensemble"]]
    factors = (ds.attrs.get("factors") or "none").replace(",", ", ")
    ax.set_title(site_title(site, f"receiver {ds.attrs['receiver_depth_m']:g} m deep")
                 + f"\nrate one modem setting sustains, over {how} (varying: {factors})", fontsize=9.5)
    ax.legend(loc="best", fontsize=7.5)
    return save(fig, path)


@styled
def plot_closure_map(probability, ranges_m, depths_m, site, path, *, label: str):
    """Range x depth map of the probability that one configuration closes the link.

    Parameters
    ----------
    probability : ndarray, shape (depth, range)
    ranges_m, depths_m : ndarray
    label : str
        What configuration the map is for (shown in the title).
    """
    fig, ax = figure(size=(8.0, 4.6))
    r_km = np.asarray(ranges_m) / 1000.0
    z = np.asarray(depths_m)
    bed = np.asarray(site.seabed.depth_at(ranges_m), dtype=float)
    shown = np.where(z[:, None] < bed[None, :], probability, np.nan)
    mesh = ax.pcolormesh(r_km, z, shown, cmap=FIELD_CMAP, vmin=0.0, vmax=1.0, shading="nearest")
    ax.fill_between(r_km, bed, max(z.max(), bed.max()) * 1.05, color=SEABED_COLOUR, step="mid")
    ax.set_ylim(max(z.max(), bed.max()) * 1.05, 0)
    ax.set_xlabel("range (km)")
    ax.set_ylabel("receiver depth (m)")
    fig.colorbar(mesh, ax=ax, label="probability the link closes")
    ax.set_title(site_title(site, label), fontsize=9.5)
    return save(fig, path)
