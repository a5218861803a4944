"""Bench results: read, validate and resolve the trials a sphere is fitted to.

A results file (CSV or TSV, see DEVELOPERS.md, "Conventions") has one row per trial::

    solvent,outcome,dD,dP,dH,note
    toluene,good,,,,clear after 1 h
    ethanol,does not,,,,
    toluene 70 + ethanol 30,partly,,,,swells
    my resin thinner,good,17.1,4.2,6.0,own coordinates

Each solvent cell is resolved once, here: a library name / synonym / CAS number /
abbreviation (``library.lookup``), a blend tested as one trial (``toluene 70 +
ethanol 30``: volume parts, placed at the volume-fraction weighted mean of its
components, :func:`solsphere.hsp.mix`), or the user's own solvent with its own
``dD, dP, dH``. Own coordinates given for a known solvent override the library.

Error convention
----------------
Every problem is an :class:`~solsphere.errors.InputError` on one line with

- ``file``: the path exactly as given (``"<table>"`` for the app's table);
- ``line``: the 1-based physical line of the file, the header being line 1 when
  nothing precedes it (blank and ``#`` comment lines count, as in an editor); for the
  app's table, the row index + 1;
- ``column``: the column's **name** (``"solvent"``, ``"outcome"``, ``"dD"``, ``"dP"``,
  ``"dH"``, ``"note"``; for header problems, the header cell as written), so the app
  can mark the cell whatever the column order;
- a message saying what was found and what was expected, and a hint saying how to fix
  it.

:func:`read` raises the first problem (in line order) and says how many more follow;
:func:`validate_rows` returns all of them next to the rows that are fine.

Partial results
---------------
Trials keep ``"partial"`` as read. The documented default for turning them into a
yes/no answer (:meth:`Trials.binary`) is :data:`DEFAULT_PARTIAL` = ``"good"``: partial
dissolution or swelling means a strong interaction, so the sphere should include it
(common practice, no source). The fit has its own ``partial`` setting.
"""

from __future__ import annotations

import csv
import difflib
import io
import math
import re
import sys
import weakref
from dataclasses import dataclass, field
from typing import Any, Iterable, Iterator, Protocol

import numpy as np

from solsphere import hansen as hsp
from solsphere.errors import InputError, UnknownSolventError
from solsphere.io.files import MAX_BYTES, MAX_FIELD, decode_noted, read_bytes
from solsphere.io.scales import Scale, detect_scale, parse_scale
from solsphere.io.workbooks import is_workbook, read_sheet
from solsphere.library.table import load_library
from solsphere.limits import check as check_limit, clip, current as current_limits

__all__ = ["Trial", "Trials", "read", "read_text", "read_trials", "from_rows", "validate_rows",
           "parse_outcome", "OUTCOMES", "OUTCOME_WORDS", "DISPLAY", "DEFAULT_PARTIAL",
           "COLUMNS", "MAX_COORDINATE", "MAX_BLEND_PART", "replace_surrogates",
           "parse_blend_spec", "read_materials", "pick_material", "read_bytes_table", "CAL_TO_MPA",
           "MAX_PROBLEMS", "header_column"]

#: Canonical outcomes.
OUTCOMES = ("good", "bad", "partial")
#: Words shown to people for each outcome (DEVELOPERS.md, "Conventions"): the one table.
DISPLAY = {"good": "dissolves", "partial": "partly", "bad": "does not"}
#: How :meth:`Trials.binary` counts a partial result unless told otherwise.
DEFAULT_PARTIAL = "good"
#: The columns of a results file, in the order they are written.
COLUMNS = ("solvent", "outcome", "dD", "dP", "dH", "note")
#: Largest accepted coordinate [MPa½]. No liquid comes close: water's δH, the largest
#: of the common solvents, is about 42 MPa½ (Hansen handbook, 2007; from memory).
MAX_COORDINATE = 60.0
#: Accepted outcome words (compared after lower-casing and collapsing spaces).
OUTCOME_WORDS = {
    "good": ("good", "1", "yes", "y", "true", "soluble", "dissolves", "dissolved",
             "dissolve", "+", "✓", "✔", "☑", "✅"),
    "bad": ("bad", "0", "no", "n", "false", "insoluble", "does not", "does not dissolve",
            "doesn't", "doesn't dissolve", "not soluble", "-", "✗", "✘", "☒", "❌"),
    "partial": ("partial", "partly", "partially", "swells", "swollen", "0.5"),
}
_WORD_TO_OUTCOME = {w: k for k, words in OUTCOME_WORDS.items() for w in words}
COORDINATES = ("dD", "dP", "dH")
_OVERRIDE = "+own override"
_HEADER_ALIASES = {
    "solvent": "solvent", "solvents": "solvent",
    "solventname": "solvent", "liquid": "solvent",
    "outcome": "outcome", "outcomes": "outcome",
    # what labs write over the outcome column
    "result": "outcome", "results": "outcome", "observation": "outcome",
    "observations": "outcome", "solubility": "outcome", "dissolved": "outcome",
    "dissolves": "outcome", "soluble": "outcome", "score": "outcome",
    # dD, δD, delta D, d_D, delta_d ("δ" and "delta" are read as "d" first)
    "dd": "dD", "dp": "dP", "dh": "dH",
    "hspd": "dD", "hspp": "dP", "hsph": "dH",
    "note": "note", "notes": "note", "comment": "note", "comments": "note",
    "remark": "note", "remarks": "note",
    "material": "material", "materials": "material",
}
_HEADER_EXAMPLE = "solvent,outcome,dD,dP,dH,note"
#: MPa½ per (cal/cm³)½: 1 cal = 4.184 J (the thermochemical calorie, NIST Special
#: Publication 811, 2008, appendix B.8) and 1 J/cm³ = 1 MPa, so (cal/cm³)½ =
#: √4.184 MPa½ = 2.0455 MPa½; the same factor in Hansen, *Hansen Solubility Parameters:
#: A User's Handbook*, 2nd ed., CRC Press 2007, ch. 1 (from memory).
CAL_TO_MPA = 2.0455
_CAL_TO_MPA = CAL_TO_MPA
#: δD below this [MPa½] for every own solvent of a file reads as (cal/cm³)½ values: no
#: common liquid is that low (the lowest in the packaged library, fluorocarbons and
#: siloxanes, are 10.6–12.0).
IMPLAUSIBLE_DD = 12.0
#: Problems of one file reported at once.
MAX_PROBLEMS = 20


class LibraryLike(Protocol):
    """What trials need from a library (see :mod:`solsphere.library`)."""

    def lookup(self, text: str): ...

    def find(self, text: str): ...


# --------------------------------------------------------------------------- records


@dataclass
class Trial:
    """One bench result, resolved to a point in Hansen space.

    Attributes
    ----------
    name : str
        Display name: the library's name, the user's text for an own solvent, or a
        blend label such as ``"toluene 70 + ethanol 30"``.
    text : str
        The solvent cell as written.
    outcome : {"good", "bad", "partial"}
    dD, dP, dH : float
        Resolved coordinates [MPa½].
    source : str
        ``"library"``, ``"own"``, ``"blend"``, ``"library+own override"`` or
        ``"blend+own override"`` (own coordinates given for a blend).
    components : tuple of (str, float)
        For blends: (library name, volume fraction) pairs, fractions summing to 1;
        ``()`` otherwise.
    cas : str or None
    note : str
    line : int
        1-based line of the file (row index + 1 for the app's table).
    solvent : Solvent or None
        The library record (None for own solvents and blends).
    """

    name: str
    text: str
    outcome: str
    dD: float
    dP: float
    dH: float
    source: str
    components: tuple = ()
    cas: str | None = None
    note: str = ""
    line: int = 0
    solvent: Any = None

    @property
    def point(self) -> tuple[float, float, float]:
        return (self.dD, self.dP, self.dH)

    @property
    def own_coordinates(self) -> bool:
        """True when the coordinates came from the user's dD, dP, dH cells."""
        return self.source == "own" or self.source.endswith(_OVERRIDE)

    @property
    def identity(self) -> tuple:
        """What makes two trials "the same solvent" (duplicate detection)."""
        if self.components:
            return ("blend", tuple(sorted((n.casefold(), round(f, 9))
                                          for n, f in self.components)))
        if self.cas:
            return ("cas", self.cas)
        return ("name", " ".join(self.name.split()).casefold())

    def to_row(self) -> dict:
        """The file columns of this trial (coordinates only where the user gave them)."""
        own = self.own_coordinates
        return {"solvent": self.text, "outcome": self.outcome,
                "dD": self.dD if own else None, "dP": self.dP if own else None,
                "dH": self.dH if own else None, "note": self.note}

    def to_dict(self) -> dict:
        """JSON-safe dict: the file columns plus the resolved values."""
        d = self.to_row()
        d.update({"line": self.line, "name": self.name, "source": self.source,
                  "resolved": [self.dD, self.dP, self.dH],
                  "components": [[n, f] for n, f in self.components], "cas": self.cas})
        return d


