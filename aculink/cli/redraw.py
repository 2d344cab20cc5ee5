"""``aculink redraw RESULT --plot FILE.png``: draw a picture again from a result file, without recomputing.

A sweep NetCDF (``aculink sweep -o``) gives the range x depth rate map; a plan JSON (``aculink plan
--json > plan.json``) gives rate against range. The site comes from the file itself (a sweep
stores the whole site file; a plan JSON stores what its picture needs), or from ``--site``.
"""

from __future__ import annotations

from aculink.cli._common import load_site_arg

__all__ = ["register", "run", "stored_site", "redraw_sweep", "plan_dataset", "redraw_plan"]


def register(subparsers) -> None:
    p = subparsers.add_parser(
        "redraw", help="draw the picture of a sweep NetCDF or a plan JSON again, without recomputing",
        description="Read a result written earlier and draw its picture again: the rate map of a "
        "sweep NetCDF (aculink sweep -o OUT.nc) or rate against range of a plan JSON (aculink plan "
        "--json > plan.json). Nothing is recomputed, so it takes a second whatever the sweep cost.")
    p.add_argument("result", metavar="RESULT", help="a sweep .nc or a plan .json file")
    p.add_argument("--plot", required=True, metavar="FILE.png", help="the picture to write")
    p.add_argument("--site", default=None, metavar="SITE",
                   help="site file (TOML) to draw the seabed from, in place of the one stored in a sweep file")
    p.add_argument("--overwrite", action="store_true", help="replace an existing --plot file")
    p.set_defaults(func=run)


def run(args) -> int:
    from pathlib import Path

    from aculink.errors import AculinkError
    from aculink.io.reports import written_lines

    suffix = Path(args.result).suffix.lower()
    if suffix == ".nc":
        redraw_sweep(args)
    elif suffix == ".json":
        redraw_plan(args)
    elif suffix == ".csv":
        raise AculinkError(f"RESULT = '{args.result}': a plan CSV holds neither the receiver depth nor each "
                           "receiver's rate; redraw from the JSON of the same plan (aculink plan --json > plan.json)")
    else:
        raise AculinkError(f"RESULT = '{args.result}': expected a sweep .nc or a plan .json file")
    for line in written_lines([args.plot]):
        print(line)
    return 0


def stored_site(ds, result):
    """The site a sweep file was computed for, rebuilt from its ``site_text`` attribute."""
    from pathlib import Path

    from aculink.errors import AculinkError
    from aculink.site.loader import site_from_dict, tomllib  # tomli before Python 3.11

    text = ds.attrs.get("site_text") or ""
    if not text:
        raise AculinkError(f"RESULT = '{result}': the file stores no site; give the site file with --site")
    path = ds.attrs.get("site_path") or ""
    base = Path(path).parent if path else Path(result).parent
    try:
        data = tomllib.loads(text)
        return site_from_dict(data, base_dir=base, name=Path(path).stem if path else "site", text=text,
                              path=path or None)
    except (tomllib.TOMLDecodeError, AculinkError, OSError) as exc:
        raise AculinkError(f"RESULT = '{result}': its stored site cannot be rebuilt here ({exc}); give the "
                           "site file with --site") from None


def redraw_sweep(args) -> None:
    import xarray as xr

    from aculink.errors import AculinkError
    from aculink.plots.plan import plot_rate_map

    try:
        with xr.open_dataset(args.result) as opened:
            ds = opened.load()
    except (OSError, ValueError) as exc:
        if isinstance(exc, FileNotFoundError):
            raise
        raise AculinkError(f"RESULT = '{args.result}': not a NetCDF file aculink can read ({exc})") from None
    if "net_bit_rate_bps" not in ds or not {"range", "depth"} <= set(ds["net_bit_rate_bps"].dims):
        raise AculinkError(f"RESULT = '{args.result}': not an aculink sweep (no net_bit_rate_bps over range x depth)")
    site = load_site_arg(args.site) if args.site else stored_site(ds, args.result)
    plot_rate_map(ds, site, args.plot)


def plan_dataset(doc):
    """The plan picture's dataset rebuilt from a plan JSON document (see :func:`aculink.io.reports.plan_document`)."""
    import numpy as np
    import xarray as xr

    rows = doc["rows"]
    receivers = [str(r) for r in doc["receivers"]]

    def num(v):
        return np.nan if v is None else float(v)

    by_rx = np.array([[num((row.get("net_bit_rate_by_receiver_bps") or {}).get(rx)) for rx in receivers]
                      for row in rows])
    attrs = {k: doc[k] for k in ("receiver_depth_m", "source_depth_m", "target_ber", "margin_db")}
    return xr.Dataset({"net_bit_rate_bps": ("range", np.array([num(r["net_bit_rate_bps"]) for r in rows])),
                       "net_bit_rate_by_receiver_bps": (("range", "receiver"), by_rx.reshape(len(rows), len(receivers)))},
                      coords={"range": np.array([float(r["range_m"]) for r in rows]), "receiver": receivers},
                      attrs=attrs)


def redraw_plan(args) -> None:
    import json

    from aculink.errors import AculinkError
    from aculink.plots.plan import plot_plan

    try:
        with open(args.result, encoding="utf-8") as f:
            doc = json.load(f)
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise AculinkError(f"RESULT = '{args.result}': not a JSON file ({exc})") from None
    need = ("rows", "receivers", "receiver_depth_m", "source_depth_m", "target_ber", "margin_db", "envelope_km_kbps")
    if not isinstance(doc, dict) or doc.get("kind") != "aculink plan" or any(k not in doc for k in need):
        raise AculinkError(f"RESULT = '{args.result}': not the JSON of aculink plan (aculink plan --json > plan.json)")
    if not doc["rows"]:
        raise AculinkError(f"RESULT = '{args.result}': the plan has no rows to draw")
    try:
        ds = plan_dataset(doc)
    except (KeyError, TypeError, ValueError) as exc:
        raise AculinkError(f"RESULT = '{args.result}': a row is not as aculink plan writes it ({exc})") from None
    site = load_site_arg(args.site) if args.site else doc.get("site") or "plan"
    plot_plan(ds, site, args.plot, envelope=(float(doc["envelope_km_kbps"]), str(doc.get("envelope_water", ""))))
