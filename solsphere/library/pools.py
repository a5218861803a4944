"""The curated pool of common solvents (``solsphere/data/common_solvents.csv``).

The library holds every compound of three published Hansen compilations: 761 of them are
liquid at 25 °C, and many of those are reagents, monomers or intermediates that nobody
would put on a bench as a test solvent (acid chlorides, hydrazines, isocyanates ...).
The common list is our own selection of about 150 solvents in common industrial and
laboratory use, from general knowledge of the trade (common practice, no source). It is
not a published list, and being on it says nothing about safety: the hazard flags of
:func:`solsphere.library.hazard_flags` stay the guide.

The file has the columns ``cas, name, family`` (``#`` lines are comments). ``name`` is a
name the library resolves to the same CAS number (a check that the CAS is the intended
compound); ``family`` is one of :data:`FAMILIES`.

Use :meth:`solsphere.library.Library.common` for the subset of a library, or
``candidate_pool(..., pool="common")`` in :mod:`solsphere.session`.
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass
from functools import lru_cache

__all__ = ["CommonSolvent", "FAMILIES", "POOLS", "read_common", "load_common", "common_cas"]

#: The families used in the list (our own short words).
FAMILIES = frozenset({
    "water", "alcohol", "glycol", "glycol ether", "glycol ether acetate", "ketone", "ester",
    "carbonate", "ether", "hydrocarbon", "aromatic", "terpene", "chlorinated",
    "dipolar aprotic", "acid", "amine", "other",
})

#: Names of the candidate pools: the curated common solvents, or every library liquid.
POOLS = ("common", "liquids")

_COLUMNS = ("cas", "name", "family")


@dataclass(frozen=True)
class CommonSolvent:
    """One row of the common list: CAS number, a name, a family."""

    cas: str
    name: str
    family: str


def _rows(text: str):
    """(line number, row) pairs of a CSV whose ``#`` lines are comments."""
    lines = text.splitlines()
    numbered = [(i, ln) for i, ln in enumerate(lines, start=1) if not ln.lstrip().startswith("#")]
    reader = csv.reader(io.StringIO("\n".join(ln for _, ln in numbered)))
    for (number, _), row in zip(numbered, reader):
        yield number, row


def read_common(text: str, source: str = "common_solvents.csv") -> tuple[CommonSolvent, ...]:
    """Parse the common list.

    Parameters
    ----------
    text : str
        The file's content.
    source : str, default="common_solvents.csv"
        Named in error messages.

    Raises
    ------
    ValueError
        Wrong header, an empty cell, an unknown family or a repeated CAS number, with
        the line.

    Examples
    --------
    >>> read_common("# comment\\ncas,name,family\\n67-64-1,acetone,ketone\\n")
    (CommonSolvent(cas='67-64-1', name='acetone', family='ketone'),)
    """
    rows = iter(_rows(text))
    number, header = next(rows, (1, []))
    if tuple(c.strip() for c in header) != _COLUMNS:
        raise ValueError(f"{source}, line {number}: header must be {','.join(_COLUMNS)}; "
                         f"found {','.join(header) or 'nothing'}")
    out, seen = [], {}
    for number, row in rows:
        if not any(c.strip() for c in row):
            continue
        if len(row) != len(_COLUMNS) or not all(c.strip() for c in row):
            raise ValueError(f"{source}, line {number}: expected 3 filled cells "
                             f"(cas,name,family); found {row}")
        cas, name, family = (c.strip() for c in row)
        if family not in FAMILIES:
            raise ValueError(f"{source}, line {number}, column family: {family!r} is not "
                             f"one of {', '.join(sorted(FAMILIES))}")
        if cas in seen:
            raise ValueError(f"{source}, line {number}, column cas: {cas} repeats line "
                             f"{seen[cas]}")
        seen[cas] = number
        out.append(CommonSolvent(cas, name, family))
    return tuple(out)


@lru_cache(maxsize=1)
def load_common() -> tuple[CommonSolvent, ...]:
    """The packaged common list, read once per process (cached)."""
    from solsphere.library.table import _data_dir
    return read_common(_data_dir().joinpath("common_solvents.csv").read_text(encoding="utf-8"))


def common_cas() -> frozenset[str]:
    """CAS numbers of the packaged common list."""
    return frozenset(s.cas for s in load_common())