@dataclass
class Trials:
    """The validated bench results of one material.

    Attributes
    ----------
    trials : list of Trial
    source : str
        The file name as given, or ``"<table>"``.
    warnings : list of str
        Problems that did not stop reading (repeated rows, ignored columns ...), each
        naming its file and line.
    """

    trials: list = field(default_factory=list)
    source: str = "<table>"
    warnings: list = field(default_factory=list)
    material: str | None = None

    def __len__(self) -> int:
        return len(self.trials)

    def __iter__(self) -> Iterator[Trial]:
        return iter(self.trials)

    def __getitem__(self, i) -> Trial:
        return self.trials[i]

    def __str__(self) -> str:
        n = {k: sum(t.outcome == k for t in self.trials) for k in OUTCOMES}
        out = (f"{len(self)} trials from {self.source}: {n['good']} dissolve, "
               f"{n['partial']} partly, {n['bad']} do not")
        if self.warnings:
            out += f"; {len(self.warnings)} warning{'s' if len(self.warnings) > 1 else ''}"
        return out

    @property
    def points(self) -> np.ndarray:
        """Coordinates, ndarray of shape (n, 3) [MPa½]."""
        return np.array([t.point for t in self.trials], dtype=float).reshape(-1, 3)

    @property
    def outcomes(self) -> list[str]:
        return [t.outcome for t in self.trials]

    @property
    def names(self) -> list[str]:
        return [t.name for t in self.trials]

    def binary(self, partial: str = DEFAULT_PARTIAL) -> tuple[np.ndarray, np.ndarray, list[str]]:
        """Points and a yes/no answer per trial.

        Parameters
        ----------
        partial : {"good", "bad", "skip"}, default="good"
            How to count partial results: as dissolving, as not dissolving, or left
            out.

        Returns
        -------
        points : ndarray of shape (m, 3)
        good : ndarray of bool, shape (m,)
        names : list of str, length m
        """
        if partial not in ("good", "bad", "skip"):
            raise ValueError(f"partial must be 'good', 'bad' or 'skip'; found {partial!r}")
        keep = [t for t in self.trials if not (partial == "skip" and t.outcome == "partial")]
        points = np.array([t.point for t in keep], dtype=float).reshape(-1, 3)
        good = np.array([t.outcome == "good" or (t.outcome == "partial" and partial == "good")
                         for t in keep], dtype=bool)
        return points, good, [t.name for t in keep]

    def to_rows(self) -> list[dict]:
        """Rows with the file columns (solvent, outcome, dD, dP, dH, note).

        Coordinates are filled only where the user gave them (own solvents and
        overrides), so :func:`from_rows` of the result gives the same trials.
        """
        return [t.to_row() for t in self.trials]

    def to_csv(self) -> str:
        """The trials as the text of a results file (comma-separated, header first)."""
        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        w.writerow(COLUMNS)
        for r in self.to_rows():
            w.writerow(["" if r[c] is None else (repr(r[c]) if isinstance(r[c], float)
                                                  else r[c]) for c in COLUMNS])
        return buf.getvalue()

    def to_dict(self) -> dict:
        """JSON-safe dict for the project file: rows plus resolved coordinates."""
        return {"source": self.source, "warnings": list(self.warnings),
                "rows": [t.to_dict() for t in self.trials]}

    @classmethod
    def from_dict(cls, data: dict, library: LibraryLike | None = None,
                  file: str | None = None) -> "Trials":
        """Rebuild trials saved by :meth:`to_dict`, re-validating every row.

        Rows are checked exactly like a results file. The saved coordinates win, so a
        project gives the same fit even if the library changes: when the library's
        values differ, or a saved solvent is no longer in the library, the saved
        coordinates are used and a warning says so.

        Parameters
        ----------
        data : dict
            Output of :meth:`to_dict`.
        library : Library or None, default=None
            None means :func:`solsphere.library.load_library`.
        file : str or None, default=None
            The project file, named in error messages.

        Raises
        ------
        InputError
            Wrong structure or types, or a row that does not validate.
        """
        label = file if file is not None else "<project>"
        hint = ("the project file was edited or damaged: fix that entry, or make a new "
                "project from the results file")

        def bad(msg: str):
            return InputError(f"trials: {msg}", file=label, hint=hint)

        if not isinstance(data, dict):
            raise bad(f"expected an object, found {json_type(data)}")
        for key, typ, tname in (("source", str, "a string"), ("warnings", list, "a list"),
                                ("rows", list, "a list")):
            if key not in data:
                raise bad(f"missing key {key!r}")
            if not isinstance(data[key], typ):
                raise bad(f"{key!r} must be {tname}, found {json_type(data[key])}")
        if not all(isinstance(w, str) for w in data["warnings"]):
            raise bad("'warnings' must be a list of strings")
        source = data["source"]
        check_limit("rows", len(data["rows"]), "the saved trials", file=label)
        records = []
        for i, r in enumerate(data["rows"]):
            where = f"rows[{i}]"
            if not isinstance(r, dict):
                raise bad(f"{where} must be an object, found {json_type(r)}")
            for key in ("solvent", "outcome", "line", "resolved"):
                if key not in r:
                    raise bad(f"{where} has no {key!r}")
            for key in ("solvent", "outcome", "note"):
                if key in r and not isinstance(r[key], str):
                    raise bad(f"{where}.{key} must be a string, found {json_type(r[key])}")
            if not isinstance(r["line"], int) or isinstance(r["line"], bool) or r["line"] < 1:
                raise bad(f"{where}.line must be a positive integer, found {clip(r['line'])}")
            res = r["resolved"]
            if (not isinstance(res, list) or len(res) != 3
                    or not all(_is_number(v) and math.isfinite(v) for v in res)):
                raise bad(f"{where}.resolved must be a list of 3 finite numbers, "
                          f"found {clip(res)}")
            if not all(0.0 <= v <= MAX_COORDINATE for v in res):
                raise bad(f"{where}.resolved must hold coordinates from 0 to "
                          f"{MAX_COORDINATE:g} MPa½, found {clip(res)}")
            for c in COORDINATES:
                v = r.get(c)
                if v is not None and not _is_number(v):
                    raise bad(f"{where}.{c} must be a number or null, found {clip(v)}")
            cells = {k: r.get(k) for k in COLUMNS}
            records.append((r["line"], cells, tuple(float(v) for v in res)))
        lib = _get_library(library)
        ctx = ReadContext(file=source, library=lib, decimal_comma=True,
                       unit="row" if source == "<table>" else "line")
        trials, errors = _collect(((ln, cells) for ln, cells, _ in records), ctx,
                                  stored=[s for _, _, s in records])
        if errors:
            e = errors[0]
            raise InputError(f"saved trial ({e.where()}): {e.message}", file=label,
                             hint=e.hint or hint)
        warnings = list(data["warnings"])
        warnings += [w for w in ctx.warnings if w not in warnings]
        return cls(trials=trials, source=source, warnings=warnings)


