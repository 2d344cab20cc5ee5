"""``aculink loss SITE``: the transmission-loss field over range and depth."""

from __future__ import annotations

from aculink.cli._common import add_site_argument, check_plot_path, load_site_arg, parse_span, print_json

from aculink.cautions import CAUTION_LINE as CAUTION


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "loss",
        help="compute (and draw) transmission loss over range and depth, dB re 1 m",
        description="Coherent and incoherent transmission loss on a range x depth grid from Gaussian "
        "beams (finite at caustics and in shadow zones). With --plot, draw the field with the seabed.",
    )
    add_site_argument(parser)
    parser.add_argument("--ranges-m", default=None, metavar="START:STOP:STEP",
                        help="grid ranges, m (default 200 columns out to the receiver range)")
    parser.add_argument("--depths-m", default=None, metavar="START:STOP:STEP",
                        help="grid depths, m (default 120 rows from the surface to the deepest seabed)")
    parser.add_argument("--frequency-hz", type=float, default=None, metavar="F",
                        help="frequency, Hz (default the modem carrier)")
    parser.add_argument("--source-depth-m", type=float, default=None, metavar="Z",
                        help="source depth, m (default the site's source)")
    parser.add_argument("--incoherent", action="store_true", help="draw the incoherent TL instead of the coherent")
    parser.add_argument("--plot", metavar="FILE.png", help="draw the TL field to this PNG file")
    parser.add_argument("--overwrite", action="store_true", help="replace an existing --plot file")
    parser.add_argument("--json", action="store_true", help="print a summary as one JSON object")
    parser.set_defaults(func=run)


def run(args) -> int:
    import numpy as np

    from aculink.propagation.loss import transmission_loss

    check_plot_path(args)
    site = load_site_arg(args.site)
    r_end = min(site.receiver.range_m * 1.25, site.seabed.max_range_m)
    ranges = (parse_span(args.ranges_m, "--ranges-m", positive=True) if args.ranges_m
              else np.linspace(r_end / 200, r_end, 200))
    depths = (parse_span(args.depths_m, "--depths-m") if args.depths_m
              else np.linspace(0.0, site.seabed.max_depth_m, 121)[1:])
    tl = transmission_loss(site, ranges, depths, args.frequency_hz, source_depth_m=args.source_depth_m)
    if args.plot is not None:
        from aculink.plots.loss import plot_loss

        plot_loss(site, tl, args.plot, incoherent=args.incoherent, overwrite=args.overwrite)
    rx = tl.sel(range=site.receiver.range_m, depth=site.receiver.depth_m, method="nearest")
    summary = {"site": site.name, "source_depth_m": tl.attrs["source_depth_m"], "frequency_hz": tl.attrs["frequency_hz"],
               "n_ranges": int(tl.sizes["range"]), "n_depths": int(tl.sizes["depth"]),
               "receiver_range_m": float(rx.range), "receiver_depth_m": float(rx.depth),
               "tl_coherent_db_at_receiver": float(rx.tl_coherent_db),
               "tl_incoherent_db_at_receiver": float(rx.tl_incoherent_db),
               "tl_incoherent_db_min": float(np.nanmin(tl.tl_incoherent_db)),
               "tl_incoherent_db_max": float(np.nanmax(tl.tl_incoherent_db)), "plot": args.plot}
    if args.json:
        print_json(summary)
        return 0
    print(f"{site.name}: TL at {summary['frequency_hz'] / 1000:g} kHz, source {summary['source_depth_m']:g} m deep, "
          f"{summary['n_ranges']} x {summary['n_depths']} grid points (dB re 1 m)")
    print(f"  at the receiver grid point ({summary['receiver_range_m'] / 1000:g} km, {summary['receiver_depth_m']:g} m): "
          f"coherent {summary['tl_coherent_db_at_receiver']:.1f} dB, incoherent "
          f"{summary['tl_incoherent_db_at_receiver']:.1f} dB")
    if args.plot is not None:
        print(f"Plot written to {args.plot}")
    print(CAUTION)
    return 0
