"""The solvent library: the packaged table of Hansen parameters and properties.

CONTRACT (fixed; other modules code against it).

- ``Solvent``: one compound, frozen dataclass, fields below (None where unknown).
- ``Library``: holds ``records`` (tuple of Solvent) and ``points`` (ndarray (n, 3)).
  ``Library.from_records(records)`` builds one from any Solvent list (tests use small ones).
  ``lookup(text)`` -> Solvent, case- and punctuation-insensitive over name, synonyms,
  CAS and trade abbreviations; raises ``UnknownSolventError`` with up to 3 suggestions.
  ``find(text)`` -> Solvent or None (no exception). ``suggest(text, n=3)`` -> list[str].
  ``liquids()`` -> Library of the compounds liquid at 25 °C.
  ``common()`` -> Library of the curated common solvents (:mod:`solsphere.common`).
  ``select(...)`` -> Library filtered (liquid_only, min_flash_point, max_boiling_point,
  exclude_carcinogens, exclude=[names]).
  ``len(lib)``, iteration over records, ``lib[i]``.
- ``load_library()`` -> the packaged Library, loaded once (cached).
- ``hazard_flags(solvent)`` -> list of short plain-text warnings (flash point, exposure
  limit, carcinogen listing, disagreement between compilations).

How a name is resolved
----------------------
Text is first tried as a CAS number, then as typed (casefolded, runs of whitespace
collapsed), then normalised: casefolded with everything but letters and digits removed,
so ``"N,N-Dimethylformamide"``, ``"n n dimethylformamide"``, ``"DMF"`` and ``"68-12-2"``
all find the same compound. When two compounds share a key, the winner is fixed:
a compound's own name beats a trade abbreviation, which beats a synonym; among synonyms
the one listed earlier for its compound wins; then the compound that comes first in the
library. The packaged table is built so that display names are unique after
normalisation and no synonym is shared by two compounds (see data/README.md).

The packaged data (``solsphere/data/solvents.csv``) is generated from the ``chemicals``
package by ``data/build_solvents.py``; the runtime does not import ``chemicals``.
"""

from __future__ import annotations

import csv
import difflib
import io
import math
import re
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Iterable, Iterator, Mapping

import numpy as np

from solsphere.errors import UnknownSolventError
from solsphere.formatting import short
from solsphere.library.data import data_dir
from solsphere.library.pools import apply_filters, common_cas

__all__ = [
    "Solvent", "Library", "load_library", "hazard_flags", "normalise", "tested_keys",
    "is_tested",
    "GHS_FLASH_CATEGORY_2_C", "GHS_FLASH_CATEGORY_3_C", "GHS_FLASH_CATEGORY_4_C",
    "GHS_BOILING_CATEGORY_1_C", "LOW_EXPOSURE_LIMIT_PPM", "SPREAD_FLAG_MPA",
]

# ----------------------------------------------------------------------------- flags
# Flammable-liquid categories of the UN Globally Harmonized System of Classification and
# Labelling of Chemicals (GHS), Rev. 9, United Nations 2021, ch. 2.6, Table 2.6.1
# (thresholds from memory): category 1 flash point < 23 °C and initial boiling point
# <= 35 °C; category 2 flash point < 23 °C and boiling point > 35 °C; category 3
# 23-60 °C; category 4 > 60-93 °C.
#: Flash point below which a liquid is GHS category 1 or 2 ("highly flammable") [°C].
GHS_FLASH_CATEGORY_2_C = 23.0
#: Upper flash point of GHS category 3 ("flammable") [°C].
GHS_FLASH_CATEGORY_3_C = 60.0
#: Upper flash point of GHS category 4 ("combustible") [°C].
GHS_FLASH_CATEGORY_4_C = 93.0
#: Boiling point at or below which a category-2 flash point makes category 1 [°C].
GHS_BOILING_CATEGORY_1_C = 35.0
#: 8-hour exposure limit at or below which a solvent is flagged [ppm].
#: Common practice, no source.
LOW_EXPOSURE_LIMIT_PPM = 10.0
#: Disagreement between compilations (``spread``) above which a solvent is flagged
#: [MPa½]. Common practice, no source (about the size of a typical sphere's uncertainty).
SPREAD_FLAG_MPA = 1.0

_CAS = re.compile(r"^\s*(\d{2,7})-(\d{2})-(\d)\s*$")
_NONWORD = re.compile(r"[\W_]+")


