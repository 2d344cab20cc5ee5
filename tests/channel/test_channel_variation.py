"""Time variation: Doppler time scaling, surface gains, and the numba kernel against its twin."""

from __future__ import annotations

import numpy as np
import pytest

from aculink.channel import Channel, apply_channel
from aculink.channel.apply import gains_at
from aculink.channel.variation import (
    SurfaceMotion,
    doppler_factors,
    surface_doppler_spread_hz,
    surface_gain_factors,
    surface_phase_std,
)
from aculink.site.model import Receiver, Source

from .conftest import image_arrivals

FC, B = 12000.0, 6000.0


def test_doppler_factor_table_values():
    """a = v/c: 1.5 m/s horizontal at c = 1500 m/s gives 1e-3, 12 Hz at 12 kHz; 5 m/s gives
    3.33e-3 ([Li2008] Doppler table, computed). A receiver moving away with
    the same speed cancels it; a steep ray sees v cos(theta)."""
    a = doppler_factors(0.0, 0.0, 1.5, 0.0, 1500.0, 1500.0)
    assert a == pytest.approx(1e-3, rel=1e-12) and a * 12000 == pytest.approx(12.0)
    assert doppler_factors(0.0, 0.0, 5.0, 0.0, 1500.0, 1500.0) == pytest.approx(3.333e-3, rel=1e-3)
    assert doppler_factors(0.3, 0.3, 2.0, 2.0, 1500.0, 1500.0) == pytest.approx(0.0, abs=1e-15)
    assert doppler_factors(np.pi / 3, 0.0, 3.0, 0.0, 1500.0, 1500.0) == pytest.approx(1e-3, rel=1e-12)


def test_from_arrivals_doppler_uses_platform_speeds(calm_site):
    """from_arrivals: a_p = (v_s cos theta_s)/c_s - (v_r cos theta_r)/c_r for every path (the
    issue's formula; c from the site's profile at each end)."""
    site = calm_site.replace(source=Source(depth_m=30.0, speed_mps=1.5),
                             receiver=Receiver(depth_m=50.0, range_m=1000.0, speed_mps=-0.5))
    arr = image_arrivals(zs=30.0, zr=50.0, n_images=1)
    ch = Channel.from_arrivals(arr, site)
    c_s, c_r = site.water.profile.speed(np.array([30.0, 50.0]))
    th = np.deg2rad(arr["launch_angle_deg"].values[0, 0])
    expected = np.sort(1.5 * np.cos(th) / c_s + 0.5 * np.cos(th) / c_r)
    np.testing.assert_allclose(np.sort(ch.doppler), expected, rtol=1e-12)


def test_tone_through_doppler_path_is_shifted_by_a_fc():
    """A constant baseband tone (the carrier) through a path with Doppler factor a comes out at
    a fc: 1.5 m/s at 12 kHz -> a = 1e-3 -> 12 Hz ([Li2008]: baseband
    s((1+a)t - tau) exp(j 2 pi a fc t))."""
    fs, a = 8000.0, 1e-3
    ch = Channel.from_taps([0.05], [1.0], FC, B, doppler=[a])
    x = np.ones(int(4 * fs), dtype=complex)
    y, start = apply_channel(ch, x, fs, return_start=True)
    t = start + np.arange(y.size) / fs
    m = (t > 0.5) & (t < 3.5)
    phase = np.unwrap(np.angle(y[m]))
    slope = np.polyfit(t[m], phase, 1)[0] / (2 * np.pi)
    assert slope == pytest.approx(a * FC, rel=1e-6)
    assert slope == pytest.approx(12.0, rel=1e-6)
    np.testing.assert_allclose(np.abs(y[m]), 1.0, atol=2e-4)


def test_delay_drifts_by_a_per_second():
    """Pulses sent 1 s apart arrive 1/(1 + a) s apart: the delay tau(t) = tau - a t drifts by
    a / (1 + a) ~ a per second ([Li2008], time scaling; derived)."""
    fs, a = 12000.0, 2e-3
    ch = Channel.from_taps([0.1], [1.0], FC, B, doppler=[a])
    n = int(3.2 * fs)
    t = np.arange(n) / fs
    rs = 2000.0
    from aculink.channel.pulses import raised_cosine

    x = raised_cosine((t - 0.1) * rs, 0.5) + raised_cosine((t - 1.1) * rs, 0.5) + 0j
    y, start = apply_channel(ch, x, fs, return_start=True)
    ty = start + np.arange(y.size) / fs
    peaks = []
    for t_tx in (0.1, 1.1):
        t_rx = (t_tx + 0.1) / (1 + a)
        w = np.abs(ty - t_rx) < 2e-3
        k = np.flatnonzero(w)[np.argmax(np.abs(y[w]))]
        # parabolic interpolation of |y| around the peak
        y0, y1, y2 = np.abs(y[k - 1:k + 2])
        peaks.append(ty[k] + (y0 - y2) / (2 * (y0 - 2 * y1 + y2)) / fs)
    drift = 1.0 - (peaks[1] - peaks[0])
    assert drift == pytest.approx(a / (1 + a), rel=0.02)


