"""The channel picture: impulse response against delay, |H(f)| across the band, delay-Doppler."""

from __future__ import annotations

import numpy as np

from aculink.plots.style import PALETTE, figure, geometry_text, save, site_title, styled

__all__ = ["plot_channel"]

#: How many of the strongest arrivals get a bounce-history label.
_LABELLED = 8
_FLOOR_DB = 50.0


@styled
def plot_channel(channel, path=None, *, site=None, overwrite: bool = True):
    """Draw the channel; write ``path`` (PNG, atomically) or return the open figure.

    Panels: the baseband impulse-response magnitude (dB re its peak) against delay after the
    first arrival, with each path as a stem labelled by its bounce history (``S`` surface, ``B``
    bottom bounces, ``D`` direct); |H(f)| across the band beside the incoherent path sum; and,
    when the channel changes with time, each path's Doppler shift against delay with its surface
    Doppler spread as a bar.
    """
    from aculink.errors import AculinkError

    if path is not None and not overwrite:
        from pathlib import Path

        if Path(path).exists():
            raise AculinkError(f"{path} exists: pass --overwrite to replace it")
    moving = channel.is_time_varying and not channel.is_empty
    ncols = 3 if moving else 2
    fig, axes = figure(1, ncols, size=(4.6 * ncols, 4.3))
    geo = channel.geometry
    detail = geometry_text(geo.get("source_depth_m"), geo.get("range_m"), geo.get("receiver_depth_m"))
    title = site_title(site if site is not None else channel.name, detail)
    fig.suptitle(title, fontweight="bold")
    if channel.is_empty:
        for ax in axes:
            ax.text(0.5, 0.5, "no path: " + (channel.reason or "no arrival"), ha="center", va="center",
                    transform=ax.transAxes)
        return save(fig, path) if path is not None else fig
    _impulse_panel(axes[0], channel)
    _transfer_panel(axes[1], channel)
    if moving:
        _doppler_panel(axes[2], channel)
    return save(fig, path) if path is not None else fig


def _impulse_panel(ax, channel):
    from aculink.channel.stats import path_powers

    fs = 2.0 * channel.bandwidth_hz
    ir = channel.impulse_response(fs)
    t0 = channel.delay_s[0]
    mag = np.abs(ir.values)
    peak = mag.max() if mag.size and mag.max() > 0 else 1.0
    with np.errstate(divide="ignore"):
        level = 20 * np.log10(np.maximum(mag / peak, 10 ** (-(_FLOOR_DB + 10) / 20)))
    rel_ms = (ir["delay"].values - t0) * 1e3
    ax.plot(rel_ms, level, color=PALETTE[0], lw=1.0, label=f"band-limited response ({fs / 1e3:g} kHz sampling)")
    power = path_powers(channel)
    with np.errstate(divide="ignore"):
        p_db = 10 * np.log10(np.maximum(power / power.max(), 1e-30))
    rel = (channel.delay_s - t0) * 1e3
    ax.vlines(rel, -_FLOOR_DB, p_db, color=PALETTE[1], lw=1.0, alpha=0.8, label="paths (band-mean power)")
    ax.plot(rel, p_db, "o", color=PALETTE[1], ms=3.5)
    labels = channel.labels
    order = np.argsort(power)[::-1][:_LABELLED]
    for i in order:
        if p_db[i] > -_FLOOR_DB:
            ax.annotate(labels[i], (rel[i], p_db[i]), textcoords="offset points", xytext=(3, 4), fontsize=7.5)
    span = max(rel.max(), 1e-3)
    ax.set_xlim(-0.08 * span - 0.05, span * 1.1 + 0.05)
    ax.set_ylim(-_FLOOR_DB, 14)
    ax.set_xlabel(f"delay after the first arrival (ms; first at {t0:.4f} s)")
    ax.set_ylabel("magnitude (dB re strongest)")
    ax.set_title("Impulse response")
    ax.legend(loc="upper right", fontsize=7.5)


def _transfer_panel(ax, channel):
    f = channel.band_grid(1025)
    h = channel.transfer_function(f).values
    inc = np.sum(np.abs(channel.gain_at(f)) ** 2, axis=0)
    with np.errstate(divide="ignore"):
        ax.plot(f / 1e3, 20 * np.log10(np.abs(h)), color=PALETTE[0], lw=1.0, label="|H(f)| (coherent sum)")
        ax.plot(f / 1e3, 10 * np.log10(inc), color=PALETTE[2], lw=1.6, ls="--", label="incoherent path sum")
    ax.set_xlabel("frequency (kHz)")
    ax.set_ylabel("transfer function (dB re 1 m)")
    ax.set_title("Across the band")
    ax.legend(loc="lower left", frameon=True, facecolor="white", framealpha=0.9, edgecolor="none")


def _doppler_panel(ax, channel):
    from aculink.channel.stats import path_powers

    power = path_powers(channel)
    rel = (channel.delay_s - channel.delay_s[0]) * 1e3
    nu = channel.doppler * channel.carrier_hz
    size = 12 + 60 * np.sqrt(power / power.max())
    ax.errorbar(rel, nu, yerr=channel.surface_doppler_spread_hz, fmt="none", ecolor=PALETTE[5], elinewidth=1.2,
                capsize=2, label="surface spread (rms)")
    ax.scatter(rel, nu, s=size, color=PALETTE[3], zorder=3, label="path (area ~ amplitude)")
    lo = float(np.min(nu - channel.surface_doppler_spread_hz))
    hi = float(np.max(nu + channel.surface_doppler_spread_hz))
    pad = max(0.15 * (hi - lo), 0.5)
    ax.set_ylim(lo - pad, hi + 2.5 * pad)
    mean = float(np.sum(power * nu) / np.sum(power))
    ax.axhline(mean, color="#777777", lw=0.7, ls=":", label=f"power-weighted mean {mean:.2f} Hz")
    ax.set_xlabel("delay after the first arrival (ms)")
    ax.set_ylabel("Doppler shift at the carrier (Hz)")
    ax.set_title("Delay-Doppler")
    ax.legend(loc="upper left", fontsize=7.5, ncol=2)
