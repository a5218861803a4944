"""The curated working-solvent pool (``solsphere/data/working_solvents.csv``).

The library holds every compound of three published Hansen compilations plus a few
curated additions: about 770 of them are liquid at 25 °C, and many of those are reagents,
monomers or intermediates that nobody would use as a solvent (acid chlorides, hydrazines,
isocyanates ...). The working pool is our own selection of about 170 solvents in use in
industry or the lab (coatings, inks, adhesives, cleaning, extraction, pharmaceutical
process), from general knowledge of the trade (common practice, no source): hydrocarbons
and the industrial mixtures (xylene, mineral spirits, aromatic naphthas, isoparaffins),
alcohols, glycols, glycol ethers and their esters, esters, ketones, ethers, chlorinated
solvents, dipolar aprotics including the newer bio-based ones, and water. It is not a
published list, and being on it says nothing about safety: the hazard facts of
:mod:`solsphere.library.hazards` stay the guide.

It is the default pool of every recommendation (rank, blend, replace, next, share);
``pool="all"`` takes every library liquid, reagents included.

The file has the columns ``cas, name, family`` (``#`` lines are comments). ``name`` is a
name the library resolves to the same CAS number (a check that the CAS is the intended
compound); ``family`` is one of :data:`FAMILIES`.
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass
from functools import lru_cache

__all__ = ["WorkingSolvent", "CommonSolvent", "FAMILIES", "POOLS", "POOL_SYNONYMS",
           "pool_name", "read_working", "read_common", "load_working", "load_common",
           "working_cas", "common_cas"]

#: The families used in the list (our own short words).
FAMILIES = frozenset({
    "water", "alcohol", "glycol", "glycol ether", "glycol ether acetate", "ketone", "ester",
    "carbonate", "ether", "hydrocarbon", "aromatic", "terpene", "chlorinated",
    "dipolar aprotic", "acid", "amine", "other",
})

#: Names of the candidate pools: the curated working solvents, or every library liquid.
POOLS = ("working", "all")
#: Older names still accepted: "common" (the working pool's former name), "liquids".
POOL_SYNONYMS = {"common": "working", "liquids": "all"}

_COLUMNS = ("cas", "name", "family")


def pool_name(name: str) -> str:
    """The canonical pool name ("working" or "all") of a name or an older synonym.

    Raises
    ------
    ValueError
        For any other name.

    Examples
    --------
    >>> pool_name("common"), pool_name("all")
    ('working', 'all')
    """
    canonical = POOL_SYNONYMS.get(name, name)
    if canonical not in POOLS:
        raise ValueError(f"pool must be one of {', '.join(map(repr, POOLS))} (or the older "
                         f"{', '.join(map(repr, POOL_SYNONYMS))}); found {name!r}")
    return canonical


@dataclass(frozen=True)
class WorkingSolvent:
    """One row of the working list: CAS number, a name, a family."""

    cas: str
    name: str
    family: str


CommonSolvent = WorkingSolvent  # the former name


def _rows(text: str):
    """(line number, row) pairs of a CSV whose ``#`` lines are comments."""
    lines = text.splitlines()
    numbered = [(i, ln) for i, ln in enumerate(lines, start=1) if not ln.lstrip().startswith("#")]
    reader = csv.reader(io.StringIO("\n".join(ln for _, ln in numbered)))
    for (number, _), row in zip(numbered, reader):
        yield number, row


def read_working(text: str, source: str = "working_solvents.csv") -> tuple[WorkingSolvent, ...]:
    """Parse the working list.

    Parameters
    ----------
    text : str
        The file's content.
    source : str, default="working_solvents.csv"
        Named in error messages.

    Raises
    ------
    ValueError
        Wrong header, an empty cell, an unknown family or a repeated CAS number, with
        the line.

    Examples
    --------
    >>> read_working("# comment\\ncas,name,family\\n67-64-1,acetone,ketone\\n")
    (WorkingSolvent(cas='67-64-1', name='acetone', family='ketone'),)
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
        out.append(WorkingSolvent(cas, name, family))
    return tuple(out)


read_common = read_working  # the former name


@lru_cache(maxsize=1)
def load_working() -> tuple[WorkingSolvent, ...]:
    """The packaged working list, read once per process (cached)."""
    from solsphere.library.table import data_dir
    return read_working(data_dir().joinpath("working_solvents.csv").read_text(encoding="utf-8"))


load_common = load_working  # the former name


def working_cas() -> frozenset[str]:
    """CAS numbers of the packaged working list."""
    return frozenset(s.cas for s in load_working())


common_cas = working_cas  # the former name
