"""The pure functions behind the app's callbacks (no Dash, no browser).

Each function takes plain JSON-safe values (the table's rows, the stored fit, the
controls' values) and returns plain values, so it can be tested without a browser.
Every computation is a library call: validation (:func:`solsphere.io.trials.validate_rows`),
the fit (:func:`solsphere.workflows.fit_project`), the pool
(:func:`solsphere.workflows.candidate_pool`), the ranking
(:func:`solsphere.design.ranking.rank_solvents`), the figures
(:mod:`solsphere.report.figures`), the share page (:func:`solsphere.report.share.share_page`)
and the project file (:mod:`solsphere.io.project`). What is added here is only reading the
form and formatting. The blend designer and the replacement search are in
:mod:`solsphere.app.blendlogic`, the uncertainty and next-trial screens in
:mod:`solsphere.app.uncertainty`.
"""

from __future__ import annotations

import base64
import binascii
import hashlib
import html
import json
import os
import re
import tempfile
import textwrap
from functools import lru_cache
from importlib.resources import files
from pathlib import Path

from solsphere.design.ranking import CAUTION, rank_solvents
from solsphere.errors import FitError, InputError, SolsphereError, numeric_notes
from solsphere.formatting import num, split_names
from solsphere.io import trials as T
from solsphere.io.project import Project, load_any, save
from solsphere.io.trials import DISPLAY, parse_outcome
from solsphere.report import figures
from solsphere.report.share import share_page
from solsphere.workflows import candidate_pool, fit_project, resolved_names

__all__ = ["split_names"]  # re-exported for the screens

#: Largest upload the app accepts [bytes]; bigger files are refused with a message.
UPLOAD_LIMIT = 5_000_000
#: Table columns, in display order (the results-file columns).
COLUMNS = ("solvent", "outcome", "dD", "dP", "dH", "note")
#: The words the table shows for each outcome (the package's one table).
WORDS = DISPLAY
PARTIAL_CHOICES = {"good": "as dissolves", "bad": "as does not", "skip": "left out"}
DEMO_FILE = "varnish_binder.csv"
DEMO_LABEL = "invented demo"


# ----------------------------------------------------------------------------- rows

def blank_row() -> dict:
    """One empty table row."""
    return {c: None for c in COLUMNS}


def rows_from_trials(trials) -> list[dict]:
    """Table rows for a Trials object (outcomes in the display words).

    Each row keeps the line of the file it came from (``line``, shown in the table's
    'file line' column), so a warning about it names the same line as the command
    line does for that file."""
    rows = []
    for t, r in zip(trials, trials.to_rows()):
        row = {c: r.get(c) for c in COLUMNS}
        row["outcome"] = WORDS.get(row["outcome"], row["outcome"])
        row["note"] = row["note"] or None
        if getattr(t, "line", None):
            row["line"] = int(t.line)
        rows.append(row)
    return rows


def with_file_lines(trials, rows) -> None:
    """Give each validated trial the file line of its table row (``line``) where the
    row came from a file: the fit's warnings then name the line the command line names
    for the same file. Rows added in the app keep their table row number."""
    for t in trials:
        k = t.line - 1  # validate_rows numbers the table rows from 1
        row = rows[k] if 0 <= k < len(rows) and isinstance(rows[k], dict) else {}
        line = row.get("line")
        if isinstance(line, int) and not isinstance(line, bool) and line > 0:
            t.line = line


def clean_rows(rows) -> list[dict]:
    """The table's rows with only the results-file columns (None for missing cells)."""
    out = []
    for r in rows or []:
        if isinstance(r, dict):
            out.append({c: (None if r.get(c) == "" else r.get(c)) for c in COLUMNS})
    return out


def normalise_outcomes(rows) -> list[dict] | None:
    """The rows with every recognised outcome written in the display words ('yes' ->
    'dissolves', 'bad' -> 'does not' …, as :func:`solsphere.trials.parse_outcome`
    reads them), or None when nothing changes. Pasted and typed words then show in
    the table's outcome menus; unrecognised words are left for the error marks."""
    out, changed = [], False
    for r in rows or []:
        v = r.get("outcome") if isinstance(r, dict) else None
        if v not in (None, "") and v not in WORDS.values():
            canon = parse_outcome(v)
            if canon is not None:
                r = dict(r, outcome=WORDS[canon])
                changed = True
        out.append(r)
    return out if changed else None


# ----------------------------------------------------------------------------- the fit

