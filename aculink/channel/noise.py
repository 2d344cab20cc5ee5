"""Coloured complex baseband noise that follows a passband noise spectrum across the band."""

from __future__ import annotations

import numpy as np

from aculink.errors import AculinkError, check_range

__all__ = ["colored_noise"]

#: Lowest passband frequency at which the spectrum is evaluated, Hz: baseband bins that map to
#: fc + f <= 0 (a sample rate above twice the carrier) take the level at this frequency.
_LOWEST_HZ = 1.0


def colored_noise(n, sample_rate_hz, carrier_hz, psd_db_func, seed):
    """Complex Gaussian baseband noise whose PSD at baseband f is ``psd_db_func(fc + f)``.

    Seeded white complex Gaussian noise is shaped in the frequency domain: its N-point DFT is
    multiplied by sqrt(PSD(fc + f_k)) and transformed back, so the samples are circular Gaussian
    with ``E|n|^2 = sum_k PSD(fc + f_k) fs / N`` (the integral of the PSD over the sampled band).
    A signal whose complex samples have mean power P then has SNR P / E|n|^2 against it, the
    convention the modem simulator uses with :func:`aculink.channel.apply_channel`. The output is
    periodic with period n samples (circular shaping).

    Parameters
    ----------
    n : int
        Number of samples, >= 1.
    sample_rate_hz : float
        > 0.
    carrier_hz : float
        > 0.
    psd_db_func : callable
        Passband frequency (Hz, array) -> PSD in dB re 1 uPa^2/Hz (e.g.
        :meth:`aculink.channel.LinkBudget.noise_psd_db`).
    seed : int or numpy.random.Generator
        Same seed, same noise.

    Returns
    -------
    (n,) complex ndarray
        Noise samples, uPa.

    References
    ----------
    D. B. Percival and A. T. Walden, Spectral Analysis for Physical Applications (1993): spectral
    synthesis of a Gaussian process by shaping white noise in the frequency domain (memory).
    """
    if isinstance(n, bool) or int(n) != n or n < 1:
        raise AculinkError(f"n = {n!r}: expected a whole number of samples >= 1")
    fs = check_range("sample_rate_hz", sample_rate_hz, 0.0, None, low_open=True, unit="Hz")
    fc = check_range("carrier_hz", carrier_hz, 0.0, None, low_open=True, unit="Hz")
    n = int(n)
    rng = np.random.default_rng(seed)
    white = (rng.standard_normal(n) + 1j * rng.standard_normal(n)) / np.sqrt(2.0)
    f = np.fft.fftfreq(n, d=1.0 / fs)
    level_db = np.asarray(psd_db_func(np.maximum(fc + f, _LOWEST_HZ)), dtype=float)
    if level_db.shape != f.shape or not np.all(np.isfinite(level_db)):
        raise AculinkError("psd_db_func must return a finite level for every frequency")
    amplitude = np.sqrt(10.0 ** (level_db / 10.0) * fs)
    return np.fft.ifft(np.fft.fft(white) * amplitude)
