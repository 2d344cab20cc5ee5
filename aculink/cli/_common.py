"""Shared command-line helpers: error handling, JSON output, range options, site loading."""

from __future__ import annotations

import argparse
import json
import math
import os
import re
import sys

import numpy as np

from aculink.errors import AculinkError, check_array, check_int, check_range

EXIT_BAD_INPUT = 2
#: Exit code when the reader of stdout went away (128 + SIGPIPE, as a shell reports it).
EXIT_BROKEN_PIPE = 141

#: Options checked against :data:`aculink.site.model.LIMITS` before a command runs:
#: argparse dest -> (LIMITS section, key). Spans (text options) are checked value by value.
OPTION_LIMITS = {
    "margin_db": ("modem", "margin_db"), "target_ber": ("modem", "target_ber"), "rolloff": ("modem", "rolloff"),
    "carrier_hz": ("modem", "carrier_hz"), "bandwidth_hz": ("modem", "bandwidth_hz"),
    "frequency_hz": ("modem", "carrier_hz"),
    "source_depth_m": ("source", "depth_m"), "source_depths_m": ("source", "depth_m"),
    "depth_m": ("receiver", "depth_m"), "depths_m": ("receiver", "depth_m"),
    "range_m": ("receiver", "range_m"), "ranges_m": ("receiver", "range_m"), "max_range_m": ("receiver", "range_m"),
    "wind_mps": ("surface", "wind_speed_mps"),
    "symbols": ("run", "symbols"), "max_errors": ("run", "max_errors"), "workers": ("run", "workers"),
    "chunk_ranges": ("run", "chunk_ranges"), "seed": ("run", "seed"), "dynamic_range_db": ("run", "dynamic_range_db"),
    "snr_db": ("run", "snr_db"),
}
#: Library parameter names -> the argparse dests a user types for them (first one the command has wins).
FIELD_DESTS = {
    "freq_hz": ("frequency_hz", "carrier_hz"), "n_symbols": ("symbols",), "symbol_rate_baud": ("rate_baud",),
    "ranges_m": ("ranges_m", "range_m"), "depths_m": ("depths_m", "depth_m"), "range_m": ("range_m", "ranges_m"),
    "depth_m": ("depth_m", "depths_m"), "angles_deg": ("angles_deg",), "workers": ("workers",),
    "wind_mps": ("wind_mps",), "winds_mps": ("wind_mps",), "source_depths_m": ("source_depths_m",),
    "source_depth_m": ("source_depth_m", "source_depths_m"), "max_range_m": ("max_range_m",),
    "max_errors": ("max_errors",), "rolloff": ("rolloff",), "snr_db": ("snr_db",), "margin_db": ("margin_db",),
    "target_ber": ("target_ber",), "dynamic_range_db": ("dynamic_range_db",), "chunk_ranges": ("chunk_ranges",),
    "carrier_hz": ("carrier_hz",), "bandwidth_hz": ("bandwidth_hz",), "seed": ("seed",),
    "receivers": ("receiver",), "receiver": ("receiver",), "modulation": ("modulation",),
    "algorithm": ("algorithm",),
}
#: Where a library parameter came from when the user did not type its option.
FIELD_SITE_KEYS = {
    "range_m": "[receiver] range_m", "depth_m": "[receiver] depth_m", "max_range_m": "[receiver] range_m",
    "source_depth_m": "[source] depth_m", "freq_hz": "[modem] carrier_hz", "carrier_hz": "[modem] carrier_hz",
    "bandwidth_hz": "[modem] bandwidth_hz", "rolloff": "[modem] rolloff", "margin_db": "[modem] margin_db",
    "target_ber": "[modem] target_ber",
}
_FIELD_RE = re.compile(r"^([a-z][a-z0-9_]*)(?= = | is | must |: | needs | has | should )")


class UsageError(AculinkError):
    """A malformed command line (unknown option, wrong type): one line, exit code 2."""


class Parser(argparse.ArgumentParser):
    """An argument parser whose mistakes are one line (the usage text is left to ``--help``)."""

    def error(self, message):
        raise UsageError(f"{message} (see '{self.prog} --help')")


def option_strings(parser) -> dict:
    """argparse dest -> the long option a user types for it, for one (sub)parser."""
    return {a.dest: max(a.option_strings, key=len) for a in parser._actions if a.option_strings}


def field_name(field: str, args) -> str:
    """The name the user knows a library parameter by: the option typed, else the site key."""
    options = getattr(args, "_options", {}) or {}
    for dest in FIELD_DESTS.get(field, ()):
        if dest in options and getattr(args, dest, None) is not None:
            return options[dest]
    return FIELD_SITE_KEYS.get(field, field)


def user_message(message: str, args) -> str:
    """``message`` with a leading library parameter name replaced by the option or site key it came from."""
    m = _FIELD_RE.match(message)
    if not m:
        return message
    return field_name(m.group(1), args) + message[m.end(1):]


#: Options whose limits depend on the site (checked by :func:`check_geometry` once it is loaded).
GEOMETRY_DESTS = ("range_m", "ranges_m", "max_range_m", "depth_m", "source_depth_m")


