"""Property-based fuzzing of the readers and the fit (hypothesis).

Properties:

1. Whatever table a user hands ``trials.read`` (random names, outcome words, coordinate
   cells, separators, quoting, line endings and encodings) it either returns trials
   with finite coordinates in [0, 60] MPa½ or raises ``InputError``: nothing else.
2. A clean table (library names, known outcome words, valid own coordinates) reads the
   same in every accepted encoding / separator / line ending as in plain UTF-8 CSV.
3. The fit of whatever was read either works or raises ``FitError``; a result holds no
   NaN or infinity anywhere (``to_dict()`` recursively), and its desirability is never
   below that of the centroid-of-good-solvents start, whose exact best R0 is computed
   here with ``fit.best_radius`` at the centroid.
4. The app's table validation (``validate_rows``), the shelf reader, the project loader
   (random damage to a real project) and the low-level decoder never raise anything
   but ``InputError``.

The default run is fast (``max_examples`` from the ``solsphere-fast`` profile); set
``SOLSPHERE_FUZZ=solsphere-thorough`` for a long run. ``pytest --hypothesis-show-statistics``
prints how many examples each property ran.
"""

from __future__ import annotations

import atexit
import csv
import io
import json
import math
import os
import shutil
import tempfile
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from solsphere.io import files as fileio

from solsphere.io import project as P

from solsphere.io import trials as T
from solsphere.errors import FitError, InputError
from solsphere.models.classic import MIN_R0, SphereModel, best_radius, best_sphere as fit_sphere
from solsphere.hansen import ra
from solsphere.library.table import load_library
from solsphere.io.shelf import read_shelf

_HC = [HealthCheck.too_slow, HealthCheck.data_too_large, HealthCheck.filter_too_much]
settings.register_profile("solsphere-fast", max_examples=40, deadline=None,
                          suppress_health_check=_HC)
settings.register_profile("solsphere-thorough", max_examples=1500, deadline=None,
                          suppress_health_check=_HC)
FUZZ = settings(settings.get_profile(os.environ.get("SOLSPHERE_FUZZ", "solsphere-fast")))

LIB = load_library()
TMP = Path(tempfile.mkdtemp(prefix="solsphere-fuzz-"))
atexit.register(shutil.rmtree, TMP, ignore_errors=True)

# distinct library solvents (one name each, so a clean table has no duplicates)
LIBRARY_NAMES = ["toluene", "acetone", "ethanol", "water", "n-hexane", "methanol",
                 "ethyl acetate", "2-butanone", "dimethyl sulfoxide", "cyclohexane",
                 "chloroform", "dichloromethane", "1,4-dioxane", "tetrahydrofuran",
                 "acetonitrile", "1-butanol", "propylene carbonate", "diethyl ether",
                 "benzyl alcohol", "p-xylene", "butyl acetate"]
TRICKY_NAMES = ["MEK", "108-88-3", "DMSO", "tolunee", "", " ", "+", "my thinner",
                "toluene 70 + ethanol 30", "acetone 1 + water 0", "toluene + ethanol",
                "toluene 50 + toluene 50", "(+)-limonene", "water 0,5 + ethanol 1",
                "toluene 70 %+ ethanol 30 %", '"quoted"', "a;b", "tab\there", "#comment",
                "<script>alert(1)</script>", "é\u00a0ü", "\u202etxt", "x" * 300]
WORDS = [w for ws in T.OUTCOME_WORDS.values() for w in ws]
JUNK_WORDS = ["maybe", "", " ", "GOOD", "Does Not.", "2", "0,5", "-0", "nan", "✓", "ja"]
COORD_CELLS = ["", " ", "17,5", "-1", "abc", "1e3", " 4 ", "nan", "inf", "60", "60.0001",
               "0", "−3", "1e-300", "4.", ".5", "+7", "1_0", "0x10"]
ENCODINGS = ["utf-8", "utf-8-sig", "utf-16", "utf-16-le", "utf-16-be", "utf-32", "latin-1",
             "cp1252"]
