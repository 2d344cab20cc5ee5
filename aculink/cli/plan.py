"""``aculink plan``: the range-versus-rate table for one site and receiver depth."""

from __future__ import annotations

from pathlib import Path

from aculink.cli._common import add_site_argument, load_site_arg, parse_span, print_json
from aculink.io import reports as _reports

__all__ = ["DEFAULT_RANGES", "register", "default_ranges", "run", "RATE_MARKS", "run_availability"]

DEFAULT_RANGES = "500:20000:500"


def register(subparsers) -> None:
    p = subparsers.add_parser(
        "plan", help="highest workable data rate at each range (table, CSV, JSON, plot)",
        description="At each range, the highest net bit rate whose predicted BER meets the target "
        "with the SNR margin to spare, with the modulation, symbol rate and receiver that reach "
        "it. One ray fan serves all ranges. Planning estimates only.")
    add_site_argument(p)
    p.add_argument("--ranges-m", default=None, metavar="SPAN",
                   help=f"receiver ranges, m: start:stop:step or a,b,c (default {DEFAULT_RANGES}, "
                   "cut at the end of the site's seabed description)")
    p.add_argument("--depth-m", type=float, default=None, metavar="Z",
                   help="receiver depth, m (default: the site's receiver depth)")
    p.add_argument("--receiver", default="all", metavar="NAME",
                   help="receiver to plan for: none, linear, dfe, or all of these (default); mmse-dfe (known-channel bound) when named")
    p.add_argument("--target-ber", type=float, default=None, help="target bit error rate (default: the site's)")
    p.add_argument("--margin-db", type=float, default=None, help="SNR margin to keep, dB (default: the site's)")
    p.add_argument("--verify", action="store_true",
                   help="re-run each chosen configuration by Monte Carlo and flag disagreement")
    p.add_argument("--seed", type=int, default=0, help="seed of the --verify runs (default 0)")
    p.add_argument("--verify-max-bits", type=int, default=None, metavar="N",
                   help="most bits simulated per row by --verify (default: ten times what an error-free "
                   "run needs to show the target is met, at most 2,000,000)")
    p.add_argument("--availability", type=float, default=None, metavar="P",
                   help="the rate available with probability P (0 < P < 1) over what the site's "
                   "[variability] section lets vary: a table of rates at 50/90/99 %% and P, the "
                   "closure probability with its interval, the median and nominal rates, and which "
                   "factor the spread comes from")
    p.add_argument("--members", type=int, default=64, metavar="N",
                   help="with --availability: most ensemble members to draw (default 64; a discrete "
                   "ensemble no larger than N is enumerated exactly)")
    p.add_argument("--workers", type=int, default=None, metavar="N",
                   help="with --availability: run the members on N local Dask workers (default: serial)")
    p.add_argument("--scheduler", default=None, metavar="ADDRESS",
                   help="with --availability: run the members on this Dask scheduler (tcp://host:port)")
    p.add_argument("--csv", default=None, metavar="FILE", help="also write the table as CSV")
    p.add_argument("--plot", default=None, metavar="FILE.png", help="draw rate against range")
    p.add_argument("--overwrite", action="store_true", help="replace existing --csv/--plot files")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the table")
    p.set_defaults(func=run)


def _outputs_free(args) -> None:
    from aculink.errors import AculinkError

    for option, path in (("--csv", args.csv), ("--plot", args.plot)):
        if path is None:
            continue
        path = Path(path)
        if path.exists() and not args.overwrite:
            raise AculinkError(f"{option} {path} exists: pass --overwrite to replace it")
        folder = path.parent if str(path.parent) else Path(".")
        if not folder.is_dir():
            raise AculinkError(f"{option}: output folder {folder} does not exist")


def default_ranges(site, depth_m):
    """The default span, cut at the end of the site's seabed description."""
    import numpy as np

    ranges = parse_span(DEFAULT_RANGES, "--ranges-m")
    keep = ranges[ranges <= site.seabed.max_range_m]
    if not keep.size:
        keep = np.array([site.seabed.max_range_m])
    # the default span leaves out ranges where the receiver would sit in or below the seabed
    # (a sloping harbour approach); ranges the user names are checked and refused instead
    in_water = keep[site.seabed.depth_at(keep) > depth_m]
    return in_water if in_water.size else keep


