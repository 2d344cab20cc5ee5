"""The transmission-loss picture: TL over range and depth (cividis), seabed drawn."""

from __future__ import annotations

import numpy as np
from matplotlib.colors import ListedColormap

from aculink.plots.rays import draw_section
from aculink.plots.style import FIELD_CMAP, PALETTE, figure, geometry_text, save, site_title, styled

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
    if silent.any():
        ax.pcolormesh(r[ro] / 1e3, z[zo], np.ma.masked_where(~silent, np.ones(silent.shape)),
                      cmap=ListedColormap(["0.85"]), shading="nearest", zorder=1, rasterized=True)
        ax.text(0.99, 0.02, "grey: no beam reaches", transform=ax.transAxes, ha="right", va="bottom", fontsize=8)
    fig.colorbar(mesh, ax=ax, label=f"{'incoherent' if incoherent else 'coherent'} TL (dB re 1 m)", pad=0.01)
    zs = float(tl.attrs["source_depth_m"])
    ax.plot(0.0, zs, "*", ms=13, color=PALETTE[4], mec="black", mew=0.5, clip_on=False, zorder=6)
    rx = site.receiver
    if rx.range_m <= end_m:
        ax.plot(rx.range_m / 1e3, rx.depth_m, "v", ms=8, color=PALETTE[3], mec="black", mew=0.5, zorder=6)
    ax.set_ylabel("depth (m)")
    ax.grid(False)
    detail = geometry_text(zs, rx.range_m, rx.depth_m) + f"; {tl.attrs['frequency_hz'] / 1000:g} kHz"
    fig.suptitle(site_title(site, detail), fontweight="bold", fontsize=10.5)
    if path is None:
        return fig
    return save(fig, path)
