"""Where the packaged data tables live."""

from __future__ import annotations

from importlib.resources import files
from pathlib import Path


def data_dir():
    """The packaged data folder: ``solsphere.data`` when installed (pyproject maps it to
    data/); in a source checkout that was never installed, the repository's data/."""
    try:
        return files("solsphere.data")
    except ModuleNotFoundError:
        return Path(__file__).resolve().parents[2] / "data"
