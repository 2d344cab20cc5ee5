"""``aculink channel SITE``: the baseband channel and link budget at one receiver."""

from __future__ import annotations

from aculink.cli._common import add_site_argument, check_plot_path, load_site_arg, print_json

__all__ = ["register", "run"]


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


def run(args) -> int:
    from aculink.channel import channel_for_site, link_budget
    from aculink.io.reports import channel_report, format_channel, written_lines

    check_plot_path(args)
    site = load_site_arg(args.site, args)
    channel = channel_for_site(site, args.range_m, args.depth_m)
    budget = link_budget(site, channel)
    rep = channel_report(site, channel, budget)
    if args.plot is not None:
        from aculink.plots.channel import plot_channel

        plot_channel(channel, args.plot, site=site, overwrite=args.overwrite)
        rep["plot"] = str(args.plot)
    if args.json:
        print_json(rep)
    else:
        print(format_channel(rep))
        for line in written_lines([args.plot]):
            print(line)
    return 0
