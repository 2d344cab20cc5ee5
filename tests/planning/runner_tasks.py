"""Module-level task functions for the Dask runner tests (worker processes import them)."""

from __future__ import annotations

import os
import time


def where(main_pid, item):
    """The process that ran ``item``; slow only in the calling process, so a local cluster that
    comes up while the caller works through the list takes the rest."""
    if os.getpid() == main_pid:
        time.sleep(0.5)
    return os.getpid()


def nothing(shared, item):
    """An empty task (per-task overhead)."""
    return item
