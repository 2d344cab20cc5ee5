"""BER against band SNR for several receivers on one channel, with Monte Carlo intervals."""

from __future__ import annotations

import numpy as np

from aculink.plots.style import PALETTE, figure, geometry_text, save, site_title, styled

_MARKERS = ("o", "s", "D", "^", "v")


@styled
def plot_ber_curves(curves, path=None, *, site=None, detail: str = "", ber_floor: float = 1e-6):
    """Draw measured BER (with 95 % Clopper-Pearson bars) and predictions against SNR.

    Parameters
    ----------
    curves : xarray.Dataset
        Dims ``receiver`` x ``snr``; variables ``ber``, ``ber_low``, ``ber_high`` (measured) and
        ``ber_predicted``; coordinate ``snr`` in dB.
    path : str or Path, optional
        PNG to write; without it the figure is returned.
    site : Site, optional
        For the title.
    detail : str
        Modulation, symbol rate and geometry for the title.
    ber_floor : float
        Lowest BER drawn; zero-error points are drawn at their upper confidence bound.
    """
    fig, ax = figure(size=(7.6, 4.8))
    snr = curves["snr"].values
    for i, rx in enumerate(curves["receiver"].values):
        colour = PALETTE[i % len(PALETTE)]
        c = curves.sel(receiver=rx)
        ber = np.maximum(c["ber"].values, ber_floor)
        low = np.maximum(c["ber_low"].values, ber_floor)
        high = np.maximum(c["ber_high"].values, ber_floor)
        zero = c["ber"].values <= 0
        ax.errorbar(snr[~zero], ber[~zero], yerr=[ber[~zero] - low[~zero], high[~zero] - ber[~zero]],
                    color=colour, marker=_MARKERS[i % len(_MARKERS)], ms=5, capsize=3, lw=1.4,
                    label=f"{rx}: Monte Carlo")
        if zero.any():
            ax.plot(snr[zero], high[zero], ls="none", marker="v", color=colour, ms=6,
                    label=f"{rx}: no errors (95% upper bound)")
        pred = np.maximum(c["ber_predicted"].values, ber_floor)
        ax.plot(snr, pred, color=colour, ls="--", lw=1.1, label=f"{rx}: predicted")
    ax.set_yscale("log")
    ax.set_ylim(ber_floor, 1.0)
    ax.set_xlabel("band SNR (dB)")
    ax.set_ylabel("bit error rate")
    # the site on the first line and the configuration on the second: one line is clipped at this width
    name = site_title(site) if site is not None else ""
    ax.set_title("\n".join(t for t in (name, detail) if t), fontsize=9.5)
    ax.legend(ncols=2, loc="lower left")
    if path is None:
        return fig
    return save(fig, path)


__all__ = ["plot_ber_curves", "geometry_text"]
