"""The fast evaluations of the channel stage against slow, obviously correct numpy twins.

Each twin is the direct formula the fast code replaces (a (P, Q) array of exponentials, fancy
indexing, a full convolution), so these tests fail if a kernel drops a term, a sign, a phase or a
sample. Tolerances: the fast code may only reorder sums and replace exp by products of exact
rotations, so 1e-9 of the sum of |terms| (the planner's accuracy requirement, common practice,
no source) for float64 results and 1e-6 for the float32 stages.
"""

from __future__ import annotations

import pickle
from dataclasses import replace

import numpy as np
import pytest
from scipy import signal

from aculink.channel import Channel, _kernels
from aculink.channel import response as resp
from aculink.channel.apply import farrow_coefficients, farrow_input, prefilter_convolve

FC, B = 12000.0, 6000.0


def numpy_interpolate(gain, grid, f):
    """Linear interpolation in f, held at the ends: the numpy formula of the original code."""
    i0, w = resp.interpolation_weights(grid, f)
    return gain[:, i0] * (1.0 - w) + gain[:, i0 + 1] * w


def numpy_transfer(delay, gain, grid, f):
    """H(f) = sum_p g_p(f) exp(-j 2 pi f tau_p), one exponential per (path, frequency)."""
    g = np.repeat(gain, f.size, axis=1) if gain.shape[1] == 1 else numpy_interpolate(gain, grid, f)
    return np.einsum("pq,pq->q", g, np.exp(-2j * np.pi * np.outer(delay, f)))


def random_channel(rng, n_paths=120, n_freq=17, span_s=0.3, offset_s=0.0):
    delay = offset_s + np.sort(rng.uniform(0.0, span_s, n_paths))
    grid = np.linspace(FC - B / 2, FC + B / 2, n_freq)
    gain = (rng.standard_normal((n_paths, n_freq)) + 1j * rng.standard_normal((n_paths, n_freq))) / n_paths
    return Channel.from_taps(delay, gain, FC, B, freq_hz=grid)


def folded_grid(rs, n):
    """Three shifted uniform grids with the out-of-band points removed, as the modem stage's
    folded spectrum asks for (one uniform grid up to the rounding of the shifts)."""
    f = (np.arange(n) / n - 0.5) * rs
    fa = np.concatenate([f + k * rs for k in (-1, 0, 1)])
    return FC + fa[np.abs(fa) <= 0.5 * rs * 1.25]


GRIDS = {
    "linspace": lambda rng: np.linspace(FC - B / 2, FC + B / 2, 1025),
    "folded": lambda rng: folded_grid(4800.0, 2048),
    "uniform runs with gaps": lambda rng: np.concatenate([np.linspace(9000.0, 10000.0, 101),
                                                          np.linspace(10000.5, 10400.0, 37),
                                                          np.linspace(13000.0, 15000.0, 333)]),
    "random order": lambda rng: rng.uniform(FC - 0.6 * B, FC + 0.6 * B, 301),
    "descending beyond the band": lambda rng: np.linspace(FC + B, FC - B, 257),
    "one point": lambda rng: np.array([FC + 123.4]),
}


@pytest.mark.parametrize("name", list(GRIDS))
@pytest.mark.parametrize("offset_s", [0.0, 4.0])
def test_transfer_function_matches_direct_sum(name, offset_s):
    rng = np.random.default_rng(len(name))
    ch = random_channel(rng, offset_s=offset_s)
    f = GRIDS[name](rng)
    ref = numpy_transfer(ch.delay_s, ch.gain, ch.freq_hz, f)
    h = ch.transfer_function(f).values
    scale = np.sum(np.abs(ch.gain_at(f)), axis=0)
    assert np.max(np.abs(h - ref) / scale) < 1e-9


def test_transfer_function_flat_gains_and_single_path():
    """Flat (one-column) gains and a single path: |H| = |A| exactly, phase -2 pi f tau."""
    f = np.linspace(FC - B / 2, FC + B / 2, 700)
    ch = Channel.from_taps([0.0123], [0.5 - 0.2j], FC, B)
    h = ch.transfer_function(f).values
    np.testing.assert_allclose(h, (0.5 - 0.2j) * np.exp(-2j * np.pi * f * 0.0123), rtol=1e-12, atol=0)
    rng = np.random.default_rng(5)
    many = Channel.from_taps(np.sort(rng.uniform(0, 0.2, 40)), rng.standard_normal(40) + 0j, FC, B)
    ref = numpy_transfer(many.delay_s, many.gain, many.freq_hz, f)
    assert np.max(np.abs(many.transfer_function(f).values - ref)) < 1e-9 * np.sum(np.abs(many.gain))


