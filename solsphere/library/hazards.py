"""Hazard facts beyond the flash point: reprotoxic and carcinogen listings, restrictions,
and the comparison of two solvents hazard by hazard.

The listing file (``solsphere/data/hazard_listings.csv``) is compiled FROM MEMORY of
published lists (EU CLP Annex VI harmonised classifications, REACH Annex XIV/XVII and the
Candidate List, IARC, the Montreal Protocol), with the list and entry for each solvent:
check it against the current official list before relying on it. **Absence from the file
never means safe**: most solvents were never assessed.

Three hazards are compared (:func:`compare`), each on a small ordinal scale where higher
is worse:

- ``carcinogen``: 0 none known, 1 suspected (EU Carc. 2, IARC 2B, or a "may contain"
  note), 2 presumed (EU Carc. 1B, IARC 2A, NTP "reasonably anticipated"), 3 known (EU
  Carc. 1A, IARC 1, NTP "known"); the worst of the library text and the listing file.
- ``reprotoxic``: 0 none listed, 1 suspected (EU Repr. 2), 2 known or presumed (Repr.
  1A/1B); ``restricted`` (a restriction, authorisation or Candidate-List entry) is shown
  beside it.
- ``corrosive_toxic``: 0 none listed, 1 corrosive to skin (EU Skin Corr. 1, 1A-1C) or
  toxic on short exposure (Acute Tox. 3), 2 fatal (Acute Tox. 1-2); from the health file
  (``solsphere/data/health_hazards.csv``, also compiled from memory, working solvents
  only; a solvent outside the working pool that the file does not list is None, not
  assessed, and counts as unknown like a missing flash point). Serious eye damage
  (Eye Dam. 1) is shown as a fact but not ranked: goggles handle it, and counting it
  would refuse γ-butyrolactone as a replacement for NMP.
- ``flammability``: the GHS flammable-liquid category from flash and boiling point
  (UN GHS Rev. 9, 2021, ch. 2.6, thresholds in :mod:`solsphere.library.table`): 0 not
  classified (no flash point, or above 93 °C), 1 category 4, 2 category 3, 3 category 2,
  4 category 1. An unknown flash point is ``None`` (never taken as safe).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import lru_cache

from solsphere.library.data import comment_rows, data_dir
from solsphere.library.pools import working_cas
from solsphere.library.table import (GHS_BOILING_CATEGORY_1_C, GHS_FLASH_CATEGORY_2_C,
                                     GHS_FLASH_CATEGORY_3_C, GHS_FLASH_CATEGORY_4_C,
                                     Solvent, hazard_flags)

__all__ = ["Listing", "HealthEntry", "HAZARDS", "read_listings", "load_listings", "listing_of",
           "read_health", "load_health", "health_of", "corrosive_toxic_level", "hazard_facts",
           "carcinogen_level", "reprotoxic_level", "flammability_level", "ghs_category",
           "is_listed", "compare", "never_worse", "hazard_score", "LISTING_CAUTION"]

#: The hazards compared for a substitution, in display order.
HAZARDS = ("carcinogen", "reprotoxic", "corrosive_toxic", "flammability")

LISTING_CAUTION = ("Listings compiled from memory of published lists (EU CLP, REACH, IARC): "
                   "check them against the current official list. Absence from the list "
                   "never means safe.")

_COLUMNS = ("cas", "name", "reprotoxic", "carcinogen", "restricted", "jurisdiction", "source")
_EU_CARC = {"1A": 3, "1B": 2, "2": 1}
_EU_REPR = {"1A": 2, "1B": 2, "2": 1}
_WORST = {"carcinogen": 3, "reprotoxic": 2, "corrosive_toxic": 2, "flammability": 4}
_HEALTH_COLUMNS = ("cas", "name", "skin", "acute", "eye", "jurisdiction", "source")


@dataclass(frozen=True)
class Listing:
    """One entry of the listing file."""

    cas: str
    name: str
    reprotoxic: str       # EU CLP category "1A", "1B", "2" or ""
    carcinogen: str       # EU CLP category "1A", "1B", "2" or ""
    restricted: bool
    jurisdiction: str
    source: str

    def text(self) -> str:
        """Short text: ``"Repr. 1B (EU; restricted)"``."""
        parts = ([f"Repr. {self.reprotoxic}"] if self.reprotoxic else []) + \
                ([f"Carc. {self.carcinogen}"] if self.carcinogen else [])
        what = ", ".join(parts) or "listed"
        return f"{what} ({self.jurisdiction}{'; restricted' if self.restricted else ''})"

    def to_dict(self) -> dict:
        return {"cas": self.cas, "name": self.name, "reprotoxic": self.reprotoxic,
                "carcinogen": self.carcinogen, "restricted": self.restricted,
                "jurisdiction": self.jurisdiction, "source": self.source,
                "compiled_from_memory": True}


def _data_rows(text: str, columns: tuple, source: str):
    """(line, stripped cells) of each non-empty row of a curated CSV whose ``#`` lines are
    comments, after checking the header; ValueError naming the line otherwise."""
    rows = comment_rows(text)
    _, header = next(rows, (0, []))
    if tuple(c.strip() for c in header) != columns:
        raise ValueError(f"{source}: header must be {','.join(columns)}")
    for line, row in rows:
        if not any(c.strip() for c in row):
            continue
        if len(row) != len(columns):
            raise ValueError(f"{source}, line {line}: expected {len(columns)} cells")
        yield line, [c.strip() for c in row]


def read_listings(text: str, source: str = "hazard_listings.csv") -> dict[str, Listing]:
    """Parse the listing file (``#`` lines are comments) into {CAS: Listing}.

    Raises
    ------
    ValueError
        Wrong header, unknown category, a repeated CAS or an empty source, with the line.

    Examples
    --------
    >>> d = read_listings("cas,name,reprotoxic,carcinogen,restricted,jurisdiction,source\\n"
    ...                   "872-50-4,NMP,1B,,yes,EU,CLP Annex VI\\n")
    >>> d["872-50-4"].text()
    'Repr. 1B (EU; restricted)'
    """
    out: dict[str, Listing] = {}
    for line, row in _data_rows(text, _COLUMNS, source):
        cas, name, repr_, carc, restricted, jur, src = row
        if repr_ not in ("", *_EU_REPR) or carc not in ("", *_EU_CARC):
            raise ValueError(f"{source}, line {line}: categories must be 1A, 1B, 2 or empty")
        if restricted not in ("", "yes"):
            raise ValueError(f"{source}, line {line}, column restricted: 'yes' or empty")
        if not src or not jur:
            raise ValueError(f"{source}, line {line}: jurisdiction and source are required")
        if cas in out:
            raise ValueError(f"{source}, line {line}: CAS {cas} repeats")
        out[cas] = Listing(cas, name, repr_, carc, restricted == "yes", jur, src)
    return out


@lru_cache(maxsize=1)
def load_listings() -> dict[str, Listing]:
    """The packaged listing file, read once per process (cached)."""
    return read_listings(data_dir().joinpath("hazard_listings.csv").read_text(encoding="utf-8"))


def listing_of(solvent: Solvent) -> Listing | None:
    """The solvent's entry in the listing file (by CAS), or None (which is not "safe")."""
    return load_listings().get(solvent.cas) if solvent.cas else None


@dataclass(frozen=True)
class HealthEntry:
    """One entry of the health file: skin corrosion, acute toxicity, eye damage."""

    cas: str
    name: str
    skin: str           # EU CLP Skin Corr. category "1", "1A", "1B", "1C" or ""
    acute: str          # the worst EU CLP Acute Tox. category "1", "2", "3" or ""
    eye: bool           # Eye Dam. 1
    jurisdiction: str
    source: str

    def level(self) -> int:
        """0 none listed, 1 corrosive or toxic (Acute Tox. 3), 2 fatal (Acute Tox. 1-2)."""
        if self.acute in ("1", "2"):
            return 2
        return 1 if self.skin or self.acute == "3" else 0

    def text(self) -> str:
        """Short text: ``"Skin Corr. 1A, Eye Dam. 1 (EU)"``."""
        parts = ([f"Skin Corr. {self.skin}"] if self.skin else []) + \
                ([f"Acute Tox. {self.acute}"] if self.acute else []) + \
                (["Eye Dam. 1"] if self.eye else [])
        return f"{', '.join(parts)} ({self.jurisdiction})"

    def to_dict(self) -> dict:
        return {"cas": self.cas, "name": self.name, "skin_corrosion": self.skin,
                "acute_toxicity": self.acute, "eye_damage": self.eye,
                "jurisdiction": self.jurisdiction, "source": self.source,
                "compiled_from_memory": True}


def read_health(text: str, source: str = "health_hazards.csv") -> dict[str, HealthEntry]:
    """Parse the health file (``#`` lines are comments) into {CAS: HealthEntry}.

    Raises
    ------
    ValueError
        Wrong header, unknown category, a repeated CAS, an empty entry or source, with
        the line.

    Examples
    --------
    >>> d = read_health("cas,name,skin,acute,eye,jurisdiction,source\\n"
    ...                 "64-19-7,acetic acid,1A,,,EU,CLP Annex VI\\n")
    >>> d["64-19-7"].text(), d["64-19-7"].level()
    ('Skin Corr. 1A (EU)', 1)
    """
    out: dict[str, HealthEntry] = {}
    for line, row in _data_rows(text, _HEALTH_COLUMNS, source):
        cas, name, skin, acute, eye, jur, src = row
        if skin not in ("", "1", "1A", "1B", "1C") or acute not in ("", "1", "2", "3") \
                or eye not in ("", "1"):
            raise ValueError(f"{source}, line {line}: skin must be 1, 1A, 1B, 1C or empty; "
                             f"acute 1, 2, 3 or empty; eye 1 or empty")
        if not (skin or acute or eye):
            raise ValueError(f"{source}, line {line}: an entry needs skin, acute or eye")
        if not src or not jur:
            raise ValueError(f"{source}, line {line}: jurisdiction and source are required")
        if cas in out:
            raise ValueError(f"{source}, line {line}: CAS {cas} repeats")
        out[cas] = HealthEntry(cas, name, skin, acute, eye == "1", jur, src)
    return out


@lru_cache(maxsize=1)
def load_health() -> dict[str, HealthEntry]:
    """The packaged health file, read once per process (cached)."""
    return read_health(data_dir().joinpath("health_hazards.csv").read_text(encoding="utf-8"))


def health_of(solvent: Solvent) -> HealthEntry | None:
    """The solvent's entry in the health file (by CAS), or None (which is not "safe")."""
    return load_health().get(solvent.cas) if solvent.cas else None


def corrosive_toxic_level(solvent: Solvent) -> int | None:
    """0 none listed, 1 corrosive to skin or toxic (Acute Tox. 3), 2 fatal (Acute Tox. 1-2);
    None (not assessed) for a solvent outside the working pool that the health file does
    not list: the file covers working solvents only, so there its absence says nothing."""
    entry = health_of(solvent)
    if entry is not None:
        return entry.level()
    return 0 if solvent.cas and solvent.cas in working_cas() else None


def hazard_facts(solvent: Solvent) -> list[str]:
    """Every hazard fact to show beside a recommendation, most important first: the
    listing (reprotoxic, carcinogen, restricted), the health entry (corrosive, toxic, eye
    damage), then :func:`solsphere.library.table.hazard_flags` (flash point, exposure
    limit, carcinogen class, data caveats).

    Examples
    --------
    >>> from solsphere.library.table import load_library
    >>> hazard_facts(load_library().lookup("NMP"))[0]
    'listed: Repr. 1B (EU; restricted)'
    >>> hazard_facts(load_library().lookup("acetic acid"))[0]
    'corrosive or toxic: Skin Corr. 1A (EU)'
    """
    facts = []
    lst = listing_of(solvent)
    if lst is not None:
        facts.append(f"listed: {lst.text()}")
    entry = health_of(solvent)
    if entry is not None:
        word = "corrosive or toxic" if entry.level() else "serious eye damage"
        facts.append(f"{word}: {entry.text()}")
    elif corrosive_toxic_level(solvent) is None:
        facts.append("skin corrosion / acute toxicity not assessed (not a working solvent): "
                     "read its safety data sheet")
    return facts + hazard_flags(solvent)


def carcinogen_level(solvent: Solvent) -> int:
    """0-3 (see the module docstring): the worst of the library text and the listing."""
    text = solvent.carcinogen or ""
    level = 0
    if re.search(r"IARC group 1\b|NTP known", text):
        level = 3
    elif re.search(r"IARC group 2A|NTP reasonably", text):
        level = 2
    elif re.search(r"IARC group 2B", text) or text:
        level = 1
    lst = listing_of(solvent)
    if lst is not None and lst.carcinogen:
        level = max(level, _EU_CARC[lst.carcinogen])
    return level


def reprotoxic_level(solvent: Solvent) -> int:
    """0 none listed, 1 suspected (Repr. 2), 2 known or presumed (Repr. 1A/1B)."""
    lst = listing_of(solvent)
    return _EU_REPR.get(lst.reprotoxic, 0) if lst is not None and lst.reprotoxic else 0


def is_listed(solvent: Solvent) -> bool:
    """On the listing file as a known/presumed reprotoxicant or carcinogen (category 1A/1B),
    or restricted."""
    lst = listing_of(solvent)
    if lst is None:
        return False
    return lst.restricted or lst.reprotoxic in ("1A", "1B") or lst.carcinogen in ("1A", "1B")


def _not_flammable(solvent: Solvent) -> bool:
    return str(solvent.sources.get("flash_point", "")).startswith("none")


def ghs_category(solvent: Solvent) -> int | None:
    """GHS flammable-liquid category 1-4, 0 for not classified (no flash point by the data,
    or above 93 °C), None when the flash point is unknown.

    Examples
    --------
    >>> ghs_category(Solvent("x", 15, 5, 5, flash_point=-20, boiling_point=34.6))
    1
    >>> ghs_category(Solvent("x", 15, 5, 5, flash_point=86, boiling_point=202))
    4
    >>> ghs_category(Solvent("x", 15, 5, 5)) is None
    True
    """
    fp, bp = solvent.flash_point, solvent.boiling_point
    if fp is None:
        return 0 if _not_flammable(solvent) else None
    if fp < GHS_FLASH_CATEGORY_2_C:
        # without a boiling point, the worse category (1) is assumed
        return 1 if bp is None or bp <= GHS_BOILING_CATEGORY_1_C else 2
    if fp <= GHS_FLASH_CATEGORY_3_C:
        return 3
    if fp <= GHS_FLASH_CATEGORY_4_C:
        return 4
    return 0


def flammability_level(solvent: Solvent) -> int | None:
    """0 (not classified) to 4 (GHS category 1); None when unknown."""
    cat = ghs_category(solvent)
    return None if cat is None else (0 if cat == 0 else 5 - cat)


def _levels(solvent: Solvent) -> dict[str, int | None]:
    return {"carcinogen": carcinogen_level(solvent), "reprotoxic": reprotoxic_level(solvent),
            "corrosive_toxic": corrosive_toxic_level(solvent),
            "flammability": flammability_level(solvent)}


def compare(candidate: Solvent, target: Solvent) -> dict[str, str]:
    """``{"carcinogen": "better"|"same"|"worse"|"unknown", ...}`` of candidate vs target.

    "unknown" when the candidate's level is unknown (a missing flash point); a target's
    unknown level is taken as the worst (so nothing is "worse" than it).

    Examples
    --------
    >>> a = Solvent("a", 15, 5, 5, flash_point=10, boiling_point=80)
    >>> b = Solvent("b", 15, 5, 5, flash_point=70, boiling_point=180)
    >>> compare(b, a)["flammability"], compare(a, b)["flammability"]
    ('better', 'worse')
    """
    lc, lt = _levels(candidate), _levels(target)
    out = {}
    for h in HAZARDS:
        c, t = lc[h], lt[h]
        if c is None:
            out[h] = "unknown"
        elif t is None:
            out[h] = "same" if c == _WORST[h] else "better"
        else:
            out[h] = "better" if c < t else ("worse" if c > t else "same")
    return out


def never_worse(candidate: Solvent, target: Solvent) -> tuple[bool, str]:
    """(ok, reason) for the default substitution rule.

    A candidate is refused when it is worse than the target on any hazard, when a hazard
    is unknown for it (a missing flash point: listed as left out for lack of data), or when
    it is itself listed (Repr./Carc. 1A/1B or restricted): swapping one listed solvent for
    another leaves the regulatory problem that usually prompts the replacement.
    """
    cmp = compare(candidate, target)
    worse = [h for h in HAZARDS if cmp[h] == "worse"]
    if worse:
        return False, "worse on " + ", ".join(worse)
    unknown = [h for h in HAZARDS if cmp[h] == "unknown"]
    if unknown:
        return False, "no data for " + ", ".join(unknown)
    if is_listed(candidate):
        return False, "listed itself: " + listing_of(candidate).text()
    return True, ""


def hazard_score(solvent: Solvent) -> float:
    """One number for ordering by hazard (higher is worse; our own weights, no source):
    3 × (carcinogen + reprotoxic + corrosive_toxic) + flammability (an unknown flash point
    counts as 4, an unassessed corrosive_toxic as 2)."""
    lv = _levels(solvent)
    fl, ct = lv["flammability"], lv["corrosive_toxic"]
    return (3.0 * (lv["carcinogen"] + lv["reprotoxic"] + (_WORST["corrosive_toxic"] if ct is None
                                                          else ct))
            + (4.0 if fl is None else fl))
