"""``aculink demo``: the whole chain on a bundled site, written into one folder with a page.

Site summary, ray fan, arrivals, impulse response, receivers compared by BER against SNR, the
range-versus-rate table and a small range x depth sweep; then ``index.html`` showing them all
and a two-line conclusion. The steps call the same library functions as the other commands.
"""

from __future__ import annotations

import time
from pathlib import Path

__all__ = ["DEFAULT_SITE", "DEFAULT_OUT", "register", "check_folder", "build_folder", "publish_folder",
           "Geometry", "run", "step_site", "step_rays", "step_arrivals", "step_channel", "step_plan",
           "step_receivers", "step_sweep", "demo_symbol_rate"]

DEFAULT_SITE = "shelf_summer"
DEFAULT_OUT = "aculink-demo"


def register(subparsers) -> None:
    p = subparsers.add_parser(
        "demo", help="run the whole chain on a bundled site and write a folder of results with index.html",
        description="Runs site -> rays -> arrivals -> channel -> receivers -> range-versus-rate table -> "
        "range x depth sweep on a bundled example site, writes pictures, tables, NetCDF and an "
        "index.html page into the output folder, and prints a short conclusion. Ranges and depths are "
        "chosen from the site (its track, seabed and receiver). The folder appears only when every "
        "step has succeeded. Planning estimates only.")
    p.add_argument("--out", default=DEFAULT_OUT, metavar="DIR", help=f"output folder (default ./{DEFAULT_OUT})")
    p.add_argument("--site", default=DEFAULT_SITE, metavar="NAME",
                   help=f"bundled site to run on (default {DEFAULT_SITE}); see environments/")
    p.add_argument("--overwrite", action="store_true", help="replace an existing, non-empty folder")
    p.add_argument("--seed", type=int, default=0, help="seed of the Monte Carlo runs (default 0)")
    p.add_argument("--quick", action="store_true",
                   help="smaller grids and shorter Monte Carlo runs (a check that everything works, in seconds)")
    p.add_argument("--quiet", action="store_true", help="print only the conclusion and the caution")
    p.set_defaults(func=run)


def check_folder(out: Path, overwrite: bool) -> Path:
    """Refuse, before any work, an output that is a file or a non-empty folder (without --overwrite)."""
    from aculink.errors import AculinkError

    if out.exists() and not out.is_dir():
        raise AculinkError(f"--out {out} exists and is not a folder")
    if out.is_dir() and any(out.iterdir()) and not overwrite:
        raise AculinkError(f"--out {out} exists and is not empty: pass --overwrite or choose another folder")
    parent = out.parent if str(out.parent) else Path(".")
    if not parent.is_dir():
        raise AculinkError(f"--out {out}: the folder {parent} does not exist")
    return out


def build_folder(out: Path):
    """A new hidden folder beside ``out`` to build the results in."""
    import tempfile

    from aculink.errors import AculinkError

    try:
        return Path(tempfile.mkdtemp(prefix=f".{out.name}.", suffix=".part", dir=out.parent))
    except OSError as exc:
        raise AculinkError(f"--out {out}: cannot create a folder in {out.parent} ({exc.strerror})") from None


def publish_folder(tmp: Path, out: Path) -> None:
    """Put the finished folder in place of ``out`` (an old one is removed only after the swap)."""
    import os
    import shutil

    from aculink.io.atomic import current_umask

    os.chmod(tmp, 0o777 & ~current_umask())  # mkdtemp makes it private
    old = None
    if out.exists():
        old = out.with_name(f".{out.name}.old-{os.getpid()}")
        os.replace(out, old)
    os.replace(tmp, out)
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)


