"""The site picture: sound-speed profile beside the seabed along the track, equipment marked."""

from __future__ import annotations

import numpy as np
from matplotlib.ticker import MaxNLocator

from aculink.plots.style import (PALETTE, SEABED_COLOUR, WATER_COLOUR, equipment_labels, figure, geometry_text,
                                 mark_equipment, save, site_title, styled)

__all__ = ["plot_site"]


def _limits(setter, values, *, min_span):
    lo, hi = float(np.min(values)), float(np.max(values))
    span = max(hi - lo, min_span)
    mid = 0.5 * (lo + hi)
    setter(mid - 0.62 * span, mid + 0.62 * span)


@styled
def plot_site(site, path=None, *, overwrite: bool = True):
    """Draw the site: c(z) on the left, the vertical section along the track on the right.

    The two panels share the depth axis. The profile panel marks the tabulated nodes, the
    surface duct, the sound-channel axis and the critical depth when present, and the
    temperature on a second axis when known; the section shows the seabed (with its sediment),
    the source at range 0 and the receiver.

    Parameters
    ----------
    site : Site
    path : str or Path, optional
        PNG file to write (atomically). Without it the figure is returned open.
    overwrite : bool
        When False and ``path`` exists, raise :class:`~aculink.errors.AculinkError`.

    Returns
    -------
    str or matplotlib.figure.Figure
        The path written, or the figure when no path is given.
    """
    from aculink.errors import AculinkError
    from aculink.site.summary import profile_features

    if path is not None and not overwrite:
        from pathlib import Path

        if Path(path).exists():
            raise AculinkError(f"{path} exists: pass --overwrite to replace it")
    profile, bed, src, rx = site.water.profile, site.seabed, site.source, site.receiver
    bottom = bed.max_depth_m
    feats = profile_features(profile, bottom)

    fig, (ax_c, ax_s) = figure(1, 2, size=(10.0, 5.0), sharey=True,
                               gridspec_kw={"width_ratios": [1.0, 2.4]})
    fig.get_layout_engine().set(wspace=0.08)  # keep the two x axes' end labels apart
    z = np.linspace(0.0, bottom, 1201)
    c = profile.speed(z)
    ax_c.plot(c, z, color=PALETTE[0], label="sound speed")
    nodes = profile.depth_m[profile.depth_m <= bottom]
    if nodes.size <= 80 and profile.source not in ("linear", "isovelocity", "munk"):
        ax_c.plot(profile.speed(nodes), nodes, "o", ms=3, color=PALETTE[0], label="profile nodes")
    # a floor on the axis span keeps a near-isovelocity profile looking nearly vertical
    _limits(ax_c.set_xlim, c, min_span=4.0)
    marks = (("surface_duct_depth_m", "surface duct", PALETTE[2]),
             ("channel_axis_depth_m", "channel axis", PALETTE[3]),
             ("critical_depth_m", "critical depth", PALETTE[4]))
    for key, label, colour in marks:
        if feats[key] is not None:
            ax_c.axhline(feats[key], color=colour, ls="--", lw=1.0, label=f"{label} {feats[key]:.0f} m")
    mark_equipment(ax_c, (float(profile.speed(src.depth_m)), src.depth_m),
                   (float(profile.speed(rx.depth_m)), rx.depth_m))
    ax_c.xaxis.set_major_locator(MaxNLocator(4))
    ax_c.set_title(f"Profile: {feats['regime']}", loc="left", fontsize=9)
    ax_c.set_xlabel("sound speed (m/s)")
    ax_c.set_ylabel("depth (m)")

    if profile.temperature_c is not None and np.ptp(profile.temperature_c) > 0.05:
        ax_t = ax_c.twiny()
        ax_t.plot(profile.temperature_at(z), z, color=PALETTE[5], lw=1.0, ls=":")
        ax_c.plot([], [], color=PALETTE[5], lw=1.0, ls=":", label="temperature (top axis)")
        ax_t.xaxis.set_major_locator(MaxNLocator(4))
        _limits(ax_t.set_xlim, profile.temperature_at(z), min_span=2.0)
        ax_t.set_xlabel("temperature (degC)", color=PALETTE[5])
        ax_t.tick_params(axis="x", colors=PALETTE[5])
        ax_t.grid(False)
        for side in ("right", "bottom", "left"):
            ax_t.spines[side].set_visible(False)

    # the section along the track
    end_m = rx.range_m * 1.15 if not np.isfinite(bed.max_range_m) else max(bed.max_range_m, rx.range_m)
    r = np.linspace(0.0, end_m, 400)
    d = bed.depth_at(r)
    floor = bottom * 1.08
    ax_s.fill_between(r / 1e3, 0.0, d, color=WATER_COLOUR, lw=0)
    sediment = bed.sediment or "seabed"
    ax_s.fill_between(r / 1e3, d, floor, color=SEABED_COLOUR, lw=0,
                      label=f"{sediment} ({bed.sound_speed_mps:.0f} m/s, {bed.density_kgm3:.0f} kg/m^3)")
    ax_s.plot(r / 1e3, d, color="#6B4F2A", lw=1.2)
    if bed.range_m.size > 1:
        ax_s.plot(bed.range_m[bed.range_m <= end_m] / 1e3, bed.depth_m[bed.range_m <= end_m], "s", ms=3,
                  color="#6B4F2A", label="seabed points")
    src_label, rx_label = equipment_labels(src.depth_m, rx.range_m, rx.depth_m)
    equipment = mark_equipment(ax_s, (0.0, src.depth_m), (rx.range_m / 1e3, rx.depth_m), source_label=src_label,
                               receiver_label=rx_label)
    ax_s.set_xlim(0.0, end_m / 1e3)
    ax_s.set_ylim(floor, 0.0)
    ax_s.set_xlabel("range (km)")
    handles, labels = [], []
    for ax in (ax_c, ax_s):
        h, lab = ax.get_legend_handles_labels()
        handles += h
        labels += lab
    handles += equipment
    labels += [m.get_label() for m in equipment]
    fig.legend(handles, labels, loc="outside lower center", ncol=min(len(labels), 5), fontsize=7.5)
    ax_s.grid(True, alpha=0.5)

    fig.suptitle(site_title(site, geometry_text(src.depth_m, rx.range_m, rx.depth_m)), fontweight="bold",
                 fontsize=10.5)
    if path is None:
        return fig
    return save(fig, path)
