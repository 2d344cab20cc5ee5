"""Compare the summer and winter profiles of one shelf site.

Summer stratification bends sound down into the seabed; winter mixing leaves the water nearly
isovelocity but brings wind and waves. This script plans both seasons over the same ranges and
prints the workable net bit rate side by side with the band SNR and multipath spread.

    python examples/summer_vs_winter.py [--ranges-m 1000:6000:1000]
"""

import argparse

from aculink.cautions import CAUTION
from aculink.cli._common import parse_span
from aculink.planning.table import plan_rates, plan_rows
from aculink.site.bundled import bundled_site_path
from aculink.site.loader import load_site


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--ranges-m", default="1000:6000:1000")
    args = parser.parse_args(argv)
    ranges = parse_span(args.ranges_m, "--ranges-m")

    seasons = {}
    for name in ("shelf_summer", "shelf_winter"):
        site = load_site(bundled_site_path(name))
        seasons[name] = (site, plan_rows(plan_rates(site, ranges)))
    print(f"{'range km':>8} | {'summer kbit/s':>13} {'SNR dB':>7} {'spread ms':>9} | "
          f"{'winter kbit/s':>13} {'SNR dB':>7} {'spread ms':>9}")
    for i, r in enumerate(ranges):
        cells = []
        for name in ("shelf_summer", "shelf_winter"):
            row = seasons[name][1][i]
            rate = (row["net_bit_rate_bps"] or 0.0) / 1000
            snr = row["snr_band_db"] if row["snr_band_db"] is not None else float("nan")
            spread = (row["spread_90_s"] or float("nan")) * 1000
            cells.append(f"{rate:13.2f} {snr:7.1f} {spread:9.2f}")
        print(f"{r / 1000:8.1f} | " + " | ".join(cells))
    print(CAUTION)
    return seasons


if __name__ == "__main__":
    main()