def compute_fit(rows, partial: str, library) -> dict:
    """Validate the table and fit the sphere: the one result every screen draws from.

    Parameters
    ----------
    rows : list of dict
        The table (keys solvent, outcome, dD, dP, dH, note).
    partial : {"good", "bad", "skip"}
        How 'partly' results count.
    library : Library

    Returns
    -------
    dict
        ``fit``: ``SphereFit.to_dict()`` or None; ``fit_error``: why there is no fit (or
        None); ``problems``: one dict per bad cell (``row`` index, ``column``,
        ``message``, ``suggestions``); ``trial_rows``: the table row of each fitted
        trial (same order as ``fit["table"]``); ``tested``: names and CAS numbers of
        the tested solvents; ``warnings``: reading warnings; ``partial``.
    """
    cleaned = clean_rows(rows)
    try:
        trials, errors = T.validate_rows(cleaned, library=library)
    except InputError as exc:  # a limit of solsphere.limits (too many rows)
        return {"fit": None, "fit_error": str(exc), "problems": [], "trial_rows": [],
                "tested": [], "warnings": [], "partial": partial, "n_rows": len(cleaned)}
    problems = [problem_dict(e) for e in errors]
    for p in problems:  # a solvent waiting for its result (e.g. a suggested next trial)
        i = p["row"]
        if (p["column"] == "outcome" and i is not None and 0 <= i < len(cleaned)
                and cleaned[i].get("outcome") in (None, "") and cleaned[i].get("solvent")):
            p["pending"] = True
            p["solvent"] = str(cleaned[i]["solvent"])
    out = {"fit": None, "fit_error": None, "problems": problems,
           "trial_rows": [t.line - 1 for t in trials],
           "tested": sorted({t.name for t in trials} | {t.cas for t in trials if t.cas}),
           "warnings": list(trials.warnings), "partial": partial,
           "n_rows": sum(1 for r in clean_rows(rows) if any(v not in (None, "") for v in r.values()))}
    with_file_lines(trials, rows or [])
    out["resolved"] = resolved_names(trials)  # "PM acetate → 1-methoxy-2-propyl acetate"
    if not len(trials):
        out["fit_error"] = ("No bench results yet: add a solvent and its outcome for each "
                            "trial (or open a results file, or the demo).")
        return out
    if partial not in ("good", "bad", "skip"):
        out["fit_error"] = (f"unknown setting {partial!r} for 'partly' results: choose "
                            f"dissolves, does not or left out (partial good/bad/skip).")
        return out
    try:
        with numeric_notes() as notes:  # shown with the warnings, never a numpy trace
            fit = fit_project(Project(trials, {"partial": partial}), partial=partial,
                              library=library)
    except FitError as exc:
        out["fit_error"] = str(exc)
        return out
    finally:
        out["warnings"] += notes
    out["fit"] = fit.to_dict()
    return out


def problem_dict(err: InputError) -> dict:
    """One bad cell for the table: row index, column name, message, suggestions."""
    line = getattr(err, "line", None)
    suggestions = list(getattr(err, "suggestions", []) or [])
    # with suggestions the app offers them as buttons, so the message goes without them
    message = " ".join(str(getattr(err, "plain_message", None) if suggestions
                           else err.message).split())
    return {"row": None if line is None else int(line) - 1,
            "column": err.column if isinstance(err.column, str) else None,
            "message": message,
            "hint": err.hint, "suggestions": suggestions}


def table_status(result: dict | None, source: str | None) -> str:
    """The banner's line about the table as it is now (not as it was opened).

    >>> table_status({"fit": {"n_trials": 36}, "problems": [{"pending": True}]}, "a.csv")
    'Table now: 36 trials counted, 1 waiting for its outcome (the table started from a.csv)'
    >>> table_status({"fit": None, "problems": []}, None)
    'Table now: no trials counted yet'
    """
    result = result or {}
    fit = result.get("fit") or {}
    problems = result.get("problems") or []
    waiting = sum(1 for p in problems if p.get("pending"))
    bad = len(problems) - waiting
    parts = [f"{fit.get('n_trials', 0)} trials counted" if fit else "no trials counted yet"]
    if waiting:
        parts.append(f"{waiting} waiting for its outcome" if waiting == 1 else
                     f"{waiting} waiting for their outcomes")
    if bad:
        parts.append(f"{bad} cell{'s' if bad > 1 else ''} to fix")
    text = "Table now: " + ", ".join(parts)
    if source:
        text += f" (the table started from {source})"
    return text


def centre_text(fit: dict) -> str:
    """'δD 17.9  δP 7.0  δH 6.6 MPa½' (one decimal, as in the tables)."""
    return f"δD {fit['dD']:.1f}   δP {fit['dP']:.1f}   δH {fit['dH']:.1f} MPa½"