def test_scattered_gain_has_zero_mean_and_unit_power():
    """Scattered sub-path gain z = (exp(j phi) - chi) / sqrt(1 - chi^2): zero mean and unit power
    over realisations (Gaussian phase of variance Gamma^2 = 4 k^2 sigma^2 S: E exp(j phi) =
    exp(-Gamma^2 / 2) = chi, the Eckart coherent factor; Eckart 1953, closed form); steady paths
    get exactly 1."""
    motion = SurfaceMotion(rms_height_m=0.01, wind_speed_mps=5.0, sound_speed_mps=1500.0)
    sin2 = np.full(20000, 0.2)
    std = surface_phase_std(sin2, FC, motion)
    k = 2 * np.pi * FC / 1500.0
    assert std[0] == pytest.approx(2 * k * 0.01 * np.sqrt(0.2), rel=1e-12)
    scattered = np.ones(sin2.size, bool)
    scattered[:10] = False
    f = surface_gain_factors(sin2, FC, motion, np.array([0.0, 3.7]), seed=11, scattered=scattered)
    np.testing.assert_array_equal(f[:10], 1.0)
    z = f[10:]
    stderr = 1.0 / np.sqrt(z.shape[0])
    for col in range(2):
        assert abs(z[:, col].mean()) < 4 * stderr
        assert np.mean(np.abs(z[:, col]) ** 2) == pytest.approx(1.0, abs=6 * stderr)


def test_scattered_doppler_spread_closed_form_and_physics():
    """RMS Doppler width of the scattered gain, 2 fc sqrt(S) v_rms / (c sqrt(1 - exp(-Gamma^2)))
    (second moment of the spectrum of exp(j phi) minus its coherent line; derived): checked
    against the rate of change of the synthesised z(t) (numerical derivative), v_rms against the
    PM spectrum's second moment from aculink.site.surface (Pierson and Moskowitz 1964; 10%
    allowed for the truncated spectral band of the synthesis), and the smooth-surface limit
    against the wave spectrum's rms frequency sqrt(m2 / m0) / (2 pi) (closed form)."""
    from aculink.channel.variation import scattered_doppler_spread_hz
    from aculink.site.surface import rms_wave_height_pierson_moskowitz, surface_vertical_velocity_rms

    motion = SurfaceMotion(float(rms_wave_height_pierson_moskowitz(4.0)), 4.0, 1500.0)
    v = motion.elevation_velocity_rms_mps()
    assert v == pytest.approx(float(surface_vertical_velocity_rms(4.0)), rel=0.10)
    sin2 = np.full(4000, 0.002)
    total = surface_doppler_spread_hz(sin2, FC, motion)
    assert total[0] == pytest.approx(2 * FC * np.sqrt(0.002) * v / 1500.0, rel=1e-12)
    gamma2 = surface_phase_std(sin2, FC, motion)[0] ** 2
    spread = scattered_doppler_spread_hz(sin2, FC, motion)
    assert spread[0] == pytest.approx(total[0] / np.sqrt(1 - np.exp(-gamma2)), rel=1e-12)
    dt = 1e-3
    t = np.array([10.0, 10.0 + dt])
    f = surface_gain_factors(sin2, FC, motion, t, seed=4, scattered=np.ones(sin2.size, bool))
    rate = np.abs(f[:, 1] - f[:, 0]) / dt / (2 * np.pi)
    assert np.sqrt(np.mean(rate ** 2)) == pytest.approx(spread[0], rel=0.08)
    # nearly smooth surface: the scattered part moves at the waves' rms frequency
    calm = SurfaceMotion(1e-5, 4.0, 1500.0)
    w, var = calm.spectrum_grid()
    f_waves = np.sqrt(np.sum(w ** 2 * var) / np.sum(var)) / (2 * np.pi)
    assert scattered_doppler_spread_hz(np.array([0.01]), FC, calm)[0] == pytest.approx(f_waves, rel=1e-4)


def test_seeded_and_reproducible(shelf_site):
    """Same seed, same output; another seed, another realisation (project rule; regression)."""
    arr = image_arrivals(zs=20.0, zr=50.0, n_images=1, range_m=800.0)
    ch = Channel.from_arrivals(arr, shelf_site.with_geometry(range_m=800.0, depth_m=50.0))
    assert ch.is_time_varying
    x = np.exp(2j * np.pi * 300 * np.arange(4000) / 12000.0)
    y1 = apply_channel(ch, x, 12000.0, seed=5)
    y2 = apply_channel(ch, x, 12000.0, seed=5)
    y3 = apply_channel(ch, x, 12000.0, seed=6)
    np.testing.assert_array_equal(y1, y2)
    assert np.max(np.abs(y1 - y3)) > 1e-3 * np.max(np.abs(y1))


