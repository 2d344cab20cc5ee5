"""The transmission-loss picture: TL over range and depth (cividis), seabed drawn."""

from __future__ import annotations

import numpy as np
from matplotlib.colors import ListedColormap

from aculink.plots.rays import draw_section
from aculink.io.formats import hz_text
from aculink.plots.style import (FIELD_CMAP, clip_to_water, equipment_labels, figure, geometry_text, mark_equipment, save, site_title,
                                 styled)

__all__ = ["plot_loss"]


@styled
def plot_loss(site, tl, path=None, *, incoherent=False, overwrite: bool = True, span_db=60.0):
    """Draw a TL grid from :func:`aculink.propagation.transmission_loss`.

    Parameters
    ----------
    site : Site
    tl : xarray.Dataset
    path : str or Path, optional
        PNG file to write atomically; without it the figure is returned.
    incoherent : bool
        Draw the incoherent TL instead of the coherent.
    span_db : float
        Colour span, dB, from the lowest TL in the grid (lower TL = louder = lighter). Cells no beam
        reaches (TL at the dataset's ``tl_cap_db``) are grey.
    """
    from aculink.errors import AculinkError

    if path is not None and not overwrite:
        from pathlib import Path

        if Path(path).exists():
            raise AculinkError(f"{path} exists: pass --overwrite to replace it")
    field = tl.tl_incoherent_db if incoherent else tl.tl_coherent_db
    r = tl.range.values
    z = tl.depth.values
    ro, zo = np.argsort(r), np.argsort(z)
    values = field.values[ro][:, zo].T
    # where no beam reaches, TL is the cap: drawn grey, not as the darkest colour of a real (weak) field
    with np.errstate(invalid="ignore"):
        silent = values >= float(tl.attrs.get("tl_cap_db", np.inf))
    values = np.where(silent, np.nan, values)
    lo = float(np.nanpercentile(values, 1.0)) if np.isfinite(values).any() else 0.0
    fig, ax = figure(1, 1, size=(9.5, 4.8))
    end_m = float(r.max())
    draw_section(ax, site, end_m)
    mesh = ax.pcolormesh(r[ro] / 1e3, z[zo], values, cmap=f"{FIELD_CMAP}_r", vmin=lo, vmax=lo + span_db,
                         shading="nearest", zorder=1, rasterized=True)
    clip_to_water(mesh, ax, site, 2.0 * end_m / 1e3)
    if silent.any():
        grey = ax.pcolormesh(r[ro] / 1e3, z[zo], np.ma.masked_where(~silent, np.ones(silent.shape)),
                             cmap=ListedColormap(["0.85"]), shading="nearest", zorder=1, rasterized=True)
        clip_to_water(grey, ax, site, 2.0 * end_m / 1e3)
        ax.text(0.99, 0.02, "grey: no beam reaches", transform=ax.transAxes, ha="right", va="bottom", fontsize=8)
    fig.colorbar(mesh, ax=ax, label=f"{'incoherent' if incoherent else 'coherent'} TL (dB re 1 m)", pad=0.01)
    zs = float(tl.attrs["source_depth_m"])
    rx = site.receiver
    show_rx = rx.range_m <= end_m
    src_label, rx_label = equipment_labels(zs, rx.range_m, rx.depth_m)
    handles = mark_equipment(ax, (0.0, zs), (rx.range_m / 1e3, rx.depth_m) if show_rx else None,
                             source_label=src_label, receiver_label=rx_label if show_rx else None)
    fig.legend(handles=handles, loc="outside lower center", ncol=len(handles), fontsize=7.5)
    ax.set_ylabel("depth (m)")
    ax.grid(False)
    detail = geometry_text(zs, rx.range_m, rx.depth_m) + f"; {hz_text(tl.attrs['frequency_hz'])}"
    fig.suptitle(site_title(site, detail), fontweight="bold", fontsize=10.5)
    if path is None:
        return fig
    return save(fig, path)
