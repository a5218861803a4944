"""Tests for solsphere.shelf.read_shelf: the solvents a lab has (invented shelf files)."""

from __future__ import annotations

import pytest

from solsphere.errors import InputError, UnknownSolventError
from solsphere.library.table import load_library
from solsphere.io.shelf import read_shelf



def write(tmp_path, text, name="shelf.csv", encoding="utf-8"):
    p = tmp_path / name
    p.write_bytes(text.encode(encoding))
    return p


def error(tmp_path, lib, text, name="shelf.csv") -> InputError:
    p = write(tmp_path, text, name)
    with pytest.raises(InputError) as info:
        read_shelf(p, lib)
    e = info.value
    assert "\n" not in str(e)
    assert e.file == str(p)
    return e


def by_name(records):
    return {s.name: s for s in records}


def test_comma_shelf_resolves_names_aliases_and_cas(tmp_path, lib):
    p = write(tmp_path, "solvent\ntoluene\nMEK\n67-64-1\n")
    got = read_shelf(p, lib)
    assert [s.name for s in got] == ["toluene", lib.lookup("MEK").name, lib.lookup("acetone").name]
    assert got[0] == lib.lookup("toluene")  # nothing overridden: the library record as is


def test_one_column_keeps_commas_in_names(tmp_path, lib):
    p = write(tmp_path, "solvent\n1,4-dioxane\nN,N-dimethylformamide\n")
    got = read_shelf(p, lib)
    assert [s.name for s in got] == [lib.lookup("1,4-dioxane").name, lib.lookup("DMF").name]


def test_tsv_with_own_coordinates_and_decimal_commas(tmp_path, lib):
    p = write(tmp_path, "solvent\tdD\tdP\tdH\nmy thinner\t17,1\t4,2\t6\ntoluene\t\t\t\n",
              name="shelf.tsv")
    got = by_name(read_shelf(p, lib))
    mine = got["my thinner"]
    assert (mine.dD, mine.dP, mine.dH) == (17.1, 4.2, 6.0)
    assert mine.liquid is True and mine.cas is None
    assert got["toluene"].point == lib.lookup("toluene").point


def test_semicolon_decimal_comma_with_properties(tmp_path, lib):
    text = ("solvent;dD;dP;dH;flash point (°C);price;boiling_point;density;twa_ppm;note\n"
            "Spezialverdünner;16,5;3,5;4,5;41,5;12,90;150;0,87;50;own blend\n"
            "toluene;;;;;4,5;;;;\n")
    got = by_name(read_shelf(write(tmp_path, text), lib))
    s = got["Spezialverdünner"]
    assert (s.dD, s.dP, s.dH) == (16.5, 3.5, 4.5)
    assert (s.flash_point, s.price, s.boiling_point, s.density, s.twa_ppm) == \
        (41.5, 12.9, 150.0, 0.87, 50.0)
    t = got["toluene"]
    assert t.price == 4.5
    ref = lib.lookup("toluene")
    assert (t.flash_point, t.boiling_point, t.cas) == (ref.flash_point, ref.boiling_point, ref.cas)


def test_property_override_of_a_library_solvent(tmp_path, lib):
    p = write(tmp_path, "solvent,flash_point,dD,dP,dH\ntoluene,10,18.5,1.5,2.5\n")
    (t,) = read_shelf(p, lib)
    ref = lib.lookup("toluene")
    assert t.flash_point == 10.0 and ref.flash_point != 10.0
    assert t.point == (18.5, 1.5, 2.5) and ref.point != t.point
    assert t.name == ref.name and t.cas == ref.cas  # still the same compound


def test_bom_comments_blank_lines_and_repeats(tmp_path, lib):
    p = write(tmp_path, "\ufeffsolvent,note\n# my cupboard\n\ntoluene,\nmethylbenzene,same\n"
                        "MEK,\n")
    got = read_shelf(p, lib)
    assert [s.name for s in got] == ["toluene", lib.lookup("MEK").name]  # repeat kept once


