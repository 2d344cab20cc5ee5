"""Benchmark: equalizer kernels against plain numpy per-symbol loops, measured in one run.

Run: ``cd /work/main && /work/venv/bin/python tests/benchmarks/bench_modem.py``

1. RLS DFE, 64 taps (32 T/2 feedforward + 32 feedback), QPSK: symbols/s (target >= 250,000).
2. NLMS DFE, 64 taps: symbols/s (target >= 2,000,000).
3. Sparse DFE on a 200-symbol-span channel: 40 active feedback taps against the full 200-tap
   span (target: >= 5x faster, MSE loss <= 0.5 dB).
4. predict_link over one bundled site channel, 8 symbol rates x 5 modulations x 3 receivers
   (the planner's table needs 24 such channels: target a few seconds in all).
Each figure is printed with its ratio to a plain numpy implementation of the same recursion.
"""

from __future__ import annotations

import time

import numpy as np

if __package__ in (None, ""):  # run as a script from the checkout
    import pathlib
    import sys

    sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[2]))

from aculink.modem import _kernels
from aculink.modem.constellations import constellation
from aculink.modem.receivers import default_forgetting, feedback_delays

QPSK = constellation("qpsk")
PR, PI = QPSK.points.real.copy(), QPSK.points.imag.copy()


def t2_stream(rng, n_sym, q_half, snr_db=25.0):
    lab = rng.integers(0, 4, n_sym + 64)
    up = np.zeros(2 * lab.size, complex)
    up[::2] = QPSK.points[lab]
    y = np.convolve(up, q_half)
    y += np.sqrt(10 ** (-snr_db / 10) / 2) * (rng.standard_normal(y.size) + 1j * rng.standard_normal(y.size))
    return y, lab.astype(np.int64)


def run_kernel(kind, y, lab, n_sym, n_ff, fbd, lam=0.998, start0=0):
    n = n_ff + fbd.size
    out = [np.zeros(n_sym), np.zeros(n_sym), np.zeros(n_sym, np.int64), np.zeros(n_sym), np.zeros(n_sym)]
    wr, wi = np.zeros(n), np.zeros(n)
    args = (y.real.copy(), y.imag.copy(), start0, 2, n_sym, n_ff, fbd, lab, n_sym, PR, PI)
    t = time.perf_counter()
    if kind == "rls":
        _kernels.rls_dfe(*args, lam, 1e-2, 0.0, 0.0, 0, 0.0, *out, wr, wi, np.zeros(3, np.int64))
    else:
        _kernels.nlms_dfe(*args, 0.3, 1e-6, 0.0, 0.0, 0, 0.0, *out, wr, wi, np.zeros(3, np.int64))
    return time.perf_counter() - t, out[3]


def numpy_dfe(kind, y, lab, n_sym, n_ff, fbd, lam=0.998):
    """Plain numpy, one symbol per Python iteration (the general-purpose baseline)."""
    n = n_ff + fbd.size
    w = np.zeros(n, complex)
    p = np.eye(n, dtype=complex) / 1e-2
    d = QPSK.points[lab]
    t = time.perf_counter()
    for k in range(n_sym):
        past = np.where(k - fbd >= 0, d[np.maximum(k - fbd, 0)], 0)
        v = np.concatenate([y[2 * k:2 * k + n_ff], -past])
        e = d[k] - np.vdot(w, v)
        if kind == "rls":
            pv = p @ v
            g = pv / (lam + np.vdot(v, pv).real)
            w += g * np.conj(e)
            p = (p - np.outer(g, pv.conj())) / lam
        else:
            w += 0.3 * v * np.conj(e) / (1e-6 + np.vdot(v, v).real)
    return time.perf_counter() - t


def best(f, rounds=3):
    return min(f() for _ in range(rounds))


