"""Files formulators have: workbooks (.xlsx by openpyxl, .ods by odfpy), the Windows code
page, UTF-16, standard input, lab header words, numbered outcome scales, (cal/cm³)½ units,
every problem of a file at once; and the fuzzing of the workbook reader (damaged,
empty, formulas, merged cells: one line naming sheet, row and column, exit 2, nothing
saved lost)."""

from __future__ import annotations

import io
import json
import math
import random
import zipfile

import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

openpyxl = pytest.importorskip("openpyxl")
odf = pytest.importorskip("odf")

from odf.opendocument import OpenDocumentSpreadsheet  # noqa: E402
from odf.table import Table, TableCell, TableRow  # noqa: E402
from odf.text import P  # noqa: E402

from clirun import run_cli  # noqa: E402
from solsphere.errors import InputError  # noqa: E402
from solsphere.io import trials as T  # noqa: E402
from solsphere.io.scales import parse_scale  # noqa: E402
from solsphere.io.workbooks import column_letter  # noqa: E402

ROWS = [("toluene", "dissolves"), ("xylene", "dissolves"), ("acetone", "partly"),
        ("water", "does not"), ("methanol", "does not"), ("n-hexane", "does not")]


def xlsx(path, rows, title="Bench", extra_sheets=()):
    """A workbook as Excel users' programs write it (openpyxl)."""
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = title
    for r in rows:
        ws.append(list(r))
    for name in extra_sheets:
        wb.create_sheet(name)
    wb.save(path)
    return path


def ods(path, rows, name="Bench", spans=None):
    """An OpenDocument spreadsheet as LibreOffice stores it (odfpy); ``spans`` maps
    (row, col) to rows spanned (a merged cell)."""
    doc = OpenDocumentSpreadsheet()
    t = Table(name=name)
    for i, r in enumerate(rows):
        tr = TableRow()
        for j, v in enumerate(r):
            kw = {}
            if spans and (i, j) in spans:
                kw["numberrowsspanned"] = spans[(i, j)]
            if isinstance(v, (int, float)) and not isinstance(v, bool):
                c = TableCell(valuetype="float", value=v, **kw)
                c.addElement(P(text=str(v)))
            elif isinstance(v, str) and v.startswith("="):
                c = TableCell(formula="of:" + v, **kw)  # no saved value
            else:
                c = TableCell(valuetype="string", **kw)
                c.addElement(P(text=str(v)))
            tr.addElement(c)
        t.addElement(tr)
    doc.spreadsheet.addElement(t)
    doc.save(str(path))
    return path


# ------------------------------------------------------------------ workbooks read


def test_xlsx_first_sheet_with_lab_headers(tmp_path, lib):
    p = xlsx(tmp_path / "bench.xlsx", [("Solvent", "Result", "Comments")]
             + [(s, o, "25 °C") for s, o in ROWS])
    t = T.read_trials(p, library=lib)
    assert t.names[:2] == ["toluene", "xylene (mixed isomers)"] or t.names[0] == "toluene"
    assert t.outcomes == ["good", "good", "partial", "bad", "bad", "bad"]
    assert t.source == f"{p}, sheet 'Bench'"
    assert t.trials[0].line == 2 and t.trials[0].note == "25 °C"


def test_xlsx_named_sheet_and_numbers_stay_numbers(tmp_path, lib):
    p = tmp_path / "two.xlsx"
    wb = openpyxl.Workbook()
    wb.active.title = "Notes"
    wb.active.append(["nothing here"])
    ws = wb.create_sheet("Results")
    ws.append(["solvent", "outcome", "δD", "δP", "δH"])
    ws.append(["my thinner", 1, 17.1, 4.25, 6.0])  # own coordinates as numbers
    for s, o in ROWS:
        ws.append([s, o])
    wb.save(p)
    t = T.read_trials(p, library=lib, sheet="Results")
    own = t.trials[0]
    assert (own.name, own.outcome, own.point) == ("my thinner", "good", (17.1, 4.25, 6.0))
    with pytest.raises(InputError) as ei:
        T.read_trials(p, library=lib, sheet="Bench")
    assert "no sheet named 'Bench'" in str(ei.value) and "'Results'" in str(ei.value)


