"""Workbooks (``.xlsx``, ``.ods``) as tables of cells, for the bench-results reader.

A workbook is read with python-calamine (a maintained Rust reader of Excel and
OpenDocument files; it returns the values a spreadsheet program saved with each cell,
also for formulas). One sheet is read: the first, or the one named. The result is a
:class:`Sheet`: its rows as lists of cell values (numbers stay numbers), each with its
1-based row number as the spreadsheet shows it.

What cannot be read well is refused with an :class:`~solsphere.errors.InputError`
naming the file, the sheet, the row and the column (a letter, as the spreadsheet
shows it):

- a damaged or password-protected file, or one that is not a workbook;
- a sheet that does not exist (the message lists the sheets) or is empty;
- merged cells inside the table (a merged solvent cell over two rows leaves the second
  row without a solvent: unmerge and fill each row);
- a formula without a saved value (written by a program that does not calculate:
  open and save the file in a spreadsheet program, or paste values);
- a sheet too large to hold in memory (more than :data:`MAX_CELLS` cells in its used
  range), or a zip whose contents would unpack to more than :data:`MAX_UNPACKED` bytes.

Formula and merged-cell checks read the sheet's XML with :mod:`xml.etree` (expat, with
its protection against entity expansion) in one streaming pass.
"""

from __future__ import annotations

import io
import zipfile
import zlib
from dataclasses import dataclass, field
from datetime import date, datetime, time, timedelta
from xml.etree import ElementTree as ET

from solsphere.errors import InputError
from solsphere.limits import clip

__all__ = ["Sheet", "read_sheet", "WORKBOOK_SUFFIXES", "is_workbook", "column_letter",
           "MAX_CELLS", "MAX_UNPACKED"]

#: File name endings read as workbooks.
WORKBOOK_SUFFIXES = (".xlsx", ".xlsm", ".ods")
#: Most cells in a sheet's used range (rows × columns); a results table of 5,000 rows
#: and ten columns needs 50,000.
MAX_CELLS = 1_000_000
#: Most bytes the parts of a workbook may unpack to (a "zip bomb" is refused unread).
MAX_UNPACKED = 200_000_000

_ODS_TABLE = "urn:oasis:names:tc:opendocument:xmlns:table:1.0"
_XLSX_MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
_PKG_REL = "http://schemas.openxmlformats.org/package/2006/relationships"


#: What reading a part of a damaged zip can raise (Python's zipfile and zlib).
_ZIP_ERRORS = (zipfile.BadZipFile, NotImplementedError, OSError, EOFError, ValueError,
               zlib.error, RuntimeError)


@dataclass
class Sheet:
    """One sheet of a workbook.

    Attributes
    ----------
    name : str
        The sheet's name.
    rows : list of (int, list)
        (1-based row number, cell values) for each row that has a value; cells are
        str, float, int or bool, empty cells ``None``; cell ``i`` is in column
        ``column_letter(i)``.
    label : str
        How messages name it: ``"results.xlsx, sheet 'Bench'"``.
    """

    name: str
    rows: list = field(default_factory=list)
    label: str = ""


def is_workbook(name: str, head: bytes = b"") -> bool:
    """True for a workbook by its name ending, or by its first bytes (a zip) with no name.

    >>> is_workbook("bench.XLSX"), is_workbook("bench.csv"), is_workbook("-", b"PK\\x03\\x04")
    (True, False, True)
    """
    low = str(name).lower()
    if low.endswith(WORKBOOK_SUFFIXES):
        return True
    return low in ("-", "") and head.startswith(b"PK\x03\x04")


def column_letter(index: int) -> str:
    """The spreadsheet letter of 0-based column ``index``.

    >>> column_letter(0), column_letter(25), column_letter(26), column_letter(702)
    ('A', 'Z', 'AA', 'AAA')
    """
    out = ""
    index += 1
    while index:
        index, r = divmod(index - 1, 26)
        out = chr(65 + r) + out
    return out


def _cell_ref(ref: str) -> tuple[int, int]:
    """(1-based row, 0-based column) of 'B12'."""
    col = 0
    i = 0
    while i < len(ref) and ref[i].isalpha():
        col = col * 26 + (ord(ref[i].upper()) - 64)
        i += 1
    return int(ref[i:] or 0), col - 1


