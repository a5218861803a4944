"""Where the packaged data tables live."""

from __future__ import annotations

import csv
import io
from importlib.resources import files
from pathlib import Path


def data_dir():
    """The packaged data folder: ``solsphere.data`` when installed (pyproject maps it to
    data/); in a source checkout that was never installed, the repository's data/."""
    try:
        return files("solsphere.data")
    except ModuleNotFoundError:
        return Path(__file__).resolve().parents[2] / "data"


def comment_rows(text: str):
    """(line number, row) pairs of a curated CSV whose ``#`` lines are comments (the
    header is the first row; line numbers count the comment lines too).

    >>> list(comment_rows("# note\\na,b\\n1,2\\n"))
    [(2, ['a', 'b']), (3, ['1', '2'])]
    """
    lines = text.splitlines()
    numbered = [(i, ln) for i, ln in enumerate(lines, start=1) if not ln.lstrip().startswith("#")]
    reader = csv.reader(io.StringIO("\n".join(ln for _, ln in numbered)))
    for (number, _), row in zip(numbered, reader):
        yield number, row