def test_transfer_function_cache_returns_independent_copies():
    rng = np.random.default_rng(2)
    ch = random_channel(rng)
    f = np.linspace(FC - B / 2, FC + B / 2, 513)
    first = ch.transfer_function(f).values
    first[:] = 0.0                                   # a caller scribbling on its result
    again = ch.transfer_function(f).values
    ref = numpy_transfer(ch.delay_s, ch.gain, ch.freq_hz, f)
    assert np.max(np.abs(again - ref)) < 1e-9 * np.max(np.abs(ref))
    # the cache neither travels with a pickled channel nor survives dataclasses.replace
    assert len(pickle.loads(pickle.dumps(ch)).__dict__.get("_transfer_cache", {})) == 0
    other = replace(ch, gain=2.0 * ch.gain)
    np.testing.assert_allclose(other.transfer_function(f).values, 2.0 * again, rtol=1e-12)


def test_interpolate_gain_is_the_numpy_formula_bit_for_bit():
    rng = np.random.default_rng(3)
    gain = rng.standard_normal((30, 9)) + 1j * rng.standard_normal((30, 9))
    grid = np.linspace(9000.0, 15000.0, 9)
    for f in (rng.uniform(8000.0, 16000.0, 200), np.linspace(9000.0, 15000.0, 9), np.float64(12345.0),
              rng.uniform(8000.0, 16000.0, (4, 5))):
        got = resp.interpolate_gain(gain, grid, f)
        assert got.shape == (30,) + np.shape(f)
        assert np.array_equal(got, numpy_interpolate(gain, grid, f))