def _twin(channel, sig, fs, seed, t0, start, n_out):
    """Slow, obviously correct numpy twin: per output sample and path, the exact delay
    tau_p - a_p t, the exact carrier phase, and the surface factor evaluated at that sample."""
    t = start + np.arange(n_out) / fs
    g = gains_at(channel, t, seed)
    y = np.zeros(n_out, dtype=complex)
    for p in range(channel.n_paths):
        tau_t = channel.delay_s[p] - channel.doppler[p] * t
        y += g[p] * np.exp(-2j * np.pi * channel.carrier_hz * tau_t) * sig(t - tau_t - t0)
    return y


def test_numba_kernel_matches_slow_twin_within_one_percent():
    """The numba sparse path loop (Farrow interpolation, float32 arithmetic, control-grid
    gains, scattered sub-paths with Doppler-spread random gains) against the slow numpy twin
    with exact per-sample delays and gains and an analytic band-limited input (fast kernel vs
    twin, project rule; target 1%)."""
    fs, t0 = 12000.0, 0.3
    rng = np.random.default_rng(2)
    freqs = rng.uniform(-0.48 * B, 0.48 * B, 24)
    ph = rng.uniform(0, 2 * np.pi, 24)

    def sig(tt):
        return np.exp(2j * np.pi * np.outer(tt, freqs) + 1j * ph).sum(axis=1) / np.sqrt(24)

    n_in = 24000
    delays = np.sort(rng.uniform(0.2, 0.26, 12))
    gains = (rng.standard_normal(12) + 1j * rng.standard_normal(12)) * 0.1
    dop = rng.uniform(-3e-3, 3e-3, 12)
    ch = Channel.from_taps(delays, gains, FC, B, doppler=dop)
    from dataclasses import replace

    from aculink.channel.scatter import add_surface_scatter

    sin2 = np.where(np.arange(12) % 2 == 0, 0.02, 0.0)
    ch = replace(ch, surface_grazing_sin2_sum=sin2, surface_bounces=(sin2 > 0).astype(int),
                 surface_doppler_spread_hz=None, surface=SurfaceMotion(0.05, 6.0, 1500.0))
    ch = add_surface_scatter(ch)
    assert ch.scattered.sum() == 24 and ch.is_time_varying
    x = sig(np.arange(n_in) / fs)
    y, start = apply_channel(ch, x, fs, seed=9, t0_s=t0, return_start=True)
    ref = _twin(ch, sig, fs, 9, t0, start, y.size)
    t = start + np.arange(y.size) / fs
    # compare where every path sees the input fully on (away from switch-on transients)
    m = (t > t0 + 0.3) & (t < t0 + n_in / fs - 0.05)
    err = np.sqrt(np.mean(np.abs(y[m] - ref[m]) ** 2) / np.mean(np.abs(ref[m]) ** 2))
    print("kernel vs twin rms error", err)
    assert err < 0.01


def test_farrow_branch_kernel_matches_numpy_convolve():
    """Fast kernel vs slow twin: the numba Farrow branch filter equals numpy.convolve with each
    reversed coefficient row (reference library, 1e-12)."""
    from aculink.channel import _kernels
    from aculink.channel.apply import farrow_coefficients

    _, c = farrow_coefficients()
    x = np.random.default_rng(8).standard_normal(5003)
    out = np.empty((c.shape[0], x.size + c.shape[1] - 1))
    _kernels.farrow_branches(x, c, out)
    for m in range(c.shape[0]):
        np.testing.assert_allclose(out[m], np.convolve(x, c[m, ::-1]), atol=1e-12)


def test_farrow_interpolator_accuracy_on_band_limited_tones():
    """The Farrow fractional-delay design reproduces exact band-limited tones (closed form) to
    better than 1e-3 rms for content up to 0.35 of the sample rate (design target in apply.py)."""
    from aculink.channel.apply import farrow_coefficients

    k, c = farrow_coefficients()
    rng = np.random.default_rng(3)
    fr = rng.uniform(-0.35, 0.35, 30)
    ph = rng.uniform(0, 2 * np.pi, 30)
    n = np.arange(3000)
    x = np.exp(2j * np.pi * np.outer(n, fr) + 1j * ph).sum(axis=1)
    pos = rng.uniform(100, 2800, 2000)
    exact = np.exp(2j * np.pi * np.outer(pos, fr) + 1j * ph).sum(axis=1)
    i = np.floor(pos).astype(int)
    mu = pos - i
    basis = np.vander(mu - 0.5, c.shape[0], increasing=True)
    est = np.sum((basis @ c) * x[i[:, None] + k[None, :]], axis=1)
    err = np.sqrt(np.mean(np.abs(est - exact) ** 2) / np.mean(np.abs(exact) ** 2))
    assert err < 1e-3
