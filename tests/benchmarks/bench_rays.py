"""Benchmark of the ray tracer; prints figures and ratios measured in one run.

    python tests/benchmarks/bench_rays.py            (from the repository root)

Scenario of our own: the bundled summer-shelf water column (CTD cast, PCHIP profile with 1-2 m
knots, a sharp thermocline) over a flat 60 m medium-sand seabed out to 10 km.

1. A 2,000-ray fan (-30 to 30 deg) to 10 km with amplitudes (dynamic rays, boundary coefficients,
   absorption) recorded at 50 ranges: wall time on one core and on two threads, rays/s, steps/s
   (target < 0.3 s warm on one core).
2. Travel-time error at 10 km against a converged fine-step reference (the same rays with 0.25 m
   steps; target within 2 us).
3. The same ray traced by scipy.integrate.solve_ivp (DOP853, general-purpose baseline) at the same
   travel-time accuracy: time ratio.
4. Eigenrays for a 50 x 50 receiver grid (0.2-10 km, 1-59 m) (target < 2 s warm).
5. A new process answering ``aculink arrivals`` with a warm numba cache (target < 2 s).

The hosts are shared and noisy: compare the ratios, and read the medians.
"""

from __future__ import annotations

import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from aculink.propagation import _kernels as _k  # noqa: E402
from aculink.propagation.eigenrays import solve_arrivals  # noqa: E402
from aculink.propagation.rays import prepare_medium, run_fan, step_budget  # noqa: E402
from aculink.site.loader import load_site  # noqa: E402
from aculink.site.model import Seabed  # noqa: E402


def shelf_site():
    site = load_site(ROOT / "environments" / "shelf_summer.toml")
    bed = site.seabed
    flat = Seabed(np.array([0.0]), np.array([60.0]), bed.sound_speed_mps, bed.density_kgm3,
                  bed.attenuation_db_per_wavelength, bed.sediment)
    return site.replace(seabed=flat).with_geometry(range_m=10000.0, depth_m=40.0)


def timed(func, repeats=5):
    times = []
    out = None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = func()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), min(times), out


def fan(site, step_m, parallel, angles, ranges):
    medium = prepare_medium(site, 12000.0, step_m=step_m)
    zs = site.source.depth_m
    budget = step_budget(10000.0, medium.step_m, 30.0) * (8 if step_m < 1 else 1)
    return lambda: run_fan(medium, angles, zs, ranges, 10000.0, max_steps=budget, parallel=parallel)


def scipy_ray(site, theta_deg, rtol):
    """The same ray with scipy.integrate.solve_ivp (DOP853) in range, reflecting at the boundaries."""
    from scipy.integrate import solve_ivp
    from scipy.interpolate import PchipInterpolator

    prof = site.water.profile
    cz = PchipInterpolator(prof.depth_m, prof.speed_mps)
    dcz = cz.derivative()
    zs = site.source.depth_m
    c0 = float(cz(zs))
    xi = np.cos(np.radians(theta_deg)) / c0
    bottom = 60.0

    def rhs(x, y):
        c = float(cz(y[0]))
        return [y[1] / xi, -float(dcz(y[0])) / (c * c) / (c * xi), 1.0 / (c * c * xi)]

    def surface(x, y):
        return y[0]

    def seabed(x, y):
        return y[0] - bottom

    surface.terminal = seabed.terminal = True
    surface.direction, seabed.direction = -1, 1
    x, y = 0.0, [zs, np.sin(np.radians(theta_deg)) / c0, 0.0]
    while x < 10000.0:
        sol = solve_ivp(rhs, (x, 10000.0), y, method="DOP853", rtol=rtol, atol=rtol * 1e-3,
                        events=(surface, seabed))
        x = sol.t[-1]
        y = sol.y[:, -1].copy()
        if sol.status == 1:
            y[1] = -y[1]
            y[0] = min(max(y[0], 0.0), bottom)
    return y[2]


