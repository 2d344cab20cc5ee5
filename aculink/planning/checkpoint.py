"""Checkpoints of a sweep: one file per finished chunk, beside the output, written atomically.

The folder ``OUT.nc.parts/`` holds ``manifest.json`` (the sweep's settings) and one
``chunk-NNNNNN.npz`` per finished chunk. A chunk file appears only complete (temporary file,
then rename), so a sweep killed at any instant leaves only whole chunks behind; ``resume``
computes the chunks that have no file, and refuses a folder whose manifest describes a
different sweep. Nothing is written before :meth:`Checkpoint.start`, so a sweep refused for
a bad option leaves no folder behind.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import numpy as np

from aculink.errors import AculinkError
from aculink.io.atomic import atomic_path, write_text_atomic

__all__ = ["MANIFEST", "parts_folder", "settings_digest", "RULE", "Checkpoint"]

MANIFEST = "manifest.json"
_CHUNK = "chunk-{:06d}.npz"


def parts_folder(out_path) -> Path:
    """The checkpoint folder that belongs to an output file."""
    out_path = Path(out_path)
    return out_path.with_name(out_path.name + ".parts")


def settings_digest(settings: dict) -> str:
    """SHA-256 of the settings in canonical JSON."""
    return hashlib.sha256(json.dumps(settings, sort_keys=True).encode()).hexdigest()


#: The one rule of ``resume`` and ``overwrite``, quoted by the refusals below and the README.
RULE = ("--resume continues the unfinished sweep in OUT.parts/ (same settings; it may replace "
        "OUT if the sweep was started with --overwrite); --overwrite discards it and starts over; "
        "the two exclude each other")


class Checkpoint:
    """The chunk files of one sweep.

    Constructing one only reads: it checks the folder against the rule (:data:`RULE`) and
    reports what is already done, so a sweep can refuse bad options before it writes
    anything; :meth:`start` then discards an earlier sweep (``overwrite``) or writes the
    manifest of a new one.

    Parameters
    ----------
    folder : Path
    settings : dict
        JSON-able description of the sweep; stored in the manifest and compared on resume.
    resume : bool
        Continue the sweep already in ``folder`` (its settings must match); with no sweep
        there, start one.
    overwrite : bool
        Discard an earlier sweep in ``folder`` and start over. Excludes ``resume``.

    Attributes
    ----------
    resuming : bool
        A matching unfinished sweep is being continued.
    replace_output : bool
        When resuming: the sweep was started with ``overwrite``, so it may replace an
        existing output (the permission is kept in the manifest, not in the settings).
    """

    def __init__(self, folder, settings: dict, *, resume: bool = False, overwrite: bool = False):
        if resume and overwrite:
            raise AculinkError(f"--resume and --overwrite together: choose one ({RULE})")
        self.folder = Path(folder)
        self.settings = settings
        self.digest = settings_digest(settings)
        self.overwrite = bool(overwrite)
        self.resuming = False
        self.replace_output = False
        manifest = self.folder / MANIFEST
        if self.folder.exists() and not self.folder.is_dir():
            raise AculinkError(f"checkpoint folder {self.folder} exists and is not a folder")
        if manifest.exists() and not overwrite:
            if not resume:
                raise AculinkError(f"{self.folder} holds an unfinished sweep: pass --resume to "
                                   "continue it or --overwrite to start over")
            stored = self._check_manifest(manifest)
            self.resuming = True
            self.replace_output = bool(stored.get("replace_output", False))

    def start(self, *, replace_output: bool = False) -> None:
        """Make the folder ready for chunk files (the first write of a sweep)."""
        if self.resuming:
            return
        manifest = self.folder / MANIFEST
        if self.overwrite and manifest.exists():
            self.discard()
        self.folder.mkdir(parents=False, exist_ok=True)
        text = json.dumps({"digest": self.digest, "settings": self.settings,
                           "replace_output": bool(replace_output)}, indent=1, sort_keys=True)
        write_text_atomic(manifest, text)

    def _check_manifest(self, manifest: Path) -> dict:
        try:
            stored = json.loads(manifest.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            raise AculinkError(f"--resume: the manifest {manifest} is unreadable; use --overwrite "
                               "to start over") from None
        if stored.get("digest") == self.digest:
            return stored
        old = stored.get("settings", {})
        keys = sorted(set(old) | set(self.settings))
        diff = [k for k in keys if old.get(k) != self.settings.get(k)]
        what = diff[0] if diff else "settings"
        raise AculinkError(f"--resume: the checkpoint in {self.folder} belongs to a different sweep "
                           f"({what} differs); rerun with the same settings or use --overwrite")

    def path(self, index: int) -> Path:
        return self.folder / _CHUNK.format(index)

    def done(self) -> set:
        """Indices of the chunks already saved (none unless resuming)."""
        out = set()
        if not self.resuming:
            return out
        for p in self.folder.glob("chunk-*.npz"):
            try:
                out.add(int(p.stem.split("-")[1]))
            except ValueError:
                continue
        return out

    def save(self, index: int, arrays: dict) -> Path:
        """Save one finished chunk atomically (strings as fixed-width unicode, no pickle)."""
        clean = {k: (np.asarray(v, dtype=str) if np.asarray(v).dtype == object else np.asarray(v))
                 for k, v in arrays.items()}
        target = self.path(index)
        with atomic_path(target) as tmp:
            with open(tmp, "wb") as fh:
                np.savez(fh, **clean)
        return target

    def load(self, index: int) -> dict:
        """Read one chunk back (strings as object arrays)."""
        with np.load(self.path(index), allow_pickle=False) as z:
            return {k: (z[k].astype(object) if z[k].dtype.kind == "U" else z[k]) for k in z.files}

    def discard(self) -> None:
        """Remove the files this class writes, then the folder if it is left empty."""
        for pattern in ("chunk-*.npz", ".chunk-*.part", MANIFEST, f".{MANIFEST}.*.part"):
            for p in self.folder.glob(pattern):
                p.unlink()
        try:
            self.folder.rmdir()
        except OSError:
            pass