def normalise(text: str) -> str:
    """Lookup key of a name: casefolded, only letters and digits kept.

    >>> normalise("N,N-Dimethylformamide") == normalise("n n dimethyl formamide")
    True
    >>> normalise("68-12-2")
    '68122'
    """
    return _NONWORD.sub("", str(text).casefold())


def _typed(text: str) -> str:
    """Key for an as-typed match: casefolded, whitespace runs collapsed."""
    return " ".join(str(text).casefold().split())


@dataclass(frozen=True)
class Solvent:
    """One compound of the library (or a user's own solvent).

    Units: dD, dP, dH, spread in MPa½; molar_volume cm³/mol; density g/cm³ at 25 °C;
    boiling_point, melting_point, flash_point in °C; vapour_pressure kPa at 25 °C;
    twa_ppm in ppm and twa_mg_m3 in mg/m³ (8-hour time-weighted average exposure limit);
    mw g/mol. ``carcinogen`` is a short text ("" when none is listed).
    ``sources`` maps a field name to the compilation (dD, dP, dH) or the ``chemicals``
    method (every other field) it came from; treat it as read-only.
    ``compilations`` names every compilation that lists the compound (the winner first
    is not implied; see ``sources["dD"]``).
    ``alpha`` is the liquid's thermal expansion coefficient [1/K] (25–50 °C secant of the
    molar volume); ``price`` a price per litre from a user's shelf (any currency).
    """

    name: str
    dD: float
    dP: float
    dH: float
    cas: str | None = None
    synonyms: tuple[str, ...] = ()
    spread: float | None = None
    mw: float | None = None
    molar_volume: float | None = None
    density: float | None = None
    boiling_point: float | None = None
    melting_point: float | None = None
    flash_point: float | None = None
    vapour_pressure: float | None = None
    dielectric: float | None = None
    log_p: float | None = None
    twa_ppm: float | None = None
    twa_mg_m3: float | None = None
    carcinogen: str = ""
    liquid: bool | None = None
    sources: dict = field(default_factory=dict, compare=False, hash=False)
    compilations: tuple[str, ...] = ()
    alpha: float | None = None
    price: float | None = None

    @property
    def point(self) -> tuple[float, float, float]:
        return (self.dD, self.dP, self.dH)