def numpy_windows(delay_s, gain, grid, fc, fs, spectrum, support, n):
    """The sparse-window response with one exponential per (path, bin): the original formula."""
    df = fs / n
    q = np.arange(int(np.ceil(-support / df)), int(np.floor(support / df)) + 1)
    taper = spectrum(q * df)
    keep = taper != 0.0
    q, taper = q[keep], taper[keep]
    centre = np.rint(delay_s * fs).astype(np.int64)
    eps = centre - delay_s * fs
    spec = numpy_interpolate(gain, grid, fc + q * df) * np.exp(2j * np.pi * np.outer(eps - n // 2, q) / n) * (taper * df)
    folded = np.zeros((delay_s.size, n), dtype=complex)
    np.add.at(folded, (slice(None), np.mod(q, n)), spec)
    values = np.fft.ifft(folded, axis=1) * n * np.exp(-2j * np.pi * fc * delay_s)[:, None]
    return centre - n // 2, values


@pytest.mark.parametrize("fs, n", [(9600.0, 512), (6000.0, 16), (24000.0, 64)])
def test_path_windows_match_direct_formula(fs, n):
    """Includes a window shorter than the band's bins (n = 16, 64: the fold wraps)."""
    rng = np.random.default_rng(int(fs))
    ch = random_channel(rng, n_paths=60)
    spectrum, support, _ = ch.taper(fs)
    start, values = resp.path_windows(ch.delay_s, ch.gain, ch.freq_hz, FC, fs, spectrum, support, n)
    s_ref, v_ref = numpy_windows(ch.delay_s, ch.gain, ch.freq_hz, FC, fs, spectrum, support, n)
    assert np.array_equal(start, s_ref)
    assert np.max(np.abs(values - v_ref)) < 1e-9 * np.max(np.abs(v_ref))


def test_path_windows_with_a_gap_in_the_bins():
    """A spectrum with a zero inside the band leaves a gap in the bins (the phasor is reseeded)."""
    rng = np.random.default_rng(8)
    ch = random_channel(rng, n_paths=10)

    def notched(f):
        return np.where(np.abs(f - 300.0) < 100.0, 0.0, 1.0) * (np.abs(f) <= 3000.0)

    start, values = resp.path_windows(ch.delay_s, ch.gain, ch.freq_hz, FC, 8000.0, notched, 3000.0, 256)
    s_ref, v_ref = numpy_windows(ch.delay_s, ch.gain, ch.freq_hz, FC, 8000.0, notched, 3000.0, 256)
    assert np.max(np.abs(values - v_ref)) < 1e-9 * np.max(np.abs(v_ref))


@pytest.mark.parametrize("n_x, n_h", [(1, 512), (100, 512), (7681, 512), (300_001, 512), (5000, 3), (4000, 1)])
def test_prefilter_convolution_matches_scipy(n_x, n_h):
    """Against scipy.signal.convolve in double precision (reference library); float32 rounding."""
    rng = np.random.default_rng(n_x)
    x = rng.standard_normal(n_x) + 1j * rng.standard_normal(n_x)
    h = rng.standard_normal(n_h) + 1j * rng.standard_normal(n_h)
    got = prefilter_convolve(x, h)
    ref = signal.convolve(x, h.astype(np.complex64).astype(complex))
    assert got.dtype == np.complex64 and got.shape == ref.shape
    assert np.max(np.abs(got - ref)) < 1e-5 * np.max(np.abs(ref))


def test_farrow_input_matches_numpy_convolutions():
    """Branch m = prefiltered input convolved with the reversed Farrow row m (numpy.convolve)."""
    rng = np.random.default_rng(4)
    x = rng.standard_normal(20000) + 1j * rng.standard_normal(20000)
    taps = rng.standard_normal(64) + 1j * rng.standard_normal(64)
    _, c = farrow_coefficients()
    vr, vi = farrow_input(x, taps, c)
    u = signal.convolve(x, taps)
    for m in range(c.shape[0]):
        ref = np.convolve(u, c[m, ::-1])
        scale = np.max(np.abs(ref))
        assert np.max(np.abs(vr[m] - ref.real)) < 1e-5 * scale
        assert np.max(np.abs(vi[m] - ref.imag)) < 1e-5 * scale


def test_farrow_correlate_kernel_on_edges():
    """Zero-padded correlation = full numpy convolution, including both ends."""
    rng = np.random.default_rng(6)
    _, c = farrow_coefficients()
    c32 = np.ascontiguousarray(c, dtype=np.float32)
    k = _kernels.FARROW_TAPS
    for n in (1, 17, 5000):
        x = rng.standard_normal(n).astype(np.float32)
        xp = np.zeros(n + 2 * (k - 1), dtype=np.float32)
        xp[k - 1:k - 1 + n] = x
        out = np.empty((c.shape[0], n + k - 1), dtype=np.float32)
        _kernels.farrow_correlate(xp, c32, out)
        for m in range(c.shape[0]):
            np.testing.assert_allclose(out[m], np.convolve(x.astype(float), c[m, ::-1]), atol=1e-5)


def test_fourier_sum_is_the_trapezoid_fourier_integral():
    """A PSD's autocorrelation at uniform lags: the same as numpy.trapezoid of N(f) exp(j 2 pi f t)
    (the direct formula); and for a flat PSD over [-W/2, W/2] the closed form W sinc(W t)
    (Fourier transform of a rectangle), to the trapezoid rule's error: the Euler-Maclaurin
    leading term h^2/12 |g'(b) - g'(a)| <= h^2/12 * 4 pi t for g = exp(j 2 pi f t) (from memory)."""
    rs = 2400.0
    f = np.linspace(-0.625 * rs, 0.625 * rs, 2049)
    psd = 1e-3 * (1.0 + 0.3 * np.cos(f / 500.0))
    lags = np.arange(300) / (2 * rs)
    w = np.zeros(f.size)
    w[:-1] += np.diff(f) / 2
    w[1:] += np.diff(f) / 2
    got = resp.fourier_sum(psd * w, f, lags)
    ref = np.trapezoid(psd[None, :] * np.exp(2j * np.pi * f[None, :] * lags[:, None]), f, axis=1)
    assert np.max(np.abs(got - ref)) < 1e-12 * np.max(np.abs(ref))
    flat = resp.fourier_sum(w, f, lags)
    width = f[-1] - f[0]
    h = f[1] - f[0]
    bound = h ** 2 / 12.0 * 4.0 * np.pi * lags * 1.01 + 1e-9 * width
    assert np.all(np.abs(flat - width * np.sinc(width * lags)) <= bound)


def test_assemble_is_the_scatter_add_of_the_windows():
    """Dense response = sum of the windows at their offsets (numpy.add.at twin, exact sums)."""
    rng = np.random.default_rng(9)
    start = rng.integers(-50, 400, 40)
    values = rng.standard_normal((40, 32)) + 1j * rng.standard_normal((40, 32))
    first, dense = resp.assemble(start, values)
    assert first == start.min()
    ref = np.zeros(start.max() - first + 32, dtype=complex)
    np.add.at(ref, (start - first)[:, None] + np.arange(32), values)
    np.testing.assert_allclose(dense, ref, rtol=1e-13, atol=1e-13)
    assert resp.assemble(np.zeros(0, dtype=np.int64), np.zeros((0, 8)))[1].size == 0


def test_a_nan_frequency_spoils_only_its_own_value():
    """As with one exponential per frequency, a NaN frequency gives NaN there and nowhere else."""
    rng = np.random.default_rng(10)
    ch = random_channel(rng, n_paths=20)
    f = np.linspace(FC - B / 2, FC + B / 2, 200)
    for bad in (0, 1, 77, 199):
        g = f.copy()
        g[bad] = np.nan
        h = ch.transfer_function(g).values
        assert np.isnan(h[bad])
        ok = np.arange(f.size) != bad
        ref = numpy_transfer(ch.delay_s, ch.gain, ch.freq_hz, g[ok])
        assert np.max(np.abs(h[ok] - ref)) < 1e-9 * np.max(np.abs(ref))


def test_transfer_cache_is_bounded():
    """Many different grids keep at most MAX_ENTRIES responses on the channel, each still right."""
    rng = np.random.default_rng(11)
    ch = random_channel(rng, n_paths=15)
    for k in range(20):
        f = np.linspace(FC - B / 2, FC + B / 2, 50 + k)
        ref = numpy_transfer(ch.delay_s, ch.gain, ch.freq_hz, f)
        assert np.max(np.abs(ch.transfer_function(f).values - ref)) < 1e-9 * np.max(np.abs(ref))
    assert len(ch.__dict__["_transfer_cache"]) <= ch.__dict__["_transfer_cache"].MAX_ENTRIES
