"""Benchmark of the planner: a plan table, a 40 x 20 sweep serial and on 2 local workers, memory.

Run from the project root:  python tests/benchmarks/bench_planning.py

Targets (2 cores): plan table (24 ranges, all modulations and receivers, analytic, ray
tracing included) under 5 s warm; 40-range x 20-depth sweep under 30 s warm; the 2-worker
local cluster at least 1.5x faster than serial; memory that does not grow with the number of
chunks written. Baselines measured in the same run: the table with one ray fan per range
(``channel_for_site`` per receiver, the obvious way) against one fan for all ranges, and the
serial sweep against the Dask one.
"""

from __future__ import annotations

import gc
import os
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from aculink.planning import plan_rates, run_sweep  # noqa: E402
from aculink.planning import checkpoint as ckpt_mod  # noqa: E402
from aculink.modem.media import ChannelMedium  # noqa: E402
from aculink.planning import search  # noqa: E402
from aculink.planning.sweep import candidate_grid  # noqa: E402
from aculink.site.bundled import bundled_site_path  # noqa: E402
from aculink.site.loader import load_site  # noqa: E402

SITE = "shelf_summer"
PLAN_RANGES = np.arange(250.0, 6000.1, 250.0)          # 24 ranges
SWEEP_RANGES = np.linspace(150.0, 6000.0, 40)           # 40 ranges
SWEEP_DEPTHS = np.linspace(3.0, 57.0, 20)               # 20 depths (seabed 58-62 m)


def rss_mb() -> float:
    with open("/proc/self/status") as fh:
        for line in fh:
            if line.startswith("VmRSS:"):
                return int(line.split()[1]) / 1024.0
    return float("nan")


def timed(func, *args, **kw):
    t = time.perf_counter()
    out = func(*args, **kw)
    return time.perf_counter() - t, out


def plan_one_fan_per_range(site, ranges, depth):
    """Baseline: the same search, but a separate ray fan for every range."""
    for r in ranges:
        search.evaluate_block(site, [r], [depth], grid, site.modem.target_ber, site.modem.margin_db)


def main():
    global grid
    site = load_site(bundled_site_path(SITE))
    depth = float(site.receiver.depth_m)
    grid = candidate_grid(site)
    print(f"site {SITE}: {len(grid.receivers)} receivers x {len(grid.symbol_rates_baud)} symbol rates x "
          f"{len(grid.modulations)} modulations = {np.prod(grid.shape)} candidates per receiver position")

    plan_rates(site, PLAN_RANGES[:3], depth_m=depth)                       # warm numba caches
    t_plan, ds = timed(plan_rates, site, PLAN_RANGES, depth_m=depth)
    t_base, _ = timed(plan_one_fan_per_range, site, PLAN_RANGES, depth)
    print(f"plan table, {PLAN_RANGES.size} ranges, one ray fan: {t_plan:.2f} s (target < 5 s: "
          f"{'met' if t_plan < 5 else 'MISSED'}); one fan per range: {t_base:.2f} s; ratio {t_base / t_plan:.2f}x")

    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        run_sweep(site, SWEEP_RANGES[:4], SWEEP_DEPTHS[:4], tmp / "warm.nc", workers=0, quiet=True)
        rss = []
        cache = []  # live channel media: the modem's estimate caches, which live on the channels
        real_save = ckpt_mod.Checkpoint.save

        def save(self, index, arrays):
            out = real_save(self, index, arrays)
            rss.append(rss_mb())
            gc.collect()
            cache.append(sum(isinstance(o, ChannelMedium) for o in gc.get_objects()))
            return out

        ckpt_mod.Checkpoint.save = save
        t_serial, sw = timed(run_sweep, site, SWEEP_RANGES, SWEEP_DEPTHS, tmp / "serial.nc", workers=0, quiet=True)
        ckpt_mod.Checkpoint.save = real_save
        n_chunks = len(rss)
        print(f"sweep {SWEEP_RANGES.size} x {SWEEP_DEPTHS.size}, serial: {t_serial:.2f} s, {n_chunks} chunks "
              f"(target < 30 s: {'met' if t_serial < 30 else 'MISSED'})")
        half = n_chunks // 2
        growth = (rss[-1] - rss[half]) / max(1, n_chunks - 1 - half)
        print(f"RSS after chunk 1: {rss[0]:.0f} MB, after chunk {half + 1}: {rss[half]:.0f} MB, after chunk "
              f"{n_chunks}: {rss[-1]:.0f} MB; growth over the second half {growth * 1024:.0f} kB/chunk; "
              f"live channel media (the modem's per-channel caches) {cache[0]} -> {cache[half]} -> {cache[-1]}")
        t_dask_total, sd = timed(run_sweep, site, SWEEP_RANGES, SWEEP_DEPTHS, tmp / "dask.nc", workers=2, quiet=True)
        import xarray as xr

        same = sw.identical(sd)
        worst = max(float(np.nanmax(np.abs(sw[v].values - sd[v].values) / np.maximum(np.abs(sw[v].values), 1e-300)))
                    for v in sw.data_vars if sw[v].dtype.kind == "f" and np.isfinite(sw[v].values).any())
        print(f"sweep on a 2-worker local cluster (cluster start-up included): {t_dask_total:.2f} s; "
              f"speed-up over serial {t_serial / t_dask_total:.2f}x (target >= 1.5x: "
              f"{'met' if t_serial / t_dask_total >= 1.5 else 'MISSED'}); datasets "
              f"{'identical' if same else f'NOT identical (largest relative difference {worst:.1e})'}")
        n_bad = int((sw["error"] != "").sum())
        print(f"grid points without a result: {n_bad} of {sw['error'].size} (below the seabed or failed)")


if __name__ == "__main__":
    main()
