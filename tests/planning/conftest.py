"""Shared fixtures of the planning tests."""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

# The suite runs with --import-mode=importlib: make this folder's helper module importable.
sys.path.insert(0, str(Path(__file__).parent))

from synthetic_eval import make_site  # noqa: E402


@pytest.fixture
def flat_site():
    return make_site()
