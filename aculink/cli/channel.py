"""``aculink channel SITE``: the baseband channel and link budget at one receiver."""

from __future__ import annotations

import math

from aculink.cli._common import add_site_argument, check_plot_path, load_site_arg, print_json

from aculink.cautions import CAUTION_LINE as CAUTION


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "channel",
        help="multipath channel statistics and the sonar-equation budget at one receiver",
        description="Trace the site, turn the eigenrays into the baseband channel over the modem "
        "band, and report delay spreads, coherence bandwidth, Doppler, transmission loss, noise "
        "and band SNR (each in dB with its reference).",
    )
    add_site_argument(parser)
    parser.add_argument("--range-m", type=float, default=None, metavar="R",
                        help="receiver range, m (default: the site's receiver)")
    parser.add_argument("--depth-m", type=float, default=None, metavar="Z",
                        help="receiver depth, m (default: the site's receiver)")
    parser.add_argument("--json", action="store_true", help="print one JSON object")
    parser.add_argument("--plot", metavar="FILE.png",
                        help="draw the impulse response, |H(f)| and (when moving) the delay-Doppler picture")
    parser.add_argument("--overwrite", action="store_true", help="replace an existing --plot file")
    parser.set_defaults(func=run)


def report(site, channel, budget) -> dict:
    """The JSON object of the command: statistics, budget terms, units."""
    stats = channel.statistics()
    terms = budget.to_dict()
    out = {
        "site": site.name,
        "source_depth_m": float(site.source.depth_m),
        "range_m": channel.geometry.get("range_m", float(site.receiver.range_m)),
        "receiver_depth_m": channel.geometry.get("receiver_depth_m", float(site.receiver.depth_m)),
        "carrier_hz": channel.carrier_hz,
        "bandwidth_hz": channel.bandwidth_hz,
        "paths": channel.n_paths,
        "significant_paths": stats["significant_paths"],
        "significant_db": stats["significant_db"],
        "first_delay_s": stats["first_delay_s"],
        "rms_delay_spread_s": stats["rms_delay_spread_s"],
        "spread_90_s": stats["spread_90_s"],
        "spread_99_s": stats["spread_99_s"],
        "coherence_bandwidth_hz": stats["coherence_bandwidth_hz"],
        "doppler_shift_hz": stats["doppler_shift_hz"],
        "doppler_spread_hz": stats["doppler_spread_hz"],
        "coherence_time_s": stats["coherence_time_s"],
        "tl_coherent_db": stats["tl_coherent_db"],
        "tl_incoherent_db": stats["tl_incoherent_db"],
        "source_level_db": terms["source_level_db"],
        "source_spectrum_level_db": terms["source_spectrum_level_db"],
        "tl_db": terms["tl_db"],
        "noise_band_db": terms["noise_band_db"],
        "noise_spectrum_level_db": terms["noise_spectrum_level_db"],
        "directivity_index_db": terms["directivity_index_db"],
        "snr_band_db": terms["snr_band_db"],
        "no_path": terms["no_path"],
        "units": dict(terms["units"], tl_incoherent_db="dB re 1 m (band-averaged)",
                      rms_delay_spread_s="s", spread_90_s="s (shortest window with 90% of the energy)",
                      spread_99_s="s (shortest window with 99% of the energy)",
                      coherence_bandwidth_hz="Hz (|R(df)| = 0.5; null when it never falls that far)",
                      doppler_spread_hz="Hz (rms)", coherence_time_s="s (|R(dt)| = 0.5; null when never)"),
        "caution": CAUTION,
    }
    if budget.reason:
        out["reason"] = budget.reason
    return out


def _fmt(value, unit, scale=1.0, digits=2, inf_text="not reached"):
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "n/a"
    if isinstance(value, float) and math.isinf(value):
        return inf_text
    return f"{value * scale:.{digits}f} {unit}"


def format_report(rep: dict) -> str:
    """Aligned text version of :func:`report`."""
    rows = [
        ("Site", rep["site"]),
        ("Geometry", f"source {rep['source_depth_m']:g} m deep, receiver at {rep['range_m'] / 1000:g} km, "
                     f"{rep['receiver_depth_m']:g} m deep"),
        ("Band", f"{rep['carrier_hz'] / 1000:g} kHz carrier, {rep['bandwidth_hz'] / 1000:g} kHz wide"),
        ("Paths", f"{rep['paths']} ({rep['significant_paths']} within {rep['significant_db']:g} dB of the strongest)"),
    ]
    if rep["no_path"]:
        rows.append(("Result", rep.get("reason", "no path")))
    else:
        rows += [
            ("First arrival", _fmt(rep["first_delay_s"], "s", digits=4)),
            ("RMS delay spread", _fmt(rep["rms_delay_spread_s"], "ms", 1e3)),
            ("90% energy spread", _fmt(rep["spread_90_s"], "ms", 1e3)),
            ("99% energy spread", _fmt(rep["spread_99_s"], "ms", 1e3)),
            ("Coherence bandwidth", _fmt(rep["coherence_bandwidth_hz"], "Hz", digits=0, inf_text="|R(df)| stays above 0.5 (one arrival dominates)")),
            ("Doppler shift / spread", f"{_fmt(rep['doppler_shift_hz'], 'Hz')} / {_fmt(rep['doppler_spread_hz'], 'Hz rms')}"),
            ("Coherence time", _fmt(rep["coherence_time_s"], "s", digits=3, inf_text="|R(dt)| stays above 0.5 (no decorrelation)")),
            ("TL coherent", _fmt(rep["tl_coherent_db"], "dB re 1 m", digits=1)),
            ("TL incoherent", _fmt(rep["tl_incoherent_db"], "dB re 1 m", digits=1)),
        ]
    rows += [
        ("Source level", _fmt(rep["source_level_db"], "dB re 1 uPa at 1 m", digits=1)),
        ("Source spectrum level", _fmt(rep["source_spectrum_level_db"], "dB re 1 uPa^2/Hz at 1 m", digits=1)),
        ("Noise in band", _fmt(rep["noise_band_db"], "dB re 1 uPa^2", digits=1)),
        ("Noise spectrum level", _fmt(rep["noise_spectrum_level_db"], "dB re 1 uPa^2/Hz (band mean)", digits=1)),
        ("Directivity index", _fmt(rep["directivity_index_db"], "dB", digits=1)),
        ("Band SNR", "minus infinity (no path)" if rep["no_path"] else _fmt(rep["snr_band_db"], "dB", digits=1)),
    ]
    width = max(len(k) for k, _ in rows)
    lines = [f"{k:<{width}}  {v}" for k, v in rows]
    lines.append("")
    lines.append(rep["caution"])
    return "\n".join(lines)


def run(args) -> int:
    from aculink.channel import channel_for_site, link_budget

    check_plot_path(args)
    site = load_site_arg(args.site, args)
    channel = channel_for_site(site, args.range_m, args.depth_m)
    budget = link_budget(site, channel)
    rep = report(site, channel, budget)
    if args.plot is not None:
        from aculink.plots.channel import plot_channel

        plot_channel(channel, args.plot, site=site, overwrite=args.overwrite)
        rep["plot"] = str(args.plot)
    if args.json:
        print_json(rep)
    else:
        print(format_report(rep))
        if args.plot is not None:
            print(f"\nPlot written to {args.plot}")
    return 0
