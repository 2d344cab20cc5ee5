"""Sweep a depth x range grid and slice the result with xarray.

Runs a resumable sweep of the winter shelf into a NetCDF file (serially here; see
``sweep_on_dask_scheduler.py`` for a cluster), then opens it with xarray and asks the questions
a planner asks: the best depth at each range, and the rate at one depth.

    python examples/sweep_and_slice.py [--out sweep.nc] [--ranges-m ...] [--depths-m ...]
"""

import argparse
from pathlib import Path

import numpy as np
import xarray as xr

from aculink.cli._common import parse_span
from aculink.planning import run_sweep
from aculink.site.bundled import bundled_site_path
from aculink.site.loader import load_site


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", default="sweep.nc")
    parser.add_argument("--ranges-m", default="1000:6000:1000")
    parser.add_argument("--depths-m", default="10:50:10")
    args = parser.parse_args(argv)

    site = load_site(bundled_site_path("shelf_winter"))
    out = Path(args.out)
    run_sweep(site, parse_span(args.ranges_m, "--ranges-m"), parse_span(args.depths_m, "--depths-m"), out,
              workers=1, quiet=True, resume=out.exists())
    with xr.open_dataset(out) as ds:
        rate = ds["net_bit_rate_bps"].load()
        print(f"{out}: dims {dict(ds.sizes)}; rate in {rate.attrs.get('units')}")
        best_depth = rate.fillna(0).idxmax("depth")
        for r in rate["range"].values:
            print(f"  {r / 1000:5.1f} km: best depth {float(best_depth.sel(range=r)):5.1f} m, "
                  f"{float(rate.sel(range=r).max()) / 1000:6.2f} kbit/s")
        mid = float(rate["depth"].values[len(rate["depth"]) // 2])
        at = rate.sel(depth=mid)
        print(f"  at {mid:g} m depth: " + ", ".join(f"{v / 1000:.2f}" for v in np.nan_to_num(at.values)) + " kbit/s")
    return out


if __name__ == "__main__":
    main()
