"""Benchmark of the eigenray solver; prints figures and ratios measured in one run.

    python tests/benchmarks/bench_eigenrays.py            (from the repository root)

Scenario of our own: the bundled summer-shelf water column (``environments/shelf_summer.toml``,
CTD cast with a sharp thermocline) over a flat 60 m seabed of the site's sediment, out to 10 km;
the source and frequency are the site's (modem carrier).

1. Eigenrays for a 50 x 50 receiver grid (ranges 0.2-10 km, depths 1-59 m), warm (numba compiled
   and cached by a first small call): median wall time of three calls against the target 2 s, and
   the ratio.
2. How the eigenrays were found: the share re-shot (Newton on the launch angle, one ray trace per
   iteration) against the share interpolated from the one shared fan.
3. The same grid with every bracketed eigenray re-shot (``refine="reshoot"``, the slow twin): time
   ratio, and the largest differences of delay and level between the two over the arrivals both
   find (the accuracy the interpolation keeps).

The hosts are shared and noisy (two cores, several jobs): compare the ratios, and read the medians.
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from aculink.propagation.eigenrays import solve_arrivals  # noqa: E402
from aculink.site.loader import load_site  # noqa: E402
from aculink.site.model import Seabed  # noqa: E402

TARGET_S = 2.0
GRID_RANGES_M = np.linspace(200.0, 10000.0, 50)
GRID_DEPTHS_M = np.linspace(1.0, 59.0, 50)


def shelf_site():
    """The summer-shelf water column over a flat 60 m seabed to 10 km (the bundled track ends at 6 km)."""
    site = load_site(ROOT / "environments" / "shelf_summer.toml")
    bed = site.seabed
    flat = Seabed(np.array([0.0, 10000.0]), np.array([60.0, 60.0]), bed.sound_speed_mps, bed.density_kgm3,
                  bed.attenuation_db_per_wavelength, bed.sediment)
    return site.replace(seabed=flat)


def timed(func, repeats):
    times, out = [], None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = func()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), min(times), out


def arrivals(variables, n_max=None):
    """(delay, level dB, surface bounces, bottom bounces) of every arrival as flat arrays with their
    receiver index."""
    delay = variables["delay_s"][1]
    amp = variables["amplitude"][1][..., 0]
    keep = np.isfinite(delay)
    rec = np.broadcast_to(np.arange(delay.shape[0] * delay.shape[1]).reshape(delay.shape[:2])[..., None],
                          delay.shape)
    with np.errstate(divide="ignore"):
        level = 20.0 * np.log10(np.abs(amp))
    return (rec[keep], delay[keep], level[keep], variables["surface_bounces"][1][keep],
            variables["bottom_bounces"][1][keep])


def compare(a, b):
    """Largest |delay| (s) and |level| (dB) differences over arrivals matched by receiver, bounces and
    nearest delay (within 10 us), and the count matched."""
    ra, da, la, sa, ba = a
    rb, db, lb, sb, bb = b
    key_b = {}
    for i in range(rb.size):
        key_b.setdefault((int(rb[i]), int(sb[i]), int(bb[i])), []).append(i)
    worst_d = worst_l = 0.0
    matched = 0
    for i in range(ra.size):
        cand = key_b.get((int(ra[i]), int(sa[i]), int(ba[i])), [])
        if not cand:
            continue
        j = min(cand, key=lambda j: abs(db[j] - da[i]))
        if abs(db[j] - da[i]) > 1e-5:
            continue
        matched += 1
        worst_d = max(worst_d, abs(db[j] - da[i]))
        worst_l = max(worst_l, abs(lb[j] - la[i]))
    return worst_d, worst_l, matched


def main():
    site = shelf_site()
    print(f"site: {site.name}, flat 60 m seabed to 10 km, source {site.source.depth_m:g} m, "
          f"{site.modem.carrier_hz:g} Hz")
    solve_arrivals(site, GRID_RANGES_M[:2], GRID_DEPTHS_M[:2])  # compile / load the numba cache
    med, best, (variables, _, attrs) = timed(lambda: solve_arrivals(site, GRID_RANGES_M, GRID_DEPTHS_M), 3)
    n_arr = int(np.sum(variables["n_arrivals"][1]))
    print(f"1. 50 x 50 grid, warm: median {med:.2f} s (best {best:.2f} s), target {TARGET_S:g} s, "
          f"ratio {med / TARGET_S:.2f}; {n_arr} arrivals")
    shot, interp = attrs.get("n_reshot", 0), attrs.get("n_interpolated", 0)
    total = max(1, shot + interp)
    print(f"2. eigenrays re-shot {shot} of {shot + interp} ({100.0 * shot / total:.1f}%), "
          f"interpolated from the fan {interp} ({100.0 * interp / total:.1f}%); "
          f"{n_arr - shot - interp} beside caustics (no eigenray)")
    med_r, _, (var_r, _, _) = timed(lambda: solve_arrivals(site, GRID_RANGES_M, GRID_DEPTHS_M, refine="reshoot"), 1)
    worst_d, worst_l, matched = compare(arrivals(variables), arrivals(var_r))
    print(f"3. all re-shot: {med_r:.2f} s ({med_r / med:.1f} x the default); over {matched} arrivals matched: "
          f"largest delay difference {worst_d * 1e6:.3f} us, level difference {worst_l:.3f} dB")


if __name__ == "__main__":
    main()
