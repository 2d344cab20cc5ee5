"""Benchmark of the availability planner: members x ranges on one bundled site, and memory per member.

Run from the project root:  python tests/benchmarks/bench_availability.py [--members 64] [--ranges 24]

Target (2 cores, warm): 64 members x 24 ranges for one site in under 60 s; memory flat in the number
of members (the resident set after 16 and after all members differ by less than 10 %). The run
draws every member (tolerance 1e-6, so the stopping rule never ends it early) and prints the time
per member-range, the share of it spent in the attribution re-runs, and the ratio to the target.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from bench_planning import rss_mb  # noqa: E402 (the resident-set reader, beside this script)

from aculink.planning.availability import plan_availability  # noqa: E402
from aculink.site.bundled import bundled_site_path  # noqa: E402
from aculink.site.loader import load_site  # noqa: E402

TARGET_S = 60.0


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--site", default="shelf_winter")
    ap.add_argument("--members", type=int, default=64)
    ap.add_argument("--ranges", type=int, default=24)
    args = ap.parse_args(argv)
    site = load_site(bundled_site_path(args.site))
    end = min(site.seabed.max_range_m, 8000.0) if np.isfinite(site.seabed.max_range_m) else 8000.0
    ranges = np.linspace(end / args.ranges, end, args.ranges)
    # warm the kernels and caches on a tiny ensemble
    plan_availability(site, ranges[:2], members=2, tolerance=1e-6, attribution=False)
    rss = []

    def progress(done, total):
        if done in (min(16, total), total):
            rss.append((done, rss_mb()))

    t0 = time.perf_counter()
    ds = plan_availability(site, ranges, members=args.members, tolerance=1e-6, attribution=False,
                           progress=progress)
    t_members = time.perf_counter() - t0
    t0 = time.perf_counter()
    ds_att = plan_availability(site, ranges, members=args.members, tolerance=1e-6, attribution=True)
    t_all = time.perf_counter() - t0
    n = int(ds.attrs["members"])
    print(f"site {args.site}: {n} members x {len(ranges)} ranges ({ds.attrs['ensemble']}), "
          f"factors {ds.attrs['factors']}")
    print(f"members only: {t_members:.1f} s, {1e3 * t_members / (n * len(ranges)):.1f} ms per member-range")
    print(f"with attribution: {t_all:.1f} s ({ds_att.attrs['evaluations']} evaluations; attribution "
          f"{100 * max(t_all - t_members, 0.0) / t_all:.0f} % of the time)")
    full = (n, len(ranges)) == (64, 24)
    projected = t_all * (64 * 24) / (n * len(ranges))
    verdict = ("met" if t_all < TARGET_S else "MISSED") if full else "not run at full size"
    print(f"target {TARGET_S:.0f} s for 64 x 24: {projected:.1f} s{'' if full else ' (projected linearly)'}, "
          f"ratio {projected / TARGET_S:.2f} of the target, {verdict}")
    if len(rss) == 2 and rss[0][0] != rss[1][0]:
        (n1, m1), (n2, m2) = rss
        grow = (m2 - m1) / m1
        print(f"memory: {m1:.0f} MB after {n1} members, {m2:.0f} MB after {n2}: {100 * grow:+.1f} % "
              f"(target within 10 %, {'met' if abs(grow) < 0.10 else 'MISSED'})")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
