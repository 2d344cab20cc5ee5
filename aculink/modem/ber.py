"""Closed-form symbol and bit error rates in additive white Gaussian noise.

Everything takes the linear symbol SNR ``es_n0`` (Es/N0, or the unbiased equalizer output SNR
treated as Gaussian) and broadcasts over arrays.

* BPSK and Gray QPSK: exact (Proakis 2001, section 5.2).
* M-PSK (8-PSK): exact symbol error by Craig's integral; exact Gray bit error from the
  probabilities of each decision sector, written with the same one-sided integral
  ``F(psi) = (1/2 pi) int_0^{pi - psi} exp(-g sin^2 psi / sin^2 phi) dphi`` (Pawula, Rice and
  Roberts 1982), which gives ``Ps = 2 F(pi/M)``, Craig's form.
* Square M-QAM: exact symbol error ``2p - p^2`` with ``p = 2(1 - 1/sqrt M) Q(sqrt(3 Es/((M-1) N0)))``;
  exact Gray bit error by summing, on each axis, the Hamming distance between the sent and the
  decided Gray label times the Gaussian probability of each decision interval. This is the
  quantity Cho and Yoon (2002) give in closed form.

References
----------
Proakis, J. G., *Digital Communications*, 4th ed., McGraw-Hill, 2001, sections 5.2-7 and 5.2-9.
Craig, J. W., "A new, simple and exact result for calculating the probability of error for
two-dimensional signal constellations", Proc. IEEE MILCOM, 1991.
Pawula, R. F., Rice, S. O. and Roberts, J. H., "Distribution of the phase angle between two
vectors perturbed by Gaussian noise", IEEE Trans. Commun. 30(8), 1828-1841, 1982.
Cho, K. and Yoon, D., "On the general BER expression of one- and two-dimensional amplitude
modulations", IEEE Trans. Commun. 50(7), 1074-1080, 2002.
"""

from __future__ import annotations

from functools import cache

import numpy as np
from scipy.special import erfc

from aculink.modem.constellations import MODULATIONS, check_modulation, constellation

__all__ = ["q_function", "symbol_error_rate", "bit_error_rate", "es_n0_for_ber"]

_GL_NODES = 96


def q_function(x):
    """Gaussian tail ``Q(x) = erfc(x / sqrt 2) / 2``."""
    return 0.5 * erfc(np.asarray(x, dtype=float) / np.sqrt(2.0))


@cache
def _gauss_legendre():
    return np.polynomial.legendre.leggauss(_GL_NODES)


def _psk_tail(psi, es_n0):
    """``F(psi)``: probability that the phase error exceeds ``psi`` (0 <= psi < pi), one side."""
    x, w = _gauss_legendre()
    g = np.asarray(es_n0, dtype=float)[..., None]
    half = 0.5 * (np.pi - psi)
    phi = half * (x + 1.0)
    integrand = np.exp(-g * np.sin(psi) ** 2 / np.sin(phi) ** 2)
    return (integrand @ w) * half / (2.0 * np.pi)


@cache
def _psk_distance_table(name):
    """Mean Hamming distance between the labels of points i sectors apart (i = 0..M-1)."""
    c = constellation(name)
    m = c.order
    ang = np.round(np.angle(c.points) / (2 * np.pi / m)).astype(int) % m
    label_at = np.empty(m, dtype=int)
    label_at[ang] = np.arange(m)
    bits = c.label_bits()
    dist = np.zeros(m)
    for i in range(m):
        dist[i] = np.mean([np.sum(bits[label_at[p]] != bits[label_at[(p + i) % m]]) for p in range(m)])
    return dist