def run(args) -> int:
    from aculink.io.reports import format_plan, plan_document, written_lines
    from aculink.io.tables import write_csv
    from aculink.planning.table import ROW_KEYS, VERIFY_KEYS, plan_rates, plan_rows

    _outputs_free(args)
    site = load_site_arg(args.site, args)
    if args.ranges_m is None:
        ranges = default_ranges(site, site.receiver.depth_m if args.depth_m is None else args.depth_m)
    else:
        ranges = parse_span(args.ranges_m, "--ranges-m", positive=True)
    receivers = args.receiver if args.receiver == "all" else [args.receiver]
    if args.availability is not None:
        return run_availability(args, site, ranges, receivers)
    if args.workers is not None or args.scheduler is not None:
        from aculink.errors import AculinkError

        raise AculinkError("--workers/--scheduler: only with --availability (the plan table itself runs "
                           "in this process)")
    ds = plan_rates(site, ranges, depth_m=args.depth_m, receivers=receivers,
                    target_ber=args.target_ber, margin_db=args.margin_db, verify=args.verify,
                    seed=args.seed, verify_max_bits=args.verify_max_bits)
    rows = plan_rows(ds)
    keys = ROW_KEYS + ("error",) + (VERIFY_KEYS if args.verify else ())
    if args.csv:
        write_csv(args.csv, keys, rows, overwrite=args.overwrite)
    if args.plot:
        from aculink.plots.plan import plot_plan

        plot_plan(ds, site, args.plot)
    if args.json:
        print_json(plan_document(site, ds, rows, verify=args.verify))
        return 0
    print(format_plan(site, ds, rows, verify=args.verify))
    for line in written_lines([args.csv, args.plot]):
        print(line)
    return 0


#: The table's pieces, where tests and scripts have found them (the reports live in aculink.io.reports).
heading = _reports.plan_heading
table_columns = _reports.plan_columns
display_row = _reports.plan_display_row
verify_summary = _reports.verify_summary
RATE_MARKS = _reports.RATE_MARKS


def run_availability(args, site, ranges, receivers) -> int:
    """``plan --availability P``: the ensemble table (see :mod:`aculink.planning.availability`)."""
    from aculink.errors import AculinkError
    from aculink.cautions import CAUTION_LINE
    from aculink.io.tables import write_csv
    from aculink.planning import availability as av

    if args.verify:
        raise AculinkError("--verify and --availability: choose one (verify the nominal plan without "
                           "--availability)")
    ds = av.plan_availability(site, ranges, depth_m=args.depth_m, probability=args.availability,
                              members=args.members, seed=args.seed, receivers=receivers,
                              target_ber=args.target_ber, margin_db=args.margin_db,
                              workers=0 if args.workers is None and args.scheduler is None else args.workers,
                              scheduler=args.scheduler)
    rows = av.availability_rows(ds)
    if args.csv:
        write_csv(args.csv, _reports.availability_csv_keys(rows), rows, overwrite=args.overwrite)
    if args.plot:
        from aculink.plots.availability import plot_availability

        plot_availability(ds, site, args.plot)
    if args.json:
        print_json({"site": site.name, "receiver_depth_m": ds.attrs["receiver_depth_m"],
                    "source_depth_m": ds.attrs["source_depth_m"], "target_ber": ds.attrs["target_ber"],
                    "margin_db": ds.attrs["margin_db"], "availability": ds.attrs["availability"],
                    "ensemble": ds.attrs["ensemble"], "members": int(ds.attrs["members"]),
                    "converged": bool(ds.attrs["converged"]), "seed": int(ds.attrs["seed"]),
                    "variability": None if site.variability is None else site.variability.to_dict(),
                    "caution": CAUTION_LINE, "rows": rows})
        return 0
    print(_reports.format_availability(ds, rows))
    print(CAUTION_LINE)
    for line in _reports.written_lines([args.csv, args.plot]):
        print(line)
    return 0
