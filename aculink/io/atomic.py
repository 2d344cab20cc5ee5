"""Atomic file writes: write to a temporary file beside the target, then rename.

A reader never sees half a file, and an interrupted run never leaves a truncated result in
place of an earlier good one.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path

from aculink.errors import AculinkError

__all__ = ["check_output_path", "atomic_path", "current_umask", "write_text_atomic"]


def check_output_path(path, *, overwrite: bool = True) -> Path:
    """Refuse, before any work, an output that exists (unless ``overwrite``) or whose folder is
    missing or not writable; return the folder.

    Raises
    ------
    AculinkError
        Naming the path or folder.
    """
    path = Path(path)
    if not overwrite and path.exists():
        raise AculinkError(f"{path} exists: pass --overwrite to replace it")
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise AculinkError(f"output folder {folder} does not exist")
    if not os.access(folder, os.W_OK):
        raise AculinkError(f"output folder {folder} is not writable")
    return folder


@contextlib.contextmanager
def atomic_path(path, *, overwrite: bool = True):
    """Yield a temporary path in the target's folder; rename it onto ``path`` on success.

    Parameters
    ----------
    path : str or Path
        The final file.
    overwrite : bool
        When False and ``path`` exists, raise :class:`AculinkError` before writing anything.
    """
    path = Path(path)
    folder = check_output_path(path, overwrite=overwrite)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=folder)
    os.close(fd)
    try:
        yield Path(tmp)
        # mkstemp makes the file private (0600); a result is an ordinary file of the user's
        os.chmod(tmp, 0o666 & ~current_umask())
        os.replace(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)


def current_umask() -> int:
    """The process's file-creation mask (read by setting it and putting it straight back)."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def write_text_atomic(path, text: str, *, overwrite: bool = True) -> Path:
    """Write ``text`` to ``path`` atomically and return the path."""
    with atomic_path(path, overwrite=overwrite) as tmp:
        Path(tmp).write_text(text, encoding="utf-8")
    return Path(path)