def summary(result: dict | None) -> dict:
    """What the 'Sphere' panel prints: headline numbers, misfits, warnings."""
    if not result:
        return {"ok": False, "message": "Waiting for results…", "warnings": []}
    warnings = list(result.get("warnings") or [])
    bad = [p for p in result.get("problems") or [] if not p.get("pending")]
    waiting = [p for p in result.get("problems") or [] if p.get("pending")]
    if waiting:
        n = len(waiting)
        warnings.insert(0, f"{n} trial{'s wait' if n > 1 else ' waits'} for its outcome "
                           f"(marked in yellow): choose dissolves, partly or does not once "
                           f"tested; until then {'they are' if n > 1 else 'it is'} not counted.")
    if bad:
        n = len(bad)
        warnings.insert(0, f"{n} cell{'s' if n > 1 else ''} in the table need{'' if n > 1 else 's'} "
                           f"fixing (marked in red); those rows are left out of the fit.")
    fit = result.get("fit")
    if not fit:
        return {"ok": False, "message": result.get("fit_error") or "No fit.",
                "warnings": warnings}
    partial = PARTIAL_CHOICES.get(fit["partial"], fit["partial"])
    misfits = [f"{r['name']}: {WORDS[r['outcome']]} but {r['predicted']} (RED {_red(r['red'])})"
               for r in fit["table"] if r.get("agrees") is False]
    return {"ok": True, "centre": centre_text(fit), "R0": f"{fit['R0']:.1f} MPa½",
            "desirability": f"{fit['desirability']:.3f}",
            "counts": (f"{fit['n_trials']} trials: {fit['n_good']} dissolve, "
                       f"{fit['n_partial']} partly, {fit['n_bad']} do not; 'partly' counted "
                       f"{partial} ({fit['n_counted_good']} used as dissolving, "
                       f"{fit['n_counted_bad']} as not)"),
            "misfits": misfits, "warnings": warnings + list(fit.get("warnings") or []),
            "resolved": list(result.get("resolved") or [])}


def table_marks(result: dict | None, n_rows: int) -> tuple[dict, list[dict]]:
    """The marks of the results grid and the problem list under it.

    Parameters
    ----------
    result : dict or None
        :func:`compute_fit`'s result.
    n_rows : int
        Rows in the table now (marks past the end are dropped).

    Returns
    -------
    marks : dict
        Keyed by the row's place in the table (a string, as JSON keys are): ``bad`` and
        ``pending`` map a column to the reason shown on hover; ``misfit`` is True for a
        fitted row the sphere disagrees with; ``red`` says the row's RED and verdict.
        The grid looks rows up by their place in the data, not on screen, so sorting
        never moves a mark.
    problems : list of dict
        The bad cells, for the list under the table.

    >>> res = {"fit": None, "trial_rows": [], "problems": [
    ...     {"row": 1, "column": "outcome", "message": "unknown outcome 'maybe'",
    ...      "hint": "dissolves, partly or does not", "suggestions": []}]}
    >>> marks, problems = table_marks(res, 2)
    >>> marks["1"]["bad"]["outcome"]
    "unknown outcome 'maybe' Fix: dissolves, partly or does not"
    >>> len(problems), table_marks(None, 3)
    (1, ({}, []))
    """
    marks: dict[str, dict] = {}
    if not result:
        return marks, []

    def row(i: int) -> dict:
        return marks.setdefault(str(i), {})

    fit = result.get("fit")
    if fit:
        for k, r in enumerate(fit["table"]):
            i = result["trial_rows"][k] if k < len(result["trial_rows"]) else None
            if i is None or i >= n_rows:
                continue
            verdict = {True: "fits", False: "MISFIT", None: "left out"}[r.get("agrees")]
            row(i)["red"] = f"RED {_red(r['red'])} ({r['predicted']} the sphere): {verdict}"
            if r.get("agrees") is False:
                row(i)["misfit"] = True
    problems = [p for p in result.get("problems", []) if p.get("row") is not None]
    for p in problems:
        i, col = p["row"], p["column"] or "solvent"
        if i >= n_rows:
            continue
        if p.get("pending"):
            row(i).setdefault("pending", {})[col] = (
                "Waiting for the result: choose dissolves, partly or does not once tested.")
            continue
        text = p["message"] + (f" Fix: {p['hint']}" if p.get("hint") else "")
        row(i).setdefault("bad", {})[col] = text
    return marks, problems


#: Numeric columns of the table (a pasted number is read with a point or a comma).
NUMBER_COLUMNS = ("dD", "dP", "dH")