class Geometry:
    """Where the demo looks, chosen from the site: ranges along its track, depths in its water."""

    def __init__(self, site, quick: bool = False):
        import numpy as np

        bed, rx = site.seabed, site.receiver
        end = min(2.5 * rx.range_m, 10000.0)
        if bed.range_m.size > 1:
            end = min(end, float(bed.max_range_m))
        self.fan_range_m = min(1.25 * rx.range_m, end) if bed.range_m.size > 1 else 1.25 * rx.range_m
        n_plan = 6 if quick else 20
        ranges = np.linspace(end / n_plan, end, n_plan)
        # the table is at the receiver's depth: keep the ranges where the water is deep enough
        clearance = max(0.5, 0.05 * rx.depth_m)
        deep = np.asarray(bed.depth_at(ranges), dtype=float) > rx.depth_m + clearance
        if deep.sum() >= 2:
            self.plan_ranges_m, self.plan_depth_m = ranges[deep], rx.depth_m
        else:
            self.plan_ranges_m = ranges
            self.plan_depth_m = round(0.5 * float(np.min(bed.depth_at(ranges))), 1)
        n_r, n_z = (4, 3) if quick else (8, 5)
        self.sweep_ranges_m = np.linspace(end / n_r, end, n_r)
        bottom = np.asarray(bed.depth_at(self.sweep_ranges_m), dtype=float)
        # depths over the deepest water swept: cells under the seabed nearer in are marked as such
        self.sweep_depths_m = np.round(np.linspace(0.1, 0.9, n_z) * float(bottom.max()), 1)
        self.fan_angles_deg = np.linspace(-15.0, 15.0, 31 if quick else 61)
        self.symbols = 1000 if quick else 4000
        # the availability table: a few of the plan's ranges, a small ensemble (the demo is a tour,
        # `plan --availability` is the real thing); the attribution only in the full demo
        step = max(1, self.plan_ranges_m.size // (3 if quick else 6))
        self.availability_ranges_m = self.plan_ranges_m[step - 1::step]
        self.members = 4 if quick else 8
        self.attribution = not quick
        self.snrs_db = np.arange(4.0, 25.0, 10.0 if quick else 4.0)


def run(args) -> int:
    from aculink.cautions import CAUTION_LINE
    from aculink.io.report import write_index
    from aculink.io.reports import demo_conclusion
    from aculink.site.bundled import bundled_site_path
    from aculink.site.loader import load_site

    out = check_folder(Path(args.out), args.overwrite)
    site = load_site(bundled_site_path(args.site))
    args._geometry = Geometry(site, args.quick)
    say = (lambda *a, **k: None) if args.quiet else print
    started = time.perf_counter()
    sections = []
    tmp = build_folder(out)
    try:
        for step in (step_site, step_rays, step_arrivals, step_channel, step_plan, step_availability,
                     step_receivers, step_sweep):
            t0 = time.perf_counter()
            new = step(site, tmp, args, sections)
            sections.extend(new)
            say(f"  {step.__name__.removeprefix('step_'):<12} {time.perf_counter() - t0:5.1f} s  "
                + ", ".join(name for _, _, name in new), flush=True)
        text = demo_conclusion(site, tmp / "plan.csv", args._geometry.plan_ranges_m, args._geometry.plan_depth_m)
        write_index(tmp, f"aculink demo: {site.name}", sections, conclusion=text, caution=CAUTION_LINE)
        publish_folder(tmp, out)
    except BaseException:
        import shutil

        shutil.rmtree(tmp, ignore_errors=True)
        raise
    say(f"Wrote {len(sections) + 1} files into {out}/ in {time.perf_counter() - started:.0f} s:")
    for heading, _, name in sections:
        say(f"  {name:<22} {heading}")
    say(f"  {'index.html':<22} all of the above on one page")
    say()
    print(text)
    print(CAUTION_LINE)
    return 0


# Each step writes its files and returns (heading, one-line explanation, file name) per file.

def step_site(site, out, args, done):
    from aculink.io.atomic import write_text_atomic
    from aculink.plots.site import plot_site
    from aculink.site.summary import format_summary, summarize_site

    write_text_atomic(out / "site_summary.txt", format_summary(summarize_site(site)) + "\n")
    plot_site(site, out / "site.png")
    return [("Site summary", "What aculink read from the site file: profile, seabed, surface, absorption, "
             "noise, equipment and band; check it before trusting anything else", "site_summary.txt"),
            ("Profile and track", "Sound speed against depth beside the seabed along the track, with the "
             "source and receiver", "site.png")]


def step_rays(site, out, args, done):
    import numpy as np

    from aculink.plots.rays import eigenray_paths, plot_rays
    from aculink.propagation import trace_rays

    geo = args._geometry
    fan = trace_rays(site, angles_deg=geo.fan_angles_deg, max_range_m=geo.fan_range_m)
    plot_rays(site, fan, out / "rays.png", eigenrays=eigenray_paths(site, fan))
    step = np.diff(geo.fan_angles_deg)[0]
    return [("Ray fan", f"Rays launched every {step:g} degree from the source, each shaded by its level below the "
             "strongest ray at the same range, eigenrays to the receiver in black: "
             "how the profile bends sound and where it meets the boundaries", "rays.png")]


def step_arrivals(site, out, args, done):
    from aculink.io.atomic import write_text_atomic
    from aculink.io.reports import arrivals_table, format_arrivals
    from aculink.io.tables import write_csv
    from aculink.propagation.eigenrays import solve_arrivals

    table = arrivals_table(*solve_arrivals(site))
    write_text_atomic(out / "arrivals.txt", format_arrivals(table) + "\n")
    keys = list(table["arrivals"][0]) if table["arrivals"] else ["delay_s"]
    write_csv(out / "arrivals.csv", keys, table["arrivals"])
    return [("Eigenrays at the receiver", "Every significant path: delay after the first arrival, level "
             "(dB re 1 m), phase, angles and bounces", "arrivals.txt"),
            ("Eigenrays (CSV)", "The same arrivals for a spreadsheet or script", "arrivals.csv")]


def step_channel(site, out, args, done):
    from aculink.channel import channel_for_site, link_budget
    from aculink.io.atomic import write_text_atomic
    from aculink.io.reports import channel_report, format_channel
    from aculink.plots.channel import plot_channel

    channel = channel_for_site(site)
    budget = link_budget(site, channel)
    write_text_atomic(out / "channel.txt", format_channel(channel_report(site, channel, budget)) + "\n")
    plot_channel(channel, out / "channel.png", site=site)
    args._channel, args._budget = channel, budget
    return [("Channel and link budget", "Delay spread, coherence bandwidth, transmission loss, noise and "
             "the sonar-equation SNR in the band", "channel.txt"),
            ("Impulse and frequency response", "What the modem sees: the baseband impulse response with each "
             "arrival labelled by its surface (S) and seabed (B) bounces, and |H(f)| over the band",
             "channel.png")]


def step_plan(site, out, args, done):
    from aculink.io.atomic import write_text_atomic
    from aculink.io.reports import format_plan
    from aculink.io.tables import write_csv
    from aculink.planning.table import ROW_KEYS, plan_rates, plan_rows
    from aculink.plots.plan import plot_plan

    geo = args._geometry
    ds = plan_rates(site, geo.plan_ranges_m, depth_m=geo.plan_depth_m)
    rows = plan_rows(ds)
    write_text_atomic(out / "plan.txt", format_plan(site, ds, rows) + "\n")
    write_csv(out / "plan.csv", ROW_KEYS + ("error",), rows)
    plot_plan(ds, site, out / "plan.png")
    args._plan = ds
    return [("Range-versus-rate table", "At each range the highest net bit rate whose predicted BER meets "
             "the target with the margin to spare, and how it is reached", "plan.txt"),
            ("Range-versus-rate table (CSV)", "The same table for machines", "plan.csv"),
            ("Rate against range", "Best net bit rate per receiver against range, with the rate x range "
             "envelope of fielded systems as a dashed reference", "plan.png")]


def step_availability(site, out, args, done):
    from aculink.io.atomic import write_text_atomic
    from aculink.io.reports import availability_csv_keys, format_availability
    from aculink.io.tables import write_csv
    from aculink.planning import availability as av
    from aculink.plots.availability import plot_availability

    if site.variability is None:
        return []
    geo = args._geometry
    ds = av.plan_availability(site, geo.availability_ranges_m, depth_m=geo.plan_depth_m, probability=0.9,
                              members=geo.members, attribution=geo.attribution)
    rows = av.availability_rows(ds)
    write_text_atomic(out / "availability.txt", format_availability(ds, rows) + "\n")
    write_csv(out / "availability.csv", availability_csv_keys(rows), rows)
    plot_availability(ds, site, out / "availability.png")
    return [("Availability table", f"The rate one modem setting sustains 50 %, 90 % and 99 % of the time over the "
             f"site's declared variability ({int(ds.attrs['members'])} members here; `plan --availability` "
             "draws more)", "availability.txt"),
            ("Availability table (CSV)", "The same table for machines", "availability.csv"),
            ("Availability band", "Net rate against range available 50-99 % of the time, the median member "
             "and the nominal site", "availability.png")]


def step_receivers(site, out, args, done):
    import numpy as np
    import xarray as xr

    from aculink.plots.ber import plot_ber_curves
    from aculink.plots.style import geometry_text
    from aculink.modem import simulate_link

    channel = args._channel
    rate = demo_symbol_rate(site, args._plan)
    snrs = args._geometry.snrs_db
    receivers = ["none", "linear", "dfe"]
    names = ("ber", "ber_low", "ber_high", "ber_predicted")
    data = {k: np.zeros((len(receivers), snrs.size)) for k in names}
    for i, rx in enumerate(receivers):
        for j, snr in enumerate(snrs):
            r = simulate_link(channel, symbol_rate_baud=rate, modulation="qpsk", receiver=rx, snr_db=float(snr),
                              rolloff=site.modem.rolloff, n_symbols=args._geometry.symbols, max_errors=100,
                              seed=args.seed + 100 * i + j)
            for k in names:
                data[k][i, j] = getattr(r, k)
    curves = xr.Dataset({k: (("receiver", "snr"), v, {"units": "1"}) for k, v in data.items()},
                        coords={"receiver": receivers,
                                "snr": ("snr", snrs, {"units": "dB", "long_name": "band SNR"})})
    curves.rename(snr="snr_band_db").to_dataframe().to_csv(out / "ber_vs_snr.csv")
    detail = (f"QPSK at {rate:g} Bd, " + geometry_text(site.source.depth_m, site.receiver.range_m,
                                                        site.receiver.depth_m))
    plot_ber_curves(curves, out / "ber_vs_snr.png", site=site, detail=detail)
    args._curves = curves
    return [("Receivers compared", "Bit error rate against band SNR on this channel for the receiver "
             "without equalizer, the linear equalizer and the adaptive DFE with PLL: Monte Carlo with 95% "
             "intervals, and the analytic prediction dashed", "ber_vs_snr.png"),
            ("Receivers compared (CSV)", "The same curves as numbers", "ber_vs_snr.csv")]


def step_sweep(site, out, args, done):
    import xarray as xr

    from aculink.planning import run_sweep
    from aculink.plots.plan import plot_rate_map

    geo = args._geometry
    run_sweep(site, geo.sweep_ranges_m, geo.sweep_depths_m, out / "sweep.nc", workers=1, quiet=True,
              overwrite=True)
    with xr.open_dataset(out / "sweep.nc") as ds:
        plot_rate_map(ds.load(), site, out / "sweep.png")
    return [("Range x depth sweep (NetCDF)", "Best net bit rate and its configuration over a small range x "
             "depth grid, labelled with units; open it with xarray.open_dataset", "sweep.nc"),
            ("Rate map", "Best net bit rate over range and receiver depth", "sweep.png")]


def demo_symbol_rate(site, plan) -> float:
    """Symbol rate for the receiver comparison: the DFE's choice at the site's receiver range."""
    import numpy as np

    rates = plan["best_symbol_rate_baud"].values
    r = plan["range"].values
    i = int(np.argmin(np.abs(r - site.receiver.range_m)))
    if np.isfinite(rates[i]) and rates[i] > 0:
        return float(rates[i])
    return float(site.modem.bandwidth_hz / (1.0 + site.modem.rolloff) / 2.0)