class Library:
    """An ordered, searchable collection of :class:`Solvent` records.

    Build one with :meth:`from_records` or get the packaged one with
    :func:`load_library`. A Library is never modified; filters return new ones.

    Attributes
    ----------
    records : tuple of Solvent
        The compounds, in library order.
    points : ndarray of shape (n, 3)
        ``dD, dP, dH`` of each record [MPa½] (read-only).
    aliases : dict of str to str
        Trade abbreviation -> CAS number (or name) of the compound it stands for.

    Examples
    --------
    >>> lib = Library.from_records([Solvent("toluene", 18.0, 1.4, 2.0, cas="108-88-3",
    ...                                     synonyms=("methylbenzene",))],
    ...                            aliases={"PhMe": "108-88-3"})
    >>> lib.lookup("Methyl-Benzene").name, lib.lookup("phme").name, len(lib)
    ('toluene', 'toluene', 1)
    """

    def __init__(self, records: Iterable[Solvent], aliases: Mapping[str, str] | None = None,
                 *, strict: bool = True):
        self.records: tuple[Solvent, ...] = tuple(records)
        for r in self.records:
            if not isinstance(r, Solvent):
                raise TypeError(f"records must be Solvent objects; found {type(r).__name__}")
        pts = np.array([r.point for r in self.records], dtype=float).reshape(-1, 3)
        pts.setflags(write=False)
        self.points: np.ndarray = pts
        self._cas: dict[str, int] = {}
        self._typed: dict[str, tuple] = {}
        self._norm: dict[str, tuple] = {}
        for i, r in enumerate(self.records):
            if r.cas:
                self._cas.setdefault(r.cas.strip(), i)
            self._add(r.name, (0, 0, i))
            for j, s in enumerate(r.synonyms):
                self._add(s, (2, j, i))
        self.aliases: dict[str, str] = {}
        for j, (alias, target) in enumerate((aliases or {}).items()):
            i = self._target(target)
            if i is None:
                if strict:
                    raise ValueError(f"alias {alias!r} points to {target!r}, which is not "
                                     "a CAS number or name in these records")
                continue
            self.aliases[alias] = target
            self._add(alias, (1, j, i))

    def _target(self, target: str) -> int | None:
        i = self._cas.get(str(target).strip())
        if i is None:
            hit = self._typed.get(_typed(target))
            i = hit[2] if hit is not None and hit[0] == 0 else None
        return i

    def _add(self, text: str, rank: tuple) -> None:
        for index, key in ((self._typed, _typed(text)), (self._norm, normalise(text))):
            if key and (key not in index or rank < index[key]):
                index[key] = rank

    # ------------------------------------------------------------------ construction
    @classmethod
    def from_records(cls, records: Iterable[Solvent],
                     aliases: Mapping[str, str] | None = None) -> "Library":
        """Build a Library from any Solvent records.

        Parameters
        ----------
        records : iterable of Solvent
            The compounds, in the order the library will keep.
        aliases : mapping of str to str, default=None
            Trade abbreviation -> CAS number or exact name of one of the records.

        Raises
        ------
        ValueError
            If an alias points to a compound that is not among the records.
        """
        return cls(records, aliases)

    def _subset(self, keep: Iterable[int]) -> "Library":
        return Library([self.records[i] for i in keep], self.aliases, strict=False)

    # ------------------------------------------------------------------ lookup
    def _index_of(self, text: str) -> int | None:
        if not isinstance(text, str) or not text.strip():
            return None
        m = _CAS.match(text)
        if m:
            i = self._cas.get("-".join(m.groups()).lstrip("0") or "0")
            if i is None:
                i = self._cas.get("-".join(m.groups()))
            if i is not None:
                return i
        hit = self._typed.get(_typed(text))
        if hit is None:
            hit = self._norm.get(normalise(text))
        return None if hit is None else hit[2]

    def lookup(self, text: str) -> Solvent:
        """The compound that ``text`` names (name, synonym, CAS number or abbreviation).

        Raises
        ------
        UnknownSolventError
            If nothing matches; it carries up to 3 close names as suggestions.
        """
        i = self._index_of(text)
        if i is None:
            raise UnknownSolventError(str(text), self.suggest(str(text)))
        return self.records[i]

    def find(self, text: str) -> Solvent | None:
        """Like :meth:`lookup` but returns None for an unknown name."""
        i = self._index_of(text)
        return None if i is None else self.records[i]

    def suggest(self, text: str, n: int = 3) -> list[str]:
        """Up to ``n`` display names close to ``text`` (difflib ratio >= 0.6).

        Compared over the normalised names, synonyms and abbreviations (over CAS numbers
        when ``text`` is a number).
        """
        key = normalise(text)
        if not key or n <= 0:
            return []
        if key.isdigit():
            pool = {c.replace("-", ""): i for c, i in self._cas.items()}
        else:
            pool = {k: v[2] for k, v in self._norm.items()}
        out: list[str] = []
        for k in difflib.get_close_matches(key, list(pool), n=4 * n, cutoff=0.6):
            name = self.records[pool[k]].name
            if name not in out:
                out.append(name)
            if len(out) == n:
                break
        return out

    # ------------------------------------------------------------------ filters
    def liquids(self) -> "Library":
        """The compounds known to be liquid at 25 °C (``liquid is True``)."""
        return self._subset(i for i, r in enumerate(self.records) if r.liquid is True)

    def common(self) -> "Library":
        """The compounds on the curated list of common solvents (order kept).

        The list (``common_solvents.csv``, see :mod:`solsphere.common`) is our own
        selection of solvents in common industrial and laboratory use, matched by CAS
        number; it leaves out reagents, monomers and intermediates. Being on it says
        nothing about safety.
        """
        keep = common_cas()
        return self._subset(i for i, r in enumerate(self.records) if r.cas in keep)

    def select(self, liquid_only: bool = False, min_flash_point: float | None = None,
               max_boiling_point: float | None = None, exclude_carcinogens: bool = False,
               exclude: Iterable[str] = (), keep_unknown: bool = False) -> "Library":
        """A filtered Library (order kept).

        Parameters
        ----------
        liquid_only : bool, default=False
            Keep only compounds known to be liquid at 25 °C.
        min_flash_point : float or None, default=None
            Keep compounds whose flash point is at least this [°C].
        max_boiling_point : float or None, default=None
            Keep compounds whose normal boiling point is at most this [°C].
        exclude_carcinogens : bool, default=False
            Drop compounds with any carcinogen listing (IARC 1/2A/2B, NTP).
        exclude : iterable of str, default=()
            Names, CAS numbers or abbreviations to drop (resolved with :meth:`lookup`).
        keep_unknown : bool, default=False
            What to do with a compound whose flash point (or boiling point) is unknown
            while that filter is active: by default it is dropped, since it cannot be
            shown to pass; with True it is kept (and :func:`hazard_flags` says
            "no flash point data"). Note that non-flammable solvents such as water or
            dichloromethane have no flash point in the data.

        Raises
        ------
        UnknownSolventError
            If a name in ``exclude`` is not in the library.
        """
        if isinstance(exclude, str):
            exclude = [exclude]
        drop = {self.records[self._require(x)].name for x in exclude}
        kept = apply_filters(self.records, exclude_names=drop, liquid_only=liquid_only,
                             min_flash_point=min_flash_point,
                             max_boiling_point=max_boiling_point,
                             exclude_carcinogens=exclude_carcinogens,
                             keep_unknown=keep_unknown).kept
        ids = {id(s) for s in kept}
        return self._subset(i for i, r in enumerate(self.records) if id(r) in ids)

    def _require(self, text: str) -> int:
        i = self._index_of(text)
        if i is None:
            raise UnknownSolventError(str(text), self.suggest(str(text)))
        return i

    # ------------------------------------------------------------------ container
    @property
    def names(self) -> tuple[str, ...]:
        """Display names in library order."""
        return tuple(r.name for r in self.records)

    def __len__(self) -> int:
        return len(self.records)

    def __iter__(self) -> Iterator[Solvent]:
        return iter(self.records)

    def __getitem__(self, item):
        """``lib[i]`` -> Solvent; ``lib[a:b]`` -> Library; ``lib["name"]`` -> lookup."""
        if isinstance(item, str):
            return self.lookup(item)
        if isinstance(item, slice):
            return self._subset(range(len(self.records))[item])
        return self.records[item]

    def __contains__(self, text) -> bool:
        if isinstance(text, Solvent):
            return text in self.records
        return self._index_of(text) is not None

    def __repr__(self) -> str:
        return f"Library({len(self)} solvents)"