def paste_cells(rows, row: int, column: str | None, text: str) -> tuple[list[dict], int]:
    r"""The table with a block of spreadsheet cells pasted in at (``row``, ``column``).

    Reads what a spreadsheet puts on the clipboard (cells separated by tabs, rows by
    newlines). The block overwrites the cells from the clicked one rightwards in the
    order solvent, outcome, δD, δP, δH, note (cells past the note are dropped) and
    downwards; lines past the end of the table become new rows. A first line that is a
    header (:func:`pasted_header`) is not pasted: it says which column each cell goes
    to instead (any order; a coordinate in (cal/cm³)½ is converted to MPa½; unknown
    columns are left out). Outcome words the results files accept ('yes', 'bad' …) are
    written as the table's words; δ values are read as numbers (a decimal comma too);
    anything unreadable is kept as typed so the table marks it. Pasting into a column
    that is not editable starts at the solvent.

    Returns
    -------
    rows : list of dict
    changed : int
        How many table rows the paste wrote to.

    >>> rows = [{"solvent": "toluene", "outcome": "dissolves"}]
    >>> new, n = paste_cells(rows, 0, "outcome", "bad\n")
    >>> new[0]["outcome"], n
    ('does not', 1)
    >>> new, n = paste_cells(rows, 1, "solvent", "my oil\tyes\t16,5\t3.1\tx\r\nwater\tno")
    >>> [(r["solvent"], r["outcome"], r["dD"], r["dP"], r["dH"]) for r in new[1:]], n
    ([('my oil', 'dissolves', 16.5, 3.1, 'x'), ('water', 'does not', None, None, None)], 2)
    >>> rows[0]["outcome"]  # the input table is not changed
    'dissolves'
    >>> new, n = paste_cells([], 0, "solvent", "Result\tLiquid\tpH\nyes\tacetone\t7\n")
    >>> [(r["solvent"], r["outcome"]) for r in new], n  # the header row placed the cells
    ([('acetone', 'dissolves')], 1)
    """
    out = [dict(r) for r in rows or [] if isinstance(r, dict)]
    lines = str(text or "").replace("\r\n", "\n").replace("\r", "\n").split("\n")
    while lines and not lines[-1].strip():  # a spreadsheet ends its copy with a newline
        lines.pop()
    start = COLUMNS.index(column) if column in COLUMNS else 0
    places = pasted_header(lines[0], COLUMNS[start]) if lines else None
    if places is not None:
        lines = lines[1:]
    else:  # from the clicked cell rightwards
        places = [(c, 1.0) for c in COLUMNS[start:]]
    row = max(0, min(int(row), len(out)))
    for k, line in enumerate(lines):
        i = row + k
        while i >= len(out):
            out.append(blank_row())
        for (target, factor), cell in zip(places, line.split("\t")):
            if target is not None:
                out[i][target] = _pasted(target, cell, factor)
    return out, len(lines)


def pasted_header(line: str, column: str) -> list[tuple[str | None, float]] | None:
    r"""Where each cell of a pasted block goes, when its first ``line`` is a header: two
    or more cells naming different table columns (as a results file's header is read),
    or one cell naming the ``column`` it is pasted into. (table column or None, unit
    factor) per cell; None when the line is data.

    >>> pasted_header("Solvent\tdD (cal/cm3)^0.5\tpH", "solvent")
    [('solvent', 1.0), ('dD', 2.0455), (None, 1.0)]
    >>> pasted_header("Notes", "note"), pasted_header("toluene\tyes", "solvent")
    ([('note', 1.0)], None)
    """
    found = [T.header_column(c) for c in line.split("\t")]
    places = [(c if c in COLUMNS else None, f) for c, f in found]
    named = [c for c, _ in places if c is not None]
    if len(named) != len(set(named)):  # a column twice: not a header of ours
        return None
    if len(named) >= 2 or (len(places) == 1 and named == [column]):
        return places
    return None


def _pasted(column: str, cell: str, factor: float = 1.0):
    """One pasted cell as the table keeps it (None for an empty cell); a number is
    multiplied by ``factor`` (its unit to MPa½)."""
    cell = cell.strip()
    if not cell:
        return None
    if column == "outcome":
        canon = parse_outcome(cell)
        return WORDS[canon] if canon is not None else cell
    if column in NUMBER_COLUMNS:
        try:
            return float(cell.replace(",", ".")) * factor
        except ValueError:
            return cell
    return cell


def delete_row(rows, row: int) -> list[dict]:
    """The table without row ``row`` (its place in the data); an empty row is left when
    the last one goes, so the table never disappears.

    >>> delete_row([{"solvent": "a"}, {"solvent": "b"}], 0)
    [{'solvent': 'b'}]
    >>> delete_row([{"solvent": "a"}], 0)[0]["solvent"] is None
    True
    """
    out = [dict(r) for r in rows or []]
    if 0 <= row < len(out):
        del out[row]
    return out or [blank_row()]


def _red(x: float) -> str:
    """RED with 2 decimals, 3 near 1 (so '1.00 outside' never puzzles anyone)."""
    return f"{x:.3f}" if 0.995 <= x < 1.005 else f"{x:.2f}"


def apply_suggestion(rows, row: int, column: str, value: str) -> list[dict]:
    """The table with one cell replaced (a 'Did you mean …?' click)."""
    rows = [dict(r) for r in rows or []]
    if 0 <= row < len(rows) and column in COLUMNS:
        rows[row][column] = value
    return rows


