"""A user's shelf: the solvents a lab actually has, to rank and blend from.

A shelf file is a CSV/TSV (comma, tab or semicolon; decimal commas with semicolons) with
a ``solvent`` column and optional columns that override or add to the library's values:

=================  ==============================================
column             meaning
=================  ==============================================
``solvent``        library name, CAS number or abbreviation; or your own name
``dD, dP, dH``     own coordinates [MPa½] (required for solvents not in the library)
``price``          price per litre, any currency (used by cheapest-inside rankings)
``flash_point``    °C
``boiling_point``  °C
``density``        g/cm³ at 25 °C
``vapour_pressure``  kPa at 25 °C
``twa_ppm``        8-hour exposure limit, ppm
``smiles``         structure of a solvent the library lacks, when no dD, dP, dH are
                   given: its coordinates are estimated from it (needs the extra
                   ``solsphere[structure]``; ``sources`` records the estimate and its
                   95 % half-widths)
``note``           free text, ignored
=================  ==============================================

Bad cells raise :class:`~solsphere.errors.InputError` naming the file, line and column.
"""

from __future__ import annotations

import csv
import dataclasses
import math
import re

from solsphere.errors import InputError
from solsphere.io.files import MAX_FIELD, read_text
from solsphere.io.trials import (COORDINATES, CellProblem, ReadContext, parse_coordinate,
                                 parse_number, resolve_solvent, sniff_delimiter)
from solsphere.library.table import Solvent, load_library
from solsphere.limits import check as check_limit

#: shelf column -> (Solvent field, lowest, highest accepted value)
PROPERTY_COLUMNS = {
    "price": ("price", 0.0, 1e7),
    "flash_point": ("flash_point", -100.0, 400.0),
    "boiling_point": ("boiling_point", -100.0, 500.0),
    "density": ("density", 0.3, 3.5),
    "vapour_pressure": ("vapour_pressure", 0.0, 1e4),
    "twa_ppm": ("twa_ppm", 0.0, 1e6),
}
_ALIASES = {"solvent": "solvent", "solvents": "solvent", "name": "solvent",
            "dd": "dD", "dp": "dP", "dh": "dH", "note": "note", "notes": "note",
            "price": "price", "priceperlitre": "price", "priceperliter": "price", "cost": "price",
            "flashpoint": "flash_point", "boilingpoint": "boiling_point", "bp": "boiling_point",
            "density": "density", "vapourpressure": "vapour_pressure",
            "vaporpressure": "vapour_pressure", "twa": "twa_ppm", "twappm": "twa_ppm",
            "smiles": "smiles", "structure": "smiles"}


def _drop_brackets(text: str) -> str:
    """``text`` without its bracketed parts ('price (EUR/l)' -> 'price '), in one pass.

    >>> _drop_brackets("flash point (°C) [closed cup]"), _drop_brackets("a (b")
    ('flash point  ', 'a (b')
    """
    out, opened, last = [], None, 0
    for i, ch in enumerate(text):
        if opened is None and ch in "([":
            opened = i
        elif opened is not None and ch in ")]":
            out.append(text[last:opened])
            opened, last = None, i + 1
    out.append(text[last:])
    return "".join(out)


def _key(cell: str) -> str | None:
    low = _drop_brackets(cell.replace("\ufeff", "").strip().lower())
    low = low.replace("δ", "d")
    return _ALIASES.get(re.sub(r"[\s_\-./]", "", low))


def _split_rows(lines: list[tuple[int, str]], sep: str, file: str) -> list[tuple[int, list]]:
    """(physical line where the row starts, cells) for each row; csv problems (an
    unclosed quote, an over-long cell) become an InputError naming the line."""
    reader = csv.reader((s for _, s in lines), delimiter=sep, skipinitialspace=True,
                        strict=True)
    out = []
    while True:
        start = reader.line_num
        try:
            row = next(reader)
        except StopIteration:
            return out
        except csv.Error as exc:
            line = lines[min(start, len(lines) - 1)][0]
            if "field larger" in str(exc):
                raise InputError(f"a cell is longer than {MAX_FIELD} characters.", file=file,
                                 line=line, hint="check for a missing closing quote") from None
            raise InputError(f"cannot split the line into cells ({exc}).", file=file,
                             line=line, hint="check the quotes on this line") from None
        out.append((lines[start][0], row))