# ---------------------------------------------------------------------- public readers


def read(path, library: LibraryLike | None = None, *, sheet: str | None = None,
         scale: str | Scale | None = None, material: str | None = None) -> Trials:
    """Read a bench results file: CSV, TSV or semicolon-separated text, or a workbook.

    Text may be UTF-8 (with or without BOM), UTF-16 with a BOM, or, failing UTF-8, the
    Windows code page 1252 (a warning says so). ``.xlsx`` and ``.ods`` workbooks are
    read from their first sheet or the one named (:mod:`solsphere.io.workbooks`).
    ``"-"`` reads standard input (text or a workbook).

    Parameters
    ----------
    path : str or os.PathLike
        The file; error messages name it as given.
    library : Library or None, default=None
        Resolves solvent names. None means :func:`solsphere.library.load_library`.
    sheet : str or None, default=None
        A workbook's sheet (None: the first).
    scale : str, Scale or None, default=None
        How numbered outcomes read (:mod:`solsphere.io.scales`); None decides from
        the file.
    material : str or None, default=None
        With a ``material`` column: the material to read (needed when there are
        several; see :func:`read_materials` for all of them).

    Returns
    -------
    Trials

    Raises
    ------
    InputError
        The first problem in the file (see the module's error convention); its
        ``problems`` attribute lists up to :data:`MAX_PROBLEMS` of them in line order.
    """
    label = str(path)
    if label == "-":
        return read_bytes_table(_stdin_bytes(), "<stdin>", library, name="-", sheet=sheet,
                                scale=scale, material=material)
    return read_bytes_table(read_bytes(path), label, library, sheet=sheet, scale=scale,
                            material=material)


def _stdin_bytes(limit: int = MAX_BYTES) -> bytes:
    """Standard input, bounded by ``limit``; a terminal is refused (it would wait)."""
    hint = "pipe a file in (solsphere fit - < results.csv) or give its name instead of '-'"
    stream = sys.stdin
    try:
        if stream is None or stream.isatty():
            raise InputError("'-' reads the results from standard input, but nothing is "
                             "piped in.", file="<stdin>", hint=hint)
        data = getattr(stream, "buffer", stream).read(limit + 1)
    except (OSError, ValueError) as exc:  # closed, or captured (a test runner)
        raise InputError(f"cannot read standard input ({clip(str(exc), 80, quote=False)}).",
                         file="<stdin>", hint=hint) from None
    if isinstance(data, str):
        data = data.encode("utf-8")
    if len(data) > limit:
        raise InputError(f"more than {limit:,} bytes on standard input (the size limit).",
                         file="<stdin>", hint="give the file's name instead")
    return data


def read_bytes_table(data: bytes, source: str, library: LibraryLike | None = None, *,
                     name: str | None = None, sheet: str | None = None,
                     scale: str | Scale | None = None,
                     material: str | None = None) -> Trials:
    """Bench results from the bytes of a file (text or workbook); see :func:`read`.

    ``source`` names it in messages; ``name`` (default ``source``) is the file name
    whose ending says whether it is a workbook.
    """
    groups = _read_groups(data, source, library, name=name, sheet=sheet, scale=scale)
    return pick_material(groups, source, material)


def read_materials(source, library: LibraryLike | None = None, *, sheet: str | None = None,
                   scale: str | Scale | None = None) -> list[Trials]:
    """Every material of a results file with a ``material`` column, in order of first row.

    A file without the column gives one :class:`Trials` whose ``material`` is None.
    Duplicates and conflicting outcomes are checked within each material. Parameters
    as :func:`read`; ``source`` may also be a DataFrame or a list of dicts.

    Examples
    --------
    >>> ms = read_materials([{"material": "resin A", "solvent": "toluene", "outcome": "good"},
    ...                      {"material": "resin B", "solvent": "toluene", "outcome": "bad"}])
    >>> [(m.material, m.outcomes) for m in ms]
    [('resin A', ['good']), ('resin B', ['bad'])]
    """
    text = _table_text(source)
    if text is not None:
        return _text_groups(text[1], text[0], library, scale=scale)
    label = str(source)
    if label == "-":
        return _read_groups(_stdin_bytes(), "<stdin>", library, name="-", sheet=sheet,
                            scale=scale)
    return _read_groups(read_bytes(source), label, library, sheet=sheet, scale=scale)


def pick_material(groups: list, source: str, material: str | None) -> Trials:
    """The one material of ``groups`` (from :func:`read_materials`) asked for, or the
    only one; InputError (``setting="material"``) naming the materials otherwise."""
    names = [g.material for g in groups if g.material is not None]
    shown = ", ".join(repr(n) for n in names[:8]) + (" …" if len(names) > 8 else "")
    if material is not None:
        if not names:
            raise InputError(f"a material ({clip(material)}) was asked for, but the file has "
                             f"no 'material' column.", file=source, setting="material",
                             hint="leave out the material, or add a material column")
        want = " ".join(str(material).split()).casefold()
        for g in groups:
            if g.material is not None and g.material.casefold() == want:
                return g
        raise InputError(f"no material {clip(material)} in the file; it has {shown}.",
                         file=source, setting="material",
                         hint="give one of these names (quoted in the shell)")
    if len(groups) > 1:
        raise InputError(f"the file holds {len(groups)} materials ({shown}); this needs one.",
                         file=source, setting="material",
                         hint="choose one with the material setting (--material NAME); "
                              "'solsphere fit' fits them all")
    return groups[0]


def _read_groups(data: bytes, source: str, library, *, name: str | None = None,
                 sheet: str | None = None, scale=None) -> list[Trials]:
    if is_workbook(name if name is not None else source, data[:4]):
        table = read_sheet(data, source, sheet)
        label = table.label
        header_line, header = table.rows[0]
        warnings: list[str] = []
        factors: dict[str, float] = {}
        columns = _read_header(["" if v is None else _text(v) for v in header], label,
                               header_line, warnings, factors)
        records = [(line, {key: cells[i] for i, key in enumerate(columns)
                           if key and i < len(cells)})
                   for line, cells in table.rows[1:]]
        return _build(records, True, warnings, header_line, label, library, scale, factors)
    if sheet is not None:
        raise InputError(f"a sheet ({clip(sheet)}) was asked for, but this is a text table, "
                         f"not a workbook.", file=source, setting="sheet",
                         hint="leave out the sheet, or give the .xlsx / .ods file")
    text, note = decode_noted(data, file=source)
    return _text_groups(text, source, library, scale=scale,
                        notes=[f"{source}: {note}"] if note else [])


def _text_groups(text: str, source: str, library, *, scale=None, notes=()) -> list[Trials]:
    text = text.lstrip("\ufeff").replace("\r\n", "\n").replace("\r", "\n")
    factors: dict[str, float] = {}
    records, decimal_comma, header_warnings, header_line = _parse_table(text, source, factors)
    return _build(records, decimal_comma, list(notes) + header_warnings, header_line, source,
                  library, scale, factors)


