"""Tables at the edge: aligned text for a person, CSV and JSON rows for machines."""

from __future__ import annotations

import csv
import io
import math
from pathlib import Path

from aculink.io.atomic import write_text_atomic

__all__ = ["format_table", "csv_text", "write_csv"]


def _cell(value, fmt) -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "-"
    if isinstance(value, str):
        return value or "-"
    return format(value, fmt) if fmt else str(value)


def format_table(columns, rows) -> str:
    """Right-aligned text table.

    Parameters
    ----------
    columns : sequence of (key, header, format)
        ``header`` may hold a newline for a two-line heading (name, then unit).
    rows : sequence of dict
        Missing or non-finite values print as ``-``.
    """
    heads = [str(h).split("\n") for _, h, _ in columns]
    depth = max(len(h) for h in heads)
    heads = [[""] * (depth - len(h)) + h for h in heads]
    body = [[_cell(row.get(key), fmt) for key, _, fmt in columns] for row in rows]
    widths = [max([len(x) for x in heads[c]] + [len(r[c]) for r in body]) for c in range(len(columns))]
    lines = ["  ".join(heads[c][k].rjust(widths[c]) for c in range(len(columns))) for k in range(depth)]
    lines.append("  ".join("-" * w for w in widths))
    lines += ["  ".join(r[c].rjust(widths[c]) for c in range(len(columns))) for r in body]
    return "\n".join(lines)


def csv_text(keys, rows) -> str:
    """CSV with a header row; None and non-finite numbers become empty cells."""
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(keys)
    for row in rows:
        cells = []
        for key in keys:
            v = row.get(key)
            if v is None or (isinstance(v, float) and not math.isfinite(v)):
                cells.append("")
            elif isinstance(v, float):
                cells.append(repr(v))
            else:
                cells.append(v)
        writer.writerow(cells)
    return buf.getvalue()


def write_csv(path, keys, rows, *, overwrite: bool = True) -> Path:
    """Write rows as CSV to ``path`` atomically."""
    return write_text_atomic(path, csv_text(keys, rows), overwrite=overwrite)
