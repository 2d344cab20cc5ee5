"""Numbers as a person reads them: the digits a result supports, one helper per kind of quantity.

Every text report, table and picture title formats its numbers here, so that a BER far below
anything a model or a Monte Carlo run can resolve reads "< 1e-12" rather than 5.5e-176, a depth
reads 50.1 m rather than 50.1167 m and a range of 4 m reads "4 m" rather than "0.004 km".
The rules are a choice of ours (common practice, no source): positions to 0.1 m (depths) and
10 m (ranges beyond 1 km), times and frequencies to three significant figures, levels to 0.1 dB.
"""

from __future__ import annotations

import math

#: Below this a bit error rate is printed as "< 1e-12": no model of a real sea is good to more
#: digits, and no Monte Carlo run counts that many bits (common practice, no source).
BER_FLOOR = 1e-12


def _finite(value) -> bool:
    try:
        return value is not None and math.isfinite(float(value))
    except (TypeError, ValueError):
        return False


def sig(value, digits: int = 3) -> str:
    """``value`` to ``digits`` significant figures, without an exponent between 1e-4 and 1e7.

    ``sig(1278.842) == "1280"``, ``sig(0.020134) == "0.0201"``, ``sig(4.0) == "4"``.
    """
    if not _finite(value):
        return "n/a"
    v = float(value)
    if v == 0.0:
        return "0"
    rounded = float(f"{v:.{digits}g}")
    if 1e-4 <= abs(rounded) < 1e7:
        text = f"{rounded:.{max(0, digits - 1 - int(math.floor(math.log10(abs(rounded)))))}f}"
        return text.rstrip("0").rstrip(".") if "." in text else text
    return _exponent(rounded, digits)


def _exponent(value: float, digits: int) -> str:
    """``value`` as ``m.mmeN`` with trailing zeros of the mantissa dropped: ``"1e-4"``, ``"2.7e-10"``."""
    mantissa, exponent = f"{value:.{digits - 1}e}".split("e")
    mantissa = mantissa.rstrip("0").rstrip(".") if "." in mantissa else mantissa
    return f"{mantissa}e{int(exponent)}"


def ber_text(ber, *, measured: bool = False, digits: int = 2) -> str:
    """A bit error rate: ``"< 1e-12"`` below :data:`BER_FLOOR`, else ``digits`` significant figures.

    A measured BER of exactly 0 (no error counted) prints ``"0"``; a predicted one of 0 is
    below the floor like any other tiny prediction.
    """
    if not _finite(ber):
        return "n/a"
    b = float(ber)
    if measured and b == 0.0:
        return "0"
    if b < BER_FLOOR:
        return f"< {_exponent(BER_FLOOR, 1)}"
    return _exponent(b, digits) if b < 1e-3 else sig(b, digits)


def depth_text(depth_m) -> str:
    """A depth or height in metres, to 0.1 m (0.01 m below 1 m), with no trailing zeros: ``"50.1"``."""
    if not _finite(depth_m):
        return "n/a"
    d = float(depth_m)
    text = f"{d:.2f}" if abs(d) < 1.0 else f"{d:.1f}"
    return text.rstrip("0").rstrip(".") or "0"


def range_text(range_m) -> str:
    """A horizontal range with its unit: metres below 1 km (``"4 m"``, ``"500 m"``), else km to
    10 m (``"4 km"``, ``"12.35 km"``)."""
    if not _finite(range_m):
        return "n/a"
    r = float(range_m)
    if abs(r) < 1000.0:
        return f"{depth_text(r) if abs(r) < 10.0 else f'{r:.0f}'} m"
    text = f"{r / 1000.0:.2f}".rstrip("0").rstrip(".")
    return f"{text} km"


def km_text(range_m) -> str:
    """A range in km without the unit, to 10 m (for tables with a km column): ``"0.5"``, ``"12.35"``."""
    if not _finite(range_m):
        return "n/a"
    return f"{float(range_m) / 1000.0:.2f}".rstrip("0").rstrip(".") or "0"


def seconds_text(seconds) -> str:
    """A duration with its unit, three significant figures: ``"1280 s"``, ``"4.17 ms"``."""
    if not _finite(seconds):
        return "n/a"
    s = float(seconds)
    if s != 0.0 and abs(s) < 1.0:
        return f"{sig(s * 1000.0)} ms"
    return f"{sig(s)} s"


def db_text(value, unit: str = "dB", digits: int = 1) -> str:
    """A level in dB (with its reference in ``unit``), to 0.1 dB by default."""
    if not _finite(value):
        return "n/a"
    return f"{float(value):.{digits}f} {unit}".strip()


def hz_text(value) -> str:
    """A frequency with its unit, three significant figures: ``"12 kHz"``, ``"850 Hz"``."""
    if not _finite(value):
        return "n/a"
    f = float(value)
    if abs(f) >= 1e6:
        return f"{sig(f / 1e6)} MHz"
    if abs(f) >= 1e3:
        return f"{sig(f / 1e3)} kHz"
    return f"{sig(f)} Hz"


__all__ = ["BER_FLOOR", "sig", "ber_text", "depth_text", "range_text", "km_text", "seconds_text", "db_text",
           "hz_text"]