def main():
    site = shelf_site()
    angles = np.radians(np.linspace(-30.0, 30.0, 2000))
    ranges = np.linspace(200.0, 10000.0, 50)
    print(f"numba threads available: {os.cpu_count()}; load average {os.getloadavg()[0]:.1f}")

    # 1. fan speed
    serial = fan(site, 5.0, False, angles, ranges)
    parallel = fan(site, 5.0, True, angles, ranges)
    serial()
    parallel()
    t1, t1min, (rec, info, _) = timed(serial)
    t2, t2min, _ = timed(parallel)
    steps = info[:, 1].sum()
    print(f"[1] 2,000-ray fan to 10 km, 60 m water, amplitudes at 50 ranges, ds 5 m:")
    print(f"    one core:    {t1:.3f} s median ({t1min:.3f} best); {angles.size / t1:,.0f} rays/s, "
          f"{steps / t1 / 1e6:.1f} M steps/s ({steps / angles.size:.0f} steps per ray); target < 0.3 s")
    print(f"    two threads: {t2:.3f} s median ({t2min:.3f} best); speed-up {t1 / t2:.2f}x")

    # 2. travel-time error against a fine-step reference
    fine = fan(site, 0.25, True, angles, ranges)
    _, _, (rec_f, _, _) = timed(fine, repeats=1)
    ok = ~np.isnan(rec[:, -1, _k.R_T]) & ~np.isnan(rec_f[:, -1, _k.R_T]) & (
        rec[:, -1, _k.R_NS] == rec_f[:, -1, _k.R_NS]) & (rec[:, -1, _k.R_NB] == rec_f[:, -1, _k.R_NB])
    err = np.abs(rec[ok, -1, _k.R_T] - rec_f[ok, -1, _k.R_T]) * 1e6
    errz = np.abs(rec[ok, -1, _k.R_Z] - rec_f[ok, -1, _k.R_Z])
    print(f"[2] travel-time error at 10 km vs 0.25 m steps ({ok.sum()} rays with the same history): "
          f"median {np.median(err):.3f} us, 99th percentile {np.percentile(err, 99):.3f} us, worst {err.max():.3f} us "
          f"(depth: median {np.median(errz) * 1000:.3f} mm, worst {errz.max() * 1000:.2f} mm); target 2 us")

    # 3. scipy baseline on one ray at the same accuracy
    theta = 6.0
    one = fan(site, 5.0, False, np.radians([theta]), np.array([10000.0]))
    t_ours, _, (r1, _, _) = timed(one, repeats=20)
    ref = fan(site, 0.25, False, np.radians([theta]), np.array([10000.0]))()[0][0, 0, _k.R_T]
    our_err = abs(r1[0, 0, _k.R_T] - ref)
    for rtol in (1e-8, 1e-10, 1e-12):
        t0 = time.perf_counter()
        t_sp = scipy_ray(site, theta, rtol)
        dt = time.perf_counter() - t0
        sp_err = abs(t_sp - ref)
        print(f"[3] solve_ivp DOP853 rtol {rtol:g}: {dt:.3f} s, travel-time error {sp_err * 1e6:.4f} us; "
              f"numba ray {t_ours * 1e3:.3f} ms, error {our_err * 1e6:.4f} us; ratio {dt / t_ours:,.0f}x")
        if sp_err <= max(our_err, 1e-9):
            break

    # 4. eigenrays for a 50 x 50 grid
    grid_r = np.linspace(200.0, 10000.0, 50)
    grid_z = np.linspace(1.0, 59.0, 50)
    solve_arrivals(site, grid_r[:2], grid_z[:2])
    t4, t4min, (variables, _, _) = timed(lambda: solve_arrivals(site, grid_r, grid_z), repeats=1)
    n = variables["n_arrivals"][1]
    print(f"[4] eigenrays, 50 x 50 receivers (0.2-10 km, 1-59 m): {t4:.2f} s median ({t4min:.2f} best); "
          f"{n.sum():,} arrivals kept, {n.mean():.1f} per receiver, {variables['n_dropped'][1].sum():,} dropped; "
          f"target < 2 s")

    # 5. warm-cache command start-up
    cmd = [sys.executable, "-m", "aculink", "arrivals", str(ROOT / "environments" / "shelf_summer.toml"), "--json"]
    subprocess.run(cmd, cwd=ROOT, capture_output=True, check=True)
    runs = []
    for _ in range(3):
        t0 = time.perf_counter()
        subprocess.run(cmd, cwd=ROOT, capture_output=True, check=True)
        runs.append(time.perf_counter() - t0)
    bare = []
    for _ in range(3):
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-c", "import scipy.interpolate, numba"], capture_output=True, check=True)
        bare.append(time.perf_counter() - t0)
    print(f"[5] new process 'aculink arrivals shelf_summer.toml --json' (warm cache): {statistics.median(runs):.2f} s "
          f"median; of which importing scipy.interpolate and numba alone takes {statistics.median(bare):.2f} s; "
          f"target < 2 s")


if __name__ == "__main__":
    main()
