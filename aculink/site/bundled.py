"""Where the bundled example sites are, installed or in a source checkout."""

from __future__ import annotations

from pathlib import Path

from aculink.errors import AculinkError, closest

__all__ = ["environments_dir", "bundled_names", "bundled_site_path"]


def environments_dir() -> Path:
    """The folder holding the bundled site files.

    An installed package carries a copy in ``aculink/data/environments`` (the build copies the
    repository's top-level ``environments/`` there); a source checkout or an editable install
    uses the top-level folder itself.
    """
    package = Path(__file__).resolve().parent.parent
    installed = package / "data" / "environments"
    if installed.is_dir() and any(installed.glob("*.toml")):
        return installed
    checkout = package.parent / "environments"
    if checkout.is_dir():
        return checkout
    raise AculinkError("no bundled environments found (expected aculink/data/environments or ./environments)")


def bundled_names() -> list[str]:
    """Names (file stems) of the bundled site files."""
    return sorted(p.stem for p in environments_dir().glob("*.toml"))


def bundled_site_path(name: str) -> Path:
    """Path of a bundled site file by name, e.g. ``"shelf_summer"``."""
    path = environments_dir() / f"{name.removesuffix('.toml')}.toml"
    if not path.is_file():
        names = bundled_names()
        raise AculinkError(f"bundled site = {name!r}: choose one of {', '.join(names)}{closest(name, names)}")
    return path
