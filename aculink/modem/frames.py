"""Frame layout: training preamble, payload, a short tail marker and a guard interval.

A frame is ``[training | payload | tail]`` followed by silence (the guard) at least as long as
the channel's multipath spread, so consecutive frames do not overlap at the receiver. The first
``SYNC_SYMBOLS`` training symbols double as the detection preamble; the tail repeats them so
that the distance between the two correlation peaks measures the Doppler time scale.
Everything except the payload is overhead: the net bit rate is
``Rs log2(M) n_payload / (n_train + n_payload + n_tail + n_guard)``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from aculink.errors import AculinkError

__all__ = ["SYNC_SYMBOLS", "MIN_PAYLOAD_SYMBOLS", "PAYLOAD_PER_TRAINING", "TRAINING_PER_TAP", "FrameLayout",
           "default_training", "frame_layout"]

#: Symbols of the detection preamble (and of the tail marker): 64 symbols give 18 dB of
#: correlation gain for detection and timing (common practice, no source).
SYNC_SYMBOLS = 64
#: Payload symbols per frame unless overridden: at least this, and at least
#: ``PAYLOAD_PER_TRAINING`` times the training (common practice, no source: keeps the training
#: overhead near 10-20 %).
MIN_PAYLOAD_SYMBOLS = 1024
PAYLOAD_PER_TRAINING = 6
#: Training per adapted tap: RLS converges to within about 3 dB of its final MSE in about
#: twice the number of taps (Haykin, Adaptive Filter Theory, 4th ed., 2002, ch. 9); we train
#: for four times to be past that knee. NLMS needs about an order of magnitude more
#: (Haykin, ch. 6; from memory).
TRAINING_PER_TAP = {"rls": 4, "nlms": 20}


@dataclass(frozen=True)
class FrameLayout:
    """Symbol counts of one frame (see the module docstring)."""

    n_train: int
    n_payload: int
    n_tail: int
    n_guard: int

    @property
    def n_sent(self) -> int:
        """Symbols transmitted (training + payload + tail)."""
        return self.n_train + self.n_payload + self.n_tail

    @property
    def n_total(self) -> int:
        """Symbol periods the frame occupies, guard included."""
        return self.n_sent + self.n_guard

    @property
    def payload_fraction(self) -> float:
        return self.n_payload / self.n_total

    @property
    def training_fraction(self) -> float:
        """Everything that is not payload (training, tail marker, guard) over the frame."""
        return 1.0 - self.payload_fraction


def default_training(n_adapted: int, *, algorithm: str = "rls", receiver: str = "dfe") -> int:
    """Training symbols for a receiver adapting (or estimating) ``n_adapted`` coefficients."""
    if receiver == "none":
        return SYNC_SYMBOLS
    per = TRAINING_PER_TAP.get(algorithm, TRAINING_PER_TAP["rls"])
    return max(2 * SYNC_SYMBOLS, int(math.ceil(per * n_adapted)))


def frame_layout(n_adapted: int, spread_symbols: int, *, algorithm="rls", receiver="dfe",
                 n_training=None, n_payload=None) -> FrameLayout:
    """The frame for a receiver with ``n_adapted`` taps on a channel spanning ``spread_symbols``.

    Raises
    ------
    AculinkError
        When an explicit training length is shorter than the taps (or the sync preamble), or
        the payload is below 1 symbol.
    """
    if n_training is None:
        n_train = default_training(n_adapted, algorithm=algorithm, receiver=receiver)
    else:
        n_train = int(n_training)
        low = max(SYNC_SYMBOLS, n_adapted if receiver != "none" else 0)
        if n_train < low:
            raise AculinkError(f"n_training = {n_training}: must be >= {low} symbols (the "
                               f"{n_adapted} equalizer taps and the {SYNC_SYMBOLS}-symbol sync preamble)")
    if n_payload is None:
        n_pay = max(MIN_PAYLOAD_SYMBOLS, PAYLOAD_PER_TRAINING * n_train)
    else:
        n_pay = int(n_payload)
        if n_pay < 1:
            raise AculinkError(f"n_payload = {n_payload}: must be >= 1 symbol")
    return FrameLayout(n_train, n_pay, SYNC_SYMBOLS, max(0, int(spread_symbols)))
