"""Every public module declares its public names in ``__all__``, and every name there exists.

Common practice for a library's public surface (PEP 8, "Public and internal interfaces"), no
numeric reference.
"""

from __future__ import annotations

import importlib
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "aculink"
MODULES = sorted(
    ".".join(p.relative_to(PACKAGE.parent).with_suffix("").parts)
    for p in PACKAGE.rglob("*.py")
    if not p.name.startswith("_")
)


def test_the_package_has_public_modules():
    assert len(MODULES) > 40


@pytest.mark.parametrize("name", MODULES)
def test_module_declares_all(name):
    module = importlib.import_module(name)
    assert hasattr(module, "__all__"), f"{name} has no __all__"
    names = list(module.__all__)
    assert len(names) == len(set(names)), f"{name}.__all__ repeats a name"
    missing = [n for n in names if not hasattr(module, n)]
    assert not missing, f"{name}.__all__ names what it does not define: {missing}"
