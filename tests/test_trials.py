"""Tests for solsphere.trials: reading and validating bench results.

The solvent coordinates below are test inputs chosen by us (close to handbook values,
from memory; the exact numbers do not matter for these tests). Expected blend points
are worked out by hand in the comments.
"""

from __future__ import annotations

import difflib
import re

import numpy as np
import pytest

from solsphere.io import trials as T
from solsphere.errors import InputError, UnknownSolventError
from solsphere.library.table import Solvent

RECORDS = [
    Solvent("toluene", 18.0, 1.4, 2.0, cas="108-88-3", synonyms=("methylbenzene",)),
    Solvent("ethanol", 15.8, 8.8, 19.4, cas="64-17-5", synonyms=("ethyl alcohol",)),
    Solvent("acetone", 15.5, 10.4, 7.0, cas="67-64-1"),
    Solvent("water", 15.5, 16.0, 42.3, cas="7732-18-5"),
    Solvent("hexane", 14.9, 0.0, 0.0, cas="110-54-3"),
    Solvent("(+)-limonene", 17.2, 1.8, 4.3, cas="5989-27-5"),
    Solvent("PEG 400", 17.0, 11.0, 9.0, cas="25322-68-3"),
]


def _norm(text: str) -> str:
    return re.sub(r"[\s\-_,.()']", "", str(text).casefold())


class FakeLibrary:
    """Stand-in with the Library contract's lookup/find (used until from_records lands)."""

    def __init__(self, records):
        self.records = tuple(records)
        self._index = {}
        for s in self.records:
            for key in (s.name, s.cas, *s.synonyms):
                if key:
                    self._index[_norm(key)] = s

    def find(self, text):
        return self._index.get(_norm(text))

    def suggest(self, text, n=3):
        names = {_norm(s.name): s.name for s in self.records}
        return [names[k] for k in difflib.get_close_matches(_norm(text), list(names), n=n)]

    def lookup(self, text):
        s = self.find(text)
        if s is None:
            raise UnknownSolventError(text, self.suggest(text))
        return s


def make_library(records=RECORDS):
    try:
        from solsphere.library.table import Library
        return Library.from_records(list(records))
    except (ImportError, AttributeError, NotImplementedError):
        return FakeLibrary(records)


LIB = make_library()
HEADER = "solvent,outcome,dD,dP,dH,note\n"


def write(tmp_path, text, name="results.csv", encoding="utf-8"):
    p = tmp_path / name
    p.write_bytes(text.encode(encoding))
    return str(p)


def read(tmp_path, text, **kw):
    return T.read(write(tmp_path, text, **kw), library=LIB)


# ------------------------------------------------------------------------ happy paths


def test_basic_file_resolves_names_cas_synonyms(tmp_path):
    tr = read(tmp_path, HEADER + "toluene,good,,,,clear\n"
                                 "64-17-5,bad,,,,\n"
                                 " ACETONE ,partly,,,,\n")
    assert tr.names == ["toluene", "ethanol", "acetone"]
    assert tr.outcomes == ["good", "bad", "partial"]
    assert tr.points.shape == (3, 3)
    np.testing.assert_allclose(tr.points[1], [15.8, 8.8, 19.4])
    assert [t.source for t in tr] == ["library"] * 3
    assert tr[0].cas == "108-88-3" and tr[0].solvent is not None
    assert tr[0].note == "clear" and tr[0].line == 2 and tr[1].line == 3
    assert tr.source.endswith("results.csv")
    assert tr.warnings == []
    assert "3 trials" in str(tr)


def test_synonym_lookup(tmp_path):
    tr = read(tmp_path, "solvent,outcome\nmethylbenzene,good\nethyl alcohol,bad\n")
    assert tr.names == ["toluene", "ethanol"]


