"""Result tables written to a file: ``.csv``, ``.xlsx`` or ``.json``, chosen by the name.

:func:`write_table` is the one writer: the per-item table of any result object
(:meth:`solsphere.results.Result.records`: one row per trial, solvent, blend ...) goes to
CSV (UTF-8 with a BOM, so spreadsheet programs read the accents and ½ right) or to a
workbook (openpyxl, one sheet); JSON gets the whole ``to_dict()``. Cells that hold lists
(a blend's solvents and fractions) are joined with ``"; "``, nested objects are written
as JSON text, so every table is flat. The write is atomic and never destroys: a
folder, a device, a pipe or one of the command's input files is refused
(:func:`solsphere.io.files.check_output`), and so is replacing an existing file that is
not an earlier table of the same kind (a results file or workbook given to ``-o`` by
mistake is kept): a CSV with the same header line, a JSON object with the same keys, a
workbook whose author is solsphere.
"""

from __future__ import annotations

import csv
import io
import json
import math
import os
import zipfile

from solsphere.errors import InputError
from solsphere.io.files import atomic_write_bytes, check_output

__all__ = ["write_table", "TABLE_SUFFIXES", "flat_rows", "table_kind"]

#: Endings :func:`write_table` writes.
TABLE_SUFFIXES = (".csv", ".xlsx", ".json")


def table_kind(path) -> str:
    """``"csv"``, ``"xlsx"`` or ``"json"`` from a file name; InputError otherwise.

    >>> table_kind("ranking.XLSX")
    'xlsx'
    """
    low = os.fspath(path).lower()
    for suffix in TABLE_SUFFIXES:
        if low.endswith(suffix):
            return suffix[1:]
    raise InputError("a table is written as .csv, .xlsx or .json; the name ends otherwise.",
                     file=os.fspath(path), setting="output",
                     hint="end the name with .csv, .xlsx or .json")


def _cell(v):
    """A flat cell value: numbers and text as they are, lists joined, objects as JSON."""
    if v is None or isinstance(v, (bool, int, str)):
        return v
    if isinstance(v, float):
        return v if math.isfinite(v) else None
    if hasattr(v, "item") and not isinstance(v, (list, tuple, dict)):  # numpy scalars
        return _cell(v.item())
    if isinstance(v, (list, tuple)):
        if all(isinstance(x, (str, int, float)) and not isinstance(x, bool) for x in v):
            return "; ".join(f"{x:.6g}" if isinstance(x, float) else str(x) for x in v)
        return json.dumps(v, ensure_ascii=False, default=str)
    if isinstance(v, dict):
        return json.dumps(v, ensure_ascii=False, default=str)
    return str(v)


def flat_rows(records: list[dict]) -> tuple[list[str], list[list]]:
    """(columns in first-seen order, rows of flat cells) of a list of records.

    >>> flat_rows([{"name": "a", "solvents": ["x", "y"], "f": [0.25, 0.75]}])
    (['name', 'solvents', 'f'], [['a', 'x; y', '0.25; 0.75']])
    """
    columns = list(dict.fromkeys(k for r in records for k in r))
    return columns, [[_cell(r.get(c)) for c in columns] for r in records]


def _csv_bytes(columns, rows) -> bytes:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow(columns)
    for row in rows:
        w.writerow(["" if v is None else (repr(v) if isinstance(v, float) else _safe_text(v))
                    for v in row])
    return ("\ufeff" + buf.getvalue()).encode("utf-8")


def _safe_text(v):
    """Text a spreadsheet would run as a formula is stored as text (a leading quote)."""
    if isinstance(v, str) and v[:1] in ("=", "+", "-", "@") and len(v) > 1:
        try:
            float(v)  # a number written as text ("-10") stays a number
        except ValueError:
            return "'" + v
    return v


def _xlsx_bytes(columns, rows, title: str) -> bytes:
    import openpyxl  # deferred: only the .xlsx output needs it

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = (title or "table")[:31]
    ws.append(columns)
    for row in rows:
        ws.append([_safe_text(v) for v in row])
    ws.freeze_panes = "A2"
    wb.properties.creator = XLSX_CREATOR
    buf = io.BytesIO()
    wb.save(buf)
    return buf.getvalue()


def _json_bytes(obj) -> bytes:
    return (json.dumps(obj, ensure_ascii=False, allow_nan=False, indent=1, default=_cell)
            + "\n").encode("utf-8")


#: The workbook author written into every .xlsx table (how a later -o recognises its own).
XLSX_CREATOR = "solsphere"


def _replaceable(path, kind: str, data: bytes) -> bool:
    """True for a new or empty path, or an existing file that is an earlier table of the
    same kind: a .csv with the same header line, a .json object with the same keys, an
    .xlsx that solsphere wrote. Anything else (a user's results, a project) is kept."""
    if not os.path.isfile(path):
        return True
    try:
        with open(path, "rb") as fh:
            old = fh.read(2_000_000)
    except OSError:
        return True  # the writer reports what is wrong with the path
    if not old.strip():
        return True
    if kind == "csv":
        return old.split(b"\n", 1)[0].rstrip(b"\r") == data.split(b"\n", 1)[0].rstrip(b"\r")
    if kind == "json":
        try:
            before = json.loads(old.decode("utf-8"))
        except (UnicodeDecodeError, ValueError):
            return False
        return isinstance(before, dict) and set(before) == set(json.loads(data.decode("utf-8")))
    try:
        with zipfile.ZipFile(path) as zf:
            core = zf.read("docProps/core.xml")
    except (zipfile.BadZipFile, KeyError, OSError):
        return False
    return f"<dc:creator>{XLSX_CREATOR}</dc:creator>".encode() in core


def write_table(result, path, *, inputs=(), title: str = "table") -> str:
    """Write a result's table to ``path`` (.csv, .xlsx or .json by the name).

    Parameters
    ----------
    result : Result or list of dict
        A result object (its :meth:`records` for CSV and XLSX, ``to_dict()`` for JSON)
        or plain records.
    path : str or os.PathLike
    inputs : iterable of paths, default=()
        The files the command reads (never overwritten).
    title : str, default="table"
        The workbook's sheet name.

    Returns
    -------
    str
        The kind written (``"csv"``, ``"xlsx"``, ``"json"``).

    Raises
    ------
    InputError
        Another ending, a path that writing would destroy, an existing file that is not
        a table of that kind, or a failed write (the old file is then unchanged).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> out = pathlib.Path(tempfile.mkdtemp()) / "t.csv"
    >>> write_table([{"name": "toluene", "red": 0.8}], out)
    'csv'
    >>> out.read_text(encoding="utf-8-sig").splitlines()
    ['name,red', 'toluene,0.8']
    """
    kind = table_kind(path)
    check_output(path, inputs=inputs)
    records = result.records() if hasattr(result, "records") else list(result)
    if kind == "json":
        obj = result.to_dict() if hasattr(result, "to_dict") else {"rows": records}
        data = _json_bytes(obj)
    else:
        columns, rows = flat_rows(records)
        data = (_csv_bytes(columns, rows) if kind == "csv"
                else _xlsx_bytes(columns, rows, title))
    if not _replaceable(path, kind, data):
        raise InputError(f"this file exists and is not an earlier table of this kind; not "
                         f"overwriting it.", file=os.fspath(path), setting="output",
                         hint="choose another name for the table, or delete the old file")
    atomic_write_bytes(path, data)
    return kind
