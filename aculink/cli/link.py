"""``aculink link [SITE]``: simulate the modem over a site's channel (or a channel file)."""

from __future__ import annotations

from aculink.cli._common import add_site_argument, check_symbol_rate, load_site_arg, print_json

__all__ = ["register", "RELATIVE_TL_DB", "run"]


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "link",
        help="simulate a PSK/QAM link with a chosen receiver: BER, output SNR, net bit rate",
        description="Send frames of training and random data through the site's channel (or a "
        "channel file) with the budget's coloured noise, receive them with the chosen receiver "
        "(none, linear, dfe, mmse-dfe) and report the bit error rate with its 95% interval, the "
        "measured and predicted output SNR, the training overhead and whether the link closed: "
        "the net bit rate when it did, and why not (BER above the target, lost frames, a "
        "receiver that diverged or lost lock) when it did not.",
    )
    add_site_argument(parser, optional=True)
    parser.add_argument("--range-m", type=float, default=None, metavar="R", help="receiver range, m")
    parser.add_argument("--depth-m", type=float, default=None, metavar="Z", help="receiver depth, m")
    parser.add_argument("--rate-baud", type=float, required=True, metavar="RS", help="symbol rate, Bd")
    parser.add_argument("--modulation", default="qpsk", help="bpsk, qpsk, 8psk, 16qam or 64qam (default qpsk)")
    parser.add_argument("--receiver", default="dfe", help="none, linear, dfe or mmse-dfe (default dfe)")
    parser.add_argument("--algorithm", default="rls", help="adaptation of linear/dfe: rls or nlms (default rls)")
    parser.add_argument("--rolloff", type=float, default=None, help="RRC roll-off (default: the site's, else 0.25)")
    parser.add_argument("--symbols", type=int, default=20000, metavar="N", help="most payload symbols to send (default 20000)")
    parser.add_argument("--max-errors", type=int, default=200, metavar="E", help="stop after E bit errors (default 200)")
    parser.add_argument("--sparse", action="store_true", help="feedback taps only where the channel has energy")
    parser.add_argument("--seed", type=int, default=0, metavar="S", help="random seed (default 0)")
    parser.add_argument("--snr-db", type=float, default=None, metavar="X",
                        help="band SNR, dB, replacing the budget's (white noise)")
    parser.add_argument("--channel-file", default=None, metavar="F",
                        help="tap list or measured response (CSV/NetCDF, format in the README) instead of the site's channel")
    parser.add_argument("--carrier-hz", type=float, default=None, help="carrier for a channel file without one")
    parser.add_argument("--bandwidth-hz", type=float, default=None, help="bandwidth for a channel file without one")
    parser.add_argument("--json", action="store_true", help="print one JSON object")
    parser.add_argument("--plot", metavar="FILE.png", help="constellation, learning curve and equalizer taps")
    parser.add_argument("--overwrite", action="store_true", help="replace an existing --plot file")
    parser.set_defaults(func=run)


def _channel_and_budget(args):
    from aculink.channel import channel_for_site, link_budget, load_channel_file
    from aculink.errors import AculinkError
    from aculink.modem.simulate import DEFAULT_ROLLOFF

    site = load_site_arg(args.site, args) if args.site else None
    if args.channel_file:
        fc = args.carrier_hz if args.carrier_hz is not None else (site.modem.carrier_hz if site else None)
        bw = args.bandwidth_hz if args.bandwidth_hz is not None else (site.modem.bandwidth_hz if site else None)
        channel = load_channel_file(args.channel_file, carrier_hz=fc, bandwidth_hz=bw, symbol_rate_baud=args.rate_baud)
        if channel.bandwidth_hz:
            rolloff = args.rolloff if args.rolloff is not None else (site.modem.rolloff if site else DEFAULT_ROLLOFF)
            check_symbol_rate("--rate-baud", args.rate_baud, float(channel.bandwidth_hz), rolloff)
        if args.snr_db is None and site is None:
            raise AculinkError("--snr-db is required with --channel-file unless a SITE gives the link budget")
    else:
        if site is None:
            raise AculinkError("SITE is required unless --channel-file is given")
        channel = channel_for_site(site, args.range_m, args.depth_m)
    budget = None
    if args.snr_db is None:
        budget = link_budget(site, channel)
        if budget.no_path:
            raise AculinkError(f"no acoustic path reaches the receiver: {budget.reason or 'no eigenray'}")
        if args.channel_file and budget.tl_db < RELATIVE_TL_DB:
            raise AculinkError(
                f"--channel-file {args.channel_file}: its gains give {budget.tl_db:.1f} dB of transmission loss "
                f"(spherical spreading alone is {RELATIVE_TL_DB:g} dB at 10 m), so they look relative, not re 1 m "
                f"from the source; give --snr-db for the band SNR instead of the site's budget")
    return site, channel, budget


#: Less transmission loss than spreading to 10 m: a tap file's gains are relative, not re 1 m.
RELATIVE_TL_DB = 20.0


def run(args) -> int:
    from aculink.io.reports import format_link, link_report, written_lines
    from aculink.modem import simulate_link

    site, channel, budget = _channel_and_budget(args)
    rolloff = args.rolloff if args.rolloff is not None else (site.modem.rolloff if site else None)
    result = simulate_link(channel, symbol_rate_baud=args.rate_baud, modulation=args.modulation,
                           receiver=args.receiver, budget=budget, snr_db=args.snr_db, rolloff=rolloff,
                           n_symbols=args.symbols, max_errors=args.max_errors, seed=args.seed,
                           algorithm=args.algorithm, sparse=args.sparse,
                           target_ber=site.modem.target_ber if site else None)
    rep = link_report(site, channel, result)
    rep["symbols_requested"] = args.symbols
    if args.plot:
        from aculink.plots.link import plot_link

        plot_link(result, args.plot, site=site, channel=channel, overwrite=args.overwrite)
        rep["plot"] = args.plot
    if args.json:
        print_json(rep)
    else:
        print(format_link(rep))
        for line in written_lines([args.plot]):
            print(line)
    return 0