def add_row(rows, solvent: str | None, outcome: str | None, note: str | None = None) -> list[dict]:
    """The table with one result appended (empty rows at the end are reused)."""
    rows = [dict(r) for r in rows or []]
    new = blank_row()
    new.update({"solvent": (solvent or "").strip() or None, "outcome": outcome,
                "note": (note or "").strip() or None})
    for i in range(len(rows) - 1, -1, -1):  # fill the first of the trailing empty rows
        if all(rows[i].get(c) in (None, "") for c in COLUMNS):
            if i == 0 or any(rows[i - 1].get(c) not in (None, "") for c in COLUMNS):
                rows[i] = new
                return rows
        else:
            break
    rows.append(new)
    return rows


def add_pending(rows, names, note: str | None = None) -> tuple[list[dict], list[str]]:
    """The table with a row per solvent in ``names`` that is not in it yet, each with an
    empty outcome for the chemist to fill in after the test.

    Returns
    -------
    rows : list of dict
    added : list of str
        The names appended (in order).
    """
    have = {str(r.get("solvent") or "").strip().casefold() for r in rows or []}
    added = []
    for name in names or []:
        if name and name.casefold() not in have:
            rows = add_row(rows, name, None, note)
            have.add(name.casefold())
            added.append(name)
    return (rows if added else [dict(r) for r in rows or []]), added


def type_ahead_options(library) -> list[tuple[str, str]]:
    """(value, label) pairs for the solvent type-ahead: names, abbreviations, CAS
    numbers and synonyms of every library compound (label = the library name)."""
    seen: set[str] = set()
    out: list[tuple[str, str]] = []

    def put(value, label):
        key = value.casefold()
        if value and key not in seen:
            seen.add(key)
            out.append((value, label))

    for r in library:
        put(r.name, "")
    for alias, target in library.aliases.items():
        s = library.find(alias)
        put(alias, s.name if s else "")
    for r in library:
        if r.cas:
            put(r.cas, r.name)
        for syn in r.synonyms:
            put(syn, r.name)
    return out


# ----------------------------------------------------------------------------- uploads

def decode_upload(contents: str, filename: str | None, limit: int = UPLOAD_LIMIT) -> bytes:
    """The bytes of a ``dcc.Upload`` data URL, refusing anything over ``limit``.

    Raises
    ------
    InputError
        Not a data URL, not base64, or too big.
    """
    name = os.path.basename(filename or "upload")
    if not isinstance(contents, str) or "," not in contents:
        raise InputError("the upload arrived empty or damaged.", file=name,
                         hint="choose the file again")
    head, b64 = contents.split(",", 1)
    if len(b64) * 3 // 4 > limit + 3:
        raise InputError(f"the file is {len(b64) * 3 / 4 / 1e6:.1f} MB; the limit is "
                         f"{limit / 1e6:g} MB.", file=name,
                         hint="check that this is the right file (a results table is "
                              "usually a few kB)")
    try:
        data = base64.b64decode(b64, validate=True) if ";base64" in head else \
            b64.encode("utf-8")
    except (binascii.Error, ValueError):
        raise InputError("the upload is not valid base64 data.", file=name,
                         hint="choose the file again") from None
    if len(data) > limit:
        raise InputError(f"the file is {len(data) / 1e6:.1f} MB; the limit is "
                         f"{limit / 1e6:g} MB.", file=name,
                         hint="check that this is the right file")
    return data


def too_big_message(filename: str | None, size: float, limit: int = UPLOAD_LIMIT) -> str:
    """The message for an upload refused in the browser before it was sent."""
    return str(InputError(f"the file is {size / 1e6:.1f} MB; the limit is {limit / 1e6:g} MB.",
                          file=os.path.basename(filename or "upload"),
                          hint="check that this is the right file (a results table is "
                               "usually a few kB)"))


def _safe_name(filename: str | None, default: str) -> str:
    base = os.path.basename(filename or "") or default
    base = re.sub(r"[^\w.+-]+", "_", base)[:100].lstrip(".")
    return base or default


def with_upload_file(data: bytes, filename: str | None, default: str, fn):
    """Run ``fn(path)`` on the uploaded bytes written to a private temporary file, so
    the library reads it exactly as it reads a file given on the command line. Error
    messages name the uploaded file, not the temporary one."""
    name = _safe_name(filename, default)
    shown = os.path.basename(filename or "") or name
    with tempfile.TemporaryDirectory(prefix="solsphere-upload-") as tmp:
        path = Path(tmp) / name
        path.write_bytes(data)
        try:
            return fn(str(path))
        except InputError as exc:
            raise _relabel(exc, str(path), shown) from None


