"""Run a sweep on an existing Dask scheduler.

Give the address of a running scheduler (``dask scheduler`` on one machine and ``dask worker
tcp://host:8786`` on the others); without one the script starts a small local cluster on this
machine so that it runs anywhere. The result is the same dataset a serial run gives.

    python examples/sweep_on_dask_scheduler.py [--scheduler tcp://host:8786] [--out sweep_dask.nc]
"""

import argparse
from pathlib import Path

import xarray as xr

from aculink.cli._common import parse_span
from aculink.planning import run_sweep
from aculink.site.bundled import bundled_site_path
from aculink.site.loader import load_site


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--scheduler", default=None, help="tcp://host:port of a running Dask scheduler")
    parser.add_argument("--out", default="sweep_dask.nc")
    parser.add_argument("--ranges-m", default="1000:4000:1000")
    parser.add_argument("--depths-m", default="10:40:10")
    args = parser.parse_args(argv)

    cluster = None
    address = args.scheduler
    if address is None:
        from distributed import LocalCluster

        cluster = LocalCluster(n_workers=2, threads_per_worker=1, host="127.0.0.1", dashboard_address=None,
                               processes=True)
        address = cluster.scheduler_address
    try:
        site = load_site(bundled_site_path("shelf_summer"))
        out = Path(args.out)
        run_sweep(site, parse_span(args.ranges_m, "--ranges-m"), parse_span(args.depths_m, "--depths-m"), out,
                  scheduler=address, quiet=True, overwrite=True)
    finally:
        if cluster is not None:
            cluster.close()
    with xr.open_dataset(out) as ds:
        print(f"{out} from {address}: dims {dict(ds.sizes)}, best rate "
              f"{float(ds['net_bit_rate_bps'].max()) / 1000:.2f} kbit/s")
    return out


if __name__ == "__main__":
    main()