SEPARATORS = [",", ";", "\t"]
NEWLINES = ["\n", "\r\n", "\r"]

name_st = st.one_of(st.sampled_from(LIBRARY_NAMES + TRICKY_NAMES), st.text(max_size=25))
outcome_st = st.one_of(st.sampled_from(WORDS + JUNK_WORDS), st.text(max_size=8))
coord_st = st.one_of(st.sampled_from(COORD_CELLS),
                     st.floats(0, 45, allow_nan=False).map(lambda v: f"{v:.3f}"),
                     st.floats(allow_nan=True, allow_infinity=True).map(repr),
                     st.text(max_size=6))
note_st = st.one_of(st.just(""), st.text(max_size=30))


def _write(name: str, data: bytes) -> Path:
    p = TMP / name
    p.write_bytes(data)
    return p


def _table_text(header, rows, sep, newline, quoted: bool) -> str:
    if quoted:
        buf = io.StringIO()
        w = csv.writer(buf, delimiter=sep, lineterminator=newline)
        w.writerow(header)
        w.writerows(rows)
        return buf.getvalue()
    return newline.join(sep.join(r) for r in [header] + rows) + newline


good_name_st = st.sampled_from(LIBRARY_NAMES + ["MEK", "108-88-3", "DMSO",
                                                "toluene 70 + ethanol 30"])
good_outcome_st = st.sampled_from(WORDS)
good_coord_st = st.floats(0, 45, allow_nan=False).map(lambda v: f"{v:.3f}")


@st.composite
def tables(draw):
    """Mostly plausible tables with a drawn share of junk cells (none, some, all)."""
    junk = draw(st.sampled_from([0.0, 0.0, 0.05, 0.3, 1.0]))

    def cell(good, bad):
        return draw(bad if draw(st.floats(0, 1)) < junk else good)

    with_coords = draw(st.booleans())
    header = ["solvent", "outcome"] + (["dD", "dP", "dH"] if with_coords else [])
    if draw(st.booleans()):
        header.append("note")
    if draw(st.integers(0, 9)) == 0:  # a damaged header now and then
        header[draw(st.integers(0, len(header) - 1))] = draw(st.sampled_from(
            ["solvant", "outcom", "", "dd (cal/cm3)", "Solvent", "result", "δD (MPa½)"]))
    n = draw(st.integers(0 if junk else 2, 12))
    names = draw(st.permutations(LIBRARY_NAMES))  # distinct, so no conflicting repeats
    rows = []
    for i in range(n):
        own = with_coords and draw(st.booleans())
        name = f"own {i}" if own else cell(st.just(names[i]), name_st)
        row = [name, cell(good_outcome_st, outcome_st)]
        if with_coords:
            row += [cell(good_coord_st if own else st.just(""), coord_st) for _ in range(3)]
        if "note" in header:
            row.append(draw(note_st if junk else st.sampled_from(["", "clear", "slow; 2 h"])))
        if draw(st.floats(0, 1)) < junk / 5:
            row = row[:draw(st.integers(0, len(row)))]  # a short row
        rows.append(row)
    encodings = ENCODINGS if junk else ENCODINGS[:6]  # junk-free: the accepted encodings
    return (header, rows, draw(st.sampled_from(SEPARATORS)), draw(st.sampled_from(NEWLINES)),
            draw(st.booleans()) or not junk, draw(st.sampled_from(encodings)))


def _finite_everywhere(obj, path="result") -> None:
    """No NaN or infinity anywhere in a JSON-like structure."""
    if isinstance(obj, float):
        assert math.isfinite(obj), f"{path} is {obj}"
    elif isinstance(obj, dict):
        for k, v in obj.items():
            _finite_everywhere(v, f"{path}.{k}")
    elif isinstance(obj, (list, tuple)):
        for i, v in enumerate(obj):
            _finite_everywhere(v, f"{path}[{i}]")
    elif isinstance(obj, np.ndarray):
        assert np.all(np.isfinite(obj)), path