def _build(records: list, decimal_comma: bool, header_warnings: list, header_line: int,
           source: str, library, scale, factors: dict) -> list[Trials]:
    """Records of one table → one Trials per material, or the problems found."""
    if not records:
        raise InputError("the header is there but no trial rows follow it.", file=source,
                         line=header_line + 1,
                         hint="add one row per solvent tested, e.g. 'toluene,good'")
    check_limit("rows", len(records), "the results", file=source)
    lib = _get_library(library)
    sc = parse_scale(scale) if isinstance(scale, str) else scale
    notes = list(header_warnings)
    if sc is None:
        good = [(ln, c) for ln, c in records if isinstance(c, dict)]
        sc, note = detect_scale([c.get("outcome") for _, c in good], [ln for ln, _ in good],
                                source)
        if note:
            notes.append(f"{source}: {note}")
    errors: list[InputError] = []
    groups: dict[str, tuple[str, list]] = {}
    has_material = any(isinstance(c, dict) and "material" in c for _, c in records)
    for line, cells in records:
        if isinstance(cells, InputError) or not has_material:
            groups.setdefault("", ("", []))[1].append((line, cells))
            continue
        if all(_empty(v) for v in cells.values()):
            continue
        m = " ".join(_text(cells.get("material")).split())
        if not m:
            errors.append(InputError("the material cell is empty.", file=source, line=line,
                                     column="material",
                                     hint="write the material this row was tested on"))
            continue
        groups.setdefault(m.casefold(), (m, []))[1].append((line, cells))
    out = []
    for m, recs in groups.values():
        ctx = ReadContext(file=source, library=lib, decimal_comma=decimal_comma, unit="line",
                          warnings=list(notes), factors=factors, scale=sc)
        trials, errs = _collect(recs, ctx)
        errors.extend(errs)
        out.append(Trials(trials=trials, source=source, warnings=ctx.warnings,
                          material=m if has_material else None))
    if not errors:
        errors.extend(_unit_problems(out, source, factors))
    if errors:
        errors.sort(key=lambda e: (e.line or 0))
        raise _first(errors)
    if has_material and not out:
        raise InputError("no trial rows (every row is blank).", file=source,
                         line=header_line + 1, hint="add one row per solvent tested")
    return out


def _unit_problems(groups: list, source: str, factors: dict) -> list[InputError]:
    """δD values no liquid has in MPa½ (every own δD below :data:`IMPLAUSIBLE_DD`)."""
    if factors.get("dD", 1.0) != 1.0:
        return []
    own = [t for g in groups for t in g if t.own_coordinates]
    if len(own) < 2 or any(t.dD >= IMPLAUSIBLE_DD for t in own):
        return []
    top = max(t.dD for t in own)
    return [InputError(f"every δD given ({len(own)} values, the largest {top:g}) is below "
                       f"{IMPLAUSIBLE_DD:g} MPa½, lower than any common liquid: these look "
                       f"like values in (cal/cm³)½.", file=source, line=own[0].line,
                       column="dD",
                       hint=f"if they are in (cal/cm³)½, write the unit in the headers "
                            f"(e.g. 'dD (cal/cm3)^0.5') and they are converted (× "
                            f"{CAL_TO_MPA}); otherwise check the values and the column")]


def read_text(text: str, source: str = "<text>", library: LibraryLike | None = None, *,
              scale: str | Scale | None = None, material: str | None = None) -> Trials:
    """Read bench results from the text of a results file.

    ``text`` is the whole file (any line endings; a leading BOM is ignored); ``source``
    names it in messages; ``library``, ``scale``, ``material`` and the result are as for
    :func:`read`, and so is the error raised for the first problem.
    """
    return pick_material(_text_groups(text, source, library, scale=scale), source, material)


def _table_text(source) -> tuple[str, str] | None:
    """(label, CSV text) of a DataFrame or a list of dicts; None for a path."""
    if hasattr(source, "to_csv") and hasattr(source, "columns"):  # a DataFrame
        return "<DataFrame>", source.to_csv(index=False)
    if isinstance(source, (list, tuple)):
        cols = list(dict.fromkeys(k for row in source for k in row))
        buf = io.StringIO()
        w = csv.DictWriter(buf, fieldnames=cols, lineterminator="\n")
        w.writeheader()
        w.writerows({k: ("" if row.get(k) is None else row.get(k)) for k in cols}
                    for row in source)
        return "<rows>", buf.getvalue()
    return None


def read_trials(source, library: LibraryLike | None = None, *, sheet: str | None = None,
                scale: str | Scale | None = None, material: str | None = None) -> Trials:
    """Bench results from a file path or a table (a pandas DataFrame or a list of dicts).

    A table is read exactly like a file with the same columns (``solvent``, ``outcome``,
    optional ``dD``, ``dP``, ``dH``, ``note``, ``material``; the header words a file may
    use), so its problems get the same messages, with the row's line as in the CSV it
    stands for (the header is line 1). A path may be a text table, a workbook or ``"-"``
    (standard input); see :func:`read` for ``sheet``, ``scale`` and ``material``.

    Parameters
    ----------
    source : str, os.PathLike, pandas.DataFrame or list of dict
    library : Library or None, default=None
    sheet, scale, material : optional

    Examples
    --------
    >>> t = read_trials([{"solvent": "toluene", "outcome": "dissolves"},
    ...                  {"solvent": "water", "outcome": "does not"}])
    >>> t.names, t.outcomes
    (['toluene', 'water'], ['good', 'bad'])
    >>> read_trials([{"solvent": "toluene", "result": 1}, {"solvent": "water", "result": 6},
    ...              {"solvent": "acetone", "result": 4}]).outcomes
    ['good', 'bad', 'partial']
    """
    text = _table_text(source)
    if text is not None:
        return read_text(text[1], source=text[0], library=library, scale=scale,
                         material=material)
    return read(source, library=library, sheet=sheet, scale=scale, material=material)


def validate_rows(rows: Iterable[dict], library: LibraryLike | None = None,
                  source: str = "<table>") -> tuple[Trials, list[InputError]]:
    """Validate the app's table, keeping the rows that are fine.

    Parameters
    ----------
    rows : list of dict
        Keys ``solvent, outcome, dD, dP, dH, note`` (missing keys count as empty;
        other keys are ignored). Values may be strings, numbers or None. Rows whose
        cells are all empty are skipped.
    library : Library or None, default=None
        None means :func:`solsphere.library.load_library`.
    source : str, default="<table>"

    Returns
    -------
    trials : Trials
        The valid rows (a repeated row is kept once; of two rows with conflicting
        outcomes the first is kept).
    errors : list of InputError
        One per bad cell, with ``line`` = row index + 1 and ``column`` = the column
        name. Empty when everything is fine.
    """
    ctx = ReadContext(file=source, library=_get_library(library), decimal_comma=True,
                   unit="row")
    rows = rows if isinstance(rows, (list, tuple)) else list(rows)
    if len(rows) > current_limits().rows:  # blank rows do not count
        check_limit("rows", sum(1 for r in rows if not isinstance(r, dict)
                                or not all(_empty(v) for v in r.values())),
                    "the table", file=source)
    records = []
    for i, row in enumerate(rows):
        if not isinstance(row, dict):
            records.append((i + 1, InputError(f"row must be a mapping of column names to "
                                              f"values, found {type(row).__name__}.",
                                              file=source, line=i + 1)))
            continue
        cells = {}
        for k, v in row.items():
            key = k if k in COLUMNS else (_canon_header(str(k))[0] if isinstance(k, str) else None)
            if key is not None:
                cells[key] = v
        records.append((i + 1, cells))
    trials, errors = _collect(records, ctx)
    return Trials(trials=trials, source=source, warnings=ctx.warnings), errors


def from_rows(rows: Iterable[dict], library: LibraryLike | None = None,
              source: str = "<table>") -> Trials:
    """Validate the app's table like a file: raise the first problem.

    Parameters and return value as :func:`validate_rows` (without the error list).

    Raises
    ------
    InputError
        The first bad cell (``line`` = row index + 1, ``column`` = column name), or an
        empty table.
    """
    trials, errors = validate_rows(rows, library=library, source=source)
    if errors:
        raise _first(errors)
    if not len(trials):
        raise InputError("the table has no trials.", file=source,
                         hint="add one row per solvent tested, with its outcome")
    return trials