def test_ods_written_by_odfpy(tmp_path, lib):
    p = ods(tmp_path / "bench.ods", [("solvent", "Observation")] + ROWS)
    t = T.read_trials(p, library=lib)
    assert t.outcomes == ["good", "good", "partial", "bad", "bad", "bad"]
    assert "sheet 'Bench'" in t.source


def test_workbook_rows_count_as_the_spreadsheet_shows_them(tmp_path, lib):
    p = tmp_path / "offset.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws["B3"], ws["C3"] = "solvent", "outcome"
    ws["B4"], ws["C4"] = "toluene", "good"
    ws["B5"], ws["C5"] = "tolune", "bad"
    wb.save(p)
    with pytest.raises(InputError) as ei:
        T.read_trials(p, library=lib)
    assert ei.value.line == 5 and ei.value.column == "solvent"


# ------------------------------------------------------------------ text encodings


def test_cp1252_csv_is_read_with_a_note(tmp_path, lib):
    p = tmp_path / "win.csv"
    p.write_bytes("solvent;outcome;note\ntoluene;good;25 °C\nwater;bad;trübe\n"
                  "acetone;good;€ 3\n".encode("cp1252"))
    t = T.read_trials(p, library=lib)
    assert [tr.note for tr in t] == ["25 °C", "trübe", "€ 3"]
    assert any("cp1252" in w for w in t.warnings)


def test_utf16_with_bom(tmp_path, lib):
    p = tmp_path / "u16.txt"
    p.write_bytes("solvent\toutcome\tnote\ntoluene\tgood\t25 °C\nwater\tbad\t\n"
                  .encode("utf-16"))
    assert p.read_bytes()[:2] in (b"\xff\xfe", b"\xfe\xff")
    t = T.read_trials(p, library=lib)
    assert t.outcomes == ["good", "bad"] and t.trials[0].note == "25 °C"
    assert not any("cp1252" in w for w in t.warnings)


def test_standard_input(monkeypatch, lib, tmp_path):
    data = "solvent,outcome\n" + "".join(f"{s},{o}\n" for s, o in ROWS)
    monkeypatch.setattr("sys.stdin", io.TextIOWrapper(io.BytesIO(data.encode("utf-8"))))
    t = T.read_trials("-", library=lib)
    assert t.source == "<stdin>" and len(t) == 6
    # a workbook piped in is recognised by its bytes
    p = xlsx(tmp_path / "b.xlsx", [("solvent", "outcome")] + ROWS)
    monkeypatch.setattr("sys.stdin", io.TextIOWrapper(io.BytesIO(p.read_bytes())))
    rc, out, err = run_cli(["fit", "-", "--json", "--no-influence"])
    assert rc == 0, err
    assert json.loads(out)["n_trials"] == 6


# ------------------------------------------------------------------ headers and scales


@pytest.mark.parametrize("outcome_header", ["result", "Results", "OBSERVATION", "Solubility",
                                            "dissolved", "outcome"])
@pytest.mark.parametrize("dd_header", ["dD", "δD", "delta D", "d_D", "Delta_D (MPa½)"])
def test_header_synonyms(outcome_header, dd_header, lib):
    t = T.read_text(f"solvent,{outcome_header},{dd_header},dP,dH\nmine,yes,17,4,6\n"
                    "water,no,,,\n", library=lib)
    assert t.outcomes == ["good", "bad"] and t.trials[0].point == (17.0, 4.0, 6.0)


def test_check_marks(lib):
    t = T.read_text("solvent,dissolved\ntoluene,✓\nwater,✗\nacetone,✔\nmethanol,✘\n",
                    library=lib)
    assert t.outcomes == ["good", "bad", "good", "bad"]


def test_hansen_scale_default_cut_and_note(lib):
    text = "solvent,score\n" + "".join(f"{s},{k}\n" for k, s in enumerate(
        ["toluene", "xylene", "acetone", "ethyl acetate", "methanol", "water"], 1))
    t = T.read_text(text, library=lib)
    # documented default cut: 1–2 dissolves, 3–4 partly, 5–6 does not
    assert t.outcomes == ["good", "good", "partial", "partial", "bad", "bad"]
    assert any("1–6 scale" in w for w in t.warnings)
    strict = T.read_text(text, library=lib, scale="hansen:1/3")
    assert strict.outcomes == ["good", "partial", "partial", "bad", "bad", "bad"]