# ----------------------------------------------------------------------------- loading
_FLOATS = ("dD", "dP", "dH", "spread", "mw", "molar_volume", "density", "boiling_point",
           "melting_point", "flash_point", "vapour_pressure", "dielectric", "log_p",
           "twa_ppm", "twa_mg_m3", "alpha")
_REQUIRED = ("cas", "name", "dD", "dP", "dH")


def _read_solvents(text: str, source: str = "solvents.csv") -> list[Solvent]:
    """Parse the library CSV (columns as documented in data/README.md)."""
    reader = csv.DictReader(io.StringIO(text))
    missing = [c for c in _REQUIRED if c not in (reader.fieldnames or [])]
    if missing:
        raise ValueError(f"{source}: missing columns {missing}")
    out = []
    for line, row in enumerate(reader, start=2):
        kw: dict = {}
        for c in _FLOATS:
            v = (row.get(c) or "").strip()
            if v:
                try:
                    kw[c] = float(v)
                except ValueError:
                    raise ValueError(f"{source}, line {line}, column {c}: "
                                     f"expected a number, found {v!r}") from None
                if not math.isfinite(kw[c]):
                    raise ValueError(f"{source}, line {line}, column {c}: not finite")
            elif c in _REQUIRED:
                raise ValueError(f"{source}, line {line}: empty {c}")
        liquid = (row.get("liquid") or "").strip().lower()
        kw["liquid"] = {"true": True, "false": False}.get(liquid)
        syn = (row.get("synonyms") or "").strip()
        kw["synonyms"] = tuple(s for s in syn.split("|") if s) if syn else ()
        comp = (row.get("compilations") or "").strip()
        kw["compilations"] = tuple(s for s in comp.split("|") if s) if comp else ()
        src = {}
        for part in (row.get("sources") or "").split(";"):
            if "=" in part:
                k, v = part.split("=", 1)
                src[k.strip()] = v.strip()
        out.append(Solvent(name=row["name"].strip(), cas=row["cas"].strip() or None,
                           carcinogen=(row.get("carcinogen") or "").strip(),
                           sources=src, **kw))
    return out


def _read_aliases(text: str) -> dict[str, str]:
    return {row["alias"].strip(): row["cas"].strip()
            for row in csv.DictReader(io.StringIO(text)) if row.get("alias")}


