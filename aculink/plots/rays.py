"""The ray-fan picture: the fan over the seabed section, beside the sound-speed profile.

Rays are shaded by what they carry (``shade="level"``, the default): each stretch of a ray by its
level relative to the strongest ray at the same range, in dB, from
:func:`aculink.propagation.fan_levels.ray_levels` (spreading, absorption, seabed and surface
reflection losses). Rays more than the dynamic range below the strongest are drawn thin and
light grey. ``shade="angle"`` shades by launch angle, ``shade="boundaries"`` by how many times the
ray has met the surface or the seabed so far. Eigenrays to the receiver can be drawn on top.
"""

from __future__ import annotations

import warnings

import numpy as np
from matplotlib.collections import LineCollection
from matplotlib.lines import Line2D
from matplotlib.ticker import MaxNLocator

from aculink.plots.style import (FIELD_CMAP, PALETTE, SEABED_COLOUR, WATER_COLOUR, equipment_labels, figure,
                                 geometry_text, mark_equipment, save, site_title, styled)

__all__ = ["plot_rays", "eigenray_paths", "SHADES", "DEFAULT_DYNAMIC_RANGE_DB", "ray_segments", "boundary_counts"]

#: How rays can be shaded, with the colour-bar words of each.
SHADES = {
    "level": "level below the strongest ray at the same range (dB)",
    "angle": "launch angle (deg below horizontal)",
    "boundaries": "surface and seabed reflections so far",
}
#: Rays further than this below the strongest at the same range are drawn faint, dB.
DEFAULT_DYNAMIC_RANGE_DB = 40.0
#: Sequential map for counts (a different map from the level's, so the two are not confused).
COUNT_CMAP = "viridis"
#: Eigenrays: black line with a white casing, readable over any shading.
EIGENRAY_COLOUR = "black"
_FAINT = "#BBBBBB"
_MAX_POINTS = 400  # per ray in the picture: enough for smooth curves, few enough segments


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


def boundary_counts(site, range_m, depth_m):
    """Reflections met so far at each path point of one ray (surface and seabed together).

    A reflection is a path point lying on the surface or on the seabed (the tracer lands exactly on
    boundaries); the count steps up at that point.
    """
    tol = 1e-6 * max(1.0, float(site.seabed.max_depth_m))
    on_surface = np.abs(depth_m) <= tol
    on_bed = np.abs(depth_m - np.asarray(site.seabed.depth_at(range_m), dtype=float)) <= tol
    hit = on_surface | on_bed
    hit[0] = False  # the launch point is not a reflection
    return np.cumsum(hit)


