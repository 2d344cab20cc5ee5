"""Progress bar, tables and CSV at the edges (layout rules of this project; no outside source)."""

from __future__ import annotations

import io
import csv

import pytest

from aculink.errors import AculinkError
from aculink.io.atomic import write_text_atomic
from aculink.io.tables import csv_text, format_table
from aculink.planning.progress import Progress


class Tty(io.StringIO):
    def isatty(self):
        return True


def test_progress_draws_only_on_a_terminal():
    pipe = io.StringIO()
    bar = Progress(4, stream=pipe)
    bar.update()
    bar.close()
    assert pipe.getvalue() == ""
    tty = Tty()
    bar = Progress(4, already=1, stream=tty)
    bar.update()
    bar.close()
    text = tty.getvalue()
    assert "2/4 chunks" in text and "left" in text and text.endswith("\n")
    quiet = Tty()
    Progress(4, stream=quiet, enabled=False).update()
    assert quiet.getvalue() == ""


def test_progress_rate_and_time_left(monkeypatch):
    """After 2 of 10 fresh chunks in 4 s: 0.5 chunks/s and 16 s left (arithmetic)."""
    clock = iter([100.0, 104.0, 104.0])
    monkeypatch.setattr("aculink.planning.progress.time.monotonic", lambda: next(clock))
    bar = Progress(10, stream=io.StringIO(), enabled=False)
    bar.done = 2
    assert bar.line().endswith("2/10 chunks, 0.50 chunks/s, 0:16 left")


def test_table_is_aligned_and_marks_missing():
    cols = [("a", "name\nunit", ".1f"), ("b", "text", "")]
    text = format_table(cols, [{"a": 1.25, "b": "x"}, {"a": float("nan"), "b": None}])
    lines = text.splitlines()
    assert len({len(line) for line in lines}) == 1
    assert lines[-1].split() == ["-", "-"] and lines[-2].split() == ["1.2", "x"]


def test_csv_round_trip():
    rows = [{"range_m": 500.0, "modulation": "qpsk", "ber": 1e-7}, {"range_m": 1000.0, "modulation": None, "ber": float("nan")}]
    back = list(csv.DictReader(io.StringIO(csv_text(["range_m", "modulation", "ber"], rows))))
    assert float(back[0]["ber"]) == 1e-7 and back[1]["modulation"] == "" and back[1]["ber"] == ""


def test_atomic_write_refuses_existing(tmp_path):
    p = tmp_path / "x.txt"
    write_text_atomic(p, "one")
    with pytest.raises(AculinkError, match="--overwrite"):
        write_text_atomic(p, "two", overwrite=False)
    assert p.read_text() == "one" and not list(tmp_path.glob(".*part"))