def centroid_reference(points: np.ndarray, good: np.ndarray) -> float:
    """Desirability of the centroid-of-good-solvents start with its exact best R0."""
    c = points[good].mean(axis=0)
    return best_radius(ra(points, c), good)[1]


def check_fit(trials, partial: str = "good") -> None:
    """Fit what was read; FitError or a finite result at least as good as the centroid."""
    try:
        res = SphereModel(partial=partial).fit(trials).result_
    except FitError as exc:
        assert str(exc) and "\n" not in str(exc)
        pts, good, _ = trials.binary(partial)
        if good.all() or not good.any():
            event("fit: FitError (one side missing)")
        else:  # a degenerate panel: the unchecked fit shrinks below the smallest radius
            assert fit_sphere(pts, good)[1] < MIN_R0, str(exc)
            event("fit: FitError (degenerate)")
        return
    event("fit: fitted")
    d = res.to_dict()
    _finite_everywhere(d)
    json.dumps(d, allow_nan=False)
    assert 0.0 < res.desirability <= 1.0
    assert res.R0 >= MIN_R0
    pts, good, _ = trials.binary(partial)
    ref = centroid_reference(pts, good)
    assert res.desirability >= ref * (1 - 1e-9), (res.desirability, ref)


# ------------------------------------------------------------------ 1 + 3: any table


@FUZZ
@given(tables())
def test_any_table_reads_or_says_why_and_fits_or_says_why(table):
    header, rows, sep, newline, quoted, encoding = table
    text = _table_text(header, rows, sep, newline, quoted)
    data = text.encode(encoding, errors="replace")
    p = _write("any.csv", data)
    try:
        trials = T.read(p, library=LIB)
    except InputError as exc:
        msg = str(exc)
        assert msg and "\n" not in msg and str(p) in msg
        event("read: InputError")
        return
    event("read: trials")
    pts = trials.points
    assert np.all(np.isfinite(pts)) and np.all(pts >= 0) and np.all(pts <= T.MAX_COORDINATE)
    assert set(trials.outcomes) <= set(T.OUTCOMES)
    assert len(trials) <= len(rows)
    check_fit(trials, partial="good")


# ------------------------------------------------------------------ 2: clean tables


@st.composite
def clean_tables(draw):
    names = draw(st.lists(st.sampled_from(LIBRARY_NAMES + ["my thinner", "lab mix 2"]),
                          min_size=1, max_size=12, unique=True))
    rows = []
    for nm in names:
        own = nm.startswith(("my", "lab")) or draw(st.integers(0, 4)) == 0
        # δD from 12: a file whose every own δD is lower is refused as (cal/cm³)½ values
        coords = ([draw(st.floats(12, 45, allow_nan=False))]
                  + [draw(st.floats(0, 45, allow_nan=False)) for _ in range(2)]) if own else None
        rows.append((nm, draw(st.sampled_from(WORDS)), coords,
                     draw(st.sampled_from(["", "clear", "slow, 2 h", "trübe ½"]))))
    return rows, draw(st.sampled_from(SEPARATORS)), draw(st.sampled_from(NEWLINES)), \
        draw(st.sampled_from(["utf-8", "utf-8-sig", "utf-16", "utf-16-le", "utf-16-be",
                              "utf-32"]))


def _clean_text(rows, sep, newline, decimal_comma: bool) -> str:
    def num(v):
        s = f"{v:.3f}"
        return s.replace(".", ",") if decimal_comma else s
    out = [["solvent", "outcome", "dD", "dP", "dH", "note"]]
    for nm, o, c, note in rows:
        out.append([nm, o] + ([num(v) for v in c] if c else ["", "", ""]) + [note])
    buf = io.StringIO()
    csv.writer(buf, delimiter=sep, lineterminator=newline).writerows(out)
    return buf.getvalue()


@FUZZ
@given(clean_tables())
def test_clean_tables_read_the_same_in_every_accepted_form(table):
    rows, sep, newline, encoding = table
    plain = T.read_text(_clean_text(rows, ",", "\n", False), source="plain", library=LIB)
    variant = _clean_text(rows, sep, newline, decimal_comma=sep != ",")
    p = _write("clean.csv", variant.encode(encoding))
    got = T.read(p, library=LIB)
    assert got.names == plain.names
    assert got.outcomes == plain.outcomes
    np.testing.assert_allclose(got.points, plain.points, rtol=0, atol=1e-12)
    assert [t.note for t in got] == [t.note for t in plain]