def _relabel(exc: InputError, path: str, shown: str) -> InputError:
    def fix(x):
        return x.replace(path, shown) if isinstance(x, str) else x
    new = InputError(fix(exc.message), file=fix(exc.file), line=exc.line, column=exc.column,
                     hint=fix(exc.hint))
    if hasattr(exc, "suggestions"):
        new.suggestions = exc.suggestions
    return new


def open_upload(contents: str, filename: str | None, library) -> dict:
    """Open an uploaded results file (CSV/TSV) or project file (.json).

    The library decides which it is and reads it (``solsphere.project.load_any``,
    the same as every CLI subcommand). Nothing uploaded is executed or unpickled.

    Returns
    -------
    dict
        ``rows`` (table rows), ``partial`` (the project's setting or None),
        ``saved_fit`` (the fit saved in a project, or None), ``kind``
        ("project"/"results"), ``message``.

    Raises
    ------
    InputError
    """
    data = decode_upload(contents, filename)
    project = with_upload_file(data, filename, "results.csv",
                              lambda p: load_any(p, library=library))
    return project_state(project, os.path.basename(filename or "upload"))


def project_state(project, label: str) -> dict:
    """Table rows and settings of a Project, for the app's initial or loaded state."""
    kind = "project" if project.path is not None else "results"
    rows = rows_from_trials(project.trials)
    partial = project.settings.get("partial") if kind == "project" else None
    msg = (f"Opened {label}: {len(rows)} trials"
           + (" (project file with its saved fit)" if kind == "project" and project.fit else "")
           + ".")
    if project.trials.warnings:
        msg += " " + " ".join(project.trials.warnings[:3])
    return {"rows": rows, "partial": partial, "saved_fit": project.fit, "kind": kind,
            "message": msg, "source": label}


def demo_state(library) -> dict | None:
    """The invented demo scenario from the installed package (None if it is missing)."""
    try:
        folder = files("solsphere.data.demo")
        entry = folder.joinpath(DEMO_FILE)
        if not entry.is_file():
            entry = next((e for e in sorted(folder.iterdir(), key=lambda e: e.name)
                          if e.name.endswith(".csv")), None)
        if entry is None:
            return None
        text = entry.read_text(encoding="utf-8")
    except (ModuleNotFoundError, FileNotFoundError, OSError):
        return None
    label = f"{entry.name} ({DEMO_LABEL})"
    trials = T.read_text(text, source=label, library=library)
    state = project_state(Project(trials=trials), label)
    state["message"] = (f"Loaded the {DEMO_LABEL} ({entry.name}): {len(state['rows'])} trials "
                        f"of an invented scenario, not measured data.")
    return state


def fit_matches(saved: dict | None, fit: dict | None, tol: float = 1e-6) -> bool | None:
    """Whether a freshly computed fit equals the one saved in a project (None if either
    is missing): same centre, R0 and desirability to ``tol``."""
    if not saved or not fit:
        return None
    try:
        return all(abs(float(saved[k]) - float(fit[k])) <= tol
                   for k in ("dD", "dP", "dH", "R0", "desirability"))
    except (KeyError, TypeError, ValueError):
        return False


# ----------------------------------------------------------------------------- shortlist

