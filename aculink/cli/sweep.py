"""``aculink sweep``: the workable rate over a range x depth grid, on Dask, resumable."""

from __future__ import annotations

import sys

from aculink.cli._common import add_site_argument, load_site_arg, parse_span, print_json

__all__ = ["register", "run"]


def register(subparsers) -> None:
    p = subparsers.add_parser(
        "sweep", help="workable rate over a range x depth grid (NetCDF; Dask; resumable)",
        description="Sweep the highest workable rate over receiver range x depth (and optionally "
        "source depth and wind), in chunks that share one ray fan, serially or on Dask. Every "
        "finished chunk is saved beside OUT (OUT.parts/) so an interrupted sweep continues with "
        "--resume. Planning estimates only.")
    add_site_argument(p)
    p.add_argument("--ranges-m", required=True, metavar="SPAN", help="receiver ranges, m: start:stop:step or a,b,c")
    p.add_argument("--depths-m", required=True, metavar="SPAN", help="receiver depths, m: start:stop:step or a,b,c")
    p.add_argument("--source-depths-m", default=None, metavar="SPAN", help="source depths to sweep, m")
    p.add_argument("--wind-mps", default=None, metavar="SPAN", help="wind speeds at 10 m to sweep, m/s")
    p.add_argument("-o", "--out", required=True, metavar="OUT.nc", help="NetCDF file to write")
    where = p.add_mutually_exclusive_group()
    where.add_argument("--workers", type=int, default=None, metavar="N",
                       help="local worker processes (0 or 1: serial; default: one per core when the "
                       "sweep is large enough to repay starting them, about 300 points on 2 cores, else serial)")
    where.add_argument("--scheduler", default=None, metavar="ADDRESS",
                       help="run on an existing Dask cluster, e.g. tcp://10.0.0.5:8786")
    p.add_argument("--receiver", default="all", metavar="NAME",
                   help="receiver to plan for: none, linear, dfe, or all of these (default); mmse-dfe (known-channel bound) when named")
    p.add_argument("--target-ber", type=float, default=None, help="target bit error rate (default: the site's)")
    p.add_argument("--margin-db", type=float, default=None, help="SNR margin to keep, dB (default: the site's)")
    p.add_argument("--chunk-ranges", type=int, default=None, metavar="N",
                   help="ranges per chunk (default: about 40 receivers per chunk)")
    p.add_argument("--resume", action="store_true",
                   help="continue the unfinished sweep in OUT.parts/ (same settings; replaces OUT only if "
                   "that sweep was started with --overwrite)")
    p.add_argument("--overwrite", action="store_true",
                   help="start over: discard OUT.parts/ and replace an existing OUT (and --plot file); "
                   "excludes --resume")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.add_argument("--plot", default=None, metavar="FILE.png", help="draw a range x depth map of the best rate")
    p.add_argument("--json", action="store_true", help="print a one-object JSON summary")
    p.set_defaults(func=run)


def run(args) -> int:
    from pathlib import Path

    from aculink.errors import AculinkError
    from aculink.planning.dataset import CAUTION
    from aculink.planning.checkpoint import RULE
    from aculink.planning.sweep import may_replace_outputs, report_failures, run_sweep

    if args.resume and args.overwrite:
        raise AculinkError(f"--resume and --overwrite together: choose one ({RULE})")
    replace = may_replace_outputs(args.out, resume=args.resume, overwrite=args.overwrite)
    if args.plot and Path(args.plot).exists() and not replace:
        raise AculinkError(f"--plot {args.plot} exists: pass --overwrite to replace it")
    ranges = parse_span(args.ranges_m, "--ranges-m", positive=True)
    depths = parse_span(args.depths_m, "--depths-m", positive=True)
    sources = None if args.source_depths_m is None else parse_span(args.source_depths_m, "--source-depths-m", positive=True)
    winds = None if args.wind_mps is None else parse_span(args.wind_mps, "--wind-mps")
    site = load_site_arg(args.site, args)
    receivers = args.receiver if args.receiver == "all" else [args.receiver]
    try:
        ds = run_sweep(site, ranges, depths, args.out, source_depths_m=sources, winds_mps=winds,
                       receivers=receivers, target_ber=args.target_ber, margin_db=args.margin_db,
                       workers=args.workers, scheduler=args.scheduler, resume=args.resume,
                       overwrite=args.overwrite, quiet=args.quiet, chunk_ranges=args.chunk_ranges)
    except KeyboardInterrupt:
        how = "with --resume in place of --overwrite" if args.overwrite else "with --resume"
        print(f"aculink: interrupted; finished chunks are kept in {args.out}.parts/; to continue, rerun "
              f"the same command {how}", file=sys.stderr)
        return 130
    note = report_failures(ds)
    if args.plot:
        from aculink.plots.plan import plot_rate_map

        plot_rate_map(ds, site, args.plot)
    rate = ds["net_bit_rate_bps"]
    summary = {"out": str(args.out), "site": site.name, "dims": {k: int(v) for k, v in ds.sizes.items()},
               "points": int(rate.size), "points_without_result": int((ds["error"] != "").sum()),
               "points_without_workable_rate": int((rate == 0).sum()),
               "best_net_bit_rate_bps": float(rate.max()) if rate.notnull().any() else None,
               "note": note, "caution": CAUTION}
    if args.json:
        print_json(summary)
        return 0
    best = summary["best_net_bit_rate_bps"]
    print(f"wrote {args.out}: {summary['points']} grid points "
          f"({' x '.join(f'{k} {v}' for k, v in ds['net_bit_rate_bps'].sizes.items())}), "
          f"best net rate {'-' if best is None else f'{best / 1000:.3g} kbit/s'}, "
          f"{summary['points_without_workable_rate']} points with no workable rate")
    if note:
        print(f"note: {note}")
    if args.plot:
        print(f"wrote {args.plot}")
    print(f"Caution: {CAUTION}")
    return 0
