"""The link picture: equalized constellation, MSE learning curve, equalizer taps."""

from __future__ import annotations

import numpy as np

from aculink.plots.style import PALETTE, figure, geometry_text, save, site_title, styled

__all__ = ["plot_link"]


@styled
def plot_link(result, path, *, site=None, channel=None, overwrite=False):
    """Draw three panels for a :class:`aculink.modem.LinkResult` and write ``path`` (PNG)."""
    from aculink.io.atomic import atomic_path  # noqa: F401  (save() writes atomically)
    from pathlib import Path
    from aculink.errors import AculinkError

    if not overwrite and Path(path).exists():
        raise AculinkError(f"{path} exists: pass --overwrite to replace it")
    fig, axes = figure(1, 3, size=(12.5, 4.2))
    ax = axes[0]
    z = result.constellation
    ax.plot(z.real, z.imag, ".", ms=2.0, alpha=0.35, color=PALETTE[0], rasterized=True)
    from aculink.modem.constellations import constellation

    pts = constellation(result.modulation).points
    ax.plot(pts.real, pts.imag, "+", ms=9, mew=1.6, color=PALETTE[1], label="ideal points")
    lim = 1.6 * np.max(np.abs(pts))
    ax.set(xlim=(-lim, lim), ylim=(-lim, lim), aspect="equal", xlabel="in-phase (unit symbol energy)",
           ylabel="quadrature (unit symbol energy)",
           title=f"Equalized payload: {result.modulation}, SNR {result.snr_out_db:.1f} dB")
    ax.legend(loc="upper right")

    ax = axes[1]
    mse = np.asarray(result.learning_curve.values)
    n = mse.size
    w = max(1, n // 200)
    smooth = np.convolve(mse, np.ones(w) / w, mode="valid")
    ax.plot(np.arange(smooth.size) + w // 2, 10 * np.log10(np.maximum(smooth, 1e-12)), color=PALETTE[0],
            label=f"mean over {result.frames} frame(s)")
    ax.axvline(result.n_training, color=PALETTE[3], ls="--", lw=1.0, label="end of training")
    pred = -result.snr_predicted_db
    if np.isfinite(pred):
        mse_pred = 10 * np.log10(1.0 / (1.0 + 10 ** (result.snr_predicted_db / 10)))
        ax.axhline(mse_pred, color=PALETTE[2], ls=":", lw=1.2, label="predicted MMSE")
    ax.set(xlabel="symbol in frame", ylabel="squared error, dB re unit symbol energy",
           title=f"Learning curve ({result.receiver}{'' if result.algorithm == 'none' else ', ' + result.algorithm})")
    ax.legend(loc="upper right")

    ax = axes[2]
    ff = result.ff_taps
    ref = max(float(np.max(np.abs(ff))), 1e-300)
    t_ff = np.arange(ff.size) / 2.0
    ax.stem(t_ff, np.abs(ff) / ref, linefmt=PALETTE[0], markerfmt="o", basefmt=" ", label="feedforward (T/2 spaced)")
    if result.fb_taps.size:
        t_fb = t_ff[-1] + result.fb_delays
        ax.stem(t_fb, np.abs(result.fb_taps) / ref, linefmt=PALETTE[1], markerfmt="s", basefmt=" ",
                label="feedback (symbol spaced, after the window)")
    ax.set(xlabel="tap position, symbols from the window start", ylabel="|tap| / largest feedforward tap",
           title="Equalizer taps (last frame)")
    ax.legend(loc="upper right")
    name = site_title(site) if site is not None else (getattr(channel, "name", "") or "channel")
    geo = getattr(channel, "geometry", {}) or {}
    detail = geometry_text(geo.get("source_depth_m"), geo.get("range_m"), geo.get("receiver_depth_m"))
    fig.suptitle(f"{name}{' - ' + detail if detail else ''}: {result.symbol_rate_baud:g} Bd, "
                 f"BER {result.ber:.2g} [{result.ber_low:.2g}, {result.ber_high:.2g}], "
                 f"net {result.net_bit_rate_bps:.0f} bit/s", fontweight="bold")
    return save(fig, path)
