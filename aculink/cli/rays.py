"""``aculink rays SITE``: trace a fan of rays and draw it over the profile and the seabed."""

from __future__ import annotations

from aculink.cli._common import add_site_argument, check_plot_path, load_site_arg, parse_count_span, print_json

__all__ = ["register", "run"]


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
    from aculink.cautions import CAUTION_LINE
    from aculink.io.reports import format_rays, rays_summary, written_lines
    from aculink.propagation.rays import trace_rays

    check_plot_path(args)
    angles = parse_count_span(args.angles_deg, "--angles-deg")
    site = load_site_arg(args.site, args)
    fan = trace_rays(site, source_depth_m=args.source_depth_m, angles_deg=angles, max_range_m=args.max_range_m)
    if args.plot is not None:
        from aculink.plots.rays import eigenray_paths, plot_rays

        eigen = eigenray_paths(site, fan, args.dynamic_range_db) if args.eigenrays else None
        plot_rays(site, fan, args.plot, shade=args.shade, dynamic_range_db=args.dynamic_range_db,
                  eigenrays=eigen, overwrite=args.overwrite)
    summary = rays_summary(site, fan)
    if args.json:
        summary["plot"] = args.plot
        print_json(summary)
        return 0
    print(format_rays(summary))
    for line in written_lines([args.plot]):
        print(line)
    print(CAUTION_LINE)
    return 0