# ------------------------------------------------------------------ 3: the fit on arrays

point_st = st.tuples(st.floats(0, 25), st.floats(0, 30), st.floats(0, 45))


@st.composite
def panels(draw):
    kind = draw(st.sampled_from(["random", "line", "plane", "repeated", "one-good",
                                 "grid-ish"]))
    n = draw(st.integers(2, 25))
    if kind == "line":
        a, b = np.array(draw(point_st)), np.array(draw(point_st))
        ts = draw(st.lists(st.floats(0, 1), min_size=n, max_size=n))
        X = np.array([a + t * (b - a) for t in ts])
    elif kind == "plane":
        X = np.array(draw(st.lists(point_st, min_size=n, max_size=n)))
        X[:, draw(st.integers(0, 2))] = draw(st.floats(0, 20))
    elif kind == "repeated":
        X = np.array([draw(point_st)] * n)
    elif kind == "grid-ish":
        X = np.array(draw(st.lists(st.tuples(*[st.integers(0, 4).map(float)] * 3),
                                   min_size=n, max_size=n)))
    else:
        X = np.array(draw(st.lists(point_st, min_size=n, max_size=n)))
    outcomes = draw(st.lists(st.sampled_from(["good", "bad", "partial"]), min_size=n,
                             max_size=n))
    if kind == "one-good":
        outcomes = ["bad"] * n
        outcomes[draw(st.integers(0, n - 1))] = "good"
    return X, outcomes, draw(st.sampled_from(["good", "bad", "skip"]))


@FUZZ
@given(panels())
def test_fit_is_finite_and_never_worse_than_the_centroid(panel):
    X, outcomes, partial = panel
    counted = [partial if o == "partial" else o for o in outcomes]
    use = np.array([c != "skip" for c in counted])
    good = np.array([c == "good" for c in counted])
    try:
        res = SphereModel(partial=partial).fit(X, outcomes).result_
    except FitError:
        if good[use].any() and (~good[use]).any():  # degenerate, not a missing side
            assert fit_sphere(X[use], good[use])[1] < MIN_R0
        event("FitError")
        return
    event("fitted")
    assert good[use].any() and (~good[use]).any()
    _finite_everywhere(res.to_dict())
    assert 0.0 < res.desirability <= 1.0 and res.R0 >= MIN_R0
    box = np.array(res.bounds)
    assert np.all(res.centre >= box[:, 0] - 1e-12) and np.all(res.centre <= box[:, 1] + 1e-12)
    ref = centroid_reference(X[use], good[use])
    assert res.desirability >= ref * (1 - 1e-9), (res.desirability, ref)


# ------------------------------------------------------------------ 4: other readers

cell_value = st.one_of(st.none(), st.booleans(), st.integers(-10**6, 10**6),
                       st.floats(allow_nan=True, allow_infinity=True), st.text(max_size=20),
                       st.sampled_from(LIBRARY_NAMES + TRICKY_NAMES + WORDS + COORD_CELLS),
                       st.lists(st.integers(), max_size=2))
plausible_row = st.fixed_dictionaries(
    {"solvent": st.one_of(good_name_st, st.just("own x")), "outcome": good_outcome_st},
    optional={"dD": st.floats(0, 45), "dP": st.floats(0, 45), "dH": st.floats(0, 45),
              "note": st.text(max_size=10)})
table_row = st.one_of(
    plausible_row, plausible_row,
    st.fixed_dictionaries({}, optional={k: cell_value for k in T.COLUMNS}),
    st.dictionaries(st.one_of(st.sampled_from(["Solvent", "DD", "δH", "notes", "x"]),
                              st.text(max_size=5)), cell_value, max_size=4),
    cell_value)


