"""The arrivals picture: level against delay at one receiver, one stem per eigenray."""

from __future__ import annotations

import numpy as np

from aculink.io.formats import hz_text
from aculink.plots.style import figure, geometry_text, save, site_title, styled

__all__ = ["plot_arrivals"]

#: Sequential map for the reflection count (the same map as the ray picture's reflection shading).
COUNT_CMAP = "viridis"


@styled
def plot_arrivals(summary, path=None, *, site=None):
    """Draw :func:`aculink.io.reports.arrivals_table`'s result: level (dB re 1 m) against delay
    after the first arrival (ms), stems shaded by the number of surface and seabed reflections.

    Parameters
    ----------
    summary : dict
        The arrivals table (``arrivals`` rows with ``relative_delay_s``, ``level_db``,
        ``surface_bounces``, ``bottom_bounces``).
    path : str or Path, optional
        PNG file to write atomically; without it the figure is returned.
    site : Site, optional
        For the title.
    """
    import matplotlib.pyplot as plt
    from matplotlib.ticker import MaxNLocator

    rows = [r for r in summary["arrivals"] if r["level_db"] is not None]
    fig, ax = figure(size=(8.0, 4.4))
    if rows:
        t = np.array([r["relative_delay_s"] for r in rows]) * 1e3
        level = np.array([r["level_db"] for r in rows])
        n = np.array([r["surface_bounces"] + r["bottom_bounces"] for r in rows])
        floor = float(level.max()) - float(summary["dynamic_range_db"]) - 3.0
        top = int(n.max())
        cmap = plt.get_cmap(COUNT_CMAP, top + 1)
        norm = plt.Normalize(-0.5, top + 0.5)
        ax.vlines(t, floor, level, colors=cmap(norm(n)), lw=1.4)
        points = ax.scatter(t, level, c=n, cmap=cmap, norm=norm, s=18, zorder=3, edgecolors="black",
                            linewidths=0.3)
        bar = fig.colorbar(points, ax=ax, label="surface and seabed reflections", pad=0.01)
        bar.locator = MaxNLocator(integer=True)
        bar.update_ticks()
        ax.set_ylim(floor, float(level.max()) + 3.0)
        ax.set_xlim(min(0.0, float(t.min())) - 0.02 * max(float(np.ptp(t)), 1e-3),
                    float(t.max()) + 0.04 * max(float(np.ptp(t)), 1e-3))
    else:
        ax.text(0.5, 0.5, f"no arrivals: {summary.get('reason') or 'none within the dynamic range'}",
                ha="center", va="center", transform=ax.transAxes)
    ax.set_xlabel("delay after the first arrival (ms)")
    ax.set_ylabel(f"level at {hz_text(summary['frequency_hz'])} (dB re 1 m)")
    detail = (geometry_text(summary["source_depth_m"], summary["receiver_range_m"], summary["receiver_depth_m"])
              + f"; {len(rows)} arrivals within {summary['dynamic_range_db']:g} dB")
    ax.set_title(site_title(site or summary["site"], detail), fontsize=9.5)
    if path is None:
        return fig
    return save(fig, path)