def test_scores_one_to_three_are_ambiguous_until_the_user_says(lib):
    text = "solvent,result\ntoluene,1\nacetone,2\nwater,3\n"
    with pytest.raises(InputError) as ei:
        T.read_text(text, source="s.csv", library=lib)
    msg = str(ei.value)
    assert "Hansen's 1–6 scale" in msg and "1–3 lab scale" in msg and "--scale" in msg
    assert ei.value.line == 3 and ei.value.column == "outcome"
    assert T.read_text(text, library=lib, scale="lab3").outcomes == ["good", "partial", "bad"]
    assert T.read_text(text, library=lib, scale="hansen").outcomes == ["good", "good",
                                                                       "partial"]
    rc, out, err = run_cli(["fit", "-", "--scale", "nonsense"])
    assert rc == 2 and "--scale" in err


def test_bad_scale_setting():
    with pytest.raises(InputError) as ei:
        parse_scale("hansen:5/2")
    assert ei.value.setting == "scale"


def test_every_problem_reported_with_line_and_column(tmp_path, lib):
    rows = ["solvent,outcome,dD,dP,dH"] + [f"madeup{i},good,,," for i in range(25)]
    rows += ["toluene,maybe,,,", "water,bad,-1,2,3"]
    p = tmp_path / "many.csv"
    p.write_text("\n".join(rows) + "\n")
    with pytest.raises(InputError) as ei:
        T.read_trials(p, library=lib)
    probs = ei.value.problems
    assert len(probs) == T.MAX_PROBLEMS == 20 and ei.value.n_problems == 27
    assert [e.line for e in probs] == list(range(2, 22))
    assert all(e.column == "solvent" and e.file == str(p) for e in probs)
    rc, out, err = run_cli(["fit", p])
    lines = err.strip().splitlines()
    assert rc == 2 and len(lines) == 20 and "26 more problems" in lines[0]
    assert all(f"line {k}, column solvent" in ln for k, ln in zip(range(2, 22), lines))


# ------------------------------------------------------------------ units


def test_cal_units_converted_against_a_hand_worked_value(lib):
    # the factor: 1 cal = 4.184 J (NIST SP 811, 2008) and 1 J/cm³ = 1 MPa, so
    # (cal/cm³)½ = √4.184 MPa½ = 2.04548... MPa½; Hansen's handbook (2007) uses 2.0455
    # (from memory)
    assert abs(T.CAL_TO_MPA - math.sqrt(4.184)) < 5e-5
    for unit in ("(cal/cm3)^0.5", "(cal/cm³)½", "cal^0.5 cm^-1.5", "(cal/cc)^1/2"):
        t = T.read_text(f"solvent,outcome,dD {unit},dP {unit},dH {unit}\n"
                        f"mine,good,8.0,2.0,5.0\nwater,bad,,,\n", library=lib)
        # by hand: 8.0 × 2.0455 = 16.364; 2.0 × 2.0455 = 4.091; 5.0 × 2.0455 = 10.2275
        assert t.trials[0].point == pytest.approx((16.364, 4.091, 10.2275), abs=1e-9), unit
        assert any("converted" in w for w in t.warnings)


def test_implausible_mpa_values_refused_with_a_units_message(lib):
    with pytest.raises(InputError) as ei:
        T.read_text("solvent,outcome,dD,dP,dH\nmine,good,8.9,2.0,5.0\nyours,bad,7.5,1,1\n",
                    source="old.csv", library=lib)
    e = ei.value
    assert e.line == 2 and e.column == "dD" and "(cal/cm³)½" in str(e) and "2.0455" in str(e)
    # one own solvent in the library's range is fine
    T.read_text("solvent,outcome,dD,dP,dH\nmine,good,12.5,2.0,5.0\nyours,bad,11,1,1\n",
                library=lib)