@FUZZ
@given(st.lists(table_row, max_size=12), st.sampled_from(["good", "bad", "skip"]))
def test_app_table_validation_never_raises(rows, partial):
    trials, errors = T.validate_rows(rows, library=LIB)
    event(f"valid rows: {min(len(trials), 3)}{'+' if len(trials) >= 3 else ''}")
    assert all(isinstance(e, InputError) for e in errors)
    for e in errors:
        assert "\n" not in str(e) and e.line is not None
    assert np.all(np.isfinite(trials.points))
    if len(trials):
        check_fit(trials, partial=partial)
    try:
        T.from_rows(rows, library=LIB)
    except InputError:
        pass


@st.composite
def shelves(draw):
    cols = draw(st.lists(st.sampled_from(["solvent", "dD", "dP", "dH", "price", "flash_point",
                                          "density", "note", "colour", "Name"]),
                         min_size=1, max_size=5, unique=True))
    rows = [[draw(st.one_of(name_st, coord_st)) for _ in cols]
            for _ in range(draw(st.integers(0, 8)))]
    return cols, rows, draw(st.sampled_from(SEPARATORS)), draw(st.sampled_from(NEWLINES)), \
        draw(st.booleans()), draw(st.sampled_from(ENCODINGS))


@FUZZ
@given(shelves())
def test_shelf_reader_returns_solvents_or_input_error(shelf):
    cols, rows, sep, newline, quoted, encoding = shelf
    p = _write("shelf.csv", _table_text(cols, rows, sep, newline, quoted)
               .encode(encoding, errors="replace"))
    try:
        got = read_shelf(p, LIB)
    except InputError as exc:
        assert "\n" not in str(exc) and str(p) in str(exc)
        event("InputError")
        return
    event("shelf read")
    assert got
    for s in got:
        assert all(math.isfinite(v) and 0 <= v <= T.MAX_COORDINATE for v in s.point)


def _real_project_text() -> str:
    rows = [("toluene", "good"), ("acetone", "good"), ("ethanol", "bad"), ("water", "bad"),
            ("n-hexane", "bad")]
    text = "solvent,outcome,dD,dP,dH,note\n" + "".join(f"{s},{o},,,,\n" for s, o in rows) \
        + "my thinner,partly,17.5,4.25,6.5,trübe ½\ntoluene 70 + ethanol 30,good,,,,\n"
    trials = T.read_text(text, source="bench.csv", library=LIB)
    proj = P.Project(trials=trials, settings={"partial": "good"})
    proj.fit = SphereModel().fit(trials).result_.to_dict()
    return json.dumps(proj.to_dict(), indent=1, ensure_ascii=False)


PROJECT_TEXT = _real_project_text()
json_value = st.recursive(st.one_of(st.none(), st.booleans(), st.integers(), st.text(max_size=8),
                                    st.floats(allow_nan=False, allow_infinity=False)),
                          lambda kids: st.one_of(st.lists(kids, max_size=3),
                                                 st.dictionaries(st.text(max_size=6), kids,
                                                                 max_size=3)), max_leaves=8)


def _paths(obj, prefix=()):
    yield prefix
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield from _paths(v, prefix + (k,))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from _paths(v, prefix + (i,))


PROJECT_PATHS = [p for p in _paths(json.loads(PROJECT_TEXT)) if p]


@st.composite
def damaged_projects(draw):
    how = draw(st.sampled_from(["truncate", "flip-bytes", "replace-value", "delete-key",
                                "insert-text"]))
    data = PROJECT_TEXT.encode()
    if how == "truncate":
        return data[:draw(st.integers(0, len(data)))]
    if how == "flip-bytes":
        b = bytearray(data)
        for _ in range(draw(st.integers(1, 5))):
            b[draw(st.integers(0, len(b) - 1))] = draw(st.integers(0, 255))
        return bytes(b)
    if how == "insert-text":
        i = draw(st.integers(0, len(data)))
        return data[:i] + draw(st.text(max_size=10)).encode() + data[i:]
    doc = json.loads(PROJECT_TEXT)
    path = draw(st.sampled_from(PROJECT_PATHS))
    parent = doc
    for k in path[:-1]:
        parent = parent[k]
    if how == "delete-key" and isinstance(parent, dict):
        del parent[path[-1]]
    else:
        parent[path[-1]] = draw(json_value)
    return json.dumps(doc).encode()


