"""Raised-cosine and root-raised-cosine pulse shapes: the one home of these formulas.

Every function works in symbol units (time ``t/T``, frequency ``f/Rs``) and takes the roll-off
(excess bandwidth) ``rolloff`` in (0, 1]. The channel stage uses them for its band-limited path
responses and the modem for its transmit/receive filters and analytic estimates (the modem
imports the channel stage, never the reverse).

References
----------
Proakis, J. G., *Digital Communications*, 4th ed., McGraw-Hill, 2001, section 9.2 (raised-cosine
pulse and spectrum, eqs. 9.2-26 and 9.2-27); the root-raised-cosine impulse response is the
standard closed form (e.g. Proakis and Salehi, *Communication Systems Engineering*, 2nd ed.,
Prentice Hall, 2002, section 8.3), with removable singular points at t = 0 and |t| = T/(4 beta).
"""

from __future__ import annotations

import numpy as np

from aculink.errors import check_range

__all__ = ["raised_cosine", "raised_cosine_spectrum", "root_raised_cosine"]


def _rolloff(rolloff) -> float:
    return check_range("rolloff", rolloff, 0.0, 1.0, low_open=True)


def raised_cosine(t_over_t, rolloff) -> np.ndarray:
    """Raised-cosine pulse ``p(t) = sinc(t/T) cos(pi beta t/T) / (1 - 4 beta^2 t^2/T^2)``.

    ``p(0) = 1`` and ``p(nT) = 0`` for every other integer n (the Nyquist criterion). The
    removable singularity at ``|t| = T/(2 beta)`` takes its limit ``(pi/4) sinc(1/(2 beta))``.

    Parameters
    ----------
    t_over_t : array_like
        Time in symbol periods.
    rolloff : float
        Excess bandwidth beta in (0, 1].

    References
    ----------
    Proakis (2001), eq. 9.2-27.
    """
    b = _rolloff(rolloff)
    x = np.asarray(t_over_t, dtype=float)
    den = 1.0 - (2.0 * b * x) ** 2
    singular = np.abs(den) < 1e-10
    out = np.sinc(x) * np.cos(np.pi * b * x) / np.where(singular, 1.0, den)
    return np.where(singular, np.pi / 4.0 * np.sinc(1.0 / (2.0 * b)), out)


def raised_cosine_spectrum(freq_over_rs, rolloff) -> np.ndarray:
    """Raised-cosine spectrum ``P(f)/T`` (1 in the flat band), at frequencies ``f/Rs``.

    The Fourier transform of :func:`raised_cosine` divided by T; also ``|G(f)|^2 / T`` of a
    unit-energy root-raised-cosine pulse ``g``. Zero beyond ``|f| = (1 + beta) Rs / 2``.

    References
    ----------
    Proakis (2001), eq. 9.2-26.
    """
    b = _rolloff(rolloff)
    f = np.abs(np.asarray(freq_over_rs, dtype=float))
    lo, hi = (1.0 - b) / 2.0, (1.0 + b) / 2.0
    out = np.where(f <= lo, 1.0, 0.0)
    edge = (f > lo) & (f <= hi)
    return np.where(edge, 0.5 * (1.0 + np.cos(np.pi / b * (f - lo))), out)


def root_raised_cosine(t_over_t, rolloff) -> np.ndarray:
    """Unit-energy root-raised-cosine pulse ``sqrt(T) h(t)`` at times ``t/T``.

    ``h(t) = (1/sqrt T)[sin(pi(1-b)t/T) + (4bt/T) cos(pi(1+b)t/T)] / [(pi t/T)(1 - (4bt/T)^2)]``,
    ``h(0) = (1/sqrt T)(1 - b + 4b/pi)``,
    ``h(T/4b) = (b/sqrt(2T))[(1 + 2/pi) sin(pi/4b) + (1 - 2/pi) cos(pi/4b)]``. Its
    autocorrelation is :func:`raised_cosine`.

    Parameters
    ----------
    t_over_t : array_like
        Time in symbol periods.
    rolloff : float
        Excess bandwidth beta in (0, 1].

    References
    ----------
    Proakis and Salehi (2002), section 8.3 (closed form of the square-root raised cosine).
    """
    b = _rolloff(rolloff)
    t = np.atleast_1d(np.asarray(t_over_t, dtype=float))
    out = np.empty_like(t)
    at0 = np.abs(t) < 1e-12
    atq = np.abs(np.abs(t) - 1.0 / (4.0 * b)) < 1e-9
    reg = ~(at0 | atq)
    tr = t[reg]
    out[reg] = (np.sin(np.pi * (1 - b) * tr) + 4 * b * tr * np.cos(np.pi * (1 + b) * tr)) / (
        np.pi * tr * (1 - (4 * b * tr) ** 2))
    out[at0] = 1 - b + 4 * b / np.pi
    out[atq] = b / np.sqrt(2) * ((1 + 2 / np.pi) * np.sin(np.pi / (4 * b)) + (1 - 2 / np.pi) * np.cos(np.pi / (4 * b)))
    return out.reshape(np.shape(t_over_t))
