"""``aculink arrivals SITE``: the eigenrays at one receiver, as a table or JSON."""

from __future__ import annotations

from aculink.cli._common import add_site_argument, check_output_option, check_plot_path, load_site_arg, print_json

from aculink.cautions import CAUTION_LINE as CAUTION


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


def arrivals_table(variables, coords, attrs) -> dict:
    """The JSON-ready summary of a one-receiver result of ``solve_arrivals``."""
    import numpy as np

    v = {name: value[1] for name, value in variables.items()}
    n = int(v["n_arrivals"][0, 0])
    delay = v["delay_s"][0, 0, :n]
    amp = v["amplitude"][0, 0, :n, 0]
    first = float(delay[0]) if n else float("nan")
    rows = []
    for i in range(n):
        mag = float(np.abs(amp[i]))
        rows.append({
            "delay_s": float(delay[i]), "relative_delay_s": float(delay[i] - first), "amplitude": mag,
            "phase_rad": float(np.angle(amp[i])),
            "level_db": float(20.0 * np.log10(mag)) if mag > 0 else None,
            "launch_angle_deg": float(v["launch_angle_deg"][0, 0, i]),
            "arrival_angle_deg": float(v["arrival_angle_deg"][0, 0, i]),
            "surface_bounces": int(v["surface_bounces"][0, 0, i]), "bottom_bounces": int(v["bottom_bounces"][0, 0, i]),
            "caustics": int(v["caustics"][0, 0, i]), "path_length_m": float(v["path_length_m"][0, 0, i]),
            "absorption_db": float(v["absorption_db"][0, 0, i, 0]),
        })
    return {"site": attrs["site"], "source_depth_m": float(attrs["source_depth_m"]),
            "range_m": float(coords["range"][1][0]), "depth_m": float(coords["depth"][1][0]),
            "frequency_hz": float(coords["frequency"][1][0]), "dynamic_range_db": float(attrs["dynamic_range_db"]),
            "arrivals": rows, "n_dropped": int(v["n_dropped"][0, 0]), "reason": attrs.get("reason")}


def format_table(summary) -> str:
    """An aligned text table of :func:`arrivals_table`'s result."""
    s = summary
    lines = [f"{s['site']}: source {s['source_depth_m']:g} m deep, receiver at {s['range_m'] / 1000:g} km, "
             f"{s['depth_m']:g} m deep; levels at {s['frequency_hz'] / 1000:g} kHz, dB re 1 m (= -TL)"]
    rows = s["arrivals"]
    if not rows:
        lines.append(f"No arrivals: {s['reason']}")
    else:
        lines.append(f"First arrival {rows[0]['delay_s'] * 1000:.3f} ms after transmission; "
                     f"{len(rows)} arrivals within {s['dynamic_range_db']:g} dB, {s['n_dropped']} weaker dropped")
        head = (f"{'#':>3} {'delay ms':>9} {'level dB':>9} {'phase deg':>9} {'launch deg':>10} {'arrive deg':>10} "
                f"{'surf':>4} {'bed':>4} {'caus':>4} {'path m':>9} {'absorb dB':>9}")
        lines += [head, "-" * len(head)]
        for i, r in enumerate(rows):
            import math

            lines.append(f"{i:3d} {r['relative_delay_s'] * 1000:9.3f} {r['level_db']:9.2f} "
                         f"{math.degrees(r['phase_rad']):9.1f} {r['launch_angle_deg']:10.3f} "
                         f"{r['arrival_angle_deg']:10.3f} {r['surface_bounces']:4d} {r['bottom_bounces']:4d} "
                         f"{r['caustics']:4d} {r['path_length_m']:9.1f} {r['absorption_db']:9.2f}")
    lines.append(CAUTION)
    return "\n".join(lines)


#: Columns of ``arrivals --csv``, in order.
CSV_KEYS = ("delay_s", "relative_delay_s", "level_db", "amplitude", "phase_rad", "launch_angle_deg",
            "arrival_angle_deg", "surface_bounces", "bottom_bounces", "caustics", "path_length_m", "absorption_db")


def run(args) -> int:
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

        write_csv(args.csv, CSV_KEYS, summary["arrivals"])
        written.append(args.csv)
    if args.plot:
        from aculink.plots.arrivals import plot_arrivals

        plot_arrivals(summary, args.plot, site=site)
        written.append(args.plot)
    if args.json:
        summary["files"] = written
        print_json(summary)
    else:
        print(format_table(summary))
        for path in written:
            print(f"Written: {path}")
    return 0