def ray_segments(range_m, depth_m, value):
    """Segments between successive path points of one ray, and the value at each segment's start.

    The path is thinned to at most ``_MAX_POINTS`` points, keeping every point where ``value``
    changes (reflections) so that no corner is cut.
    """
    ok = np.isfinite(range_m) & np.isfinite(depth_m)
    x, z, v = range_m[ok], depth_m[ok], value[ok]
    if x.size < 2:
        return np.zeros((0, 2, 2)), np.zeros(0)
    keep = np.zeros(x.size, dtype=bool)
    keep[:: max(1, x.size // _MAX_POINTS)] = True
    keep[-1] = True
    keep[1:] |= np.diff(v) != 0
    keep[:-1] |= np.diff(v) != 0
    turn = np.zeros(x.size, dtype=bool)
    turn[1:-1] = np.diff(np.sign(np.diff(z))) != 0
    keep |= turn
    x, z, v = x[keep], z[keep], v[keep]
    pts = np.column_stack([x, z])
    return np.stack([pts[:-1], pts[1:]], axis=1), v[:-1]


def _relative_levels(site, fan, freq_hz, bottom_reflection):
    from aculink.propagation.fan_levels import ray_levels

    ranges, level = ray_levels(site, fan, freq_hz=freq_hz, bottom_reflection=bottom_reflection)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # ranges no ray reaches stay NaN
        strongest = np.nanmax(level, axis=0)
    return ranges, level - strongest[None, :]


def _ray_values(site, fan, shade, freq_hz, bottom_reflection):
    """The per-point value each ray is shaded by, shape (rays, points)."""
    r = fan.range_m.values
    if shade == "angle":
        return np.broadcast_to(fan.launch_angle_deg.values[:, None], r.shape)
    if shade == "boundaries":
        return np.array([boundary_counts(site, ri, di) for ri, di in zip(r, fan.depth_m.values)], dtype=float)
    ranges, rel = _relative_levels(site, fan, freq_hz, bottom_reflection)
    out = np.full(r.shape, np.nan)
    for i, ri in enumerate(r):
        ok = np.isfinite(rel[i])
        if ok.any():
            # the first record is at r_max / n: nearer the source the ray keeps its first value
            out[i] = np.interp(ri, ranges[ok], rel[i, ok], left=rel[i, ok][0], right=np.nan)
    return out


@styled
def plot_rays(site, fan, path=None, *, shade="level", dynamic_range_db=DEFAULT_DYNAMIC_RANGE_DB, eigenrays=None,
              freq_hz=None, bottom_reflection=None, overwrite: bool = True):
    """Draw a fan from :func:`aculink.propagation.trace_rays` over the site.

    Parameters
    ----------
    site : Site
    fan : xarray.Dataset
        The traced fan.
    path : str or Path, optional
        PNG file to write atomically; without it the figure is returned.
    shade : {"level", "angle", "boundaries"}
        What the shading shows: level relative to the strongest ray at the same range (dB, cividis),
        launch angle (cividis), or reflections met so far (viridis). See :data:`SHADES`.
    dynamic_range_db : float
        With ``shade="level"``, stretches of ray more than this below the strongest are drawn faint.
    eigenrays : xarray.Dataset, optional
        A second fan (the eigenrays' launch angles, traced to the receiver range) drawn on top.
    freq_hz : float, optional
        Frequency of the absorption and surface loss in the levels (default the modem carrier).
    bottom_reflection : callable, optional
        The seabed reflection override the fan was traced with.
    overwrite : bool
        When False and ``path`` exists, raise :class:`~aculink.errors.AculinkError`.
    """
    import matplotlib.pyplot as plt
    from matplotlib import patheffects

    from aculink.errors import AculinkError, closest

    if shade not in SHADES:
        raise AculinkError(f"shade = {shade!r}: choose one of {', '.join(SHADES)}{closest(str(shade), SHADES)}")
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

    values = _ray_values(site, fan, shade, freq_hz, bottom_reflection)
    segs, vals = [], []
    for ri, di, vi in zip(fan.range_m.values / 1e3, fan.depth_m.values, values):
        s, v = ray_segments(ri, di, vi)
        segs.append(s)
        vals.append(v)
    segs = np.concatenate(segs) if segs else np.zeros((0, 2, 2))
    vals = np.concatenate(vals) if vals else np.zeros(0)
    n = fan.sizes["ray"]
    lw = 0.9 if n <= 40 else 0.6 if n <= 150 else 0.35
    if shade == "level":
        dyn = float(dynamic_range_db)
        faint = ~(vals >= -dyn)
        ax_s.add_collection(LineCollection(segs[faint], colors=_FAINT, linewidths=0.5 * lw, alpha=0.6, zorder=1))
        segs, vals = segs[~faint], vals[~faint]
        norm, cmap, extend = plt.Normalize(-dyn, 0.0), FIELD_CMAP, "min"
    elif shade == "angle":
        a = fan.launch_angle_deg.values
        norm, cmap, extend = plt.Normalize(float(a.min()), float(a.max()) + (a.min() == a.max())), FIELD_CMAP, "neither"
    else:
        top = int(np.nanmax(vals)) if vals.size else 0
        cmap = plt.get_cmap(COUNT_CMAP, top + 1)
        norm, extend = plt.Normalize(-0.5, top + 0.5), "neither"
    lc = LineCollection(segs, cmap=cmap, norm=norm, linewidths=lw, zorder=2)
    lc.set_array(vals)
    ax_s.add_collection(lc)
    bar = fig.colorbar(lc, ax=ax_s, label=SHADES[shade], shrink=0.85, pad=0.01, extend=extend)
    if shade == "boundaries":
        bar.locator = MaxNLocator(integer=True)
        bar.update_ticks()

    handles = []
    if shade == "level":
        handles.append(Line2D([], [], color=_FAINT, lw=1.2, label=f"more than {dyn:g} dB below"))
    if eigenrays is not None and eigenrays.sizes["ray"]:
        halo = [patheffects.Stroke(linewidth=2.2, foreground="white"), patheffects.Normal()]
        for ri, di in zip(eigenrays.range_m.values / 1e3, eigenrays.depth_m.values):
            ok = np.isfinite(ri)
            ax_s.plot(ri[ok], di[ok], color=EIGENRAY_COLOUR, lw=0.9, zorder=5, path_effects=halo)
        handles.append(Line2D([], [], color=EIGENRAY_COLOUR, lw=0.9, path_effects=halo,
                              label=f"eigenrays within 20 dB of the strongest ({eigenrays.sizes['ray']})"))
    zs = float(fan.attrs["source_depth_m"])
    rx = site.receiver
    show_rx = rx.range_m <= end_m
    src_label, rx_label = equipment_labels(zs, rx.range_m, rx.depth_m)
    handles += mark_equipment(ax_s, (0.0, zs), (rx.range_m / 1e3, rx.depth_m) if show_rx else None,
                              source_label=src_label, receiver_label=rx_label if show_rx else None)
    handles.append(Line2D([], [], color=SEABED_COLOUR, lw=6, label=site.seabed.sediment or "seabed"))
    fig.legend(handles=handles, loc="outside lower center", ncol=min(len(handles), 5), fontsize=7.5)
    angles = fan.launch_angle_deg.values
    detail = geometry_text(zs, rx.range_m, rx.depth_m) + f"; {n} rays, {angles.min():g} to {angles.max():g} deg"
    fig.suptitle(site_title(site, detail), fontweight="bold", fontsize=10.5)
    if path is None:
        return fig
    return save(fig, path)


def eigenray_paths(site, fan, dynamic_range_db=40.0):
    """The eigenrays from the fan's source to the site's receiver within the channel report's
    significance (20 dB) of the strongest, traced as paths to draw over the fan (None when the
    receiver is beyond the fan or no eigenray reaches it)."""
    import numpy as np

    from aculink.propagation import find_arrivals, trace_rays

    zs = float(fan.attrs["source_depth_m"])
    rx = site.receiver
    if rx.range_m > float(fan.attrs["max_range_m"]):
        return None
    from aculink.channel.stats import SIGNIFICANT_DB

    arr = find_arrivals(site, rx.range_m, rx.depth_m, source_depth_m=zs, dynamic_range_db=dynamic_range_db)
    angles = arr.launch_angle_deg.values.ravel()
    power = np.sum(np.abs(arr.amplitude.values.reshape(angles.size, -1)) ** 2, axis=1)
    ok = np.isfinite(angles) & (power > 0)
    if not ok.any():
        return None
    # the paths that matter: the eigenrays within the channel report's significance of the strongest
    strong = ok & (power >= power[ok].max() * 10.0 ** (-SIGNIFICANT_DB / 10.0))
    return trace_rays(site, source_depth_m=zs, angles_deg=angles[strong], max_range_m=rx.range_m)
