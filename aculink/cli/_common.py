"""Shared command-line helpers: error handling, JSON output, range options, site loading."""

from __future__ import annotations

import json
import math
import sys

import numpy as np

from aculink.errors import AculinkError

EXIT_BAD_INPUT = 2


def fail(message: str) -> int:
    """Print one line to stderr and return the bad-input exit code."""
    print(f"aculink: error: {' '.join(str(message).split())}", file=sys.stderr)
    return EXIT_BAD_INPUT


def handle_errors(func, args) -> int:
    """Run a subcommand; a user error becomes one line on stderr and exit code 2."""
    try:
        code = func(args)
    except AculinkError as exc:
        return fail(str(exc))
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
    except AculinkError:
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
    try:
        parts = [float(p) for p in text.split(":")]
    except ValueError:
        raise AculinkError(f"{field} = {text!r}: expected start:stop:count") from None
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


def load_site_arg(path):
    """Load the site file named on the command line."""
    from aculink.site.loader import load_site

    return load_site(path)


def check_plot_path(args) -> None:
    """Refuse a ``--plot`` that is not a .png, or that exists without ``--overwrite``, before any work."""
    from pathlib import Path

    plot = getattr(args, "plot", None)
    if plot is None:
        return
    if Path(plot).suffix.lower() != ".png":
        raise AculinkError(f"--plot = '{plot}': expected a file name ending in .png")
    if Path(plot).exists() and not getattr(args, "overwrite", False):
        raise AculinkError(f"--plot = '{plot}': the file exists; pass --overwrite to replace it")
