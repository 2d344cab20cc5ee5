"""The tracking lag of an exponentially weighted (RLS-like) estimate, against a Monte Carlo of
that estimator on a Gaussian-spectrum fading gain (an independent twin: scipy.signal.lfilter)."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest
from scipy.signal import lfilter

from aculink.modem.predict import tracking_lag_s


@pytest.mark.parametrize("memory", [8, 16])
def test_rls_tracking_lag_matches_the_windowed_estimate(memory):
    """The mean-square error of estimating a unit-power gain (Gaussian Doppler spectrum, rms width
    nu) from the past with weights (1 - lambda) lambda^k equals 2 (1 - rho(lag)) with the lag
    tracking_lag_s gives, within 15 % while the error is small (the first-order regime)."""
    rng = np.random.default_rng(7)
    n, nu = 2 ** 19, 0.002                       # samples; rms Doppler width, cycles per symbol
    f = np.fft.fftfreq(n)
    x = np.fft.ifft(np.fft.fft(rng.standard_normal(n) + 1j * rng.standard_normal(n))
                    * np.exp(-f ** 2 / (4 * nu ** 2)))
    x /= np.sqrt(np.mean(np.abs(x) ** 2))
    lam = 1.0 - 1.0 / memory
    est = lfilter([1 - lam], [1, -lam], x)
    err = np.mean(np.abs(x[10 * memory + 1:] - est[10 * memory:-1]) ** 2)   # decide with the past
    plan = SimpleNamespace(receiver="dfe", algorithm="rls", forgetting=lam)
    lag = tracking_lag_s(plan, None, 1.0)          # in symbols at 1 Bd
    predicted = 2 * (1 - np.exp(-2 * np.pi ** 2 * nu ** 2 * lag ** 2))
    assert predicted == pytest.approx(err, rel=0.15)
