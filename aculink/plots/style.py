"""The one look every aculink picture shares.

Muted grid, light axes, colour-blind-safe colours (the Okabe-Ito palette for lines; viridis
and cividis for maps), units on every axis, and a title that says the site and the geometry.
Figures are written atomically as PNG.
"""

from __future__ import annotations

import numpy as np
import matplotlib

__all__ = ["PALETTE", "FIELD_CMAP", "RATE_CMAP", "WATER_COLOUR", "SOURCE_MARK", "RECEIVER_MARK",
           "SEABED_COLOUR", "figure", "styled", "site_title", "clip_to_water", "mark_equipment",
           "equipment_labels", "rate_axes", "save"]

matplotlib.use("Agg")  # files only; no screen is assumed

import matplotlib.pyplot as plt  # noqa: E402

from aculink.io.atomic import atomic_path  # noqa: E402
from aculink.io.formats import depth_text, range_text  # noqa: E402
from aculink.io.reports import geometry_text  # noqa: E402,F401  (the one geometry wording, for titles)

#: Okabe and Ito (2008), "Color Universal Design": distinguishable with every common colour-vision deficiency.
PALETTE = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#F0E442", "#000000")
#: Colour maps: sequential fields (TL, rates) and diverging-free magnitude maps.
FIELD_CMAP = "cividis"
RATE_CMAP = "viridis"
WATER_COLOUR = "#DCEBF5"
#: The source and the receiver look the same in every picture (Okabe-Ito vermillion and reddish purple,
#: black edge: visible on the water, the seabed and on cividis/viridis shading alike).
SOURCE_MARK = {"marker": "*", "ms": 13, "color": "#D55E00", "mec": "black", "mew": 0.6, "ls": "none"}
RECEIVER_MARK = {"marker": "v", "ms": 9, "color": "#CC79A7", "mec": "black", "mew": 0.6, "ls": "none"}
SEABED_COLOUR = "#B89B72"

_RC = {
    "figure.dpi": 110,
    "savefig.dpi": 130,
    "font.size": 9.5,
    "axes.titlesize": 10.5,
    "axes.titleweight": "bold",
    "axes.labelsize": 9.5,
    "axes.edgecolor": "#555555",
    "axes.linewidth": 0.8,
    "axes.grid": True,
    "grid.color": "#D8D8D8",
    "grid.linewidth": 0.6,
    "grid.linestyle": "-",
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.prop_cycle": matplotlib.cycler(color=PALETTE),
    "legend.frameon": False,
    "legend.fontsize": 8.5,
    "lines.linewidth": 1.4,
}


def figure(nrows=1, ncols=1, *, size=(8.0, 4.8), **kwargs):
    """A new figure and axes in the aculink style."""
    with plt.rc_context(_RC):
        fig, axes = plt.subplots(nrows, ncols, figsize=size, constrained_layout=True, **kwargs)
    return fig, axes


def styled(func):
    """Decorator: run a drawing function inside the aculink rc context."""

    def wrapper(*args, **kwargs):
        with plt.rc_context(_RC):
            return func(*args, **kwargs)

    wrapper.__name__ = func.__name__
    wrapper.__doc__ = func.__doc__
    return wrapper


def site_title(site, detail: str = "") -> str:
    """Title text: site name and, when given, the geometry (e.g. 'source 20 m, receiver 4 km / 30 m')."""
    name = getattr(site, "name", None) or str(site)
    return f"{name} - {detail}" if detail else name


def clip_to_water(artist, ax, site, right_km):
    """Cut a range x depth shading (cells of a grid) at the seabed line, from range 0 to ``right_km``:
    a cell centred in the water reaches half a step down, and must not be drawn over the seabed."""
    from matplotlib.patches import Polygon

    rr = np.linspace(0.0, float(right_km), 400)
    bed = np.asarray(site.seabed.depth_at(rr * 1000.0), dtype=float)
    water = Polygon(np.column_stack([np.r_[rr, rr[::-1]], np.r_[bed, np.full(rr.size, -1e6)]]), closed=True,
                    transform=ax.transData)
    artist.set_clip_path(water)
    return artist


def mark_equipment(ax, source, receiver=None, *, source_label=None, receiver_label=None):
    """Draw the source and (when given) the receiver at ``(x, depth)`` in the axis' units.

    Returns legend handles for the labels given, drawn with the same marks.
    """
    from matplotlib.lines import Line2D

    handles = []
    for where, mark, label in ((source, SOURCE_MARK, source_label), (receiver, RECEIVER_MARK, receiver_label)):
        if where is None:
            continue
        ax.plot(where[0], where[1], clip_on=False, zorder=7, **mark)
        if label:
            handles.append(Line2D([], [], label=label, **{**mark, "ms": mark["ms"] - 2}))
    return handles


def equipment_labels(source_depth_m, receiver_range_m=None, receiver_depth_m=None):
    """The legend words for the source and the receiver, the same in every picture."""
    src = f"source {depth_text(source_depth_m)} m deep"
    if receiver_range_m is None:
        return src, None
    return src, f"receiver at {range_text(receiver_range_m)}, {depth_text(receiver_depth_m)} m deep"


def rate_axes(ax, range_km, rates_bps, ylabel):
    """Range in km on x and a log rate axis in kbit/s on y, framing every positive finite rate
    (``rates_bps``, any shape) within a factor 2; then the planning caution in the corner."""
    shown = np.asarray(rates_bps, dtype=float).ravel()
    shown = shown[np.isfinite(shown) & (shown > 0)] / 1000.0
    ax.set_yscale("log")
    if shown.size:
        ax.set_ylim(shown.min() / 2.0, shown.max() * 2.0)
    ax.set_xlim(0, np.max(range_km) * 1.03)
    ax.set_xlabel("range (km)")
    ax.set_ylabel(ylabel)
    ax.text(0.01, 0.01, "planning estimate; check source levels against local permits",
            transform=ax.transAxes, fontsize=7.5, color="#666666")


def save(fig, path) -> str:
    """Write ``fig`` to ``path`` (PNG) atomically, close it and return the path."""
    with atomic_path(path) as tmp:
        fig.savefig(tmp, format="png")
    plt.close(fig)
    return str(path)