def shortlist(result: dict | None, library, liquids_only: bool = True,
              min_flash_point=None, max_boiling_point=None, no_carcinogens: bool = False,
              exclude: str | None = None, top: int = 30, bootstrap=None,
              common_only: bool = True, pool: str | None = None) -> dict:
    """Untried solvents nearest the sphere, with their safety facts.

    ``bootstrap`` (a :class:`solsphere.confidence.Bootstrap` of the same results) adds
    each solvent's ``p_good`` (and ``p_text``). ``common_only`` limits the candidates to
    the curated common solvents (:meth:`solsphere.library.Library.common`).

    Returns
    -------
    dict
        ``rows`` (``Ranking.to_dict()["solvents"]`` entries plus display strings),
        ``message`` and ``caution``.
    """
    fit = (result or {}).get("fit")
    if not fit:
        return {"rows": [], "message": "No sphere yet: the shortlist appears once the fit "
                                       "works.", "caution": CAUTION}
    names = split_names(exclude)
    try:
        top = int(top)
    except (TypeError, ValueError):
        top = 0
    if top < 1:
        return {"rows": [], "message": "how many to list must be a whole number of at "
                                       "least 1.", "caution": CAUTION}
    try:
        pool, filters = candidate_pool(library, exclude=names,
                                       min_flash_point=number_field(min_flash_point),
                                       max_boiling_point=number_field(max_boiling_point),
                                       exclude_carcinogens=bool(no_carcinogens),
                                       liquid_only=bool(liquids_only),
                                       pool=pool or ("working" if common_only else "all"))
        if not liquids_only and (pool or ("working" if common_only else "all")) == "all":
            filters["pool"] = "all library solvents"
    except SolsphereError as exc:
        return {"rows": [], "message": str(exc), "caution": CAUTION}
    ranking = rank_solvents(pool, (fit["dD"], fit["dP"], fit["dH"]), fit["R0"], top=top,
                            tested=set(result.get("tested") or ()), filters=filters,
                            bootstrap=bootstrap)
    d = ranking.to_dict()
    rows = []
    for s in d["solvents"]:
        rows.append(dict(s, for_fit=fit_key(fit), red_text=f"{s['red']:.2f}", dD_text=f"{s['dD']:.1f}",
                         dP_text=f"{s['dP']:.1f}", dH_text=f"{s['dH']:.1f}",
                         bp_text=num(s.get("boiling_point"), "{:.0f}"),
                         fp_text=num(s.get("flash_point"), "{:.0f}"),
                         twa_text=num(s.get("twa_ppm"), "{:.3g}"),
                         spread_text=num(s.get("spread"), "{:.1f}"),
                         p_text=num(s.get("p_good"), "{:.2f}"),
                         flags_text="; ".join(s.get("flags") or []),
                         red_n=cell_number(s["red"], 2), p_n=cell_number(s.get("p_good"), 2),
                         dD_n=cell_number(s["dD"], 1), dP_n=cell_number(s["dP"], 1),
                         dH_n=cell_number(s["dH"], 1), bp_n=cell_number(s.get("boiling_point"), 0),
                         fp_n=cell_number(s.get("flash_point"), 0),
                         twa_n=cell_number(s.get("twa_ppm"), 1),
                         spread_n=cell_number(s.get("spread"), 1)))
    msg = f"{len(rows)} nearest of {d['n_candidates']} untried candidates ({filters['pool']})."
    return {"rows": rows, "message": msg, "caution": CAUTION}


def cell_number(x, digits: int = 1):
    """A number for a table cell (rounded, so it sorts as a number), None when unknown.

    >>> cell_number(12.345, 1), cell_number(None), cell_number(float("nan")), cell_number(7.6, 0)
    (12.3, None, None, 8)
    """
    if x is None:
        return None
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    if v != v:
        return None
    return round(v, digits) if digits else int(round(v))


def number_field(x, field: str = "number"):
    """A number typed in a form field (decimal comma accepted), None when empty.

    Raises
    ------
    InputError
        Not a number, naming the field.
    """
    if x in (None, ""):
        return None
    try:
        v = float(str(x).replace(",", "."))
    except ValueError:
        raise InputError(f"expected a number, found {str(x)[:40]!r}.", file="<filters>",
                         column=field) from None
    return v if v == v else None


def drying_paths(blends) -> list[dict]:
    """The drying paths of the clicked blends, for :func:`solsphere.report.figures.map3d`."""
    return [{"points": b["drying_points"],
             "label": "drying path: " + " + ".join(b["solvents"])}
            for b in blends or [] if b.get("drying_points")]


# ----------------------------------------------------------------------------- figures

#: Heights of the map (and the RED ladder beside it) and of the 2D plane [px].
MAP_HEIGHT = 520
PLANE_HEIGHT = 380


def figures_for(result: dict | None, library, show_untried: bool = True,
                picked: list | None = None, blends: list | None = None, cloud=None,
                plane: str = "dP-dH"):
    """The 3D map, the RED ladder and the chosen 2D plane for the stored fit.

    ``blends`` are the clicked blends (their segment or triangle, and their drying path
    when they carry ``drying_points``); ``cloud`` the resampled sphere centres of a
    bootstrap of the same results (shape (n, 3)), drawn faintly; ``plane`` a key of
    :data:`solsphere.report.figures.PLANE_CHOICES`."""
    return (map_figure(result, library, show_untried, picked, blends, cloud),
            ladder_figure(result), plane_figure(result, plane, blends))


def ladder_figure(result: dict | None):
    """The RED ladder of the stored fit (:func:`solsphere.report.figures.red_ladder`)."""
    fit = (result or {}).get("fit")
    if not fit:
        return empty_figure("", height=MAP_HEIGHT)
    return figures.red_ladder(fit, height=MAP_HEIGHT)


def plane_figure(result: dict | None, choice: str = "dP-dH", blends: list | None = None):
    """One 2D plane of the stored fit (:func:`solsphere.report.figures.plane`); an
    unknown choice falls back to δP–δH."""
    fit = (result or {}).get("fit")
    if not fit:
        return empty_figure("", height=PLANE_HEIGHT)
    blends, _ = _current(fit, blends)
    axes = figures.PLANE_CHOICES.get(choice, figures.PLANE_CHOICES["dP-dH"])
    return figures.plane(fit, axes, blends=blends or None, height=PLANE_HEIGHT)


