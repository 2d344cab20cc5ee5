"""The one exception type a user can cause.

Every mistake in a site file, a command-line option or an argument to the public API raises
:class:`AculinkError` with a one-line message naming the field, the value and the allowed
range. The command line prints that line to stderr and exits with code 2; nothing else is
shown to the user.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Iterable

__all__ = ["AculinkError", "closest", "check_range", "check_int", "check_array", "validity_note"]


class AculinkError(ValueError):
    """A user-caused error; its message is one line naming the field, value and allowed range."""

    def __init__(self, message: str):
        super().__init__(" ".join(str(message).split()))


def closest(name: str, choices: Iterable[str]) -> str:
    """Return ``" (did you mean 'x'?)"`` for the closest valid name, or an empty string."""
    match = difflib.get_close_matches(name, list(choices), n=1, cutoff=0.5)
    return f" (did you mean '{match[0]}'?)" if match else ""


def check_range(field: str, value, low=None, high=None, *, low_open=False, high_open=False,
                unit: str = "") -> float:
    """Validate that ``value`` is a finite number inside the given bounds and return it as float.

    Raises
    ------
    AculinkError
        Naming ``field``, the value and the allowed range.
    """
    def interval() -> str:
        lo = "-inf" if low is None else f"{low:g}"
        hi = "inf" if high is None else f"{high:g}"
        return f"{'(' if low_open or low is None else '['}{lo}, {hi}{')' if high_open or high is None else ']'}"

    suffix = f" {unit}" if unit else ""
    if isinstance(value, bool) or not isinstance(value, (int, float)) and not _is_numpy_number(value):
        raise AculinkError(f"{field} = {value!r}: expected a number in {interval()}{suffix}")
    try:
        v = float(value)
    except OverflowError:  # an integer too large for a float
        raise AculinkError(f"{field} = {'-' if value < 0 else ''}1e{len(str(abs(value))) - 1}: allowed range is {interval()}{suffix}") from None
    if not math.isfinite(v):
        raise AculinkError(f"{field} = {value!r}: expected a finite number in {interval()}{suffix}")
    bad_low = low is not None and (v <= low if low_open else v < low)
    bad_high = high is not None and (v >= high if high_open else v > high)
    if bad_low or bad_high:
        raise AculinkError(f"{field} = {v:g}{suffix}: allowed range is {interval()}{suffix}")
    return v


def check_int(field: str, value, low=None, high=None, *, unit: str = "") -> int:
    """Validate that ``value`` is a whole number inside ``[low, high]`` and return it as int.

    Accepts Python and numpy integers, and floats with no fractional part (``4000.0``); refuses
    booleans, fractions, text and non-finite values.

    Raises
    ------
    AculinkError
        Naming ``field``, the value and the allowed range.
    """
    lo = "-inf" if low is None else f"{low:d}"
    hi = "inf" if high is None else f"{high:d}"
    allowed = f"a whole number in [{lo}, {hi}]{' ' + unit if unit else ''}"
    if isinstance(value, bool) or not isinstance(value, (int, float)) and not _is_numpy_number(value):
        raise AculinkError(f"{field} = {value!r}: expected {allowed}")
    if not isinstance(value, int) and not float(value).is_integer():  # also refuses NaN and inf
        raise AculinkError(f"{field} = {value!r}: expected {allowed}")
    n = int(value)
    if (low is not None and n < low) or (high is not None and n > high):
        raise AculinkError(f"{field} = {n:d}: allowed range is {allowed}")
    return n


def _is_numpy_number(value) -> bool:
    try:
        import numpy as np
    except ImportError:  # pragma: no cover
        return False
    return isinstance(value, (np.integer, np.floating))


def check_array(field: str, values, low=None, high=None, *, low_open=False, high_open=False,
                unit: str = ""):
    """Array twin of :func:`check_range`: return ``values`` as a float ndarray, or raise.

    NaN entries pass through untouched (they mark padding or missing data and give NaN
    results); infinities and values outside the bounds raise :class:`AculinkError` naming
    ``field``, the first offending value and the allowed range.
    """
    import numpy as np

    try:
        arr = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise AculinkError(f"{field} = {values!r}: expected numbers") from None
    bad = np.isinf(arr)
    with np.errstate(invalid="ignore"):
        if low is not None:
            bad |= (arr <= low) if low_open else (arr < low)
        if high is not None:
            bad |= (arr >= high) if high_open else (arr > high)
    if bad.any():
        check_range(field, arr[bad].flat[0], low, high, low_open=low_open, high_open=high_open,
                    unit=unit)
    return arr


def validity_note(formula: str, field: str, values, low, high, unit: str = "") -> str | None:
    """One human-readable line when some finite ``values`` lie outside ``[low, high]``.

    For formulas that still compute outside their fitted domain but should not be trusted
    there; returns ``None`` when every value is inside (NaN ignored).
    """
    import numpy as np

    arr = np.asarray(values, dtype=float).ravel()
    arr = arr[np.isfinite(arr)]
    out = arr[(arr < low) | (arr > high)]
    if out.size == 0:
        return None
    suffix = f" {unit}" if unit else ""
    span = f"{out.min():g}" if out.min() == out.max() else f"{out.min():g} to {out.max():g}"
    count = "" if arr.size == 1 else f" ({out.size} of {arr.size} values)"
    if low == -math.inf:
        valid = f"up to {high:g}{suffix}"
    elif high == math.inf:
        valid = f"from {low:g}{suffix}"
    else:
        valid = f"{low:g} to {high:g}{suffix}"
    return f"{formula}: {field} {span}{suffix}{count} is outside its stated validity {valid}"
