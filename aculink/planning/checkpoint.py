"""Checkpoints of a sweep: one file per finished chunk, beside the output, written atomically.

The folder ``OUT.nc.parts/`` holds ``manifest.json`` (the sweep's settings) and one
``chunk-NNNNNN.npz`` per finished chunk. A chunk file appears only complete (temporary file,
then rename), so a sweep killed at any instant leaves only whole chunks behind; ``resume``
computes the chunks that have no file, and refuses a folder whose manifest describes a
different sweep.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import numpy as np

from aculink.errors import AculinkError
from aculink.io.atomic import atomic_path, write_text_atomic

MANIFEST = "manifest.json"
_CHUNK = "chunk-{:06d}.npz"


def parts_folder(out_path) -> Path:
    """The checkpoint folder that belongs to an output file."""
    out_path = Path(out_path)
    return out_path.with_name(out_path.name + ".parts")


def settings_digest(settings: dict) -> str:
    """SHA-256 of the settings in canonical JSON."""
    return hashlib.sha256(json.dumps(settings, sort_keys=True).encode()).hexdigest()


class Checkpoint:
    """The chunk files of one sweep.

    Parameters
    ----------
    folder : Path
    settings : dict
        JSON-able description of the sweep; stored in the manifest and compared on resume.
    resume : bool
        Continue the sweep already in ``folder`` (its settings must match).
    overwrite : bool
        Discard an earlier sweep in ``folder`` and start over.
    """

    def __init__(self, folder, settings: dict, *, resume: bool = False, overwrite: bool = False):
        self.folder = Path(folder)
        self.settings = settings
        self.digest = settings_digest(settings)
        manifest = self.folder / MANIFEST
        if self.folder.exists() and not self.folder.is_dir():
            raise AculinkError(f"checkpoint folder {self.folder} exists and is not a folder")
        if manifest.exists() and overwrite and not resume:
            self.discard()
        if manifest.exists():
            if not resume:
                raise AculinkError(f"{self.folder} holds an unfinished sweep: pass --resume to "
                                   "continue it or --overwrite to start over")
            self._check_manifest(manifest)
        else:
            self.folder.mkdir(parents=False, exist_ok=True)
            text = json.dumps({"digest": self.digest, "settings": settings}, indent=1, sort_keys=True)
            write_text_atomic(manifest, text)

    def _check_manifest(self, manifest: Path) -> None:
        try:
            stored = json.loads(manifest.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            raise AculinkError(f"--resume: the manifest {manifest} is unreadable; use --overwrite "
                               "to start over") from None
        if stored.get("digest") == self.digest:
            return
        old = stored.get("settings", {})
        keys = sorted(set(old) | set(self.settings))
        diff = [k for k in keys if old.get(k) != self.settings.get(k)]
        what = diff[0] if diff else "settings"
        raise AculinkError(f"--resume: the checkpoint in {self.folder} belongs to a different sweep "
                           f"({what} differs); rerun with the same settings or use --overwrite")

    def path(self, index: int) -> Path:
        return self.folder / _CHUNK.format(index)

    def done(self) -> set:
        """Indices of the chunks already saved."""
        out = set()
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
