"""Tests for solsphere.project: versioned JSON, atomic save, strict load, load_any."""

from __future__ import annotations

import dataclasses
import json
import os

import numpy as np
import pytest

from solsphere.io import files as fileio

from solsphere.io import project as P

from solsphere.io import trials as T
from solsphere.errors import InputError, UnknownSolventError
from solsphere.library.table import Solvent

# Test inputs of our own (close to handbook values, from memory).
RECORDS = [
    Solvent("toluene", 18.0, 1.4, 2.0, cas="108-88-3"),
    Solvent("ethanol", 15.8, 8.8, 19.4, cas="64-17-5"),
    Solvent("acetone", 15.5, 10.4, 7.0, cas="67-64-1"),
]


class FakeLibrary:
    """Stand-in with the Library contract's lookup/find (if from_records is missing)."""

    def __init__(self, records):
        self._by = {k.casefold(): s for s in records for k in (s.name, s.cas) if k}

    def find(self, text):
        return self._by.get(" ".join(str(text).split()).casefold())

    def lookup(self, text):
        s = self.find(text)
        if s is None:
            raise UnknownSolventError(text, [])
        return s


def make_library(records):
    try:
        from solsphere.library.table import Library
        return Library.from_records(list(records))
    except (ImportError, AttributeError, NotImplementedError):
        return FakeLibrary(records)


LIB = make_library(RECORDS)
CSV = ("solvent,outcome,dD,dP,dH,note\n"
       "toluene,good,,,,clear\n"
       "ethanol,bad,,,,\n"
       "toluene 70 + ethanol 30,partly,,,,\n"
       "my thinner,good,17.1,4.2,6.0,own\n"
       "acetone,bad,15.0,10.0,7.5,override\n")


@pytest.fixture
def proj(tmp_path):
    src = tmp_path / "results.csv"
    src.write_text(CSV)
    tr = T.read(str(src), library=LIB)
    fit = {"dD": np.float64(17.2), "dP": 4.0, "dH": 6.5, "R0": 5.25, "misfits": [],
           "centre": np.array([17.2, 4.0, 6.5])}  # numpy values must be saved as plain
    return P.Project(trials=tr, settings={"partial": "good", "candidates": "shelf.csv"},
                     fit=fit)


def save_load(proj, path):
    P.save(proj, path)
    return P.load(path, library=LIB)


def test_round_trip_equal(proj, tmp_path):
    path = tmp_path / "p.json"
    back = save_load(proj, path)
    assert back.trials == proj.trials
    assert back.settings == proj.settings
    assert back.fit == {"dD": 17.2, "dP": 4.0, "dH": 6.5, "R0": 5.25, "misfits": [],
                        "centre": [17.2, 4.0, 6.5]}
    assert back.path == str(path) and back.saved_at and back.created_with
    np.testing.assert_array_equal(back.trials.points, proj.trials.points)
    assert [t.source for t in back.trials] == ["library", "library", "blend", "own",
                                                "library+own override"]
    doc = json.loads(path.read_text())
    assert doc["format"] == "solsphere-project" and doc["schema_version"] == 1
    assert list(doc)[:2] == ["format", "schema_version"]
    assert doc["trials"]["rows"][2]["resolved"] == pytest.approx([17.34, 3.62, 7.22])
    # a second round trip changes nothing
    again = save_load(back, tmp_path / "p2.json")
    assert again == back


def test_empty_project_round_trip(tmp_path):
    empty = P.Project(trials=T.Trials(), settings={}, fit=None)
    back = save_load(empty, tmp_path / "e.json")
    assert back == empty and len(back.trials) == 0