@pytest.mark.parametrize("word,expected", [
    ("good", "good"), ("1", "good"), ("YES", "good"), ("y", "good"), ("True", "good"),
    ("soluble", "good"), ("Dissolves", "good"), ("dissolved", "good"), ("+", "good"),
    ("bad", "bad"), ("0", "bad"), ("no", "bad"), ("N", "bad"), ("false", "bad"),
    ("insoluble", "bad"), ("does not", "bad"), ("Does Not  Dissolve", "bad"), ("-", "bad"),
    ("partial", "partial"), ("partly", "partial"), ("swells", "partial"),
    ("swollen", "partial"), ("0.5", "partial"),
    ("?", None), ("maybe", None), ("2", None),
])
def test_outcome_vocabulary(word, expected):
    assert T.parse_outcome(word) == expected


def test_semicolon_with_decimal_comma(tmp_path):
    text = ("solvent;outcome;dD;dP;dH;note\n"
            "my thinner;good;17,5;4,25;6;own, with a comma in the note\n"
            "toluene 70,5 + ethanol 29,5;bad;;;;\n")
    tr = read(tmp_path, text)
    np.testing.assert_allclose(tr[0].point, [17.5, 4.25, 6.0])
    assert tr[0].source == "own" and tr[0].note == "own, with a comma in the note"
    # 0.705*18.0 + 0.295*15.8 = 12.69 + 4.661 = 17.351
    assert tr[1].dD == pytest.approx(17.351)
    assert tr[1].components == (("toluene", pytest.approx(0.705)),
                                ("ethanol", pytest.approx(0.295)))


def test_tsv_with_quotes(tmp_path):
    text = 'solvent\toutcome\tnote\n"toluene"\tgood\t"a\tquoted tab"\nethanol\tbad\t\n'
    tr = read(tmp_path, text)
    assert tr.names == ["toluene", "ethanol"]
    assert tr[0].note == "a\tquoted tab"


@pytest.mark.parametrize("encoding", ["utf-8-sig", "utf-16", "utf-16-le", "utf-16-be"])
def test_encodings(tmp_path, encoding):
    text = "solvent,outcome,note\ntoluene,good,25 °C\nethanol,bad,δ note\n"
    data = text.encode(encoding)
    if encoding in ("utf-16-le", "utf-16-be"):  # with an explicit BOM
        data = "\ufeff".encode(encoding) + data
    p = tmp_path / "r.csv"
    p.write_bytes(data)
    tr = T.read(str(p), library=LIB)
    assert tr.names == ["toluene", "ethanol"]
    assert tr[0].note == "25 °C" and tr[1].note == "δ note"


@pytest.mark.parametrize("newline", ["\r\n", "\r", "\n"])
def test_line_endings_keep_line_numbers(tmp_path, newline):
    text = newline.join(["solvent,outcome", "toluene,good", "", "ethanol,bad", ""])
    tr = read(tmp_path, text)
    assert [t.line for t in tr] == [2, 4]
    with pytest.raises(InputError) as ei:
        read(tmp_path, newline.join(["solvent,outcome", "toluene,good", "ethanol,meh"]))
    assert ei.value.line == 3


def test_spreadsheet_sep_line(tmp_path):
    tr = read(tmp_path, "sep=;\nsolvent;outcome;dD;dP;dH\nmy thinner;good;17,5;4;6\n"
                        "ethanol;bad;;;\n")
    assert tr[0].point == (17.5, 4.0, 6.0) and tr[1].line == 4


def test_header_variants_and_units(tmp_path):
    text = ("\ufeff Solvent ,OUTCOME,δD (MPa½),δP/MPa½,dH [MPa^0.5],Notes\n"
            "my resin,good,17.1,4.2,6.0,x\n")
    tr = read(tmp_path, text)
    assert tr[0].point == (17.1, 4.2, 6.0) and tr[0].note == "x"
    assert tr.warnings == []


def test_unknown_column_is_a_warning(tmp_path):
    tr = read(tmp_path, "solvent,outcome,temperature,dDD\ntoluene,good,25,3\n")
    assert len(tr) == 1
    assert any("'temperature' ignored" in w for w in tr.warnings)
    assert any("'dDD' ignored (did you mean 'dD'?)" in w for w in tr.warnings)
    assert all("line 1" in w for w in tr.warnings)


def test_comments_blank_lines_and_empty_rows(tmp_path):
    text = "# invented test data\n\nsolvent,outcome\n# a comment\ntoluene,good\n,,\n\nethanol,bad\n"
    tr = read(tmp_path, text)
    assert [(t.name, t.line) for t in tr] == [("toluene", 5), ("ethanol", 8)]