# ------------------------------------------------------------------ many materials


def test_material_column_splits_and_duplicates_are_per_material(lib):
    text = ("material,solvent,outcome\nA,toluene,good\nB,toluene,bad\nA,water,bad\n"
            "B,water,good\n")
    ms = T.read_materials([dict(zip(("material", "solvent", "outcome"), ln.split(",")))
                           for ln in text.splitlines()[1:]], library=lib)
    assert [(m.material, m.outcomes) for m in ms] == [("A", ["good", "bad"]),
                                                      ("B", ["bad", "good"])]
    with pytest.raises(InputError) as ei:
        T.read_text(text, library=lib)
    assert "2 materials" in str(ei.value) and ei.value.setting == "material"
    assert T.read_text(text, library=lib, material="b").material == "B"
    with pytest.raises(InputError) as ei:
        T.read_text("material,solvent,outcome\nA,toluene,good\nA,toluene,bad\n", library=lib)
    assert ei.value.line == 3  # a conflict within one material is still refused


# ------------------------------------------------------------------ fuzzing the reader


def _project(tmp_path, demo_path):
    proj = tmp_path / "kept.json"
    rc, _, err = run_cli(["fit", demo_path, "--save", proj, "--no-influence"])
    assert rc == 0, err
    return proj, proj.read_bytes()


def _refused(argv, *words):
    rc, out, err = run_cli(argv)
    assert rc == 2, (rc, out, err)
    assert "Traceback" not in err
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    for w in words:
        assert w in lines[0], lines[0]
    return lines[0]


def test_damaged_workbook(tmp_path, demo_path):
    good = xlsx(tmp_path / "g.xlsx", [("solvent", "outcome")] + ROWS).read_bytes()
    bad = tmp_path / "bad.xlsx"
    bad.write_bytes(good[: len(good) // 2])
    proj, before = _project(tmp_path, demo_path)
    _refused(["fit", bad, "--save", proj], str(bad), "damaged")
    assert proj.read_bytes() == before


def test_empty_sheet_names_the_sheet(tmp_path):
    p = xlsx(tmp_path / "e.xlsx", [], title="Empty")
    _refused(["fit", p], "sheet 'Empty'", "empty")
    p2 = ods(tmp_path / "e.ods", [], name="Leer")
    _refused(["fit", p2], "sheet 'Leer'", "empty")


def test_formula_without_a_saved_value(tmp_path, demo_path):
    p = xlsx(tmp_path / "f.xlsx", [("solvent", "outcome")] + ROWS[:3]
             + [("water", '=IF(1>0,"bad","good")')], title="Lab")
    proj, before = _project(tmp_path, demo_path)
    msg = _refused(["fit", p, "--save", proj], "sheet 'Lab'", "line 5", "column B", "formula")
    assert "paste the values" in msg
    assert proj.read_bytes() == before
    p2 = ods(tmp_path / "f.ods", [("solvent", "outcome")] + ROWS[:3] + [("water", "=1+1")])
    _refused(["fit", p2], "sheet 'Bench'", "line 5", "column B", "formula")


def test_merged_cells(tmp_path, demo_path):
    p = tmp_path / "m.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Trials"
    for r in [("solvent", "outcome")] + ROWS:
        ws.append(list(r))
    ws.merge_cells("A3:A4")
    wb.save(p)
    proj, before = _project(tmp_path, demo_path)
    _refused(["fit", p, "--save", proj], "sheet 'Trials'", "line 3", "column A", "merged")
    assert proj.read_bytes() == before
    p2 = ods(tmp_path / "m.ods", [("solvent", "outcome")] + ROWS, spans={(2, 0): 2})
    _refused(["fit", p2], "sheet 'Bench'", "line 3", "column A", "merged")


def test_password_and_not_a_workbook(tmp_path):
    p = tmp_path / "fake.xlsx"
    p.write_text("solvent,outcome\ntoluene,good\n")
    _refused(["fit", p], str(p), "not a valid zip")
    z = tmp_path / "enc.xlsx"
    with zipfile.ZipFile(z, "w") as zf:
        zf.writestr("EncryptionInfo", b"x")
        zf.writestr("EncryptedPackage", b"y")
    _refused(["fit", z], "password")


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                  HealthCheck.function_scoped_fixture])
@given(st.data(), st.sampled_from(["xlsx", "ods"]))
def test_random_damage_never_crashes(tmp_path, data, kind):
    """Bytes flipped or cut anywhere in a real workbook: read, or one clear refusal."""
    base = tmp_path / f"base.{kind}"
    if not base.exists():
        (xlsx if kind == "xlsx" else ods)(base, [("solvent", "outcome")] + ROWS)
    raw = bytearray(base.read_bytes())
    n = data.draw(st.integers(1, 8))
    for _ in range(n):
        i = data.draw(st.integers(0, len(raw) - 1))
        raw[i] = data.draw(st.integers(0, 255))
    if data.draw(st.booleans()):
        raw = raw[: data.draw(st.integers(0, len(raw)))]
    p = tmp_path / f"damaged.{kind}"
    p.write_bytes(bytes(raw))
    rc, out, err = run_cli(["fit", p, "--no-influence"])
    assert rc in (0, 2), err
    assert "internal error" not in err and "Traceback" not in err