def test_saved_coordinates_win_when_library_changes(proj, tmp_path):
    path = tmp_path / "p.json"
    P.save(proj, path)
    changed = make_library([Solvent("toluene", 18.2, 1.4, 2.0, cas="108-88-3"),
                            Solvent("acetone", 15.5, 10.4, 7.0, cas="67-64-1")])
    back = P.load(path, library=changed)  # ethanol is gone, toluene moved
    np.testing.assert_array_equal(back.trials.points, proj.trials.points)
    joined = " | ".join(back.trials.warnings)
    assert "differ from those saved" in joined
    assert "'ethanol' is not in this library" in joined
    assert back.trials[1].source == "own"


def test_save_refuses_to_overwrite_a_results_file(proj, tmp_path):
    src = tmp_path / "results.csv"
    before = src.read_text()
    with pytest.raises(InputError, match="not a solsphere project; not overwriting"):
        P.save(proj, src)
    assert src.read_text() == before


def test_save_failure_keeps_old_project(proj, tmp_path, monkeypatch):
    path = tmp_path / "p.json"
    P.save(proj, path)
    before = path.read_bytes()
    newer = dataclasses.replace(proj, settings={"partial": "bad"})

    def half_then_fail(fh, data):
        fh.write(data[: len(data) // 3])
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(fileio, "_write_bytes", half_then_fail)
    with pytest.raises(InputError):
        P.save(newer, path)
    assert path.read_bytes() == before
    assert [f for f in os.listdir(tmp_path) if f.endswith(".tmp")] == []
    monkeypatch.undo()
    assert P.load(path, library=LIB).settings["partial"] == "good"


def test_save_rejects_nan_in_fit(proj, tmp_path):
    bad = dataclasses.replace(proj, fit={"R0": float("nan")})
    with pytest.raises(ValueError):
        P.save(bad, tmp_path / "n.json")
    assert not (tmp_path / "n.json").exists()


def _doc(proj):
    return json.loads(json.dumps(proj.to_dict(saved_at="2024-01-01T00:00:00+00:00"),
                                 default=P._plain))


def _mutations():
    def drop(key):
        return lambda d: d.pop(key)

    def setk(key, value):
        return lambda d: d.__setitem__(key, value)

    def row(i, key, value):
        return lambda d: d["trials"]["rows"][i].__setitem__(key, value)

    return [
        ("wrong format", setk("format", "something-else"), "format is 'something-else'"),
        ("no format", drop("format"), "no 'format' key"),
        ("newer schema", setk("schema_version", 3),
         "this file was saved by a newer solsphere (schema 3); this version reads "
         "schema ≤ 1. Fix: upgrade solsphere"),
        ("schema not int", setk("schema_version", "1"), "'schema_version' must be"),
        ("schema bool", setk("schema_version", True), "'schema_version' must be"),
        ("missing trials", drop("trials"), "missing key 'trials'"),
        ("missing settings", drop("settings"), "missing key 'settings'"),
        ("missing fit", drop("fit"), "missing key 'fit'"),
        ("settings list", setk("settings", []), "'settings' must be an object, found a list"),
        ("bad partial", setk("settings", {"partial": "half"}), "settings.partial is 'half'"),
        ("fit list", setk("fit", [1, 2]), "'fit' must be an object or null"),
        ("saved_at number", setk("saved_at", 5), "'saved_at' must be a string"),
        ("trials not object", setk("trials", []), "trials: expected an object"),
        ("rows not list", lambda d: d["trials"].__setitem__("rows", {}), "'rows' must be a list"),
        ("row missing outcome", lambda d: d["trials"]["rows"][0].pop("outcome"),
         "rows[0] has no 'outcome'"),
        ("row bad line", row(1, "line", 0), "rows[1].line must be a positive integer"),
        ("row resolved short", row(0, "resolved", [1, 2]), "rows[0].resolved must be a list"),
        ("row resolved nan-ish", row(0, "resolved", [1, 2, "x"]), "rows[0].resolved"),
        ("row dD string", row(3, "dD", "17"), "rows[3].dD must be a number or null"),
        ("row outcome invalid", row(1, "outcome", "meh"),
         "saved trial (results.csv, line 3, column outcome): 'meh' is not an outcome"),
        # a damaged blend cell with saved coordinates still loads, as own, with a warning
        ("damaged blend loads as own", row(2, "solvent", "toluene 70 +"), None),
    ]


@pytest.mark.parametrize("case", _mutations(), ids=[c[0] for c in _mutations()])
def test_strict_load(proj, tmp_path, case):
    _, mutate, words = case
    doc = _doc(proj)
    doc["trials"]["source"] = "results.csv"
    mutate(doc)
    path = tmp_path / "p.json"
    path.write_text(json.dumps(doc))
    if words is None:
        back = P.load(path, library=LIB)
        assert back.trials[2].source == "own"
        assert back.trials[2].point == proj.trials[2].point
        assert any("no longer reads as a blend" in w and "saved in the project" in w
                   for w in back.trials.warnings)
        return
    with pytest.raises(InputError) as ei:
        P.load(path, library=LIB)
    s = str(ei.value)
    assert s.startswith(str(path) + ": "), s
    assert words in s, s
    assert "\n" not in s


@pytest.mark.parametrize("text,line,column,words", [
    ('{"format": "solsphere-project", "schema_version": 1,\n "trials": [1, 2,, 3]}', 2, 18,
     "not valid JSON"),
    ("{'format': 1}", 1, 2, "not valid JSON"),
    ('{"format": "solsphere-project",\n "schema_version": 1,\n "trials": {"rows": [', 3, 22,
     "cut short"),
    ("", None, None, "empty"),
    ('{"format": "solsphere-project", "schema_version": 1, "fit": {"R0": NaN}}', None, None,
     "NaN is not a number JSON allows"),
    ("[1, 2]", None, None, "holds a list, not an object"),
])
def test_json_syntax_errors(tmp_path, text, line, column, words):
    path = tmp_path / "p.json"
    path.write_text(text)
    with pytest.raises(InputError) as ei:
        P.load(path, library=LIB)
    e = ei.value
    assert (e.line, e.column) == (line, column)
    s = str(e)
    assert s.startswith(str(path)) and words in s and "\n" not in s
    if line is not None:
        assert f"line {line}, column {column}" in s


def test_truncated_real_project(proj, tmp_path):
    path = tmp_path / "p.json"
    P.save(proj, path)
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2])
    with pytest.raises(InputError, match="cut short"):
        P.load(path, library=LIB)