def _value(v):
    """A cell value as the table reader takes it (None for empty)."""
    if v is None or (isinstance(v, str) and not v.strip()):
        return None
    if isinstance(v, float) and v.is_integer() and abs(v) < 1e15:
        return int(v)
    if isinstance(v, (datetime, date, time, timedelta)):
        return v.isoformat() if hasattr(v, "isoformat") else str(v)
    return v


def read_sheet(data: bytes, file: str, sheet: str | None = None) -> Sheet:
    """The cells of one sheet of a workbook's bytes.

    Parameters
    ----------
    data : bytes
        The whole file (``.xlsx``, ``.xlsm`` or ``.ods``).
    file : str
        The file as the user named it (for messages).
    sheet : str or None, default=None
        The sheet's name; None reads the first sheet.

    Returns
    -------
    Sheet

    Raises
    ------
    InputError
        See the module's list.
    """
    import python_calamine  # deferred: the Rust reader is loaded only for workbooks

    damaged = ("open it in the spreadsheet program and save it again (or export it as "
               "CSV), then give that file")
    try:
        zf = zipfile.ZipFile(io.BytesIO(data))
        unpacked = sum(i.file_size for i in zf.infolist())
    except _ZIP_ERRORS:
        raise InputError("the workbook is damaged or not a workbook (not a valid zip "
                         "file).", file=file, hint=damaged) from None
    if unpacked > MAX_UNPACKED:
        raise InputError(f"the workbook unpacks to {unpacked / 1e6:.0f} MB; the limit is "
                         f"{MAX_UNPACKED / 1e6:.0f} MB.", file=file,
                         hint="save the bench results alone in a new workbook")
    names = set(zf.namelist())
    if "EncryptedPackage" in names or "EncryptionInfo" in names:
        raise InputError("the workbook is protected by a password.", file=file,
                         hint="save a copy without the password and give that file")
    # the reader builds every sheet of an .ods when it opens: all are measured first
    ods = _ods_extents(zf, file) if "content.xml" in names else None
    for sheet_name, extent in (ods or {}).items():
        _refuse_big(extent, f"{file}, sheet {sheet_name!r}")
    try:
        wb = python_calamine.CalamineWorkbook.from_filelike(io.BytesIO(data))
        sheet_names = list(wb.sheet_names)
    except Exception as exc:  # the reader's own error types (zip, XML, password ...)
        raise InputError(f"cannot read the workbook ({clip(type(exc).__name__, quote=False)}:"
                         f" {clip(str(exc), 120, quote=False)}).", file=file,
                         hint=damaged) from None
    if not sheet_names:
        raise InputError("the workbook has no sheets.", file=file, hint=damaged)
    if sheet is None:
        name = sheet_names[0]
    else:
        match = [s for s in sheet_names if s == sheet] or \
                [s for s in sheet_names if s.strip().casefold() == sheet.strip().casefold()]
        if not match:
            raise InputError(f"no sheet named {clip(sheet)}; the workbook has "
                             f"{', '.join(clip(s) for s in sheet_names[:20])}.", file=file,
                             column="--sheet", hint="give one of these names to --sheet")
        name = match[0]
    label = f"{file}, sheet {name!r}"
    # the used range from the sheet's own XML first: the reader builds the whole range
    # in memory (a stray cell at row 1,048,000, column GR took it 10 s and gigabytes)
    _refuse_big(ods.get(name) if ods is not None else _used_extent(zf, name, file), label)
    try:
        ws = wb.get_sheet_by_name(name)
        end = ws.end
        n_cells = 0 if end is None else (end[0] + 1) * (end[1] + 1)
        _refuse_big(None if end is None else (end[0] + 1, end[1] + 1), label)
        grid = ws.to_python(skip_empty_area=False) if n_cells else []
    except InputError:
        raise
    except Exception as exc:  # the reader's own error types
        raise InputError(f"cannot read the sheet ({clip(type(exc).__name__, quote=False)}: "
                         f"{clip(str(exc), 120, quote=False)}).", file=label,
                         hint=damaged) from None
    rows = []
    for i, raw in enumerate(grid):
        cells = [_value(v) for v in raw]
        while cells and cells[-1] is None:
            cells.pop()
        if cells:
            rows.append((i + 1, cells))
    if not rows:
        raise InputError("the sheet is empty; expected a header row and one row per trial.",
                         file=label, hint="give the sheet that holds the results with "
                                          "--sheet NAME, or fill this one")
    out = Sheet(name=name, rows=rows, label=label)
    _check_cells(zf, out, ws, file, name)
    return out


