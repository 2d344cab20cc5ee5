"""Channels from files: tap lists and measured impulse responses (CSV or NetCDF).

CSV: one header line naming the columns, then one row per tap; lines starting with ``#`` are
comments, and a comment ``# carrier_hz = 12000`` or ``# bandwidth_hz = 6000`` (also
``symbol_rate_baud``) supplies that value when the caller does not. Accepted column sets (the
first that matches):

* ``delay_s, real, imag``: absolute or relative delay, s, and the complex gain;
* ``delay_s, magnitude, phase_rad``: the same gain as magnitude and phase (rad);
* ``tap, real, imag`` or ``tap, magnitude, phase_rad``: symbol-spaced taps, delay = tap / Rs
  (needs ``symbol_rate_baud``); ``tap`` may be fractional (e.g. 0.5 for T/2 spacing).

An optional ``doppler`` column gives Doppler factors a_p. Delays must be finite, >= 0 and
strictly increasing.

NetCDF: a dimension ``path``; variables ``delay_s(path)`` (s), ``gain_real(path)`` and
``gain_imag(path)`` (or one complex ``gain(path)`` where the engine supports it), optional
``doppler(path)``; global attributes ``carrier_hz`` and ``bandwidth_hz``. The gain is the
complex path gain without the delay phase, as in :class:`aculink.channel.Channel`.

Every problem is one line naming the file and the column.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

from aculink.channel.model import Channel
from aculink.errors import AculinkError

__all__ = ["load_channel_file"]

_GAIN_FORMS = (("real", "imag"), ("magnitude", "phase_rad"))
_META = ("carrier_hz", "bandwidth_hz", "symbol_rate_baud")


def load_channel_file(path, *, carrier_hz=None, bandwidth_hz=None, symbol_rate_baud=None):
    """Read a tap list or a measured impulse response into a :class:`Channel`.

    Parameters
    ----------
    path : str or Path
        ``.csv`` or ``.nc`` (format in the module docstring and README).
    carrier_hz, bandwidth_hz : float, optional
        The band; override values in the file.
    symbol_rate_baud : float, optional
        Needed for a ``tap`` column (delays in symbols).

    Raises
    ------
    AculinkError
        Missing file, columns or band values, NaN, negative or non-increasing delays.
    """
    p = Path(path)
    if not p.is_file():
        raise AculinkError(f"{p}: channel file not found")
    given = {"carrier_hz": carrier_hz, "bandwidth_hz": bandwidth_hz, "symbol_rate_baud": symbol_rate_baud}
    suffix = p.suffix.lower()
    if suffix == ".csv":
        delay, gain, doppler, meta = _read_csv(p, given)
    elif suffix in (".nc", ".nc4", ".netcdf"):
        delay, gain, doppler, meta = _read_netcdf(p)
    else:
        raise AculinkError(f"{p}: unknown channel file type {suffix!r}: expected .csv or .nc")
    for key, value in given.items():
        if value is not None:
            meta[key] = value
    for key in ("carrier_hz", "bandwidth_hz"):
        if meta.get(key) is None:
            raise AculinkError(f"{p}: {key} is not in the file: pass {key}= (or add '# {key} = ...')")
    _check_delays(p, delay)
    return Channel.from_taps(delay, gain, meta["carrier_hz"], meta["bandwidth_hz"], doppler=doppler,
                             name=p.stem)


def _check_delays(p, delay):
    if delay.size == 0:
        raise AculinkError(f"{p}: no taps")
    if np.any(delay < 0):
        raise AculinkError(f"{p}: column delay_s has a negative delay {delay[delay < 0][0]:g} s: delays must be >= 0")
    if np.any(np.diff(delay) <= 0):
        i = int(np.flatnonzero(np.diff(delay) <= 0)[0])
        raise AculinkError(f"{p}: column delay_s is not strictly increasing at row {i + 2} "
                           f"({delay[i]:g} then {delay[i + 1]:g} s)")


def _column(p, rows, header, name):
    j = header.index(name)
    values = []
    for line_no, row in rows:
        try:
            v = float(row[j])
        except (IndexError, ValueError):
            raise AculinkError(f"{p}: column {name} line {line_no}: expected a number, got "
                               f"{row[j] if j < len(row) else ''!r}") from None
        if not np.isfinite(v):
            raise AculinkError(f"{p}: column {name} line {line_no}: {row[j]!r} is not a finite number")
        values.append(v)
    return np.array(values)


def _read_csv(p, given):
    meta = {}
    header = None
    rows = []
    with open(p, newline="", encoding="utf-8") as fh:
        for line_no, row in enumerate(csv.reader(fh), start=1):
            if not row or not "".join(row).strip():
                continue
            first = row[0].strip()
            if first.startswith("#"):
                text = ",".join(row).lstrip("#").strip()
                if "=" in text:
                    key, _, value = text.partition("=")
                    key = key.strip()
                    if key in _META:
                        try:
                            meta[key] = float(value.strip())
                        except ValueError:
                            raise AculinkError(f"{p}: line {line_no}: {key} = {value.strip()!r} is not a number") from None
                continue
            if header is None:
                header = [c.strip().lower() for c in row]
                continue
            rows.append((line_no, [c.strip() for c in row]))
    if header is None:
        raise AculinkError(f"{p}: empty file: expected a header such as delay_s,real,imag")
    if "delay_s" in header:
        delay_col = "delay_s"
    elif "tap" in header:
        delay_col = "tap"
    else:
        raise AculinkError(f"{p}: missing column delay_s (or tap): header is {','.join(header)}")
    form = next((f for f in _GAIN_FORMS if all(c in header for c in f)), None)
    if form is None:
        missing = [c for c in ("real", "imag") if c not in header]
        raise AculinkError(f"{p}: missing column {missing[0] if missing else 'imag'}: expected "
                           f"real,imag or magnitude,phase_rad beside {delay_col}")
    delay = _column(p, rows, header, delay_col)
    if delay_col == "tap":
        rs = given.get("symbol_rate_baud") or meta.get("symbol_rate_baud")
        if rs is None or rs <= 0:
            raise AculinkError(f"{p}: column tap gives delays in symbols: pass symbol_rate_baud= (> 0)")
        if np.any(delay < 0):
            raise AculinkError(f"{p}: column tap has a negative index {delay[delay < 0][0]:g}")
        delay = delay / rs
    a, b = (_column(p, rows, header, c) for c in form)
    gain = a + 1j * b if form[0] == "real" else a * np.exp(1j * b)
    if form[0] == "magnitude" and np.any(a < 0):
        raise AculinkError(f"{p}: column magnitude has a negative value {a[a < 0][0]:g}")
    doppler = _column(p, rows, header, "doppler") if "doppler" in header else None
    return delay, gain, doppler, meta


def _read_netcdf(p):
    import xarray as xr

    try:
        ds = xr.open_dataset(p, engine="netcdf4")
    except Exception as exc:  # a corrupt or non-NetCDF file: one line, not a traceback
        raise AculinkError(f"{p}: not a readable NetCDF file ({type(exc).__name__})") from None
    with ds:
        if "delay_s" not in ds:
            raise AculinkError(f"{p}: missing variable delay_s(path)")
        delay = np.asarray(ds["delay_s"].values, dtype=float).ravel()
        if "gain" in ds and np.iscomplexobj(ds["gain"].values):
            gain = np.asarray(ds["gain"].values).ravel()
        else:
            for name in ("gain_real", "gain_imag"):
                if name not in ds:
                    raise AculinkError(f"{p}: missing variable {name}(path)")
            gain = np.asarray(ds["gain_real"].values, float).ravel() + 1j * np.asarray(ds["gain_imag"].values, float).ravel()
        if gain.size != delay.size:
            raise AculinkError(f"{p}: variable gain has {gain.size} values but delay_s has {delay.size}")
        for name, arr in (("delay_s", delay), ("gain", gain)):
            if not np.all(np.isfinite(arr)):
                raise AculinkError(f"{p}: variable {name} contains NaN or inf")
        doppler = np.asarray(ds["doppler"].values, float).ravel() if "doppler" in ds else None
        meta = {k: float(ds.attrs[k]) for k in _META if k in ds.attrs}
    return delay, gain, doppler, meta
