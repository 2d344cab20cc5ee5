"""Receivers that fail loudly: the divergence monitor, failed frames and the link's status."""

import json

import numpy as np
import pytest

from aculink.cli import main
from aculink.modem import _kernels, simulate_link
from aculink.modem.constellations import constellation

from .conftest import PROAKIS_B, twin_dfe


def _run(kind, y, n_sym, n_ff, fbd, train, pts, **kw):
    n = n_ff + fbd.size
    out = [np.zeros(n_sym), np.zeros(n_sym), np.zeros(n_sym, np.int64), np.zeros(n_sym), np.zeros(n_sym)]
    w0 = kw.get("w0", np.zeros(n, complex))
    wr, wi = w0.real.copy(), w0.imag.copy()
    info = np.zeros(3, np.int64)
    args = (y.real.copy(), y.imag.copy(), 0, 1, n_sym, n_ff, fbd, train, train.size, pts.real.copy(), pts.imag.copy())
    if kind == "rls":
        _kernels.rls_dfe(*args, 0.99, 1e-2, 0.02, 2e-4, 40, 0.0, *out, wr, wi, info)
    elif kind == "nlms":
        _kernels.nlms_dfe(*args, 0.4, 1e-6, 0.02, 2e-4, 40, 0.0, *out, wr, wi, info)
    else:
        _kernels.fixed_dfe(*args, 1.0, 0.02, 2e-4, 0, 0.0, *out, wr, wi, info)
    return out[0] + 1j * out[1], out[2], info


@pytest.mark.parametrize("kind", ["rls", "nlms", "fixed"])
def test_monitor_restores_then_gives_up_like_its_twin(kind, rng):
    """Computed against the slow numpy twin (tests/modem/conftest.py, the monitor written out
    plainly): after the training the received signal jumps 30 dB in level (a receiver that no
    longer matches its input). The error rises far above its training level and above that of
    random decisions (d_min^2/6), the kernel restores its last healthy state MAX_RECOVERIES
    times and then gives up; outputs, decisions, recoveries and the symbol given up at agree
    with the twin."""
    c = constellation("qpsk")
    n_sym, n_ff = 900, 6
    lab = rng.integers(0, 4, n_sym + 10)
    y = np.convolve(c.points[lab], PROAKIS_B) + 0.03 * (rng.standard_normal(n_sym + 12) + 1j * rng.standard_normal(n_sym + 12))
    y[400:] *= 30.0
    fbd = np.array([1, 2], np.int64) if kind != "fixed" else np.zeros(0, np.int64)
    train = lab[:300].astype(np.int64)
    w0 = np.zeros(n_ff + fbd.size, complex)
    if kind == "fixed":
        w0[1] = 1.0 / PROAKIS_B[1]
    z, labels, info = _run(kind, y, n_sym, n_ff, fbd, train, c.points, w0=w0)
    tinfo = np.zeros(2, int)
    zt, lt, _ = twin_dfe(y, 0, 1, n_sym, n_ff, fbd, train, c.points, kind=kind, lam=0.99, delta=1e-2, mu=0.4,
                         k1=0.02, k2=2e-4, pll_start=40 if kind != "fixed" else 0, w0=w0, info=tinfo)
    assert info[1] == _kernels.MAX_RECOVERIES and 390 <= info[2] < 600
    assert list(tinfo) == [info[1], info[2]]
    np.testing.assert_allclose(z, zt, rtol=1e-7, atol=1e-7)
    np.testing.assert_array_equal(labels, lt)


def test_healthy_receiver_never_triggers_the_monitor(rng):
    """Common practice, no source: on a static channel at 20 dB (Proakis b) the converged RLS DFE
    runs 20,000 decision-directed symbols without a single recovery."""
    c = constellation("qpsk")
    n_sym = 20000
    lab = rng.integers(0, 4, n_sym + 10)
    y = np.convolve(c.points[lab], PROAKIS_B) + 0.07 * (rng.standard_normal(n_sym + 12) + 1j * rng.standard_normal(n_sym + 12))
    _, labels, info = _run("rls", y, n_sym, 8, np.array([1, 2], np.int64), lab[:200].astype(np.int64), c.points)
    assert info[1] == 0 and info[2] == -1
    assert np.mean(labels[200:] != lab[200:n_sym]) < 1e-3


def test_link_that_loses_lock_reports_failure_and_no_rate():
    """Li et al. 2008 (time scale a = v/c): a 4.5 m/s platform (a = 3e-3) on a link whose bound
    is set to 0.15 m/s is not compensated, the symbol timing slides by more than 4 symbols over
    the frame, and the frames fail (the tail-marker check or the divergence monitor). The
    result says so: not closed, a reason in words, every payload bit of a failed frame counted
    as an error, no net bit rate."""
    r = simulate_link(PROAKIS_B, symbol_rate_baud=1000, modulation="qpsk", receiver="dfe", snr_db=20,
                      doppler=3e-3, carrier_hz=12000.0, max_doppler=1e-4, n_symbols=3000, seed=1)
    assert not r.closed
    assert r.frames_diverged + r.frames_lost >= 1
    assert "lost lock" in r.failure or "lost sync" in r.failure
    assert r.net_bit_rate_bps == 0.0 and r.frame_bit_rate_bps > 0
    assert r.bit_errors >= (r.frames_diverged + r.frames_lost) * r.n_payload * 2


def test_closed_link_keeps_its_rate():
    """Al-Dhahir and Cioffi (1995) via the project's prediction: Proakis b at 25 dB with the RLS DFE
    has an output SNR near 20 dB (QPSK BER far below 1e-4), so the link closes and reports its
    net rate."""
    r = simulate_link(PROAKIS_B, symbol_rate_baud=1000, modulation="qpsk", receiver="dfe", snr_db=25,
                      n_symbols=4000, seed=2)
    assert r.closed and r.failure == ""
    assert r.net_bit_rate_bps == r.frame_bit_rate_bps > 0


def _tap_file(tmp_path, taps):
    lines = ["# carrier_hz = 12000", "# bandwidth_hz = 6000", "# symbol_rate_baud = 2000", "tap,real,imag"]
    lines += [f"{k},{complex(t).real},{complex(t).imag}" for k, t in enumerate(taps)]
    path = tmp_path / "taps.csv"
    path.write_text("\n".join(lines) + "\n")
    return path


def test_cli_says_when_the_link_did_not_close(tmp_path, capsys):
    """Proakis 2001, section 5.2 (QPSK BER = Q(sqrt(Es/N0)), about 0.08 at 2 dB): the measured BER
    is far above the 1e-4 target, so `aculink link` says in words that the link did not close
    and why, prints no net bit rate, and its JSON gives 0 with closed = false and the reason."""
    f = _tap_file(tmp_path, [1.0, 0.0, 0.3j])
    args = ["link", "--channel-file", str(f), "--rate-baud", "2000", "--receiver", "dfe", "--snr-db", "2",
            "--symbols", "2000", "--max-errors", "100"]
    assert main(args) == 0
    text = capsys.readouterr().out
    assert "DID NOT CLOSE" in text and "above the target" in text
    assert "none (the link did not close)" in text and "bit/s\n" not in text.split("Net bit rate")[1].split("\n")[0]
    assert main(args + ["--json"]) == 0
    rep = json.loads(capsys.readouterr().out)
    assert rep["closed"] is False and rep["net_bit_rate_bps"] == 0 and "above the target" in rep["failure"]