def _refuse_big(extent: tuple[int, int] | None, label: str) -> None:
    """Refuse a used range of more than :data:`MAX_CELLS` cells ((rows, columns))."""
    if extent and extent[0] * extent[1] > MAX_CELLS:
        raise InputError(f"the sheet's used range is {extent[0]:,} rows × {extent[1]:,} "
                         f"columns, more than {MAX_CELLS:,} cells.", file=label,
                         hint="copy the bench results alone to a new sheet and give its "
                              "name to --sheet")


def _used_extent(zf: zipfile.ZipFile, name: str, label: str) -> tuple[int, int] | None:
    """(last row, last column) holding something in sheet ``name`` of an .xlsx, read
    from the sheet's XML in one streaming pass (time and memory linear in the file), or
    None when the XML cannot say (the reader then decides). Cells that hold nothing (a
    format only) do not count. (An .ods: :func:`_ods_extents`.)
    """
    part = _xlsx_sheet_part(zf, name, label)
    raw = None if part is None else _read_part(zf, part, label)
    if raw is None:
        return None
    m = f"{{{_XLSX_MAIN}}}"
    last_row = last_col = row = 0
    try:
        for _, el in ET.iterparse(io.BytesIO(raw), events=("end",)):
            if el.tag == f"{m}c":
                if len(el):  # a value, an inline string or a formula
                    r, c = _cell_ref(el.get("r", ""))
                    last_row = max(last_row, r or row)
                    last_col = max(last_col, c + 1)
                el.clear()
            elif el.tag == f"{m}row":
                row = int(el.get("r") or row + 1)
                el.clear()
    except (ET.ParseError, ValueError):
        return None
    return (last_row, last_col) if last_row and last_col else None


def _ods_extents(zf: zipfile.ZipFile, label: str) -> dict[str, tuple[int, int]]:
    """:func:`_used_extent` of every sheet of an .ods (content.xml), by sheet name, in
    one pass; repeated empty rows and columns (a spreadsheet writes them up to its last
    row) do not count."""
    raw = _read_part(zf, "content.xml", label)
    if raw is None:
        return {}
    t = f"{{{_ODS_TABLE}}}"
    office_type = "{urn:oasis:names:tc:opendocument:xmlns:office:1.0}value-type"
    out: dict[str, tuple[int, int]] = {}
    name = None
    last_row = last_col = row = col = 0
    try:
        for event, el in ET.iterparse(io.BytesIO(raw), events=("start", "end")):
            if el.tag == f"{t}table":
                if event == "start":
                    name, last_row, last_col, row = el.get(f"{t}name"), 0, 0, 0
                else:
                    if last_row and last_col:
                        out[name] = (last_row, last_col)
                    el.clear()
                continue
            if name is None:
                continue
            if el.tag == f"{t}table-row" and event == "start":
                col = 0
            elif el.tag == f"{t}table-row" and event == "end":
                rep = int(el.get(f"{t}number-rows-repeated", "1") or 1)
                if any(c.get(office_type) or len(c) for c in el.iter(f"{t}table-cell")):
                    last_row = max(last_row, row + rep)
                row += rep
                el.clear()
            elif el.tag in (f"{t}table-cell", f"{t}covered-table-cell") and event == "end":
                rep = int(el.get(f"{t}number-columns-repeated", "1") or 1)
                if el.get(office_type) or len(el):
                    last_col = max(last_col, col + rep)
                col += rep
    except (ET.ParseError, ValueError):
        return out
    return out


def _check_cells(zf: zipfile.ZipFile, out: Sheet, ws, file: str, name: str) -> None:
    """Refuse merged cells and formulas without a saved value inside the table."""
    first_row = out.rows[0][0]
    width = max(len(c) for _, c in out.rows)
    merged = ws.merged_cell_ranges
    formulas: list[tuple[int, int]] = []
    if merged is None or "content.xml" in zf.namelist():
        merged, formulas = _ods_marks(zf, name, file)
    else:
        merged = [((a[0] + 1, a[1]), (b[0] + 1, b[1])) for a, b in merged]
        formulas = _xlsx_formulas(zf, name, file)
    for (r0, c0), (r1, c1) in sorted(merged):
        if r1 >= first_row and c0 < width:
            where = f"{column_letter(c0)}{r0}:{column_letter(c1)}{r1}"
            raise InputError(f"cells {where} are merged; each row needs its own value.",
                             file=out.label, line=r0, column=column_letter(c0),
                             hint="unmerge the cells and fill the value into every row")
    values = dict(out.rows)
    for r, c in sorted(formulas):
        cells = values.get(r)
        if r >= first_row and (cells is None or c >= len(cells) or cells[c] is None):
            raise InputError("the cell holds a formula with no saved value.", file=out.label,
                             line=r, column=column_letter(c),
                             hint="open the workbook in a spreadsheet program and save it "
                                  "(that stores the values), or paste the values instead")