def read_shelf(path, library, *, structure=None) -> list:
    """Read a shelf file into a list of :class:`~solsphere.library.Solvent`.

    Parameters
    ----------
    path : str or os.PathLike
        The shelf file; messages name it as given.
    library : Library
        Resolves names (and gives the properties not in the file).
    structure : callable or None, default=None
        ``structure(smiles)`` -> an estimate (:func:`solsphere.estimate.estimate_one`)
        for rows that give a ``smiles`` but no coordinates and name no library solvent;
        None: such rows are an error saying what to install or fill in.

    Returns
    -------
    list of Solvent
        One per usable row, in file order (a repeated solvent is kept once).

    Raises
    ------
    InputError
        Empty file, no ``solvent`` column, a bad cell, or no usable solvent.
    """
    file = str(path)
    text = read_text(path).lstrip("\ufeff").replace("\r\n", "\n").replace("\r", "\n")
    lines = [(i + 1, s) for i, s in enumerate(text.split("\n"))
             if s.strip() and not s.lstrip().startswith("#")]
    if not lines:
        raise InputError("the shelf file is empty.", file=file,
                         hint="write a header 'solvent' and one solvent per line")
    header_line = lines[0][0]
    single = not any(ch in lines[0][1] for ch in ",;\t")
    # one column: each line is one name, so '1,4-dioxane' and 'N,N-dimethylformamide'
    # stay whole (the unit separator never occurs in text)
    sep = "\x1f" if single else sniff_delimiter(lines[0][1], file, header_line)
    check_limit("shelf", len(lines) - 1, "the shelf", file=file)  # before any row is read
    rows = _split_rows(lines, sep, file)
    columns = [_key(c) for c in rows[0][1]]
    if "solvent" not in columns:
        raise InputError(f"no 'solvent' column (found {', '.join(map(repr, rows[0][1]))}).",
                         file=file, line=header_line,
                         hint="name the first column 'solvent'")
    ctx = ReadContext(file=file, library=library, decimal_comma=sep != ",", unit="line")
    out, seen = [], set()
    for line, row in rows[1:]:
        extra = [c for c in row[len(columns):] if c.strip()]
        if extra:
            hint = "put a value that contains the separator in double quotes"
            if sep == ",":
                hint += "; write decimals with a point (17.5), not a comma"
            raise InputError(f"{len(row)} cells but the header names {len(columns)} columns "
                             f"(extra: {extra[0][:40]!r}).", file=file, line=line, hint=hint)
        cells = {k: v.strip() for k, v in zip(columns, row) if k}
        for k, v in cells.items():
            if len(v) > MAX_FIELD:
                raise InputError(f"the cell has {len(v)} characters; the limit is {MAX_FIELD}.",
                                 file=file, line=line, column=k,
                                 hint="check for a missing closing quote or pasted junk")
        name = " ".join(cells.get("solvent", "").split())
        if not name:
            continue
        coords = {}
        for c in COORDINATES:
            if cells.get(c):
                try:
                    coords[c] = parse_coordinate(cells[c], c, ctx.decimal_comma)
                except CellProblem as p:
                    raise InputError(p.message, file=file, line=line, column=c, hint=p.hint) from None
        if 0 < len(coords) < 3:
            raise InputError("own coordinates need all three of dD, dP, dH.", file=file,
                             line=line, column=next(c for c in COORDINATES if c not in coords),
                             hint="fill in the missing ones or clear them all")
        point = tuple(coords[c] for c in COORDINATES) if coords else None
        estimated = None
        if point is None and cells.get("smiles") and library.find(name) is None:
            estimated = _estimate_row(structure, cells["smiles"], file, line)
            point = estimated.point
        label, p, source, _, cas, sol = resolve_solvent(name, point, ctx, line, None)
        props = {}
        for col, (fld, lo, hi) in PROPERTY_COLUMNS.items():
            raw = cells.get(col)
            if not raw:
                continue
            try:
                v = parse_number(raw, ctx.decimal_comma)
            except CellProblem as prob:
                raise InputError(prob.message.replace("MPa½", "the column's unit"), file=file,
                                 line=line, column=col, hint=f"write a number for {col}") from None
            if not (math.isfinite(v) and lo <= v <= hi):
                raise InputError(f"{col} is {v:g}, outside {lo:g}…{hi:g}.", file=file,
                                 line=line, column=col, hint="check the value and its unit")
            props[fld] = v
        if sol is None:
            sol = Solvent(name=label, dD=p[0], dP=p[1], dH=p[2], liquid=True)
        sol = dataclasses.replace(sol, dD=float(p[0]), dP=float(p[1]), dH=float(p[2]), **props)
        if estimated is not None:
            sol = dataclasses.replace(sol, sources=estimated.library_sources())
        ident = sol.cas or sol.name.casefold()
        if ident in seen:
            continue
        seen.add(ident)
        out.append(sol)
    if not out:
        raise InputError("the shelf lists no usable solvent.", file=file, line=header_line + 1,
                         hint="add one solvent per line under the 'solvent' header")
    return out


def _estimate_row(structure, smiles: str, file: str, line: int):
    """The structure estimate of a shelf row (InputError naming the cell when there is no
    estimator, the SMILES is unreadable or outside the model's domain)."""
    if structure is None:
        raise InputError("a smiles column needs estimates from structure.", file=file,
                         line=line, column="smiles",
                         hint="pip install 'solsphere[structure]', or give dD, dP, dH")
    try:
        est = structure(smiles)
    except ImportError:
        raise InputError("a smiles column needs the structure extra (RDKit).", file=file,
                         line=line, column="smiles",
                         hint="pip install 'solsphere[structure]', or give dD, dP, dH") from None
    except InputError:
        raise InputError(f"{smiles[:60]!r} is not a SMILES that RDKit can read.", file=file,
                         line=line, column="smiles",
                         hint="check the SMILES, or give dD, dP, dH instead") from None
    if est.refused:
        raise InputError(f"no estimate from this structure: {est.refused}.", file=file,
                         line=line, column="smiles", hint="give dD, dP, dH instead")
    return est


