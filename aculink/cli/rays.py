"""``aculink rays SITE``: trace a fan of rays and draw it over the profile and the seabed."""

from __future__ import annotations

from aculink.cli._common import add_site_argument, check_plot_path, load_site_arg, parse_count_span, print_json


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "rays",
        help="trace a fan of rays from the source and draw it over the sound-speed profile and seabed",
        description="Trace a fan of rays from the source through the site's sound-speed profile, "
        "reflecting at the surface and the (sloping) seabed, and summarise where they go. With --plot, "
        "draw the fan beside the profile, each ray shaded by its level relative to the strongest ray at "
        "the same range (or by launch angle, or by reflections met so far), optionally with the eigenrays "
        "to the receiver on top.",
    )
    add_site_argument(parser)
    parser.add_argument("--angles-deg", default="-30:30:121", metavar="START:STOP:COUNT",
                        help="launch angles, deg below the horizontal (default -30:30:121)")
    parser.add_argument("--max-range-m", type=float, default=None, metavar="R",
                        help="trace out to this range, m (default the receiver range)")
    parser.add_argument("--source-depth-m", type=float, default=None, metavar="Z",
                        help="source depth, m (default the site's source)")
    parser.add_argument("--shade", choices=("level", "angle", "boundaries"), default="level",
                        help="with --plot: shade rays by level below the strongest ray at the same range "
                        "(default), by launch angle, or by surface and seabed reflections met so far")
    parser.add_argument("--dynamic-range-db", type=float, default=40.0, metavar="DB",
                        help="with --shade level: draw rays more than this below the strongest faint "
                        "(default 40 dB)")
    parser.add_argument("--eigenrays", action="store_true",
                        help="with --plot: draw the eigenrays to the site's receiver on top")
    parser.add_argument("--plot", metavar="FILE.png", help="draw the fan to this PNG file")
    parser.add_argument("--overwrite", action="store_true", help="replace an existing --plot file")
    parser.add_argument("--json", action="store_true", help="print the per-ray summary as one JSON object")
    # let a span that starts with a minus sign ("-30:30:121") be an option value, as for negative numbers
    import re

    parser._negative_number_matcher = re.compile(r"^-\d+$|^-\d*\.\d+$|^-[\d.]+:[-\d.:]+$")
    parser.set_defaults(func=run)


def run(args) -> int:
    import numpy as np

    from aculink.propagation.rays import TERMINATION_MEANINGS, trace_rays

    from aculink.errors import check_range

    check_plot_path(args)
    angles = parse_count_span(args.angles_deg, "--angles-deg")
    check_range("--dynamic-range-db", args.dynamic_range_db, 0.0, 200.0, low_open=True, unit="dB")
    site = load_site_arg(args.site, args)
    fan = trace_rays(site, source_depth_m=args.source_depth_m, angles_deg=angles, max_range_m=args.max_range_m)
    if args.plot is not None:
        from aculink.plots.rays import plot_rays

        eigen = eigenray_fan(site, fan, args.dynamic_range_db) if args.eigenrays else None
        plot_rays(site, fan, args.plot, shade=args.shade, dynamic_range_db=args.dynamic_range_db,
                  eigenrays=eigen, overwrite=args.overwrite)
    meanings = TERMINATION_MEANINGS.split()
    term = fan.termination.values
    counts = {meanings[k]: int(np.sum(term == k)) for k in range(len(meanings))}
    if args.json:
        print_json({
            "site": site.name, "source_depth_m": fan.attrs["source_depth_m"], "max_range_m": fan.attrs["max_range_m"],
            "rays": [{"launch_angle_deg": float(a), "surface_bounces": int(s), "bottom_bounces": int(b),
                      "caustics": int(c), "termination": meanings[int(t)], "end_range_m": float(e)}
                     for a, s, b, c, t, e in zip(fan.launch_angle_deg.values, fan.surface_bounces.values,
                                                 fan.bottom_bounces.values, fan.caustics.values, term,
                                                 fan.end_range_m.values)],
            "termination_counts": counts, "plot": args.plot})
        return 0
    print(f"{site.name}: {fan.sizes['ray']} rays from {fan.attrs['source_depth_m']:g} m, "
          f"{angles.min():g} to {angles.max():g} deg, out to {fan.attrs['max_range_m'] / 1000:g} km")
    for name, n in counts.items():
        if n:
            print(f"  {n:5d} {name.replace('_', ' ')}")
    print(f"  bounces per ray: surface {int(fan.surface_bounces.min())}-{int(fan.surface_bounces.max())}, "
          f"seabed {int(fan.bottom_bounces.min())}-{int(fan.bottom_bounces.max())}")
    if args.plot is not None:
        print(f"Plot written to {args.plot}")
    from aculink.cautions import CAUTION_LINE

    print(CAUTION_LINE)
    return 0


def eigenray_fan(site, fan, dynamic_range_db=40.0):
    """The eigenrays from the fan's source to the site's receiver, traced as paths (None if out of reach)."""
    import numpy as np

    from aculink.propagation import find_arrivals, trace_rays

    zs = float(fan.attrs["source_depth_m"])
    rx = site.receiver
    if rx.range_m > float(fan.attrs["max_range_m"]):
        return None
    arr = find_arrivals(site, rx.range_m, rx.depth_m, source_depth_m=zs, dynamic_range_db=dynamic_range_db)
    angles = arr.launch_angle_deg.values.ravel()
    angles = angles[np.isfinite(angles)]
    if angles.size == 0:
        return None
    return trace_rays(site, source_depth_m=zs, angles_deg=angles, max_range_m=rx.range_m)
