"""The ray-fan picture: the fan over the seabed section, beside the sound-speed profile."""

from __future__ import annotations

import numpy as np
from matplotlib.collections import LineCollection
from matplotlib.lines import Line2D
from matplotlib.ticker import MaxNLocator

from aculink.plots.style import PALETTE, SEABED_COLOUR, WATER_COLOUR, figure, geometry_text, save, site_title, styled

__all__ = ["plot_rays", "HISTORY_CLASSES"]

#: Colour classes by boundary history, Okabe-Ito colours.
HISTORY_CLASSES = (("refracted only", PALETTE[0]), ("surface only", PALETTE[2]),
                   ("seabed only", PALETTE[1]), ("surface and seabed", PALETTE[5]))


def _history_class(n_surface, n_bottom):
    return np.where(n_surface > 0, np.where(n_bottom > 0, 3, 1), np.where(n_bottom > 0, 2, 0))


def draw_section(ax, site, end_m):
    """Water and seabed along the track (range in km), depth axis downward; returns the floor depth."""
    bed = site.seabed
    r = np.linspace(0.0, end_m, 400)
    d = bed.depth_at(r)
    floor = float(np.max(d)) * 1.06
    ax.fill_between(r / 1e3, 0.0, d, color=WATER_COLOUR, lw=0, zorder=0)
    ax.fill_between(r / 1e3, d, floor, color=SEABED_COLOUR, lw=0, zorder=3)
    ax.plot(r / 1e3, d, color="#6B4F2A", lw=1.1, zorder=4)
    ax.set_xlim(0.0, end_m / 1e3)
    ax.set_ylim(floor, 0.0)
    ax.set_xlabel("range (km)")
    return floor


@styled
def plot_rays(site, fan, path=None, *, colour_by="bounces", overwrite: bool = True):
    """Draw a fan from :func:`aculink.propagation.trace_rays` over the site.

    Parameters
    ----------
    site : Site
    fan : xarray.Dataset
        The traced fan.
    path : str or Path, optional
        PNG file to write atomically; without it the figure is returned.
    colour_by : {"bounces", "angle"}
        Colour by boundary history (four Okabe-Ito classes) or by launch angle (cividis).
    overwrite : bool
        When False and ``path`` exists, raise :class:`~aculink.errors.AculinkError`.
    """
    import matplotlib.pyplot as plt

    from aculink.errors import AculinkError

    if path is not None and not overwrite:
        from pathlib import Path

        if Path(path).exists():
            raise AculinkError(f"{path} exists: pass --overwrite to replace it")
    end_m = float(fan.attrs["max_range_m"])
    fig, (ax_c, ax_s) = figure(1, 2, size=(10.5, 5.0), sharey=True, gridspec_kw={"width_ratios": [1.0, 3.2]})
    fig.get_layout_engine().set(wspace=0.06)
    bottom = site.seabed.max_depth_m
    z = np.linspace(0.0, bottom, 600)
    c = site.water.profile.speed(z)
    ax_c.plot(c, z, color=PALETTE[0])
    span = max(float(np.ptp(c)), 4.0)
    mid = 0.5 * (float(np.min(c)) + float(np.max(c)))
    ax_c.set_xlim(mid - 0.62 * span, mid + 0.62 * span)
    ax_c.xaxis.set_major_locator(MaxNLocator(4))
    ax_c.set_xlabel("sound speed (m/s)")
    ax_c.set_ylabel("depth (m)")
    ax_c.set_title("Profile", loc="left", fontsize=9)
    draw_section(ax_s, site, end_m)

    r = fan.range_m.values / 1e3
    d = fan.depth_m.values
    segs = [np.column_stack([ri[np.isfinite(ri)], di[np.isfinite(ri)]]) for ri, di in zip(r, d)]
    n = len(segs)
    lw = 0.9 if n <= 40 else 0.55 if n <= 150 else 0.3
    alpha = 0.9 if n <= 40 else 0.6 if n <= 150 else 0.4
    if colour_by == "angle":
        norm = plt.Normalize(float(fan.launch_angle_deg.min()), float(fan.launch_angle_deg.max()))
        lc = LineCollection(segs, cmap="cividis", norm=norm, linewidths=lw, alpha=alpha, zorder=2)
        lc.set_array(fan.launch_angle_deg.values)
        ax_s.add_collection(lc)
        fig.colorbar(lc, ax=ax_s, label="launch angle (deg below horizontal)", shrink=0.85, pad=0.01)
        handles = []
    else:
        cls = _history_class(fan.surface_bounces.values, fan.bottom_bounces.values)
        # the rays that met both boundaries go underneath, the rarer classes on top
        for k in (3, 2, 1, 0):
            pick = [seg for seg, kk in zip(segs, cls) if kk == k]
            if pick:
                ax_s.add_collection(LineCollection(pick, colors=HISTORY_CLASSES[k][1], linewidths=lw, alpha=alpha,
                                                   zorder=2))
        handles = [Line2D([], [], color=col, lw=1.6, label=f"{name} ({int(np.sum(cls == k))})")
                   for k, (name, col) in enumerate(HISTORY_CLASSES) if np.any(cls == k)]
    zs = float(fan.attrs["source_depth_m"])
    rx = site.receiver
    ax_s.plot(0.0, zs, "*", ms=13, color=PALETTE[4], mec="black", mew=0.5, clip_on=False, zorder=6)
    handles.append(Line2D([], [], marker="*", ms=10, color=PALETTE[4], mec="black", mew=0.5, ls="none",
                          label=f"source {zs:g} m"))
    if rx.range_m <= end_m:
        ax_s.plot(rx.range_m / 1e3, rx.depth_m, "v", ms=8, color=PALETTE[3], mec="black", mew=0.5, zorder=6,
                  clip_on=False)
        handles.append(Line2D([], [], marker="v", ms=8, color=PALETTE[3], mec="black", mew=0.5, ls="none",
                              label=f"receiver {rx.range_m / 1e3:g} km, {rx.depth_m:g} m"))
    handles.append(Line2D([], [], color=SEABED_COLOUR, lw=6, label=site.seabed.sediment or "seabed"))
    fig.legend(handles=handles, loc="outside lower center", ncol=min(len(handles), 6), fontsize=7.5)
    angles = fan.launch_angle_deg.values
    detail = geometry_text(zs, rx.range_m, rx.depth_m) + f"; {n} rays, {angles.min():g} to {angles.max():g} deg"
    fig.suptitle(site_title(site, detail), fontweight="bold", fontsize=10.5)
    if path is None:
        return fig
    return save(fig, path)