def main():
    rng = np.random.default_rng(0)
    q = np.zeros(40, complex)
    q[[0, 1, 2, 3, 4, 8, 9]] = [0.3, 0.6, 1.0, 0.6, 0.3, 0.35j, 0.2j]
    n_sym = 40000
    y, lab = t2_stream(rng, n_sym, q)
    fb32 = np.arange(1, 33, dtype=np.int64)
    run_kernel("rls", y[:2000], lab, 500, 32, fb32)  # compile / load cache
    run_kernel("nlms", y[:2000], lab, 500, 32, fb32)
    t_rls = best(lambda: run_kernel("rls", y, lab, n_sym, 32, fb32)[0])
    n_np = 1500
    t_rls_np = best(lambda: numpy_dfe("rls", y, lab, n_np, 32, fb32), 2)
    rls_rate, rls_np_rate = n_sym / t_rls, n_np / t_rls_np
    print(f"RLS DFE 64 taps:  numba {rls_rate:12,.0f} symbols/s   numpy {rls_np_rate:10,.0f} symbols/s   "
          f"ratio {rls_rate / rls_np_rate:6.1f}x   target >= 250,000: {'met' if rls_rate >= 2.5e5 else 'MISSED'}")
    n_nl = 400000
    y2, lab2 = t2_stream(rng, n_nl, q)
    t_nl = best(lambda: run_kernel("nlms", y2, lab2, n_nl, 32, fb32)[0])
    t_nl_np = best(lambda: numpy_dfe("nlms", y2, lab2, 5000, 32, fb32), 2)
    nl_rate, nl_np_rate = n_nl / t_nl, 5000 / t_nl_np
    print(f"NLMS DFE 64 taps: numba {nl_rate:12,.0f} symbols/s   numpy {nl_np_rate:10,.0f} symbols/s   "
          f"ratio {nl_rate / nl_np_rate:6.1f}x   target >= 2,000,000: {'met' if nl_rate >= 2e6 else 'MISSED'}")

    # a sparse 200-symbol channel: eight arrivals, each a short T/2 cluster
    qs = np.zeros(2 * 200 + 8, complex)
    for dly, g in [(0, 1.0), (37, 0.5j), (60, 0.3), (81, -0.4), (122, 0.35 - 0.2j), (140, -0.2j), (163, 0.3j),
                   (199, -0.25)]:
        qs[2 * dly:2 * dly + 5] += g * np.array([0.3, 0.6, 1.0, 0.6, 0.3])
    n_s = 12000
    ys, labs = t2_stream(rng, n_s, qs, snr_db=25.0)
    n_ff = 8
    start0 = 4 - n_ff + 1 + 3  # window holds the main peak (sample 4) near its end
    start0 = max(start0, 0)
    full = np.arange(1, 201, dtype=np.int64)
    sparse = feedback_delays(qs, n_ff, start0, 200, 40).astype(np.int64)
    lam_f, lam_s = default_forgetting(n_ff + 200), default_forgetting(n_ff + sparse.size)
    run_kernel("rls", ys[:4000], labs, 600, n_ff, sparse, lam_s, start0)
    t_full, e_full = min((run_kernel("rls", ys, labs, n_s, n_ff, full, lam_f, start0) for _ in range(2)), key=lambda r: r[0])
    t_sp, e_sp = min((run_kernel("rls", ys, labs, n_s, n_ff, sparse, lam_s, start0) for _ in range(3)), key=lambda r: r[0])
    mse_full = 10 * np.log10(np.mean(e_full[n_s // 2:]))
    mse_sp = 10 * np.log10(np.mean(e_sp[n_s // 2:]))
    t_sp_np = best(lambda: numpy_dfe("rls", ys, labs, 800, n_ff, sparse, lam_s), 2)
    speed = t_full / t_sp
    loss = mse_sp - mse_full
    print(f"Sparse RLS DFE: {sparse.size} of 200 feedback taps active; full span {n_s / t_full:,.0f} symbols/s, "
          f"sparse {n_s / t_sp:,.0f} symbols/s (numpy sparse {800 / t_sp_np:,.0f}, ratio {(n_s / t_sp) / (800 / t_sp_np):.1f}x)")
    print(f"  speed-up {speed:.1f}x (target >= 5: {'met' if speed >= 5 else 'MISSED'}); MSE full {mse_full:.2f} dB, "
          f"sparse {mse_sp:.2f} dB, loss {loss:+.2f} dB (target <= 0.5: {'met' if loss <= 0.5 else 'MISSED'})")


def bench_predict():
    from pathlib import Path

    from aculink.channel import channel_for_site, link_budget
    from aculink.modem import MODULATIONS, predict_link
    from aculink.site.loader import load_site

    site = load_site(Path(__file__).resolve().parents[2] / "environments" / "shelf_summer.toml")
    ch = channel_for_site(site)
    b = link_budget(site, ch)
    rates = np.linspace(500, 4800, 8)
    predict_link(ch, b, 4800.0, "qpsk", "dfe")  # compile the design kernels
    import dataclasses

    ch = dataclasses.replace(ch)  # a fresh channel object: the estimate caches live on the channel
    t = time.perf_counter()
    for rs in rates:
        for rx in ("none", "linear", "dfe"):
            for mod in MODULATIONS:
                predict_link(ch, b, float(rs), mod, rx)
    dt = time.perf_counter() - t
    print(f"predict_link: 120 predictions on one site channel in {dt:.2f} s; a 24-range table "
          f"~ {24 * dt:.1f} s (target: a few seconds: {'met' if 24 * dt <= 5 else 'MISSED'})")


if __name__ == "__main__":
    main()
    bench_predict()
