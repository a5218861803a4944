"""Fixtures shared by the test files (one definition each)."""

from __future__ import annotations

from pathlib import Path

import pytest

from solsphere.library.table import load_library

ROOT = Path(__file__).resolve().parent.parent
#: The packaged demo: an invented scenario, not measured data.
DEMO = ROOT / "data" / "demo" / "varnish_binder.csv"


@pytest.fixture(scope="session")
def lib():
    """The packaged solvent library (read once per process, as the library caches it)."""
    return load_library()


@pytest.fixture(scope="session")
def demo_path() -> Path:
    """The invented demo results file."""
    return DEMO