@pytest.mark.parametrize("text, line, column, words", [
    ("solvent,dD,dP,dH\ntoluene,,,\nmine,17,abc,3\n", 3, "dP", "not a number"),
    ("solvent,dD,dP,dH\nmine,17,-2,3\n", 2, "dP", "negative"),
    ("solvent,dD,dP,dH\nmine,17,5,\n", 2, "dH", "all three"),
    ("solvent,dD,dP,dH\nmine,17.5,5,3\nother,17,5,3,4\n", 3, None, "cells"),
    ("solvent,price\ntoluene,cheap\n", 2, "price", "not a number"),
    ("# header next\nsolvent,flash_point\n\ntoluene,-500\n", 4, "flash_point", "outside"),
    ("solvent,density\ntoluene,870\n", 2, "density", "outside"),
    ("solvent,dD,dP,dH\nmine,17,5,3\ntoluene,17,5,\n", 3, "dH", "all three"),
])
def test_bad_cells_name_file_line_column(tmp_path, lib, text, line, column, words):
    e = error(tmp_path, lib, text)
    assert e.line == line and e.column == column
    assert words in e.message
    assert f"line {line}" in str(e) and "shelf.csv" in str(e)


def test_decimal_comma_in_a_comma_file_is_caught(tmp_path, lib):
    # 17,5 splits into two cells: reading 17 and 5 silently would shift the coordinates
    e = error(tmp_path, lib, "solvent,dD,dP,dH\nmine,17,5,4,2,6,0\n")
    assert e.line == 2 and "decimals with a point" in e.hint


def test_unknown_solvent_without_coordinates(tmp_path, lib):
    p = write(tmp_path, "solvent\ntoluene\nmy secret thinner\n")
    with pytest.raises(UnknownSolventError) as info:
        read_shelf(p, lib)
    assert info.value.line == 3 and info.value.column == "solvent"
    assert "dD, dP, dH" in str(info.value)  # the hint says how to give own coordinates


@pytest.mark.parametrize("text", ["", "\n\n", "# only a comment\n"])
def test_empty_shelf(tmp_path, lib, text):
    e = error(tmp_path, lib, text)
    assert "empty" in e.message


def test_no_solvent_column(tmp_path, lib):
    e = error(tmp_path, lib, "compound,dD\ntoluene,18\n")
    assert e.line == 1 and "solvent" in e.message and "'compound'" in e.message


@pytest.mark.parametrize("text", ["solvent\n", "solvent,note\n,just a note\n  ,\n"])
def test_shelf_with_no_usable_solvent(tmp_path, lib, text):
    e = error(tmp_path, lib, text)
    assert "no usable solvent" in e.message


def test_unclosed_quote_and_huge_cell(tmp_path, lib):
    e = error(tmp_path, lib, 'solvent,note\ntoluene,"never closed\nacetone,x\n')
    assert e.line == 2 and "quote" in e.hint
    e = error(tmp_path, lib, 'solvent\n"' + "a" * 200_000 + '"\n')
    assert e.line == 2 and "10000" in e.message
    e = error(tmp_path, lib, "solvent,note\ntoluene," + "b" * 20_000 + "\n")
    assert e.line == 2 and e.column == "note"


def test_quoted_multiline_note_keeps_line_numbers(tmp_path, lib):
    text = 'solvent,note,dD,dP,dH\ntoluene,"two\nlines",,,\nmine,,17,x,3\n'
    e = error(tmp_path, lib, text)
    assert e.line == 4 and e.column == "dP"


def test_missing_file_and_binary_file(tmp_path, lib):
    with pytest.raises(InputError, match="not found"):
        read_shelf(tmp_path / "none.csv", lib)
    p = tmp_path / "book.csv"
    p.write_bytes(b"PK\x03\x04" + b"\x00" * 50)
    with pytest.raises(InputError, match="workbook"):
        read_shelf(p, lib)