def test_missing_project_file(tmp_path):
    with pytest.raises(InputError, match="file not found"):
        P.load(tmp_path / "nope.json", library=LIB)


def test_is_project_file_and_load_any(proj, tmp_path):
    pj = tmp_path / "p.json"
    P.save(proj, pj)
    noext = tmp_path / "saved_project"
    P.save(proj, noext)
    bom16 = tmp_path / "p16"
    bom16.write_bytes(noext.read_text(encoding="utf-8").encode("utf-16"))
    csv = tmp_path / "results.csv"
    assert P.is_project_file(pj) and P.is_project_file(noext) and P.is_project_file(bom16)
    assert P.is_project_file(tmp_path / "missing.json")  # by name; load then says not found
    assert not P.is_project_file(csv) and not P.is_project_file(tmp_path / "missing.csv")
    a = P.load_any(csv, library=LIB)
    assert a.fit is None and a.path is None and a.settings == {}
    assert a.trials == proj.trials
    b = P.load_any(noext, library=LIB)
    assert b == proj.__class__(trials=proj.trials, settings=proj.settings,
                               fit=json.loads(json.dumps(proj.fit, default=P._plain)))
    assert P.load_any(bom16, library=LIB).trials == proj.trials
    with pytest.raises(InputError, match="not found"):
        P.load_any(tmp_path / "missing.csv", library=LIB)


def test_str(proj):
    assert "5 trials" in str(proj) and "with a fit" in str(proj)
