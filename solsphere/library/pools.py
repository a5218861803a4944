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
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any, Iterable

from solsphere.library.data import comment_rows, data_dir

__all__ = ["WorkingSolvent", "CommonSolvent", "FAMILIES", "POOLS", "POOL_SYNONYMS",
           "pool_name", "read_working", "read_common", "load_working", "load_common",
           "working_cas", "common_cas", "Filtered", "apply_filters", "POOL_CHOICES"]

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
#: Every name a front end accepts (the pools, then the older synonyms).
POOL_CHOICES = POOLS + tuple(POOL_SYNONYMS)

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
    rows = iter(comment_rows(text))
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
    return read_working(data_dir().joinpath("working_solvents.csv").read_text(encoding="utf-8"))


load_common = load_working  # the former name


def working_cas() -> frozenset[str]:
    """CAS numbers of the packaged working list."""
    return frozenset(s.cas for s in load_working())


common_cas = working_cas  # the former name


# ----------------------------------------------------------------------------- filters
@dataclass
class Filtered:
    """The solvents that passed :func:`apply_filters` and, per reason, those that did not.

    ``removed`` maps a reason (``"excluded_by_name"``, ``"duplicates_dropped"``,
    ``"not_liquid"``, ``"removed_low_flash_point"``, ``"removed_unknown_flash_point"``,
    ``"removed_high_boiling_point"``, ``"removed_unknown_boiling_point"``,
    ``"removed_low_boiling_point"``, ``"removed_unknown_boiling_point_min"``,
    ``"removed_low_exposure_limit"``, ``"removed_carcinogen"``) to the names removed for it;
    a solvent whose value is unknown is never dropped silently.
    """

    kept: list
    removed: dict[str, list[str]] = field(default_factory=dict)


def apply_filters(solvents: Iterable[Any], *, exclude_names: Iterable[str] = (),
                  liquid_only: bool = False, min_flash_point: float | None = None,
                  max_boiling_point: float | None = None,
                  min_boiling_point: float | None = None,
                  min_exposure_limit: float | None = None,
                  exclude_carcinogens: bool = False, keep_unknown: bool = False,
                  drop_duplicates: bool = False) -> Filtered:
    """The one candidate filter behind every pool (rank, blend, next, replace; CLI and app).

    Parameters
    ----------
    solvents : iterable of Solvent
    exclude_names : iterable of str, default=()
        Display names to leave out (compared after ``casefold``; resolve abbreviations
        through the library first).
    liquid_only : bool, default=False
        Keep only compounds known to be liquid at 25 °C.
    min_flash_point, max_boiling_point, min_boiling_point : float or None
        Limits [°C]. A solvent whose value is unknown does not pass an active limit
        (it cannot be shown to pass) unless ``keep_unknown``; it is listed under its own
        reason.
    min_exposure_limit : float or None
        Leave out solvents whose 8-hour exposure limit is below this [ppm]; a solvent
        without exposure-limit data is kept (most of the library has none).
    exclude_carcinogens : bool, default=False
        Leave out solvents with any carcinogen listing.
    keep_unknown : bool, default=False
    drop_duplicates : bool, default=False
        Keep only the first of solvents with the same name (after ``casefold``).

    Examples
    --------
    >>> from types import SimpleNamespace as S
    >>> a = S(name="a", liquid=True, flash_point=30.0, boiling_point=100.0, twa_ppm=None,
    ...       carcinogen=None)
    >>> b = S(name="b", liquid=True, flash_point=None, boiling_point=80.0, twa_ppm=None,
    ...       carcinogen=None)
    >>> f = apply_filters([a, b], min_flash_point=23.0)
    >>> [s.name for s in f.kept], f.removed
    (['a'], {'removed_unknown_flash_point': ['b']})
    """
    drop = {str(n).casefold() for n in exclude_names}
    removed: dict[str, list[str]] = {}
    seen: set[str] = set()
    kept = []

    def out(reason: str, s) -> None:
        removed.setdefault(reason, []).append(s.name)

    def unknown_or(value, fails: bool, low: str, unknown: str, s) -> bool:
        if value is None:
            if keep_unknown:
                return False
            out(unknown, s)
            return True
        if fails:
            out(low, s)
            return True
        return False

    for s in solvents:
        key = s.name.casefold()
        if drop_duplicates:
            if key in seen:
                out("duplicates_dropped", s)
                continue
            seen.add(key)
        if key in drop:
            out("excluded_by_name", s)
            continue
        if liquid_only and getattr(s, "liquid", None) is not True:
            out("not_liquid", s)
            continue
        fp, bp = s.flash_point, s.boiling_point
        if min_flash_point is not None and unknown_or(
                fp, fp is not None and fp < min_flash_point, "removed_low_flash_point",
                "removed_unknown_flash_point", s):
            continue
        if max_boiling_point is not None and unknown_or(
                bp, bp is not None and bp > max_boiling_point, "removed_high_boiling_point",
                "removed_unknown_boiling_point", s):
            continue
        if min_boiling_point is not None and unknown_or(
                bp, bp is not None and bp < min_boiling_point, "removed_low_boiling_point",
                "removed_unknown_boiling_point_min", s):
            continue
        if (min_exposure_limit is not None and s.twa_ppm is not None
                and s.twa_ppm < min_exposure_limit):
            out("removed_low_exposure_limit", s)
            continue
        if exclude_carcinogens and s.carcinogen:
            out("removed_carcinogen", s)
            continue
        kept.append(s)
    return Filtered(kept, removed)
