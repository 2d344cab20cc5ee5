"""``aculink arrivals SITE``: the eigenrays at one receiver, as a table or JSON."""

from __future__ import annotations

from aculink.cli._common import add_site_argument, check_output_option, check_plot_path, load_site_arg, print_json

__all__ = ["register", "run"]


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "arrivals",
        help="list the eigenrays (delay, level, phase, angles, bounces) at one receiver",
        description="Find every significant path from the source to one receiver: delay relative to the "
        "first arrival, level in dB re 1 m at the carrier (spreading, boundaries, absorption), phase, "
        "launch and arrival angles, and surface/seabed bounces and caustics.",
    )
    add_site_argument(parser)
    parser.add_argument("--range-m", type=float, default=None, metavar="R",
                        help="receiver range, m (default the site's receiver)")
    parser.add_argument("--depth-m", type=float, default=None, metavar="Z",
                        help="receiver depth, m (default the site's receiver)")
    parser.add_argument("--source-depth-m", type=float, default=None, metavar="Z",
                        help="source depth, m (default the site's source)")
    parser.add_argument("--frequency-hz", type=float, default=None, metavar="F",
                        help="frequency for levels and absorption, Hz (default the modem carrier)")
    parser.add_argument("--dynamic-range-db", type=float, default=40.0, metavar="DB",
                        help="drop arrivals this far below the strongest (default 40 dB)")
    parser.add_argument("--json", action="store_true", help="print the arrivals as one JSON object")
    parser.add_argument("--csv", metavar="FILE.csv", help="also write the arrivals to this CSV file")
    parser.add_argument("--plot", metavar="FILE.png", help="draw level against delay to this PNG file")
    parser.add_argument("--overwrite", action="store_true", help="replace an existing --csv or --plot file")
    parser.set_defaults(func=run)


def run(args) -> int:
    from aculink.io.reports import ARRIVALS_CSV_KEYS, arrivals_table, format_arrivals, written_lines
    from aculink.propagation.eigenrays import solve_arrivals

    check_plot_path(args)
    check_output_option(args, "csv", ".csv")
    site = load_site_arg(args.site, args)
    summary = arrivals_table(*solve_arrivals(site, args.range_m, args.depth_m, args.frequency_hz,
                                             source_depth_m=args.source_depth_m,
                                             dynamic_range_db=args.dynamic_range_db))
    written = []
    if args.csv:
        from aculink.io.tables import write_csv

        write_csv(args.csv, ARRIVALS_CSV_KEYS, summary["arrivals"])
        written.append(args.csv)
    if args.plot:
        from aculink.plots.arrivals import plot_arrivals

        plot_arrivals(summary, args.plot, site=site)
        written.append(args.plot)
    if args.json:
        summary["files"] = written
        print_json(summary)
    else:
        print(format_arrivals(summary))
        for line in written_lines(written):
            print(line)
    return 0