@FUZZ
@given(damaged_projects())
def test_damaged_project_loads_or_says_why(data):
    p = _write("damaged.json", data)
    try:
        proj = P.load(p, library=LIB)
    except InputError as exc:
        assert "\n" not in str(exc) and str(p) in str(exc)
        event("InputError")
        return
    event("project loaded")
    assert np.all(np.isfinite(proj.trials.points))
    if len(proj.trials):
        check_fit(proj.trials, partial=proj.settings.get("partial", "good"))


@FUZZ
@given(st.one_of(st.binary(max_size=600),
                 st.text(max_size=200).flatmap(
                     lambda t: st.sampled_from(ENCODINGS).map(
                         lambda e: t.encode(e, errors="replace")))))
def test_decoder_returns_text_or_input_error(data):
    try:
        text = fileio.decode(data, file="x.csv")
    except InputError as exc:
        assert "\n" not in str(exc) and "x.csv" in str(exc)
        return
    assert "\r" not in text and "\x00" not in text


def test_the_properties_can_fail():
    """The checks bite: a NaN is found, and a worse-than-centroid answer is refused."""
    with pytest.raises(AssertionError):
        _finite_everywhere({"table": [{"red": float("nan")}]})
    X = np.array([[17.0, 5, 5], [18, 6, 6], [10, 20, 30], [25, 0, 0]])
    good = np.array([True, True, False, False])
    ref = centroid_reference(X, good)
    far = best_radius(ra(X, [10.0, 20, 30]), good)[1]  # a centre on a bad solvent
    assert far < ref * (1 - 1e-9)


# ------------------------------------------------------------------ 5: command lines

BENCH_FILE = _write("cli-bench.csv", ("solvent,outcome\ntoluene,good\nacetone,good\n"
                                      "ethyl acetate,good\nethanol,bad\nwater,bad\n"
                                      "n-hexane,bad\n").encode())
option_value = st.one_of(st.sampled_from(["0", "-1", "1", "2", "abc", "nan", "inf", "1e400",
                                          "", "good", "skip", "classic", "graded", "3",
                                          "2,5", "-0", "99999999999999999999"]),
                         st.text(max_size=6))
FIT_OPTIONS = ["--partial", "--seed", "--method", "--spheres", "--bootstrap"]
RANK_OPTIONS = ["--partial", "--top", "--min-flash-point", "--max-boiling-point",
                "--temperature", "--min-exposure-limit", "--exclude"]


@st.composite
def command_lines(draw):
    command = draw(st.sampled_from(["fit", "rank"]))
    argv = [command, draw(st.sampled_from([str(BENCH_FILE), str(TMP / "missing.csv"),
                                           str(TMP), "-", ""]))]
    for _ in range(draw(st.integers(0, 3))):
        opt = draw(st.sampled_from(FIT_OPTIONS if command == "fit" else RANK_OPTIONS))
        value = draw(option_value)
        if opt == "--bootstrap" and value.isdigit() and int(value) > 3:
            value = "3"  # keep the run short; large counts are the same code path
        argv += [opt, value]
    if command == "fit":
        argv.append("--no-influence")
    if draw(st.booleans()):
        argv.append("--json")
    return argv


@settings(FUZZ, max_examples=max(30, FUZZ.max_examples // 5))
@given(command_lines())
def test_command_lines_exit_0_or_2_never_1(argv):
    from test_bad_input import run
    rc, out, err = run(argv)
    assert rc in (0, 2), (argv, err)
    assert "Traceback" not in err
    if rc == 2:
        msg = [ln for ln in err.splitlines() if ln.strip()]
        assert len(msg) == 1 and msg[0].startswith("solsphere: error:"), err
    elif "--json" in argv:
        json.loads(out)
    event(f"exit {rc}")
