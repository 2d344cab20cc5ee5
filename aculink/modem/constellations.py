"""Gray-mapped PSK and square QAM constellations with unit average symbol energy.

A constellation is a table ``points[label]``: the complex point sent for the integer label
whose binary digits (most significant first) are the bits. Gray mapping means points that are
nearest neighbours differ in one bit, so at moderate SNR one symbol error costs one bit.

References
----------
Proakis, J. G., *Digital Communications*, 4th ed., McGraw-Hill, 2001, sections 5.2-7 (PSK) and
5.2-9 (QAM), Gray mapping.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from aculink.errors import AculinkError, closest

__all__ = ["MODULATIONS", "Constellation", "check_modulation", "constellation"]

#: Bits per symbol of each modulation the modem offers.
MODULATIONS = {"bpsk": 1, "qpsk": 2, "8psk": 3, "16qam": 4, "64qam": 6}


@dataclass(frozen=True, eq=False)
class Constellation:
    """A labelled constellation: ``points[label]`` with unit mean energy.

    Attributes
    ----------
    name : str
        One of :data:`MODULATIONS`.
    points : ndarray of complex, shape (M,)
        The point for each label.
    bits_per_symbol : int
        log2(M).
    kind : str
        ``"psk"`` or ``"qam"``.
    """

    name: str
    points: np.ndarray
    bits_per_symbol: int
    kind: str

    @property
    def order(self) -> int:
        return int(self.points.size)

    def label_bits(self) -> np.ndarray:
        """(M, k) array of the bits of each label, most significant first."""
        k = self.bits_per_symbol
        labels = np.arange(self.order)
        return ((labels[:, None] >> np.arange(k - 1, -1, -1)[None, :]) & 1).astype(np.uint8)

    def map_bits(self, bits) -> np.ndarray:
        """Map a bit array (length a multiple of k) to labels; returns labels (int64)."""
        bits = np.asarray(bits, dtype=np.int64).reshape(-1, self.bits_per_symbol)
        weights = 1 << np.arange(self.bits_per_symbol - 1, -1, -1)
        return bits @ weights

    def bits_of(self, labels) -> np.ndarray:
        """Bits (flat, most significant first per symbol) of an array of labels."""
        return self.label_bits()[np.asarray(labels, dtype=np.int64)].reshape(-1)

    def decide(self, z) -> np.ndarray:
        """Nearest-point decisions (labels) for complex samples ``z`` (numpy, any shape)."""
        z = np.asarray(z)
        d = np.abs(z[..., None] - self.points) ** 2
        return np.argmin(d, axis=-1)


def _gray(n):
    n = np.asarray(n)
    return n ^ (n >> 1)


def _psk(m: int, offset_rad: float) -> np.ndarray:
    pos = np.arange(m)
    pts = np.empty(m, dtype=complex)
    pts[_gray(pos)] = np.exp(1j * (2 * np.pi * pos / m + offset_rad))
    return pts


def _square_qam(m: int) -> np.ndarray:
    side = int(round(np.sqrt(m)))
    k = side.bit_length() - 1
    level = 2.0 * np.arange(side) - (side - 1)
    pts = np.empty(m, dtype=complex)
    gi = _gray(np.arange(side))
    for i in range(side):
        for q in range(side):
            pts[(gi[i] << k) | gi[q]] = level[i] + 1j * level[q]
    return pts / np.sqrt(2.0 * (m - 1) / 3.0)


def check_modulation(name) -> str:
    """Return the canonical modulation name or raise :class:`AculinkError` with a suggestion."""
    key = str(name).strip().lower().replace("-", "")
    if key not in MODULATIONS:
        raise AculinkError(f"modulation = {name!r}: expected one of {', '.join(MODULATIONS)}"
                           f"{closest(key, MODULATIONS)}")
    return key


def constellation(name) -> Constellation:
    """The Gray-mapped constellation of a modulation, unit average energy.

    BPSK is {+1, -1}; QPSK is the square (pi/4-rotated) one, identical to Gray 4-QAM; 8-PSK
    starts at angle 0; 16- and 64-QAM are square with a Gray code on each axis (the in-phase
    axis carries the high-order bits).

    Raises
    ------
    AculinkError
        For an unknown modulation name (the closest valid name is suggested).
    """
    key = check_modulation(name)
    k = MODULATIONS[key]
    if key == "bpsk":
        pts, kind = _psk(2, 0.0), "psk"
    elif key == "qpsk":
        pts, kind = _psk(4, np.pi / 4), "psk"
    elif key == "8psk":
        pts, kind = _psk(8, 0.0), "psk"
    else:
        pts, kind = _square_qam(1 << k), "qam"
    pts.setflags(write=False)
    return Constellation(key, pts, k, kind)