def test_column_letters():
    assert [column_letter(i) for i in (0, 1, 25, 26, 51, 52)] == ["A", "B", "Z", "AA", "AZ",
                                                                  "BA"]


def test_a_big_sheet_is_refused_before_it_is_read(tmp_path):
    p = tmp_path / "far.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws["A1"], ws["B1"] = "solvent", "outcome"
    ws.cell(row=1_048_000, column=200, value="x")  # a stray cell far away
    wb.save(p)
    _refused(["fit", p], "cells")


def _ods_with_tail(path, far_value: bool):
    """A results sheet as LibreOffice stores it: its rows, then the empty rows and
    columns it writes up to its last row and column, repeated, and (``far_value``) one
    stray value far away."""
    doc = OpenDocumentSpreadsheet()
    t = Table(name="Bench")
    for r in [("solvent", "outcome"), ("acetone", "good"), ("toluene", "bad"),
              ("ethanol", "good"), ("n-hexane", "bad")]:
        tr = TableRow()
        for v in r:
            c = TableCell(valuetype="string")
            c.addElement(P(text=v))
            tr.addElement(c)
        tr.addElement(TableCell(numbercolumnsrepeated=1020))  # empty to the last column
        t.addElement(tr)
    tail = TableRow(numberrowsrepeated=1_048_000)
    tail.addElement(TableCell(numbercolumnsrepeated=1024))
    t.addElement(tail)
    if far_value:
        far = TableRow()
        far.addElement(TableCell(numbercolumnsrepeated=199))
        c = TableCell(valuetype="string")
        c.addElement(P(text="x"))
        far.addElement(c)
        t.addElement(far)
    doc.spreadsheet.addElement(t)
    doc.save(str(path))
    return path


def test_an_ods_stray_value_far_away_is_refused_before_it_is_read(tmp_path):
    p = _ods_with_tail(tmp_path / "far.ods", far_value=True)
    _refused(["fit", p], "used range is 1,048,006 rows × 200 columns", "--sheet")


def test_an_ods_with_the_usual_empty_tail_reads(tmp_path, lib):
    # the repeated empty rows and columns a spreadsheet writes are not part of the range
    p = _ods_with_tail(tmp_path / "tail.ods", far_value=False)
    t = T.read_trials(p, library=lib)
    assert t.names[:3] == ["acetone", "toluene", "ethanol"] and len(t) == 4


def test_shuffled_lab_sheet_reads_like_its_csv(tmp_path, lib):
    rnd = random.Random(3)
    rows = ROWS[:]
    rnd.shuffle(rows)
    p = xlsx(tmp_path / "s.xlsx", [("Outcome", "Solvent")] + [(o, s) for s, o in rows])
    csv_text = "solvent,outcome\n" + "".join(f"{s},{o}\n" for s, o in rows)
    a, b = T.read_trials(p, library=lib), T.read_text(csv_text, library=lib)
    assert a.names == b.names and a.outcomes == b.outcomes