def _psk_sector_probabilities(m, es_n0):
    """Probabilities of deciding the point i sectors away, i = 1..M-1 (shape (..., M-1))."""
    out = []
    for i in range(1, m):
        j = min(i, m - i)
        if 2 * j == m:
            out.append(2.0 * _psk_tail((m - 1) * np.pi / m, es_n0))
        else:
            out.append(_psk_tail((2 * j - 1) * np.pi / m, es_n0) - _psk_tail((2 * j + 1) * np.pi / m, es_n0))
    return np.stack(out, axis=-1)


@cache
def _pam_gray_tables(side):
    gray = np.arange(side) ^ (np.arange(side) >> 1)
    k = side.bit_length() - 1
    bits = (gray[:, None] >> np.arange(k)[None, :]) & 1
    ham = (bits[:, None, :] != bits[None, :, :]).sum(axis=-1).astype(float)
    level = 2.0 * np.arange(side) - (side - 1)
    edges = np.concatenate([[-np.inf], 0.5 * (level[1:] + level[:-1]), [np.inf]])
    return level, edges, ham, k


def _qam_ber(m, es_n0):
    """Exact Gray bit error of square M-QAM (one axis is a sqrt(M)-PAM with Gray labels)."""
    side = int(round(np.sqrt(m)))
    level, edges, ham, k = _pam_gray_tables(side)
    es_n0 = np.asarray(es_n0, dtype=float)
    # level spacing 2 with E = 2(M-1)/3 per complex symbol; per-axis noise variance N0/2
    sigma = np.sqrt(2.0 * (m - 1) / 3.0 / (2.0 * es_n0))[..., None, None]
    lo = (edges[None, :-1] - level[:, None])
    hi = (edges[None, 1:] - level[:, None])
    prob = q_function(lo / sigma) - q_function(hi / sigma)
    return np.sum(prob * ham, axis=(-1, -2)) / (side * k)


def symbol_error_rate(modulation, es_n0):
    """Exact symbol error probability in AWGN at linear Es/N0.

    Parameters
    ----------
    modulation : str
        One of ``bpsk qpsk 8psk 16qam 64qam``.
    es_n0 : float or array
        Linear symbol SNR.

    References
    ----------
    Proakis (2001), sections 5.2-7 and 5.2-9; Craig (1991) for M-PSK.
    """
    key = check_modulation(modulation)
    g = np.maximum(np.asarray(es_n0, dtype=float), 0.0)
    if key == "bpsk":
        return q_function(np.sqrt(2 * g))
    if key == "qpsk":
        q = q_function(np.sqrt(g))
        return 2 * q - q * q
    if key == "8psk":
        return 2.0 * _psk_tail(np.pi / 8, g)
    m = 1 << MODULATIONS[key]
    p = 2 * (1 - 1 / np.sqrt(m)) * q_function(np.sqrt(3 * g / (m - 1)))
    return 2 * p - p * p


def bit_error_rate(modulation, es_n0):
    """Exact Gray-mapped bit error probability in AWGN at linear Es/N0.

    References
    ----------
    Proakis (2001), section 5.2; Pawula, Rice and Roberts (1982) for the 8-PSK sectors; Cho and
    Yoon (2002) for square QAM.
    """
    key = check_modulation(modulation)
    g = np.maximum(np.asarray(es_n0, dtype=float), 0.0)
    if key == "bpsk":
        return q_function(np.sqrt(2 * g))
    if key == "qpsk":
        return q_function(np.sqrt(g))
    if key == "8psk":
        dist = _psk_distance_table(key)[1:]
        return _psk_sector_probabilities(8, g) @ dist / 3.0
    return _qam_ber(1 << MODULATIONS[key], g)


def es_n0_for_ber(modulation, target_ber) -> float:
    """Linear Es/N0 at which the Gray bit error equals ``target_ber`` (bisection in dB)."""
    from scipy.optimize import brentq

    f = lambda db: np.log(bit_error_rate(modulation, 10 ** (db / 10))) - np.log(target_ber)  # noqa: E731
    return 10 ** (brentq(f, -20.0, 60.0, xtol=1e-6) / 10)