def test_blend_against_hand_calculation(tmp_path):
    tr = read(tmp_path, HEADER + "toluene 70 + ethanol 30,good,,,,\n"
                                 "acetone 1 + water 1 + hexane 2,partial,,,,\n")
    # toluene 70 + ethanol 30: fractions 0.7 / 0.3
    # dD = 0.7*18.0 + 0.3*15.8 = 12.6 + 4.74 = 17.34
    # dP = 0.7*1.4  + 0.3*8.8  = 0.98 + 2.64 = 3.62
    # dH = 0.7*2.0  + 0.3*19.4 = 1.4 + 5.82  = 7.22
    b = tr[0]
    assert (b.dD, b.dP, b.dH) == pytest.approx((17.34, 3.62, 7.22))
    assert b.source == "blend" and b.name == "toluene 70 + ethanol 30"
    assert b.components == (("toluene", pytest.approx(0.7)), ("ethanol", pytest.approx(0.3)))
    assert b.solvent is None and b.cas is None
    # the same blend written with leading parts and % signs:
    tr2 = read(tmp_path, HEADER + "70% toluene + 30 % ethanol,bad,,,,\n")
    assert tr2[0].point == pytest.approx((17.34, 3.62, 7.22))
    # acetone 1 + water 1 + hexane 2: fractions 0.25 / 0.25 / 0.5
    # dD = 0.25*15.5 + 0.25*15.5 + 0.5*14.9 = 3.875 + 3.875 + 7.45 = 15.2
    # dP = 0.25*10.4 + 0.25*16.0 + 0           = 2.6 + 4.0         = 6.6
    # dH = 0.25*7.0  + 0.25*42.3 + 0           = 1.75 + 10.575     = 12.325
    assert tr[1].point == pytest.approx((15.2, 6.6, 12.325))


def test_blend_is_not_split_inside_brackets_and_names_with_numbers(tmp_path):
    tr = read(tmp_path, HEADER + "(+)-limonene,good,,,,\n"
                                 "PEG 400 60 + water 40,bad,,,,\n")
    assert tr[0].name == "(+)-limonene" and tr[0].source == "library"
    # PEG 400 0.6 + water 0.4: dD = 0.6*17.0 + 0.4*15.5 = 10.2 + 6.2 = 16.4
    assert tr[1].components[0] == ("PEG 400", pytest.approx(0.6))
    assert tr[1].dD == pytest.approx(16.4)


def test_blend_percent_not_summing_to_100_warns(tmp_path):
    tr = read(tmp_path, HEADER + "toluene 70% + ethanol 20%,good,,,,\n")
    assert tr[0].components[0][1] == pytest.approx(70 / 90)
    assert any("sum to 90" in w and "line 2" in w for w in tr.warnings)


def test_own_coordinates_and_override(tmp_path):
    tr = read(tmp_path, HEADER + "my secret thinner,good,17.1,4.2,6.0,\n"
                                 "toluene,bad,18.5,2.0,2.5,\n"
                                 "toluene 70 + ethanol 30,good,17,3,7,\n")
    own, over, bover = tr
    assert own.source == "own" and own.name == "my secret thinner" and own.solvent is None
    assert own.point == (17.1, 4.2, 6.0)
    assert over.source == "library+own override" and over.point == (18.5, 2.0, 2.5)
    assert over.name == "toluene" and over.cas == "108-88-3"
    assert bover.source == "blend+own override" and bover.point == (17.0, 3.0, 7.0)


def test_unparseable_blend_with_coordinates_is_own_with_warning(tmp_path):
    tr = read(tmp_path, HEADER + "toluene + mystery 30,good,17,3,7,\n")
    assert tr[0].source == "own" and tr[0].name == "toluene + mystery 30"
    assert any("own solvent" in w for w in tr.warnings)