@lru_cache(maxsize=1)
def load_library() -> Library:
    """The packaged library (``solsphere.data``: solvents.csv and aliases.csv).

    Read once per process and cached; the same object is returned on every call.
    """
    data = data_dir()
    records = _read_solvents(data.joinpath("solvents.csv").read_text(encoding="utf-8"))
    aliases = _read_aliases(data.joinpath("aliases.csv").read_text(encoding="utf-8"))
    return Library(records, aliases)


# ----------------------------------------------------------------------------- hazards
def tested_keys(names: Iterable[str], library: "Library | None" = None) -> frozenset[str]:
    """Lookup keys of solvents already tested: each name (or CAS number) as given and,
    where the library knows it, its library name and CAS number, all :func:`normalise`-d.

    One rule for every list that leaves tested solvents out (rank, next trials ...):
    ``"MEK"`` marks 2-butanone as tested, and so does its CAS number.

    >>> lib = Library([Solvent("2-butanone", 16.0, 9.0, 5.1, cas="78-93-3")], {"MEK": "78-93-3"})
    >>> is_tested(lib[0], tested_keys(["MEK"], lib))
    True
    """
    library = load_library() if library is None else library
    keys = set()
    for n in names:
        if not str(n).strip():
            continue
        keys.add(normalise(n))
        s = library.find(str(n))
        if s is not None:
            keys.add(normalise(s.name))
            if s.cas:
                keys.add(normalise(s.cas))
    return frozenset(keys)


def is_tested(solvent: Solvent, keys: frozenset[str]) -> bool:
    """True when ``solvent`` (by name or CAS number) is among :func:`tested_keys`."""
    return normalise(solvent.name) in keys or bool(solvent.cas and normalise(solvent.cas) in keys)


def hazard_flags(solvent: Solvent) -> list[str]:
    """Short plain-text warnings for a solvent, most important first.

    Flammability follows the GHS flammable-liquid categories (UN GHS Rev. 9, 2021,
    ch. 2.6); the exposure-limit and disagreement thresholds are our own (module
    constants). A missing flash point is said, not hidden.

    Examples
    --------
    >>> hazard_flags(Solvent("x", 15.0, 5.0, 5.0, flash_point=4.0, boiling_point=110.6,
    ...                      twa_ppm=5.0, carcinogen="IARC group 2B", spread=1.5))
    ['flash point 4 °C < 23 °C (highly flammable, GHS category 2)', 'exposure limit 5 ppm (≤ 10 ppm)', 'carcinogen: IARC group 2B', 'compilations disagree by 1.5 MPa½']
    """
    flags = []
    fp, bp = solvent.flash_point, solvent.boiling_point
    if fp is None:
        flags.append("no flash point data")
    elif fp < GHS_FLASH_CATEGORY_2_C:
        if bp is None:
            cat = "highly flammable, GHS category 1 or 2"
        elif bp <= GHS_BOILING_CATEGORY_1_C:
            cat = "extremely flammable, GHS category 1"
        else:
            cat = "highly flammable, GHS category 2"
        flags.append(f"flash point {short(fp)} °C < {short(GHS_FLASH_CATEGORY_2_C)} °C ({cat})")
    elif fp <= GHS_FLASH_CATEGORY_3_C:
        flags.append(f"flash point {short(fp)} °C (flammable, GHS category 3)")
    elif fp <= GHS_FLASH_CATEGORY_4_C:
        flags.append(f"flash point {short(fp)} °C (combustible, GHS category 4)")
    if solvent.twa_ppm is not None and solvent.twa_ppm <= LOW_EXPOSURE_LIMIT_PPM:
        flags.append(f"exposure limit {solvent.twa_ppm:.3g} ppm "
                     f"(≤ {short(LOW_EXPOSURE_LIMIT_PPM)} ppm)")
    if solvent.carcinogen:
        flags.append(f"carcinogen: {solvent.carcinogen}")
    if solvent.spread is not None and solvent.spread > SPREAD_FLAG_MPA:
        flags.append(f"compilations disagree by {short(solvent.spread)} MPa½")
    if str(solvent.sources.get("dD", "")).startswith("estimated from structure"):
        flags.append(f"dD, dP, dH estimated from structure, not measured (95 %: ± "
                     f"{solvent.sources.get('u95', '?')} MPa½)")
    return flags