def check_options(args, dests=None) -> None:
    """Check every numeric option against the one limits table before any work or file is touched.

    With a site on the command line the positions are left to :func:`check_geometry`, which
    states the site's own limits.
    """
    from aculink.site.model import INTEGER_LIMITS, LIMITS

    options = getattr(args, "_options", {}) or {}
    if dests is None:
        site_given = getattr(args, "site", None) is not None and getattr(args, "command", "") != "demo"
        dests = [d for d in OPTION_LIMITS if not (site_given and d in GEOMETRY_DESTS)]
    for dest in dests:
        section, key = OPTION_LIMITS[dest]
        value = getattr(args, dest, None)
        if value is None or dest not in options or value is False:
            continue
        low, high, low_open, high_open, unit = LIMITS[section][key]
        name = options[dest]
        if isinstance(value, str):
            check_array(name, parse_span(value, name), low, high, low_open=low_open, high_open=high_open,
                        unit=unit)
        elif key in INTEGER_LIMITS:
            check_int(name, value, low, high)
        else:
            check_range(name, value, low, high, low_open=low_open, high_open=high_open, unit=unit)


def _with_reason(check, reason, *args, **kwargs):
    """Run a check; a refusal gets ``reason`` appended (why the limit is what it is)."""
    try:
        return check(*args, **kwargs)
    except AculinkError as exc:
        raise AculinkError(f"{exc} ({reason})") from None


def check_geometry(args, site) -> None:
    """Check the positions and the symbol rate typed against this site (its track, seabed and band)."""
    options = getattr(args, "_options", {}) or {}

    def given(dest):
        return options.get(dest) if getattr(args, dest, None) is not None and dest in options else None

    bed = site.seabed
    last = float(bed.max_range_m) if np.isfinite(bed.max_range_m) and bed.range_m.size > 1 else None
    for dest in ("range_m", "max_range_m", "ranges_m"):
        name = given(dest)
        if name is None:
            continue
        value = getattr(args, dest)
        values = parse_span(value, name) if isinstance(value, str) else np.array([value])
        if last is not None:
            check_array(name, values, 0.0, last, low_open=True, unit="m")
        else:
            check_options(args, [dest])
    r = getattr(args, "range_m", None) or site.receiver.range_m
    for dest, at in (("depth_m", r), ("source_depth_m", 0.0)):
        name = given(dest)
        if name is not None:
            check_in_water(name, getattr(args, dest), float(bed.depth_at(min(at, float(bed.max_range_m)))), at)
    name = given("rate_baud")
    if name is not None:
        b = getattr(args, "bandwidth_hz", None) or site.modem.bandwidth_hz
        a = getattr(args, "rolloff", None)
        check_symbol_rate(name, args.rate_baud, b, site.modem.rolloff if a is None else a)


def check_in_water(name, value, bottom_m, at_range_m) -> float:
    """A depth strictly between the surface and the seabed, stated to the 0.1 m a chart gives."""
    from aculink.io.formats import depth_text, range_text

    v = check_range(name, value, 0.0, None, low_open=True, unit="m")
    if v >= bottom_m:
        raise AculinkError(f"{name} = {v:g} m: allowed range is (0, {depth_text(bottom_m)}) m (the seabed is "
                           f"{depth_text(bottom_m)} m deep at range {range_text(at_range_m)})")
    return v


#: Slowest symbol rate the simulator takes, as a fraction of the fastest the band allows: the
#: simulation runs at the band's sample rate, so a symbol then lasts this many samples (and the
#: payload's memory grows with it). Our own limit, no source.
MIN_RATE_FRACTION = 1.0 / 256.0


def check_symbol_rate(name, value, bandwidth_hz, rolloff) -> float:
    """A symbol rate within what the band allows, B / (1 + rolloff), and at least
    :data:`MIN_RATE_FRACTION` of that."""
    top = bandwidth_hz / (1.0 + rolloff)
    fast = isinstance(value, (int, float)) and value > top
    reason = (f"the band allows {bandwidth_hz:g} Hz / (1 + rolloff {rolloff:g})" if fast else
              f"1/{1.0 / MIN_RATE_FRACTION:g} of the fastest rate the band allows: slower symbols span too many "
              "samples to simulate")
    return _with_reason(check_range, reason, name, value, top * MIN_RATE_FRACTION, top, unit="Bd")


def fail(message: str) -> int:
    """Print one line to stderr and return the bad-input exit code."""
    print(f"aculink: error: {' '.join(str(message).split())}", file=sys.stderr)
    return EXIT_BAD_INPUT


def handle_errors(func, args) -> int:
    """Run a subcommand; a user error becomes one line on stderr and exit code 2."""
    try:
        code = func(args)
    except AculinkError as exc:
        return fail(user_message(str(exc), args))
    except FileNotFoundError as exc:
        return fail(f"file not found: {exc.filename}")
    except PermissionError as exc:
        return fail(f"permission denied: {exc.filename}")
    except IsADirectoryError as exc:
        return fail(f"is a directory, expected a file: {exc.filename}")
    except KeyboardInterrupt:
        print("aculink: interrupted", file=sys.stderr)
        return 130
    return 0 if code is None else int(code)


