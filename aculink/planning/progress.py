"""A one-line progress bar on stderr: chunks done, rate and time left.

Shown only when the stream is a terminal and the user did not ask for quiet; otherwise every
call is a no-op, so logs and pipes stay clean.
"""

from __future__ import annotations

import sys
import time

__all__ = ["Progress"]


def _clock(seconds: float) -> str:
    seconds = max(0, int(round(seconds)))
    h, rem = divmod(seconds, 3600)
    m, s = divmod(rem, 60)
    return f"{h}:{m:02d}:{s:02d}" if h else f"{m}:{s:02d}"


class Progress:
    """Progress of ``total`` units of work (chunks), of which ``already`` were done before.

    Parameters
    ----------
    total : int
    already : int
        Units finished in an earlier run (a resumed sweep); they count as done but not in the
        rate.
    label : str
    stream : file, default sys.stderr
    enabled : bool, optional
        Force on or off; by default on exactly when ``stream`` is a terminal.
    """

    width = 28

    def __init__(self, total: int, *, already: int = 0, label: str = "chunks", stream=None,
                 enabled: bool | None = None):
        self.stream = sys.stderr if stream is None else stream
        if enabled is None:
            isatty = getattr(self.stream, "isatty", None)
            enabled = bool(isatty and isatty())
        self.enabled = enabled
        self.total = int(total)
        self.done = int(already)
        self.already = int(already)
        self.label = label
        self.start = time.monotonic()
        self._last = 0.0
        if self.enabled:
            self._draw(force=True)

    def line(self) -> str:
        """The text of the bar as it stands."""
        frac = 1.0 if self.total == 0 else self.done / self.total
        filled = int(round(self.width * frac))
        bar = "#" * filled + "-" * (self.width - filled)
        elapsed = time.monotonic() - self.start
        fresh = self.done - self.already
        if fresh > 0 and elapsed > 0:
            rate = fresh / elapsed
            left = (self.total - self.done) / rate
            tail = f"{rate:.2f} {self.label}/s, {_clock(left)} left"
        else:
            tail = "estimating time left"
        return f"[{bar}] {self.done}/{self.total} {self.label}, {tail}"

    def _draw(self, force=False):
        now = time.monotonic()
        if force or now - self._last > 0.2 or self.done == self.total:
            self._last = now
            self.stream.write("\r" + self.line() + "\x1b[K")
            self.stream.flush()

    def update(self, n: int = 1) -> None:
        self.done += n
        if self.enabled:
            self._draw()

    def close(self) -> None:
        if self.enabled:
            self._draw(force=True)
            self.stream.write("\n")
            self.stream.flush()
            self.enabled = False