def _current(fit: dict, blends, picked=None):
    """Keep what belongs to this fit: a blend's best mix and a solvent's RED were
    computed for the fit of the moment they were clicked."""
    key = fit_key(fit)
    blends = [b for b in blends or [] if b.get("for_fit") == key]
    picked = [p if p.get("for_fit") == key else {k: v for k, v in p.items() if k != "red"}
              for p in picked or []]
    return blends, picked


def map_figure(result: dict | None, library, show_untried: bool = True,
               picked: list | None = None, blends: list | None = None, cloud=None):
    """The 3D map of the stored fit (``solsphere.figures.map3d``)."""
    fit = (result or {}).get("fit")
    if not fit:
        return empty_figure((result or {}).get("fit_error") or "No sphere yet.")
    blends, picked = _current(fit, blends, picked)
    untried = None
    if show_untried:
        ranking = rank_solvents(_liquids(library), (fit["dD"], fit["dP"], fit["dH"]), fit["R0"],
                                tested=set(result.get("tested") or ()))
        untried = ranking.to_dict()["solvents"]
    return figures.map3d(fit, untried=untried, blends=blends or None,
                         highlight=picked or None, show_untried=show_untried,
                         height=MAP_HEIGHT,
                         paths=drying_paths(blends) or None,
                         cloud=cloud if cloud else None)


def inputs_key(*values) -> str:
    """A short fingerprint of a screen's inputs: a screen shown again with the same
    inputs keeps what it shows instead of computing it again (fast tab switches).

    >>> inputs_key({"a": 1}, [2, 3]) == inputs_key({"a": 1}, [2, 3]) != inputs_key(1)
    True
    """
    text = json.dumps(values, sort_keys=True, default=str, ensure_ascii=False)
    return hashlib.sha1(text.encode("utf-8")).hexdigest()[:20]


def fit_key(fit: dict | None) -> list | None:
    """What identifies a fit for results computed from it (centre and R0)."""
    if not fit:
        return None
    return [round(float(fit[k]), 9) for k in ("dD", "dP", "dH", "R0")]


@lru_cache(maxsize=2)
def _liquids(library):
    """The library's liquids (a constant of the immutable library; cached because
    ``Library.liquids()`` rebuilds its name index on every call)."""
    return tuple(library.liquids())


def empty_figure(message: str, height: int = 560):
    """A blank figure carrying a message (while there is no fit)."""
    import plotly.graph_objects as go  # deferred: plotly is heavy to import

    fig = go.Figure()
    fig.update_layout(height=height, xaxis={"visible": False}, yaxis={"visible": False},
                      plot_bgcolor="white", margin={"l": 10, "r": 10, "t": 10, "b": 10},
                      annotations=[{"text": _wrap(message), "showarrow": False,
                                    "xref": "paper", "yref": "paper", "x": 0.5, "y": 0.5,
                                    "font": {"size": 14, "color": "#555"}}] if message else [])
    return fig


def _wrap(text: str, width: int = 70) -> str:
    return "<br>".join(html.escape(x) for x in textwrap.wrap(text, width)) or ""


# ----------------------------------------------------------------------------- share

def _project(rows, partial: str, library, fit_dict: dict | None):
    trials = T.from_rows(clean_rows(rows), library=library)
    return Project(trials=trials, settings={"partial": partial}, fit=fit_dict)


def project_file_text(rows, partial: str, library) -> str:
    """The project file for the table (written by ``solsphere.project.save``).

    Raises
    ------
    InputError
        A bad cell (fix it first: a project with rows silently dropped would lose data).
    """
    project = _project(rows, partial, library, None)
    try:
        fit = fit_project(project, partial=partial, library=library)
        project.fit = fit.to_dict()
    except FitError:
        project.fit = None
    with tempfile.TemporaryDirectory(prefix="solsphere-save-") as tmp:
        path = Path(tmp) / "project.json"
        save(project, path)
        return path.read_text(encoding="utf-8")


def share_page_text(rows, partial: str, library, title: str | None = None) -> str:
    """The standalone HTML page, the same as ``solsphere share`` writes.

    Raises
    ------
    InputError, FitError
    """
    project = _project(rows, partial, library, None)
    fit = fit_project(project, partial=partial, library=library)
    return share_page(project, fit, library, title=title or None)


def download_name(source: str | None, suffix: str) -> str:
    """A file name for a download, from the opened file's name."""
    stem = Path(os.path.basename(source or "")).stem if source else ""
    stem = re.sub(r"[^\w.-]+", "-", stem.split(" (")[0]).strip("-.") or "solsphere"
    return f"{stem}{suffix}"


def caution_text() -> str:
    """The caution shown near every recommendation (``solsphere.rank.CAUTION``)."""
    return CAUTION