def parse_outcome(text) -> str | None:
    """Canonical outcome of a cell (``"good"``, ``"bad"``, ``"partial"``), None if unknown.

    >>> parse_outcome(" Dissolves "), parse_outcome("does NOT"), parse_outcome("0,5")
    ('good', 'bad', 'partial')
    >>> parse_outcome("maybe") is None
    True
    """
    if isinstance(text, bool):
        return "good" if text else "bad"
    if isinstance(text, (int, float)):
        text = repr(float(text))
    w = " ".join(str(text).strip().lower().replace("\u2019", "'").split()).rstrip(".!")
    if w in _WORD_TO_OUTCOME:
        return _WORD_TO_OUTCOME[w]
    try:
        v = float(w.replace(",", "."))
    except ValueError:
        return None
    return {1.0: "good", 0.0: "bad", 0.5: "partial"}.get(v)


# -------------------------------------------------------------------------- internals


@dataclass
class ReadContext:
    file: str
    library: Any
    decimal_comma: bool
    unit: str  # "line" (files) or "row" (the app's table)
    warnings: list = field(default_factory=list)
    suggested: dict = field(default_factory=dict)
    factors: dict = field(default_factory=dict)  # column -> unit factor to MPa½
    scale: Any = None  # a numbered outcome scale (solsphere.io.scales.Scale) or None

    def read_outcome(self, raw) -> str | None:
        """The outcome of a cell: a score on the scale, else the words of parse_outcome."""
        sc = self.scale
        if sc is not None and sc.name != "words":
            got = sc.read(raw)
            if got is not None:
                return got
            try:
                float(str(raw).strip().replace(",", "."))
            except ValueError:
                return parse_outcome(raw)
            return None  # a number off the scale
        return parse_outcome(raw)

    def suggestions(self, text: str) -> list[str]:
        """Close library names for an unknown ``text``: searched for the first
        :data:`SUGGEST_FIRST` different unknown names only (each search scans the whole
        library), remembered for repeats (also across tables of this process, for the
        same library object); later unknown names get none."""
        if text not in self.suggested:
            if len(self.suggested) >= SUGGEST_FIRST:
                return []
            try:
                cache = _SUGGESTED.setdefault(self.library, {})
            except TypeError:  # a library object that cannot be weakly referenced
                cache = {}
            if text not in cache:
                if len(cache) >= SUGGEST_CACHE:
                    cache.clear()
                cache[text] = _suggestions(self.library, text)
            self.suggested[text] = cache[text]
        return self.suggested[text]

    def warn(self, line: int | None, msg: str) -> None:
        where = self.file if line is None else f"{self.file}, {self.unit} {line}"
        self.warnings.append(f"{where}: {msg}")

    def error(self, msg: str, line: int | None, column: str | None,
              hint: str | None = None) -> InputError:
        return InputError(msg, file=self.file, line=line, column=column, hint=hint)


#: Unknown solvent names per table for which close library names are searched (about
#: 20 ms each: the search compares the name with every library name).
SUGGEST_FIRST = 3
#: Searches remembered per process (an app server sees the same typos again).
SUGGEST_CACHE = 4096
_SUGGESTED: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


class CellProblem(Exception):
    def __init__(self, message: str, hint: str | None = None):
        super().__init__(message)
        self.message, self.hint = message, hint


def _get_library(library):
    if library is not None:
        return library
    return load_library()


def json_type(v) -> str:
    return {dict: "an object", list: "a list", str: "a string", bool: "true/false",
            type(None): "null"}.get(type(v), "a number" if _is_number(v) else type(v).__name__)