def test_duplicates_same_outcome_kept_once(tmp_path):
    tr = read(tmp_path, HEADER + "toluene,good,,,,\nethanol,bad,,,,\n108-88-3,yes,,,,\n"
                                 "ethanol 30 + toluene 70,good,,,,\n"
                                 "toluene 70 + ethanol 30,good,,,,\n")
    assert tr.names == ["toluene", "ethanol", "ethanol 30 + toluene 70"]
    assert any("line 4" in w and "repeats line 2" in w for w in tr.warnings)
    assert any("line 6" in w and "repeats line 5" in w for w in tr.warnings)


def test_binary_partial_modes(tmp_path):
    tr = read(tmp_path, HEADER + "toluene,good,,,,\nethanol,bad,,,,\nacetone,partial,,,,\n")
    pts, good, names = tr.binary()
    assert T.DEFAULT_PARTIAL == "good"
    assert good.tolist() == [True, False, True] and pts.shape == (3, 3)
    assert tr.binary("bad")[1].tolist() == [True, False, False]
    pts, good, names = tr.binary("skip")
    assert names == ["toluene", "ethanol"] and pts.shape == (2, 3)
    with pytest.raises(ValueError, match="skip"):
        tr.binary("maybe")


def test_rows_round_trip(tmp_path):
    tr = read(tmp_path, HEADER + "toluene,good,,,,n1\nmy thinner,bad,17.1,4.2,6,\n"
                                 "toluene 70 + ethanol 30,partial,,,,\n"
                                 "acetone,good,15,10,7,\n")
    rows = tr.to_rows()
    assert rows[0] == {"solvent": "toluene", "outcome": "good", "dD": None, "dP": None,
                       "dH": None, "note": "n1"}
    assert rows[1]["dD"] == 17.1 and rows[3]["dP"] == 10.0
    back = T.from_rows(rows, library=LIB)
    assert back.names == tr.names and back.outcomes == tr.outcomes
    assert [t.source for t in back] == [t.source for t in tr]
    np.testing.assert_array_equal(back.points, tr.points)
    again = T.read_text(tr.to_csv(), "copy.csv", library=LIB)
    assert again.names == tr.names
    np.testing.assert_array_equal(again.points, tr.points)


def test_read_text_defaults():
    tr = T.read_text("solvent,outcome\ntoluene,good\n", library=LIB)
    assert tr.source == "<text>" and tr[0].line == 2


# ------------------------------------------------------------------------ bad input

