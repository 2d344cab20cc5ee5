"""``aculink site FILE``: check a site file and print what a practitioner looks at first."""

from __future__ import annotations

from aculink.cli._common import add_site_argument, check_plot_path, load_site_arg, print_json

__all__ = ["register", "run"]


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "site",
        help="validate a site file and summarise its water, seabed, surface, noise and equipment",
        description="Load and validate a site file, then print the facts to check before trusting "
        "any prediction: sound-speed range, surface duct, sound-channel axis and critical depth, "
        "seabed critical angle and bottom loss, absorption and noise in the modem band, geometry, "
        "and warnings for inputs outside a formula's validity.",
    )
    add_site_argument(parser)
    parser.add_argument("--json", action="store_true", help="print the summary as one JSON object")
    parser.add_argument("--plot", metavar="FILE.png",
                        help="also draw the sound-speed profile beside the seabed along the track")
    parser.add_argument("--overwrite", action="store_true", help="replace an existing --plot file")
    parser.set_defaults(func=run)


def run(args) -> int:
    from aculink.io.reports import written_lines
    from aculink.site.summary import format_summary, summarize_site

    check_plot_path(args)
    site = load_site_arg(args.site, args)
    summary = summarize_site(site)
    if args.plot is not None:
        from aculink.plots.site import plot_site

        plot_site(site, args.plot, overwrite=args.overwrite)
        summary["plot"] = str(args.plot)
    if args.json:
        print_json(summary)
    else:
        print(format_summary(summary))
        for line in written_lines([args.plot]):
            print(line)
    return 0
