"""Root-raised-cosine pulses and the raised-cosine spectrum.

References
----------
Proakis, J. G., *Digital Communications*, 4th ed., McGraw-Hill, 2001, section 9.2 (raised
cosine spectrum, eq. 9.2-26); the root-raised-cosine impulse response is the standard closed
form (e.g. Proakis and Salehi, *Communication Systems Engineering*, 2nd ed., 2002), with its
removable singular points at t = 0 and |t| = T / (4 beta).
"""

from __future__ import annotations

import numpy as np

from aculink.errors import AculinkError, check_range

#: Pulse truncation used by the transmitter and the matched filter, symbols each side.
DEFAULT_SPAN_SYMBOLS = 10


def rrc_impulse(t_over_t, rolloff: float) -> np.ndarray:
    """Unit-energy root-raised-cosine pulse ``sqrt(T) h(t)`` at times ``t/T``.

    Parameters
    ----------
    t_over_t : array
        Time in symbol periods.
    rolloff : float
        Excess bandwidth beta in (0, 1].

    Returns
    -------
    ndarray
        ``sqrt(T) h(t)``; integral of its square over ``t/T`` is 1.

    References
    ----------
    Root-raised-cosine closed form: ``h(t) = (1/sqrt T)[sin(pi(1-b)t/T) + (4bt/T) cos(pi(1+b)t/T)]
    / [(pi t/T)(1 - (4bt/T)^2)]``, ``h(0) = (1/sqrt T)(1 - b + 4b/pi)``,
    ``h(T/4b) = (b/sqrt(2T))[(1 + 2/pi) sin(pi/4b) + (1 - 2/pi) cos(pi/4b)]``.
    """
    b = check_range("rolloff", rolloff, 0.0, 1.0, low_open=True)
    t = np.asarray(t_over_t, dtype=float)
    out = np.empty_like(t)
    at0 = np.abs(t) < 1e-12
    atq = np.abs(np.abs(t) - 1.0 / (4.0 * b)) < 1e-9
    reg = ~(at0 | atq)
    tr = t[reg]
    out[reg] = (np.sin(np.pi * (1 - b) * tr) + 4 * b * tr * np.cos(np.pi * (1 + b) * tr)) / (
        np.pi * tr * (1 - (4 * b * tr) ** 2))
    out[at0] = 1 - b + 4 * b / np.pi
    out[atq] = b / np.sqrt(2) * ((1 + 2 / np.pi) * np.sin(np.pi / (4 * b)) + (1 - 2 / np.pi) * np.cos(np.pi / (4 * b)))
    return out


def rrc_taps(rolloff: float, samples_per_symbol: int, span_symbols: int = DEFAULT_SPAN_SYMBOLS) -> np.ndarray:
    """Discrete RRC filter, ``2 span sps + 1`` taps, unit energy (sum of squares 1).

    With unit-energy taps, a unit-energy symbol stream and white noise of variance ``sigma^2``
    per sample, the matched-filter output at the symbol instants has the symbol with gain 1
    and noise of variance ``sigma^2``: Es/N0 = 1 / sigma^2.
    """
    sps = int(samples_per_symbol)
    if sps < 1:
        raise AculinkError(f"samples_per_symbol = {samples_per_symbol}: must be >= 1")
    n = np.arange(-span_symbols * sps, span_symbols * sps + 1)
    h = rrc_impulse(n / sps, rolloff)
    return h / np.sqrt(np.sum(h * h))


def raised_cosine_spectrum(freq_over_rs, rolloff: float) -> np.ndarray:
    """Raised-cosine spectrum ``P(f)/T`` (1 in the flat band), at frequencies ``f/Rs``.

    It is also ``|G(f)|^2 / T`` of a unit-energy RRC pulse ``g``.

    References
    ----------
    Proakis (2001), eq. 9.2-26.
    """
    b = float(rolloff)
    f = np.abs(np.asarray(freq_over_rs, dtype=float))
    lo, hi = (1 - b) / 2, (1 + b) / 2
    out = np.where(f <= lo, 1.0, 0.0)
    mid = (f > lo) & (f <= hi)
    out = np.where(mid, 0.5 * (1 + np.cos(np.pi / b * (f - lo))), out)
    return out
