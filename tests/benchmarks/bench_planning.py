"""Benchmark of the planner: a plan table, a 40 x 20 sweep serial and on 2 local workers, memory.

Run from the project root:  python tests/benchmarks/bench_planning.py

Targets (2 cores): plan table (24 ranges, all modulations and receivers, analytic, ray
tracing included) under 5 s warm; 40-range x 20-depth sweep under 30 s warm; the 2-worker
local cluster at least 1.6x faster than serial, its start-up included; the default choice of
workers never slower than serial; Dask's overhead per task under 5 % of a task; memory that
does not grow with the number of chunks written. Baselines measured in the same run: the
table with one ray fan per range (``channel_for_site`` per receiver, the obvious way) against
one fan for all ranges, the serial sweep against the Dask one, and the planner's receiver
design against the modem stage's reference design on the same chunk. Also printed: the
split of one chunk's time (ray fan, channel, design, the rest of candidate evaluation), the
per-task overhead and the per-worker throughput (the figures the README's cluster sizing uses).
"""

from __future__ import annotations

import gc
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
              f"live channel media (the modem's per-channel caches) {cache[0]} -> {cache[half]} -> {cache[-1]} "
              f"(target: no growth, under 1 MB/chunk and no media kept: "
              f"{'met' if growth < 1.0 and cache[-1] <= cache[half] else 'MISSED'})")
        stats = []
        t_dask_total, sd = timed(run_sweep, site, SWEEP_RANGES, SWEEP_DEPTHS, tmp / "dask.nc", workers=2,
                                 quiet=True, stats_out=stats)
        same = sw.identical(sd)
        worst = max(float(np.nanmax(np.abs(sw[v].values - sd[v].values) / np.maximum(np.abs(sw[v].values), 1e-300)))
                    for v in sw.data_vars if sw[v].dtype.kind == "f" and np.isfinite(sw[v].values).any())
        speed_up = t_serial / t_dask_total
        print(f"sweep on a 2-worker local cluster (cluster start-up included): {t_dask_total:.2f} s; "
              f"speed-up over serial {speed_up:.2f}x (target >= 1.6x: "
              f"{'met' if speed_up >= 1.6 else 'MISSED'}); datasets "
              f"{'identical' if same else f'NOT identical (largest relative difference {worst:.1e})'}")
        st = stats[0]
        on_cluster = st.cluster_task_s
        here = len(st.task_s) - len(on_cluster)
        if on_cluster:
            mean_task = float(np.mean(on_cluster))
            per_task = st.overhead_per_task_s()
            points = SWEEP_RANGES.size * SWEEP_DEPTHS.size / n_chunks
            print(f"Dask: {len(on_cluster)} chunks on {st.cluster_workers} workers, {here} in this process while "
                  f"they started; a chunk computes in {mean_task:.2f} s on a worker; overhead per task "
                  f"{per_task * 1e3:.0f} ms = {100 * per_task / mean_task:.1f} % of a task (target < 5 %: "
                  f"{'met' if per_task < 0.05 * mean_task else 'MISSED'}); per-worker throughput "
                  f"{points / mean_task:.1f} points/s (serial in this process: "
                  f"{SWEEP_RANGES.size * SWEEP_DEPTHS.size / t_serial:.1f} points/s)")
        else:
            print(f"Dask: the cluster took no chunk (all {here} ran here while it started)")
        n_bad = int((sw["error"] != "").sum())
        print(f"grid points without a result: {n_bad} of {sw['error'].size} (below the seabed or failed)")

        # the default choice of workers, on a sweep too small to repay a cluster and on this one
        small = (SWEEP_RANGES[:6], SWEEP_DEPTHS[:5])
        t_small_serial, _ = timed(run_sweep, site, *small, tmp / "s0.nc", workers=0, quiet=True)
        t_small_default, _ = timed(run_sweep, site, *small, tmp / "s1.nc", quiet=True)
        from aculink.planning.dask_runner import local_workers_for

        n_big = local_workers_for(SWEEP_RANGES.size * SWEEP_DEPTHS.size, n_chunks)
        from aculink.planning.sweep import auto_chunk_ranges

        n_small_chunks = -(-small[0].size // auto_chunk_ranges(small[0].size, small[1].size))
        n_small = local_workers_for(small[0].size * small[1].size, n_small_chunks)
        slower = t_small_default > 1.1 * t_small_serial
        big_ok = speed_up >= 1.0 if n_big > 1 else True
        print(f"default workers: {n_small} for a {small[0].size} x {small[1].size} sweep ({t_small_default:.2f} s "
              f"against {t_small_serial:.2f} s serial), {n_big} for the {SWEEP_RANGES.size} x {SWEEP_DEPTHS.size} one "
              f"(the run above); target never slower than serial: {'met' if not slower and big_ok else 'MISSED'}")

    chunk_split(site)


def chunk_split(site):
    """cProfile of one chunk: where its time goes, and the planner's design against the reference."""
    import cProfile
    import pstats

    from threadpoolctl import threadpool_limits

    from aculink.modem import analytic, receivers

    ranges, depths = SWEEP_RANGES[10:12], SWEEP_DEPTHS
    with threadpool_limits(limits=1, user_api="blas"):
        prof = cProfile.Profile()
        t0 = time.perf_counter()
        prof.runcall(search.evaluate_block, site, ranges, depths, grid, site.modem.target_ber, site.modem.margin_db)
        total = time.perf_counter() - t0
        stats = pstats.Stats(prof)

        def cum(pattern):
            return sum(v[3] for k, v in stats.stats.items() if pattern in f"{k[0]}:{k[2]}")

        rays = cum("eigenrays.py:find_arrivals")
        design = cum("_design_fast.py:mmse_dfe_design_fast") + cum("analytic.py:mmse_dfe_design")
        channel = cum("model.py:from_arrivals") + cum("budget.py:link_budget") + cum("model.py:transfer_function") \
            + cum("media.py:noise_acf") + cum("model.py:symbol_taps")
        evaluation = cum("search.py:predict_point") - design - cum("model.py:transfer_function") \
            - cum("media.py:noise_acf") - cum("model.py:symbol_taps")
        print(f"one chunk ({ranges.size} x {depths.size} points) under cProfile: {total:.2f} s; ray fan "
              f"{100 * rays / total:.0f} %, channel (responses, spectra, noise, budget) {100 * channel / total:.0f} %, "
              f"receiver design {100 * design / total:.0f} %, rest of candidate evaluation "
              f"{100 * evaluation / total:.0f} %")
        # the same chunk with the modem stage's reference design: the design's speed-up
        t_fast, _ = timed(search.evaluate_block, site, ranges, depths, grid, site.modem.target_ber, site.modem.margin_db)
        real = search.fast_modem_design
        search.fast_modem_design = lambda: _reference_design(receivers, analytic)
        try:
            t_ref, _ = timed(search.evaluate_block, site, ranges, depths, grid, site.modem.target_ber,
                             site.modem.margin_db)
        finally:
            search.fast_modem_design = real
        print(f"chunk with the planner's design {t_fast:.2f} s, with the modem's reference design {t_ref:.2f} s: "
              f"ratio {t_ref / t_fast:.2f}x")


def _reference_design(receivers, analytic):
    import contextlib

    @contextlib.contextmanager
    def keep():
        saved = receivers.mmse_dfe_design
        receivers.mmse_dfe_design = analytic.mmse_dfe_design
        try:
            yield
        finally:
            receivers.mmse_dfe_design = saved
    return keep()

if __name__ == "__main__":
    main()
