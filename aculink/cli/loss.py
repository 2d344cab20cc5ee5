"""``aculink loss SITE``: the transmission-loss field over range and depth."""

from __future__ import annotations

import re

from aculink.cli._common import (add_site_argument, check_plot_path, load_site_arg, parse_count_span, parse_span,
                                 print_json)

from aculink.cautions import CAUTION_LINE as CAUTION

__all__ = ["register", "labelled", "run"]


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "loss",
        help="compute (and draw) transmission loss over range and depth, dB re 1 m",
        description="Coherent and incoherent transmission loss on a range x depth grid from Gaussian "
        "beams (finite at caustics and in shadow zones, with the reflected part of beams that straddle "
        "the surface or the seabed). With --plot, draw the field with the seabed; with -o, write the "
        "grid to a NetCDF file; with --json, print it.",
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
    parser.add_argument("--angles-deg", default=None, metavar="START:STOP:COUNT",
                        help="launch angles of the beam fan, deg below the horizontal, within -89:89 (default "
                        "-89 to 89 deg, at most 0.1 deg apart and finer for long ranges in shallow water)")
    parser.add_argument("--incoherent", action="store_true", help="draw the incoherent TL instead of the coherent")
    parser.add_argument("--plot", metavar="FILE.png", help="draw the TL field to this PNG file")
    parser.add_argument("-o", "--out", default=None, metavar="FILE.nc",
                        help="write the TL grid to this NetCDF file (CF conventions)")
    parser.add_argument("--overwrite", action="store_true", help="replace an existing --plot or --out file")
    parser.add_argument("--json", action="store_true",
                        help="print a summary and the whole grid (ranges, depths, both TLs) as one JSON object")
    # let a span that starts with a minus sign ("-60:60:1201") be an option value, as in `aculink rays`
    parser._negative_number_matcher = re.compile(r"^-\d+$|^-\d*\.\d+$|^-[\d.]+:[-\d.:]+$")
    parser.set_defaults(func=run)


def _check_out_path(args) -> None:
    """Refuse an --out that is not .nc, that exists without --overwrite, or whose folder is missing."""
    from pathlib import Path

    from aculink.errors import AculinkError
    from aculink.io.atomic import check_output_path

    if args.out is None:
        return
    if Path(args.out).suffix.lower() != ".nc":
        raise AculinkError(f"--out = '{args.out}': expected a file name ending in .nc")
    try:
        check_output_path(args.out, overwrite=args.overwrite)
    except AculinkError as exc:
        raise AculinkError(f"--out: {exc}") from None


def _fan(args):
    """The --angles-deg fan (None: the library's default), each angle within +-89 deg."""
    if args.angles_deg is None:
        return None
    from aculink.errors import AculinkError
    from aculink.propagation.rays import MAX_LAUNCH_DEG

    angles = parse_count_span(args.angles_deg, "--angles-deg")
    if len(set(angles.tolist())) < 2:
        raise AculinkError(f"--angles-deg = '{args.angles_deg}': a beam fan needs at least 2 launch angles, and they must differ")
    bad = angles[abs(angles) > MAX_LAUNCH_DEG]
    if bad.size:
        raise AculinkError(f"--angles-deg = {bad[0]:g} deg: allowed range is "
                           f"[{-MAX_LAUNCH_DEG:g}, {MAX_LAUNCH_DEG:g}] deg")
    return angles


def labelled(tl, site):
    """The TL dataset with the attributes of an aculink output file (CF, version, caution, site text)."""
    from aculink import __version__
    from aculink.cautions import CAUTION as CAUTION_TEXT

    out = tl.copy()
    out.attrs.update({"title": "aculink transmission loss", "Conventions": "CF-1.10", "aculink_version": __version__,
                      "caution": CAUTION_TEXT, "site_name": site.name, "site_text": getattr(site, "text", "") or ""})
    out["range"].attrs.setdefault("standard_name", "projection_x_coordinate")
    out["depth"].attrs.setdefault("standard_name", "depth")
    return out


def run(args) -> int:
    import numpy as np

    from aculink.io.reports import format_loss, loss_summary, written_lines
    from aculink.propagation.loss import transmission_loss

    check_plot_path(args)
    _check_out_path(args)
    angles = _fan(args)
    site = load_site_arg(args.site, args)
    r_end = min(site.receiver.range_m * 1.25, site.seabed.max_range_m)
    ranges = (parse_span(args.ranges_m, "--ranges-m", positive=True) if args.ranges_m
              else np.linspace(r_end / 200, r_end, 200))
    depths = (parse_span(args.depths_m, "--depths-m") if args.depths_m
              else np.linspace(0.0, site.seabed.max_depth_m, 121)[1:])
    tl = transmission_loss(site, ranges, depths, args.frequency_hz, source_depth_m=args.source_depth_m,
                           angles_deg=angles)
    if args.out is not None:
        from aculink.io.netcdf import write_netcdf

        write_netcdf(labelled(tl, site), args.out, overwrite=args.overwrite)
    if args.plot is not None:
        from aculink.plots.loss import plot_loss

        plot_loss(site, tl, args.plot, incoherent=args.incoherent, overwrite=args.overwrite)
    summary = loss_summary(site, tl)
    summary.update({"plot": args.plot, "out": args.out})
    if args.json:
        # the grid: TL[range][depth], dB re 1 m, null below the seabed
        summary.update({"units": "dB re 1 m", "range_m": tl.range.values, "depth_m": tl.depth.values,
                        "tl_coherent_db": tl.tl_coherent_db.values, "tl_incoherent_db": tl.tl_incoherent_db.values,
                        "caution": CAUTION})
        print_json(summary)
        return 0
    print(format_loss(summary))
    for line in written_lines([args.out, args.plot]):
        print(line)
    print(CAUTION)
    return 0
