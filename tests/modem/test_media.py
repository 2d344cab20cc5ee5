"""The channel medium's noise autocorrelation against its integral written out directly."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from aculink.channel import channel_for_site, link_budget
from aculink.modem.media import ChannelMedium
from aculink.site.loader import load_site

SITE = Path(__file__).resolve().parents[2] / "environments" / "shelf_summer.toml"


def test_noise_acf_equals_the_trapezoid_integral():
    """R[m] = int N(fc + f) |G(f)|^2 exp(j 2 pi f m T/2) df by numpy.trapezoid on the same grid
    (the slow, obvious twin of the rotation sum), to 1e-10 of R[0]."""
    site = load_site(SITE)
    ch = channel_for_site(site, n_freq=5)
    medium = ChannelMedium(ch, link_budget(site, ch))
    rs, beta, n_lags = 1200.0, 0.25, 40
    got = medium.noise_acf(rs, beta, n_lags)
    f, g2 = medium._baseband(rs, beta)
    n = medium.noise_psd(medium.carrier_hz + f) * g2
    lag = np.arange(n_lags)[:, None] / (2 * rs)
    want = np.trapezoid(n[None, :] * np.exp(2j * np.pi * f[None, :] * lag), f, axis=1)
    assert got.shape == want.shape and abs(want[0]) > 0
    np.testing.assert_allclose(got, want, rtol=0, atol=1e-10 * abs(want[0]))