def _is_number(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def _first(errors: list[InputError]) -> InputError:
    """The first error, telling how many more there are; ``problems`` holds the first
    :data:`MAX_PROBLEMS` (for front ends that show them all) and ``n_problems`` the count."""
    e = errors[0]
    e.problems = list(errors[:MAX_PROBLEMS])
    e.n_problems = len(errors)
    more = len(errors) - 1
    if more:
        e.message = f"{e.message.rstrip()} ({more} more problem{'s' if more > 1 else ''} " \
                    f"after this one.)"
        e.args = (str(e),)
    return e


def _text(v) -> str:
    if v is None:
        return ""
    if isinstance(v, float) and v.is_integer():
        return str(int(v))
    return str(v).strip()


def _empty(v) -> bool:
    return v is None or (isinstance(v, str) and not v.strip())


_NUMBER = re.compile(r"^[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?$")


def parse_number(raw, decimal_comma: bool) -> float:
    """A float from a cell; raises CellProblem with a reason."""
    if _is_number(raw):
        return float(raw)
    s = str(raw).strip().replace("\u2212", "-").replace(" ", "")
    low = s.lower().lstrip("+-")
    if low in ("nan", "inf", "infinity"):
        raise CellProblem(f"{clip(raw)} is not a finite number.", "write a number in MPa½")
    if not _NUMBER.match(s):
        raise CellProblem(f"{clip(str(raw).strip())} is not a number.",
                          "write a number in MPa½, e.g. 17.8")
    if "," in s:
        if not decimal_comma:
            raise CellProblem(f"{clip(str(raw).strip())} has a decimal comma, but this file "
                               f"separates its columns with commas.",
                               f"write {s.replace(',', '.')} with a decimal point, or save "
                               f"the file with semicolons")
        s = s.replace(",", ".")
    return float(s)


def parse_coordinate(raw, name: str, decimal_comma: bool, factor: float = 1.0) -> float:
    """A coordinate [MPa½] from a cell, times ``factor`` (a unit conversion)."""
    v = parse_number(raw, decimal_comma) * factor
    if not math.isfinite(v):
        raise CellProblem(f"{name} {clip(raw)} is not a finite number.", "write a number in MPa½")
    if v < 0:
        raise CellProblem(f"{name} is {v:g}, but Hansen parameters cannot be negative.",
                           "check the sign and the column")
    if v > MAX_COORDINATE:
        raise CellProblem(f"{name} is {v:g} MPa½, above {MAX_COORDINATE:g} (no solvent "
                           f"comes close).", "check the units (MPa½) and the column")
    return v


# ----------------------------------------------------------------------- header/table


def _canon_header(raw: str) -> tuple[str | None, str]:
    """(canonical column name or None, unit text) of a header cell.

    A unit follows the name in brackets (``dD (MPa½)``, ``dP [MPa^0.5]``) or after a
    space, ``/`` or ``,`` (``dH MPa½``, ``dD / J/cm³``). Scanned left to right in one
    pass (no backtracking pattern), so any header cell costs time linear in its length.

    >>> _canon_header("dD (MPa½)"), _canon_header("δP / MPa^0.5"), _canon_header("Notes")
    (('dD', 'mpa½'), ('dP', 'mpa^0.5'), ('note', ''))
    """
    low = raw.replace("\ufeff", "").strip().lower()
    unit = ""
    name, inside = _bracketed_unit(low)
    if name:
        low, unit = name, inside.strip()
    else:
        name, rest = _trailing_unit(low)
        if name:
            low, unit = name, rest.strip()
    key = low.replace("δ", "d").replace("delta", "d")
    key = re.sub(r"[\s_\-.]", "", key)
    return _HEADER_ALIASES.get(key), unit


def header_column(cell: str) -> tuple[str | None, float]:
    """The column a header cell names (as a results file's header is read; None: not
    a column solsphere knows) and the factor that puts its values in MPa½
    (:data:`CAL_TO_MPA` for a coordinate in (cal/cm³)½, else 1).

    >>> header_column("dP (cal/cm3)^0.5"), header_column(" Solvent "), header_column("pH")
    (('dP', 2.0455), ('solvent', 1.0), (None, 1.0))
    """
    key, unit = _canon_header(str(cell))
    return key, CAL_TO_MPA if _in_cal(key, unit) else 1.0


def _in_cal(key: str | None, unit: str) -> bool:
    """True for a coordinate column whose header gives its unit as (cal/cm³)½."""
    return key in COORDINATES and "cal" in unit.replace(" ", "")


def _bracketed_unit(low: str) -> tuple[str, str]:
    """('name', 'unit') for 'name (unit)' / 'name [unit]', else ('', '')."""
    s = low.rstrip()
    if not s.endswith((")", "]")):
        return "", ""
    starts = [i for i in (s.find("("), s.find("[")) if 0 <= i < len(s) - 1]
    if not starts:
        return "", ""
    i = min(starts)
    return s[:i].rstrip(), s[i + 1:-1]


def _unit_word_at(low: str, p: int) -> bool:
    """True when a unit word (mpa, cal, j/..., j cm...) starts at ``p``."""
    if low.startswith(("mpa", "cal"), p):
        return True
    if low[p] != "j":
        return False
    q = p + 1
    while q < len(low) and low[q].isspace():
        q += 1
    return low.startswith(("/", "cm"), q)


def _trailing_unit(low: str) -> tuple[str, str]:
    """('name', 'unit') for 'name mpa½' / 'name / j/cm³' / 'name, (cal...', else ('', '')."""
    for p, ch in enumerate(low):
        if ch in "mcj" and _unit_word_at(low, p):
            break
    else:
        return "", ""
    start = p  # walk back over '(' and the separator between name and unit
    while start > 0 and low[start - 1].isspace():
        start -= 1
    if start > 0 and low[start - 1] == "(":
        start -= 1
    unit_start = start
    while start > 0 and low[start - 1].isspace():
        start -= 1
    if start > 0 and low[start - 1] in "/,":
        start -= 1
    while start > 0 and low[start - 1].isspace():
        start -= 1
    return low[:start], low[unit_start:]


def _simplify(raw: str) -> str:
    return re.sub(r"[\s_\-.]", "", raw.strip().lower())


def sniff_delimiter(header: str, file: str, line: int) -> str:
    bare = re.sub(r'"[^"]*"', "", header)
    counts = {sep: bare.count(sep) for sep in ("\t", ";", ",")}
    best = max(counts, key=counts.__getitem__)
    if counts[best] == 0:
        raise InputError(f"the header {header.strip()[:60]!r} has a single column; need at "
                         f"least 'solvent' and 'outcome'.", file=file, line=line,
                         hint=f"separate the column names with commas, tabs or semicolons: "
                              f"{_HEADER_EXAMPLE}")
    return best


def _read_header(cells: list[str], file: str, line: int, warnings: list,
                 factors: dict | None = None) -> list[str | None]:
    """Canonical column names of a header row; ``factors`` receives the unit factor of
    each coordinate column in (cal/cm³)½ (converted to MPa½ at :data:`CAL_TO_MPA`)."""
    factors = {} if factors is None else factors
    cal: list[tuple[str, str]] = []
    plain: list[str] = []
    canon: list[str | None] = []
    seen: dict[str, str] = {}
    unknown: list[str] = []
    for raw in cells:
        name = raw.replace("\ufeff", "").strip()
        if not name:
            canon.append(None)
            continue
        key, unit = _canon_header(name)
        if key is None:
            canon.append(None)
            unknown.append(name)
            continue
        if _in_cal(key, unit):
            cal.append((key, name))
        elif key in COORDINATES and unit:
            u = unit.replace(" ", "")
            if not ("mpa" in u or "j/cm" in u or "j cm" in u):
                warnings.append(f"{file}, line {line}: unit {clip(unit)} of column {clip(name)} not "
                                f"recognised; its values are read as MPa½")
        if key in COORDINATES and not _in_cal(key, unit):
            plain.append(name)
        if key in seen:
            raise InputError(f"columns {clip(seen[key])} and {clip(name)} are both read as {clip(key)}.",
                             file=file, line=line, column=name,
                             hint="rename or delete one of them")
        seen[key] = name
        canon.append(key)
    if cal and plain:
        raise InputError(f"column {clip(cal[0][1])} is in (cal/cm³)½ but "
                         f"{', '.join(clip(n) for n in plain)} "
                         f"{'is' if len(plain) == 1 else 'are'} not; all coordinates of a file "
                         f"must be in one unit.", file=file, line=line, column=cal[0][1],
                         hint=f"write the unit in every coordinate header (e.g. 'dP "
                              f"(cal/cm3)^0.5'), and the values are converted at "
                              f"{CAL_TO_MPA} MPa½ per (cal/cm³)½; or convert them yourself")
    for key, name in cal:
        factors[key] = CAL_TO_MPA
        warnings.append(f"{file}, line {line}: column {clip(name)} is in (cal/cm³)½; its "
                        f"values were converted to MPa½ (× {CAL_TO_MPA})")
    missing = [k for k in ("solvent", "outcome") if k not in seen]
    known = {"solvent": "solvent", "outcome": "outcome", "note": "note",
             "dd": "dD", "dp": "dP", "dh": "dH", "material": "material"}
    for name in unknown:
        close = difflib.get_close_matches(_simplify(name), ["solvent", "outcome"], n=1,
                                          cutoff=0.7)
        if close and close[0] in missing:
            raise InputError(f"column {clip(name)} is not a column solsphere knows; did you "
                             f"mean {close[0]!r}?", file=file, line=line, column=name,
                             hint=f"rename the column to {close[0]}")
        near = difflib.get_close_matches(_simplify(name), list(known), n=1, cutoff=0.7)
        guess = f" (did you mean {known[near[0]]!r}?)" if near else ""
        warnings.append(f"{file}, line {line}: column {clip(name)} ignored{guess}; solsphere "
                        f"reads {', '.join(COLUMNS)}, material")
    if missing:
        found = ", ".join(clip(c.strip(), 30) for c in cells[:8] if c.strip()) or "nothing"
        if len(cells) > 8:
            found += f" … ({len(cells)} cells)"
        if any(parse_outcome(c) for c in cells if c.strip()):
            msg = (f"the first line looks like data ({found}), not a header naming the "
                   f"columns.")
        else:
            msg = f"no {missing[0]!r} column (found {found})."
        raise InputError(msg, file=file, line=line,
                         hint=f"make the first line a header such as {_HEADER_EXAMPLE}")
    return canon


def _parse_table(text: str, file: str, factors: dict | None = None):
    """Split a results file into (line, cells-by-column) records.

    Returns (records, decimal_comma, warnings, header_line); a record may be
    (line, InputError) for a line that cannot be split into the header's columns.
    """
    physical = text.split("\n")
    kept = [(i + 1, s) for i, s in enumerate(physical)
            if s.strip() and not s.lstrip().startswith("#")]
    if not kept:
        what = "empty" if not text.strip() else "only comments"
        raise InputError(f"the file is {what}; expected a header row and one row per trial.",
                         file=file, line=None,
                         hint=f"start with a header such as {_HEADER_EXAMPLE}, then one "
                              f"row per solvent tested")
    declared = re.match(r'^\s*"?sep=(.)"?\s*$', kept[0][1], re.IGNORECASE)
    if declared:  # a spreadsheet's "sep=;" first line names the separator
        kept = kept[1:]
        if not kept:
            raise InputError("the file has only a 'sep=' line; expected a header row and "
                             "one row per trial.", file=file, line=None,
                             hint=f"add a header such as {_HEADER_EXAMPLE}")
    header_line = kept[0][0]
    sep = declared.group(1) if declared else sniff_delimiter(kept[0][1], file, header_line)
    reader = csv.reader((s for _, s in kept), delimiter=sep, quotechar='"',
                        skipinitialspace=True)
    warnings: list[str] = []

    def csv_problem(exc: csv.Error, line: int) -> InputError:
        if "field larger" in str(exc):
            return InputError(f"a cell is longer than {MAX_FIELD} characters.", file=file,
                              line=line, hint="check for a missing closing quote")
        return InputError(f"cannot split the line into cells ({exc}).", file=file,
                          line=line, hint="check the quotes on this line")

    try:
        header = next(reader)
    except csv.Error as exc:
        raise csv_problem(exc, header_line) from None
    columns = _read_header(header, file, header_line, warnings, factors)
    records: list = []
    while True:
        start = reader.line_num
        try:
            row = next(reader)
        except StopIteration:
            break
        except csv.Error as exc:
            records.append((kept[start][0], csv_problem(exc, kept[start][0])))
            break
        line = kept[start][0]
        if not any(c.strip() for c in row):
            continue
        extra = [c for c in row[len(columns):] if c.strip()]
        if extra:
            hint = "put a value that contains the separator in double quotes"
            if sep == ",":
                hint += "; write decimals with a point (17.5), not a comma"
            records.append((line, InputError(
                f"{len(row)} cells but the header names {len(columns)} columns "
                f"(extra: {extra[0][:40]!r}).", file=file, line=line, hint=hint)))
            continue
        cells = {key: row[i] for i, key in enumerate(columns) if key and i < len(row)}
        records.append((line, cells))
    return records, sep != ",", warnings, header_line


# ------------------------------------------------------------------------- resolution


def _collect(records: Iterable, ctx: ReadContext, stored: list | None = None):
    """Parse records into trials; drop repeats; gather errors in line order."""
    trials: list[Trial] = []
    errors: list[InputError] = []
    seen: dict[tuple, Trial] = {}
    repeats: dict[tuple, list[int]] = {}  # one warning per repeated solvent, with a count
    for i, (line, cells) in enumerate(records):
        if isinstance(cells, InputError):
            errors.append(cells)
            continue
        if all(_empty(v) for v in cells.values()):
            continue
        trial, errs = _parse_row(cells, line, ctx, stored[i] if stored else None)
        if errs:
            errors.extend(errs)
            continue
        key = trial.identity
        first = seen.get(key)
        if first is None:
            seen[key] = trial
            trials.append(trial)
        elif first.outcome == trial.outcome:
            repeats.setdefault(key, []).append(line)
        else:
            u = ctx.unit
            errors.append(ctx.error(
                f"{trial.name} is listed twice with different outcomes: {u} {first.line} "
                f"says {DISPLAY[first.outcome]}, {u} {line} says {DISPLAY[trial.outcome]}.",
                line, "outcome", hint="re-test or keep one of the two rows"))
    for key, lines in repeats.items():
        first, u = seen[key], ctx.unit
        if len(lines) == 1:
            ctx.warn(lines[0], f"{clip(first.name, quote=False)} repeats {u} {first.line} with the same "
                               f"outcome; kept {u} {first.line} only")
        else:
            shown = ", ".join(map(str, lines[:5])) + (", …" if len(lines) > 5 else "")
            ctx.warn(lines[0], f"{clip(first.name, quote=False)} repeats {u} {first.line} with the same "
                               f"outcome {len(lines)} times ({u}s {shown}); kept {u} "
                               f"{first.line} only")
    return trials, errors


def _outcome_hint() -> str:
    return "; ".join(f"{k}: {', '.join(v)}" for k, v in OUTCOME_WORDS.items())


def _parse_row(cells: dict, line: int, ctx: ReadContext, stored=None):
    """(Trial, []) or (None, [InputError, ...]) for one row."""
    errors: list[InputError] = []

    def bad(msg, column, hint=None):
        errors.append(ctx.error(msg, line, column, hint))

    for key in COLUMNS:
        v = cells.get(key)
        if isinstance(v, str) and len(v) > MAX_FIELD:
            bad(f"the cell has {len(v)} characters; the limit is {MAX_FIELD}.", key,
                "check for a missing closing quote or pasted junk")
    if errors:
        return None, errors
    text = " ".join(_text(cells.get("solvent")).split())
    note = _text(cells.get("note"))
    if _has_surrogates(text) or _has_surrogates(note):
        text, note = replace_surrogates(text), replace_surrogates(note)
        ctx.warn(line, "a character that is not valid Unicode (a lone surrogate) was "
                       "replaced by �")
    raw_outcome = cells.get("outcome")
    outcome = None
    if _empty(raw_outcome):
        bad("the outcome is empty.", "outcome", "write good, bad or partial (or dissolves, "
                                                "does not, partly)")
    else:
        outcome = ctx.read_outcome(raw_outcome)
        if outcome is None:
            on = f" on {ctx.scale.describe()}" if ctx.scale is not None else ""
            bad(f"{clip(_text(raw_outcome))} is not an outcome solsphere knows{on}.",
                "outcome", f"write one of: {_outcome_hint()}")
    coords: dict[str, float] = {}
    given = [c for c in COORDINATES if not _empty(cells.get(c))]
    coord_problem = False
    for c in given:
        try:
            coords[c] = parse_coordinate(cells[c], c, ctx.decimal_comma,
                                         ctx.factors.get(c, 1.0))
        except CellProblem as p:
            bad(f"{c}: {p.message}" if not p.message.startswith(c) else p.message, c, p.hint)
            coord_problem = True
    if 0 < len(given) < 3 and not coord_problem:
        missing = [c for c in COORDINATES if c not in given]
        bad(f"only {', '.join(given)} given; own coordinates need all three of dD, dP, dH "
            f"(missing {', '.join(missing)}).", missing[0],
            f"fill in {', '.join(missing)}, or clear {', '.join(given)} to use the library "
            f"values")
        coord_problem = True
    point = tuple(coords[c] for c in COORDINATES) if len(coords) == 3 else None
    resolved = None
    if not text:
        bad("the solvent cell is empty.", "solvent",
            "write a solvent name, CAS number or abbreviation, or a blend such as "
            "'toluene 70 + ethanol 30'")
    elif not coord_problem:
        try:
            resolved = resolve_solvent(text, point, ctx, line, stored)
        except InputError as e:
            errors.append(e)
    if errors:
        return None, errors
    name, p, source, components, cas, solvent = resolved
    if stored is not None and any(abs(a - b) > 1e-9 for a, b in zip(p, stored)):
        ctx.warn(line, f"the library's values for {name} ({_fmt_point(p)}) differ from those "
                       f"saved in the project ({_fmt_point(stored)}); using the saved ones")
        p = stored
    return Trial(name=name, text=text, outcome=outcome, dD=float(p[0]), dP=float(p[1]),
                 dH=float(p[2]), source=source, components=components, cas=cas, note=note,
                 line=line, solvent=solvent), []


def _has_surrogates(text: str) -> bool:
    try:
        text.encode("utf-8")
    except UnicodeEncodeError:
        return True
    return False


def replace_surrogates(text: str) -> str:
    r"""``text`` with every lone surrogate (which no file can store) replaced by U+FFFD.

    >>> replace_surrogates("note \ud800 end")
    'note \ufffd end'
    """
    if not _has_surrogates(text):
        return text
    return "".join("\ufffd" if "\ud800" <= ch <= "\udfff" else ch for ch in text)


def _fmt_point(p) -> str:
    return ", ".join(f"{v:.2f}" for v in p)


def _suggestions(library, text: str) -> list[str]:
    try:
        library.lookup(text)
    except UnknownSolventError as e:
        return list(e.suggestions)
    return []


def resolve_solvent(text: str, point, ctx: ReadContext, line: int, stored):
    """(name, point, source, components, cas, solvent) for a solvent cell."""
    lib = ctx.library
    sol = lib.find(text)
    if sol is not None:
        if point is not None:
            return sol.name, point, "library" + _OVERRIDE, (), sol.cas, sol
        return sol.name, sol.point, "library", (), sol.cas, sol
    if not text.replace("+", "").strip():
        raise ctx.error(f"{clip(text)} is not a solvent: a lone '+'.", line, "solvent",
                        "write a blend as 'toluene 70 + ethanol 30'")
    problem = None
    if len(_split_plus(text)) > 1:
        try:
            name, bp, components = _parse_blend(text, ctx, line)
        except InputError as e:
            if point is None and stored is None:
                raise
            problem = e
        else:
            if point is not None:
                return name, point, "blend" + _OVERRIDE, components, None, None
            return name, bp, "blend", components, None, None
    if point is not None:
        if problem is not None:
            ctx.warn(line, f"{clip(text)} read as your own solvent with the coordinates given, "
                           f"not as a blend ({problem.message.rstrip('.')})")
        return text, point, "own", (), None, None
    if stored is not None:
        why = (f"no longer reads as a blend ({problem.message.rstrip('.')})" if problem
               else "is not in this library")
        ctx.warn(line, f"{clip(text)} {why}; using the coordinates saved in the project "
                       f"({_fmt_point(stored)})")
        return text, stored, "own", (), None, None
    raise UnknownSolventError(text, ctx.suggestions(text), file=ctx.file, line=line,
                              column="solvent")


def parse_blend_spec(text: str, library: LibraryLike | None = None, *,
                     source: str = "<command line>", column: str | None = "SPEC",
                     strict: bool = True) -> list[tuple[Any, float]]:
    """Components and volume fractions of a blend written as in a bench file.

    ``"ethanol 10 + water 90"`` (volume parts, any number of components; a part may carry
    ``%``); a single solvent name is a blend of one.

    Parameters
    ----------
    text : str
    library : Library, optional
        Defaults to the packaged library.
    source, column : str
        Where the text came from, for error messages.
    strict : bool, default=True
        Parts given in % must add up to 100 (otherwise only a warning in bench files).

    Returns
    -------
    list of (Solvent, float)
        Library records and volume fractions summing to 1.

    Raises
    ------
    InputError
        Unknown names (with suggestions), missing, zero or negative parts, a solvent
        given twice, % parts that do not add up to 100.

    Examples
    --------
    >>> [(s.name, round(f, 2)) for s, f in parse_blend_spec("ethanol 10 + water 90")]
    [('ethanol', 0.1), ('water', 0.9)]
    """
    lib = _get_library(library)
    text = " ".join(str(text).split())
    if not text:
        raise InputError("the blend is empty.", file=source, column=column,
                         hint="write e.g. 'ethanol 10 + water 90'")
    alone = lib.find(text)
    if alone is not None:
        return [(alone, 1.0)]
    ctx = ReadContext(file=source, library=lib, decimal_comma=False, unit="line")
    try:
        _, _, components = _parse_blend(text, ctx, None)
    except InputError as exc:
        exc.column = column
        if isinstance(exc, UnknownSolventError):
            exc.hint = ("every component must be a library solvent: a name, CAS number or "
                        "abbreviation")
        exc.args = (str(exc),)
        raise
    if strict and ctx.warnings:
        raise InputError(f"the parts of {text!r} are given in % but do not add up to 100.",
                         file=source, column=column,
                         hint="make the % parts add up to 100, or drop the % signs to "
                              "give volume parts")
    return [(lib.lookup(name), float(f)) for name, f in components]


def _split_plus(text: str) -> list[str]:
    """Split on '+' outside brackets (so '(+)-limonene' stays whole)."""
    parts, depth, cur = [], 0, []
    for ch in text:
        if ch in "([{":
            depth += 1
        elif ch in ")]}":
            depth = max(0, depth - 1)
        if ch == "+" and depth == 0:
            parts.append("".join(cur))
            cur = []
        else:
            cur.append(ch)
    parts.append("".join(cur))
    return parts


_NUM = re.compile(r"-?(?:\d+(?:[.,]\d+)?|[.,]\d+)")


def _trail(piece: str) -> dict | None:
    """Name and part of 'toluene 70' / 'toluene 70 %' (the part is the last word)."""
    s, pct = piece.strip(), ""
    if s.endswith("%"):
        s, pct = s[:-1].rstrip(), "%"
    words = s.rsplit(None, 1)
    if len(words) != 2 or not _NUM.fullmatch(words[1]):
        return None
    return {"name": words[0], "num": words[1], "pct": pct}


def _lead(piece: str) -> dict | None:
    """Name and part of '70 toluene' / '70% toluene' (the part is the first word)."""
    s = piece.strip()
    m = _NUM.match(s)
    if not m:
        return None
    rest = s[m.end():]
    after = rest.lstrip()
    if after.startswith("%") and after[1:2].isspace() and after[1:].strip():
        return {"name": after[1:].strip(), "num": m.group(), "pct": "%"}
    if rest[:1].isspace() and rest.strip():
        return {"name": rest.strip(), "num": m.group(), "pct": ""}
    return None


#: Largest volume part of one blend component ('toluene 70 + ethanol 30'); parts are
#: relative, so nothing real needs more (a larger number is a typing slip).
MAX_BLEND_PART = 1e6


def _parse_blend(text: str, ctx: ReadContext, line: int):
    """(label, point, components) of a blend cell such as 'toluene 70 + ethanol 30'."""
    lib = ctx.library
    example = "write each component with its volume part: 'toluene 70 + ethanol 30'"
    pieces = [p.strip() for p in _split_plus(text)]
    if any(not p for p in pieces):
        raise ctx.error(f"blend {clip(text)} has a '+' with nothing on one side.", line,
                        "solvent", example)
    comps = []
    for piece in pieces:
        options = [m for m in (_trail(piece), _lead(piece)) if m]
        found = None
        for m in options:
            sol = lib.find(m["name"])
            if sol is not None:
                found = (sol, m)
                break
        if found is None:
            if not options or lib.find(piece) is not None:
                raise ctx.error(f"blend component {clip(piece)} has no volume part.", line,
                                "solvent", example)
            name = options[0]["name"]
            err = UnknownSolventError(name, ctx.suggestions(name), file=ctx.file,
                                      line=line, column="solvent",
                                      hint="every component of a blend must be a library "
                                           "solvent; or give the whole blend's own dD, dP, "
                                           "dH")
            err.message = f"in blend {clip(text)}: {err.message}"
            err.args = (str(err),)
            raise err
        sol, m = found
        num = m["num"]
        if "," in num and not ctx.decimal_comma:
            raise ctx.error(f"blend part {clip(num)} has a decimal comma, but this file "
                            f"separates its columns with commas.", line, "solvent",
                            f"write {num.replace(',', '.')}")
        part = float(num.replace(",", "."))
        if not part <= MAX_BLEND_PART:
            raise ctx.error(f"blend part of {sol.name} is {clip(num, 20)}; volume parts "
                            f"must be at most {MAX_BLEND_PART:g}.", line, "solvent",
                            "give the parts as percentages or small whole numbers, "
                            "e.g. 'toluene 70 + ethanol 30'")
        if not part > 0:
            raise ctx.error(f"blend part of {sol.name} is {part:g}; volume parts must be "
                            f"positive.", line, "solvent",
                            "leave a solvent out of the blend instead of giving it 0")
        comps.append((sol, part, bool(m["pct"])))
    names = [c[0].name.casefold() for c in comps]
    for n in names:
        if names.count(n) > 1:
            twice = next(c[0].name for c in comps if c[0].name.casefold() == n)
            raise ctx.error(f"{twice} appears twice in blend {clip(text)}.", line, "solvent",
                            "give each solvent once, with its total volume part")
    parts = np.array([c[1] for c in comps])
    total = float(parts.sum())
    if any(c[2] for c in comps) and abs(total - 100.0) > 0.01:
        ctx.warn(line, f"the parts of blend {clip(text)} are given in % but sum to {total:g}, "
                       f"not 100; read as volume parts")
    point = hsp.mix([c[0].point for c in comps], parts)
    fractions = parts / total
    label = " + ".join(f"{c[0].name} {c[1]:g}" for c in comps)
    components = tuple((c[0].name, float(f)) for c, f in zip(comps, fractions))
    return label, tuple(float(v) for v in point), components
