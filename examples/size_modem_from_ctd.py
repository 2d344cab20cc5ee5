"""Size a modem for a site described by a CTD cast.

The bundled summer-shelf site reads its sound speed from a CTD cast (temperature and salinity
against depth, through TEOS-10). This script prints the site summary line that matters, then
the range-versus-rate table, and the longest range at which each data rate is still workable.

    python examples/size_modem_from_ctd.py [--ranges-m 1000:6000:1000]

The numbers are planning estimates for an illustrative site, not a substitute for sea trials.
"""

import argparse

import numpy as np

from aculink.cautions import CAUTION
from aculink.cli._common import parse_span
from aculink.planning.table import plan_rows, plan_rates
from aculink.site.bundled import bundled_site_path
from aculink.site.loader import load_site


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--ranges-m", default="1000:6000:500")
    args = parser.parse_args(argv)

    site = load_site(bundled_site_path("shelf_summer"))
    profile = site.water.profile
    print(f"{site.name}: {profile.depth_m.size} CTD-derived nodes, sound speed "
          f"{profile.speed_mps.min():.1f}-{profile.speed_mps.max():.1f} m/s ({profile.source})")
    plan = plan_rates(site, parse_span(args.ranges_m, "--ranges-m"))
    rows = plan_rows(plan)
    print(f"{'range km':>8}  {'net kbit/s':>10}  {'modulation':>10}  {'receiver':>8}  {'margin dB':>9}")
    for r in rows:
        rate = r["net_bit_rate_bps"] or 0.0
        print(f"{r['range_m'] / 1000:8.1f}  {rate / 1000:10.2f}  {r['modulation'] or '-':>10}  "
              f"{r['receiver'] or '-':>8}  {r['margin_db'] if r['margin_db'] is not None else float('nan'):9.1f}")
    rates = np.array([r["net_bit_rate_bps"] or 0.0 for r in rows])
    ranges = np.array([r["range_m"] for r in rows])
    for wanted in (1000.0, 2000.0, 5000.0):
        ok = ranges[rates >= wanted]
        reach = f"out to {ok.max() / 1000:g} km" if ok.size else "at none of these ranges"
        print(f"{wanted / 1000:g} kbit/s or more: workable {reach}")
    print(CAUTION)
    return plan


if __name__ == "__main__":
    main()
