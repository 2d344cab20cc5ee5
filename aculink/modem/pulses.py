"""The modem's pulses: the shared pulse shapes, the discrete transmit/receive filter and the
overall pulse the simulator's filters make.

The formulas (raised cosine, its spectrum, root raised cosine) live in
:mod:`aculink.channel.pulses` and are re-exported here; this module adds what only the modem
needs: the truncated, unit-energy discrete RRC filter of the transmitter and matched filter, and
its autocorrelation (the pulse a symbol and the noise both reach the equalizer through).

References
----------
Proakis, J. G., *Digital Communications*, 4th ed., McGraw-Hill, 2001, section 9.2.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from aculink.channel.pulses import raised_cosine, raised_cosine_spectrum, root_raised_cosine
from aculink.errors import AculinkError

__all__ = ["raised_cosine", "raised_cosine_spectrum", "root_raised_cosine", "rrc_impulse", "rrc_taps",
           "DEFAULT_SPAN_SYMBOLS", "filter_pulse"]

#: Pulse truncation used by the transmitter and the matched filter, symbols each side.
DEFAULT_SPAN_SYMBOLS = 10

#: The root-raised-cosine pulse under its older name (time in symbol periods).
rrc_impulse = root_raised_cosine


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
    h = root_raised_cosine(n / sps, rolloff)
    return h / np.sqrt(np.sum(h * h))


#: Oversampling at which :func:`filter_pulse` forms the filters' autocorrelation (the
#: simulator's default samples per symbol for a tap list).
_FILTER_SPS = 4


@lru_cache(maxsize=64)
def _filter_pulse(rolloff: float, sps: int, span_symbols: int) -> tuple[np.ndarray, int]:
    fine = int(np.lcm(sps, _FILTER_SPS))
    g = rrc_taps(rolloff, fine, span_symbols)
    c = np.convolve(g, g[::-1])  # transmit filter then matched filter
    centre = g.size - 1
    step = fine // sps
    out = c[centre % step::step].copy()
    out.setflags(write=False)
    return out, centre // step


def filter_pulse(rolloff: float, samples_per_symbol: int, span_symbols: int = DEFAULT_SPAN_SYMBOLS):
    """The overall pulse of the truncated RRC transmit filter and matched filter, at T/sps.

    ``c = g * g~`` (the autocorrelation of :func:`rrc_taps`, formed at 4 or more samples per
    symbol and decimated): a symbol reaches the matched-filter output through ``c`` and white
    noise of variance ``sigma^2`` comes out with autocorrelation ``sigma^2 c``, so a signal
    response and a noise autocorrelation built from it belong to one and the same pulse
    (unlike an exact raised cosine cut at some length, whose spectrum leaks where the noise
    has none). Close to :func:`raised_cosine` (to about 1e-3) but spanning twice the filters'
    truncation.

    Returns
    -------
    pulse : read-only ndarray
        ``c(k T / sps)`` for ``k = -centre .. centre``; ``c(0) = 1``.
    centre : int
        Index of ``t = 0``.
    """
    sps = int(samples_per_symbol)
    if sps < 1:
        raise AculinkError(f"samples_per_symbol = {samples_per_symbol}: must be >= 1")
    return _filter_pulse(float(rolloff), sps, int(span_symbols))