def _jsonable(obj):
    if isinstance(obj, dict):
        return {str(k): _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_jsonable(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return [_jsonable(v) for v in obj.tolist()]
    if isinstance(obj, (np.integer,)):
        return int(obj)
    if isinstance(obj, (np.floating, float)):
        v = float(obj)
        return v if math.isfinite(v) else None
    if isinstance(obj, np.bool_):
        return bool(obj)
    return obj


def print_json(obj) -> None:
    """Print one JSON object to stdout (NaN and inf become null)."""
    print(json.dumps(_jsonable(obj), indent=2, allow_nan=False))


def parse_span(text: str, field: str, *, positive: bool = False) -> np.ndarray:
    """Parse ``start:stop:step`` (inclusive stop), ``a,b,c`` or a single number.

    Raises
    ------
    AculinkError
        For empty, reversed or malformed spans, naming the option.
    """
    text = str(text).strip()
    try:
        if ":" in text:
            parts = [float(p) for p in text.split(":")]
            if len(parts) != 3:
                raise ValueError
            start, stop, step = parts
            if step <= 0:
                raise AculinkError(f"{field} = {text!r}: the step must be > 0 (start:stop:step)")
            if stop < start:
                raise AculinkError(f"{field} = {text!r}: stop is below start (reversed span)")
            n = int(math.floor((stop - start) / step + 1e-9)) + 1
            values = start + step * np.arange(n)
        else:
            values = np.array([float(p) for p in text.split(",") if p.strip() != ""])
    except AculinkError:  # a subclass of ValueError: keep its precise message
        raise
    except ValueError:
        raise AculinkError(f"{field} = {text!r}: expected start:stop:step, a comma list or a number") from None
    if values.size == 0:
        raise AculinkError(f"{field} = {text!r}: no values")
    if not np.all(np.isfinite(values)):
        raise AculinkError(f"{field} = {text!r}: values must be finite")
    if positive and np.any(values <= 0):
        raise AculinkError(f"{field} = {text!r}: values must be > 0")
    return values


def parse_count_span(text: str, field: str) -> np.ndarray:
    """Parse ``start:stop:count`` (a linspace, as for launch angles) or a comma list."""
    text = str(text).strip()
    if ":" not in text:  # a comma list or one number
        return parse_span(text, field)
    try:
        parts = [float(p) for p in text.split(":")]
    except ValueError:
        raise AculinkError(f"{field} = {text!r}: expected start:stop:count or a comma list") from None
    if len(parts) != 3:
        raise AculinkError(f"{field} = {text!r}: expected start:stop:count or a comma list")
    if len(parts) == 3:
        start, stop, count = parts
        if count < 2 or count != int(count):
            raise AculinkError(f"{field} = {text!r}: count must be a whole number >= 2")
        if stop <= start:
            raise AculinkError(f"{field} = {text!r}: stop must be above start")
        return np.linspace(start, stop, int(count))
    return parse_span(text, field)


def add_site_argument(parser, *, optional: bool = False) -> None:
    """The positional site file argument every command takes."""
    if optional:
        parser.add_argument("site", nargs="?", default=None, help="site file (TOML)")
    else:
        parser.add_argument("site", help="site file (TOML)")


def load_site_arg(path, args=None):
    """Load the site file named on the command line; with ``args``, check the options against it.

    Warnings about the site's geometry (a receiver closer than the water is deep, ...) go to
    stderr as one line each.
    """
    from aculink.site.loader import load_site
    from aculink.site.summary import geometry_warnings

    site = load_site(path)
    if args is not None:
        check_geometry(args, site)
    for text in geometry_warnings(site):
        warn(text)
    return site


def warn(text: str) -> None:
    """One warning line on stderr."""
    print(f"aculink: warning: {' '.join(str(text).split())}", file=sys.stderr)


def quiet_stdout() -> None:
    """Point stdout at /dev/null so that the interpreter's last flush cannot fail again."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError):  # stdout has no file descriptor (captured in tests)
        pass


def check_output_option(args, dest: str, suffix: str) -> None:
    """Refuse, before any work, an output option with the wrong suffix, an existing file without
    ``--overwrite``, or a folder that does not exist."""
    from pathlib import Path

    from aculink.io.atomic import check_output_path

    path = getattr(args, dest, None)
    if path is None:
        return
    option = (getattr(args, "_options", {}) or {}).get(dest, f"--{dest}")
    if Path(path).suffix.lower() != suffix:
        raise AculinkError(f"{option} = '{path}': expected a file name ending in {suffix}")
    if Path(path).exists() and not getattr(args, "overwrite", False):
        raise AculinkError(f"{option} = '{path}': the file exists; pass --overwrite to replace it")
    try:
        check_output_path(path)
    except AculinkError as exc:
        raise AculinkError(f"{option} = '{path}': {exc}") from None


def check_plot_path(args) -> None:
    """Refuse a ``--plot`` that is not a .png, exists without ``--overwrite`` or has no folder, before any work."""
    check_output_option(args, "plot", ".png")