D = HEADER  # data rows start at line 2
BAD_CASES = [
    # id, file text, line, column, words the message must contain
    ("unknown outcome", D + "toluene,maybe,,,,\n", 2, "outcome", "'maybe' is not an outcome"),
    ("question mark", D + "toluene,?,,,,\n", 2, "outcome", "partial: partial"),
    ("empty outcome", D + "toluene,,,,,\n", 2, "outcome", "outcome is empty"),
    ("empty solvent", D + ",good,,,,\n", 2, "solvent", "solvent cell is empty"),
    ("unknown solvent", D + "tolune,good,,,,\n", 2, "solvent", "Did you mean 'toluene'"),
    ("non-numeric", D + "toluene,good,abc,1,2,\n", 2, "dD", "not a number"),
    ("negative", D + "toluene,good,-1,1,2,\n", 2, "dD", "cannot be negative"),
    ("nan", D + "toluene,good,17,nan,2,\n", 2, "dP", "not a finite number"),
    ("inf", D + "toluene,good,17,1,inf,\n", 2, "dH", "not a finite number"),
    ("too large", D + "toluene,good,17,1,61,\n", 2, "dH", "above 60"),
    ("partial coords library", D + "toluene,good,17,1,,\n", 2, "dH", "all three"),
    ("partial coords own", D + "mystery,good,17,,,\n", 2, "dP", "missing dP, dH"),
    ("component without part", D + "toluene 70 + ethanol,good,,,,\n", 2, "solvent",
     "'ethanol' has no volume part"),
    ("zero parts", D + "toluene 0 + ethanol 0,good,,,,\n", 2, "solvent", "must be positive"),
    ("negative part", D + "toluene -5 + ethanol 30,good,,,,\n", 2, "solvent",
     "must be positive"),
    ("unknown component", D + "toluene 70 + etanol 30,good,,,,\n", 2, "solvent",
     "Did you mean 'ethanol'"),
    ("lone plus", D + "+,good,,,,\n", 2, "solvent", "lone '+'"),
    ("dangling plus", D + "toluene 70 +,good,,,,\n", 2, "solvent", "nothing on one side"),
    ("component twice", D + "toluene 50 + toluene 50,good,,,,\n", 2, "solvent",
     "appears twice"),
    ("decimal comma in comma file", D + 'toluene,good,"17,5",1,2,\n', 2, "dD",
     "decimal comma"),
    ("blend decimal comma in comma file", D + '"toluene 70,5 + ethanol 29,5",good,,,,\n', 2,
     "solvent", "decimal comma"),
    ("too many cells", "solvent,outcome,dD,dP,dH\ntoluene,good,17,5,1,2\n", 2, None,
     "6 cells but the header names 5 columns"),
    ("conflicting duplicate", D + "toluene,good,,,,\nethanol,bad,,,,\n# c\nToluene,bad,,,,\n",
     5, "outcome", "line 2 says dissolves, line 5 says does not"),
    ("conflicting blend duplicate",
     D + "toluene 70 + ethanol 30,good,,,,\n30 ethanol + 70 toluene,bad,,,,\n", 3, "outcome",
     "re-test or keep one"),
    ("line numbers count blanks and comments", "\n# invented\n" + D + "\ntoluene,maybe,,,,\n",
     5, "outcome", "maybe"),
    ("field too long", D + "toluene,good,,,," + "x" * 10_001 + "\n", 2, "note", "limit is 10000"),
    ("misspelt solvent header", "solvnet,outcome\ntoluene,good\n", 1, "solvnet",
     "did you mean 'solvent'"),
    ("misspelt outcome header", "solvent,outcom\ntoluene,good\n", 1, "outcom",
     "did you mean 'outcome'"),
    ("missing outcome column", "solvent,note\ntoluene,x\n", 1, None, "no 'outcome' column"),
    ("no header", "toluene,good\nethanol,bad\n", 1, None, "looks like data"),
    ("single column header", "solvent outcome\ntoluene good\n", 1, None, "single column"),
    ("cal units mixed with MPa½", "solvent,outcome,dD (cal/cm3)^0.5,dP,dH\nx,good,9,1,2\n",
     1, "dD (cal/cm3)^0.5", "2.0455"),
    ("duplicate column", "solvent,outcome,Outcome\ntoluene,good,good\n", 1, "Outcome",
     "both read as 'outcome'"),
    ("header only", "solvent,outcome,note\n", 2, None, "no trial rows"),
    ("data rows all empty", "solvent,outcome\n,\n , \n", 2, None, "no trial rows"),
]


@pytest.mark.parametrize("case", BAD_CASES, ids=[c[0] for c in BAD_CASES])
def test_bad_input(tmp_path, case):
    _, text, line, column, words = case
    path = write(tmp_path, text)
    with pytest.raises(InputError) as ei:
        T.read(path, library=LIB)
    e = ei.value
    s = str(e)
    assert "\n" not in s, s
    assert s.startswith(path + ", "), s
    assert e.file == path
    assert e.line == line and f"line {line}" in s, s
    assert e.column == column, s
    if column is not None:
        assert f"column {column}" in s, s
    assert words in s, s


@pytest.mark.parametrize("text,words", [
    ("", "file is empty"),
    ("\n\n  \n", "file is empty"),
    ("# only a comment\n", "only comments"),
])
def test_empty_files(tmp_path, text, words):
    path = write(tmp_path, text)
    with pytest.raises(InputError) as ei:
        T.read(path, library=LIB)
    s = str(ei.value)
    assert s.startswith(path) and words in s and "\n" not in s and "Fix:" in s


def test_missing_path_and_directory(tmp_path):
    for path, words in ((str(tmp_path / "nope.csv"), "not found"),
                        (str(tmp_path), "folder")):
        with pytest.raises(InputError) as ei:
            T.read(path, library=LIB)
        s = str(ei.value)
        assert s.startswith(path) and words in s and "\n" not in s


def test_file_over_size_limit(tmp_path):
    p = tmp_path / "big.csv"
    p.write_bytes(b"solvent,outcome\n" + b"toluene,good\n" * 400_000)  # 5.2 MB
    with pytest.raises(InputError, match="limit is 5 MB"):
        T.read(str(p), library=LIB)