def _read_part(zf: zipfile.ZipFile, part: str, label: str) -> bytes | None:
    """The bytes of ``part`` (None when missing); InputError when the zip is damaged."""
    try:
        return zf.read(part)
    except KeyError:
        return None
    except _ZIP_ERRORS as exc:
        raise InputError(f"the workbook is damaged (part {part!r}: "
                         f"{clip(str(exc) or type(exc).__name__, 80, quote=False)}).",
                         file=label, hint="open it in the spreadsheet program and save it "
                                          "again (or export it as CSV)") from None


def _xlsx_sheet_part(zf: zipfile.ZipFile, name: str, label: str) -> str | None:
    """The zip path of sheet ``name``'s XML in an .xlsx, or None."""
    wb_raw = _read_part(zf, "xl/workbook.xml", label)
    rels_raw = _read_part(zf, "xl/_rels/workbook.xml.rels", label)
    if wb_raw is None or rels_raw is None:
        return None
    try:
        wb = ET.fromstring(wb_raw)
        rels = ET.fromstring(rels_raw)
    except ET.ParseError:
        return None
    rid = None
    for s in wb.iter(f"{{{_XLSX_MAIN}}}sheet"):
        if s.get("name") == name:
            rid = s.get(f"{{{_REL}}}id")
    for r in rels.iter(f"{{{_PKG_REL}}}Relationship"):
        if r.get("Id") == rid:
            target = r.get("Target", "")
            return target.lstrip("/") if target.startswith("/") else "xl/" + target
    return None


def _xlsx_formulas(zf: zipfile.ZipFile, name: str, label: str) -> list[tuple[int, int]]:
    """(row, column) of the formula cells of an .xlsx sheet (only when it has any)."""
    part = _xlsx_sheet_part(zf, name, label)
    raw = None if part is None else _read_part(zf, part, label)
    if raw is None:
        return []
    if b"<f" not in raw and b":f" not in raw:
        return []
    out = []
    try:
        for _, el in ET.iterparse(io.BytesIO(raw)):
            if el.tag == f"{{{_XLSX_MAIN}}}c":
                if el.find(f"{{{_XLSX_MAIN}}}f") is not None:
                    out.append(_cell_ref(el.get("r", "")))
                el.clear()
    except ET.ParseError:
        return out
    return out


def _ods_marks(zf: zipfile.ZipFile, name: str, label: str):
    """(merged ranges, formula cells) of an .ods sheet, read from content.xml."""
    raw = _read_part(zf, "content.xml", label)
    if raw is None:
        return [], []
    t = f"{{{_ODS_TABLE}}}"
    merged, formulas = [], []
    row, inside = 0, False
    try:
        for event, el in ET.iterparse(io.BytesIO(raw), events=("start", "end")):
            if el.tag == f"{t}table":
                if event == "start":
                    inside = el.get(f"{t}name") == name
                    row = 0
                elif inside:
                    break
                continue
            if not inside:
                continue
            if el.tag == f"{t}table-row" and event == "start":
                col = 0
                row_here = row + 1
            elif el.tag == f"{t}table-row" and event == "end":
                row += int(el.get(f"{t}number-rows-repeated", "1") or 1)
                el.clear()
            elif el.tag in (f"{t}table-cell", f"{t}covered-table-cell") and event == "end":
                rep = int(el.get(f"{t}number-columns-repeated", "1") or 1)
                rs = int(el.get(f"{t}number-rows-spanned", "1") or 1)
                cs = int(el.get(f"{t}number-columns-spanned", "1") or 1)
                if el.tag == f"{t}table-cell" and (rs > 1 or cs > 1):
                    merged.append(((row_here, col), (row_here + rs - 1, col + cs - 1)))
                if el.get(f"{t}formula") and not (el.get("{urn:oasis:names:tc:opendocument:xmlns:office:1.0}value-type")):
                    formulas.append((row_here, col))
                col += min(rep, 16384)
    except (ET.ParseError, ValueError):
        pass
    return merged, formulas