def test_first_error_counts_the_rest(tmp_path):
    path = write(tmp_path, D + "toluene,meh,,,,\ntolune,good,,,,\nethanol,good,x,1,1,\n")
    with pytest.raises(InputError) as ei:
        T.read(path, library=LIB)
    assert ei.value.line == 2 and "(2 more problems after this one.)" in str(ei.value)


def test_unknown_solvent_error_carries_suggestions(tmp_path):
    with pytest.raises(UnknownSolventError) as ei:
        read(tmp_path, "solvent,outcome\naceton,good\n")
    assert ei.value.suggestions[0] == "acetone"
    assert "dD, dP, dH" in str(ei.value)  # the hint: give own coordinates


def test_excel_workbook_renamed_csv(tmp_path):
    p = tmp_path / "results.csv"
    p.write_bytes(b"PK\x03\x04" + b"\x00" * 50)
    with pytest.raises(InputError, match="workbook"):
        T.read(str(p), library=LIB)


# ------------------------------------------------------------------------ app table


def test_validate_rows_keeps_good_rows_and_marks_bad_cells():
    rows = [
        {"solvent": "toluene", "outcome": "good"},
        {"solvent": "xylenol-ish", "outcome": "good", "dD": None},
        {"solvent": "ethanol", "outcome": "maybe", "note": None},
        {},                                                     # empty row: skipped
        {"solvent": "acetone", "outcome": 1, "dD": 15.5, "dP": "10,4", "dH": 7, "id": 9},
        {"solvent": "hexane", "outcome": "bad", "dD": "14.9", "dP": "x", "dH": ""},
        {"solvent": "Toluene", "outcome": "bad"},
    ]
    tr, errors = T.validate_rows(rows, library=LIB)
    assert tr.names == ["toluene", "acetone"]
    assert tr[1].source == "library+own override" and tr[1].point == (15.5, 10.4, 7.0)
    assert tr[1].line == 5
    where = [(e.line, e.column) for e in errors]
    assert where == [(2, "solvent"), (3, "outcome"), (6, "dP"), (7, "outcome")]
    assert all(e.file == "<table>" and "\n" not in str(e) for e in errors)
    assert "row 1 says dissolves, row 7 says does not" in str(errors[-1])


def test_from_rows_raises_first_and_rejects_empty_table():
    with pytest.raises(InputError) as ei:
        T.from_rows([{"solvent": "toluene", "outcome": "nah"}], library=LIB)
    assert ei.value.line == 1 and ei.value.column == "outcome"
    assert str(ei.value).startswith("<table>, line 1, column outcome:")
    with pytest.raises(InputError, match="no trials"):
        T.from_rows([{}, {"solvent": "", "outcome": None}], library=LIB)
    tr = T.from_rows([{"solvent": "toluene", "outcome": True},
                      {"solvent": "water", "outcome": 0}], library=LIB, source="tab")
    assert tr.outcomes == ["good", "bad"] and tr.source == "tab"


def test_trials_dict_round_trip():
    tr = T.from_rows([{"solvent": "toluene", "outcome": "good"},
                      {"solvent": "my thinner", "outcome": "bad", "dD": 17, "dP": 4, "dH": 6},
                      {"solvent": "toluene 70 + ethanol 30", "outcome": "partial"}],
                     library=LIB)
    back = T.Trials.from_dict(tr.to_dict(), library=LIB)
    assert back == tr


def test_real_library_integration(tmp_path):
    try:
        from solsphere.library.table import load_library
        lib = load_library()
        tol, eth = lib.lookup("toluene"), lib.lookup("ethanol")
    except Exception as exc:  # not built yet
        pytest.skip(f"packaged library not available: {exc}")
    tr = T.read(write(tmp_path, "solvent,outcome\ntoluene,good\ntoluene 70 + ethanol 30,bad\n"))
    assert tr[0].point == tol.point
    expected = 0.7 * np.array(tol.point) + 0.3 * np.array(eth.point)
    np.testing.assert_allclose(tr[1].point, expected)
