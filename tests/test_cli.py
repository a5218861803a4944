"""Tests for solsphere.cli: the command-line contract (DEVELOPERS.md, "Conventions": the command line).

Most calls run ``solsphere.cli.main([...])`` in-process; a few run the installed
``solsphere`` script in a subprocess to check real exit codes and imports. Every file
used here is invented test data (the demo file is the invented demo scenario).
RED values are recomputed here from the Hansen distance formula written out
(Hansen handbook, 2nd ed., 2007, ch. 1: Ra² = 4ΔδD² + ΔδP² + ΔδH²; from memory).
"""

from __future__ import annotations

import contextlib
import io
import json
import math
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

from solsphere import cli, commands

from solsphere.io import files as fileio
from solsphere.library.table import load_library

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "data" / "demo" / "varnish_binder.csv"
SCRIPT = Path(sys.executable).with_name("solsphere")

FIT_KEYS = {"dD", "dP", "dH", "R0", "desirability", "n_good", "n_bad", "misfits", "warnings"}

# invented: two solvents dissolve, four do not
SMALL = """solvent,outcome
toluene,good
acetone,good
ethyl acetate,good
ethanol,bad
water,bad
n-hexane,bad
methanol,bad
"""


def run(argv) -> tuple[int, str, str]:
    """(exit code, stdout, stderr) of ``cli.main(argv)`` in-process."""
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            rc = cli.main([str(a) for a in argv])
        except SystemExit as exc:  # argparse usage errors and --help
            rc = exc.code if isinstance(exc.code, int) else 2
    return rc, out.getvalue(), err.getvalue()


def run_json(argv) -> dict:
    rc, out, err = run(list(argv) + ["--json"])
    assert rc == 0, err
    assert err == ""
    lines = [ln for ln in out.splitlines() if ln.strip()]
    assert len(lines) == 1, "--json must print exactly one JSON object"
    obj = json.loads(lines[0])
    assert isinstance(obj, dict)
    return obj


def one_error_line(err: str) -> str:
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1, err
    assert "Traceback" not in err
    return lines[0]


def red_of(p, c, R0) -> float:
    return math.sqrt(4 * (p[0] - c[0]) ** 2 + (p[1] - c[1]) ** 2 + (p[2] - c[2]) ** 2) / R0



@pytest.fixture(scope="module")
def work(tmp_path_factory):
    """Small invented files, and the demo fitted once and saved as a project."""
    d = tmp_path_factory.mktemp("cli")
    (d / "small.csv").write_text(SMALL, encoding="utf-8")
    (d / "shelf.csv").write_text("solvent,dD,dP,dH,note\nMEK,,,,\ncyclohexanone,,,,\n"
                                 "THF,,,,\nmy thinner,17.2,4.1,5.9,own coordinates\n"
                                 "toluene,,,,tested already\n", encoding="utf-8")
    (d / "shelf_mek.csv").write_text("solvent\nMEK\nacetone\ntoluene\ncyclohexanone\n"
                                     "ethanol\nanisole\n1-butanol\ndimethyl carbonate\n",
                                     encoding="utf-8")
    rc, out, err = run(["fit", DEMO, "--save", d / "p.json", "--json"])
    assert rc == 0, err
    return {"dir": d, "project": d / "p.json", "fit": json.loads(out)}


# ------------------------------------------------------------------------------ fit

def test_fit_json_contract_on_demo(work):
    f = work["fit"]
    assert FIT_KEYS <= set(f)
    for k in ("dD", "dP", "dH", "R0", "desirability"):
        assert isinstance(f[k], float) and math.isfinite(f[k])
    assert 0 < f["desirability"] <= 1 and f["R0"] > 0
    assert isinstance(f["misfits"], list) and isinstance(f["warnings"], list)
    # the demo: 18 dissolve, 3 partly, 14 do not (counted in data/demo/varnish_binder.csv)
    assert (f["n_good"], f["n_bad"]) == (18, 14)
    # the misfits are exactly the table rows that disagree with the sphere
    bad = [r["name"] for r in f["table"] if r["agrees"] is False]
    assert f["misfits"] == bad


def test_fit_json_misfits_are_outside_or_inside_wrongly(work):
    f = work["fit"]
    c, R0 = (f["dD"], f["dP"], f["dH"]), f["R0"]
    for r in f["table"]:
        red = red_of((r["dD"], r["dP"], r["dH"]), c, R0)
        assert r["red"] == pytest.approx(red, rel=1e-9)
        if r["agrees"] is False:
            assert r["name"] in f["misfits"]
            assert (red <= 1) != (r["counted_as"] == "good")


def test_fit_human_report(work):
    rc, out, err = run(["fit", work["dir"] / "small.csv"])
    assert rc == 0 and err == ""
    assert "[[Parameters]]" in out and "R0 =" in out
    rc, out, _ = run(["fit", work["dir"] / "small.csv", "--save", work["dir"] / "s.json"])
    assert rc == 0 and "Project saved to" in out


def test_saved_project_gives_the_same_centre_everywhere(work):
    p, f = work["project"], work["fit"]
    centre = [f["dD"], f["dP"], f["dH"]]
    doc = json.loads(p.read_text(encoding="utf-8"))
    assert doc["format"] == "solsphere-project"
    assert doc["fit"]["dD"] == f["dD"]
    g = run_json(["fit", p])
    assert [g["dD"], g["dP"], g["dH"], g["R0"]] == pytest.approx(centre + [f["R0"]], abs=1e-9)
    r = run_json(["rank", p, "--top", "3"])
    assert r["centre"] == pytest.approx(centre, abs=1e-9) and r["R0"] == pytest.approx(f["R0"])
    b = run_json(["blend", p, "--top", "3"])
    assert b["centre"] == pytest.approx(centre, abs=1e-9) and b["R0"] == pytest.approx(f["R0"])
    html_path = work["dir"] / "demo.html"
    s = run_json(["share", p, "-o", html_path])
    page = html_path.read_text(encoding="utf-8")
    assert s["bytes"] == len(page.encode("utf-8"))
    assert f"dD = {f['dD']:.1f} MPa½" in page and f"R0 = {f['R0']:.1f} MPa½" in page
    assert "varnish_binder.csv" in page  # the default title names the results file


def test_project_partial_setting_is_kept(work):
    d = work["dir"]
    a = run_json(["fit", DEMO, "--partial", "bad", "--save", d / "pb.json"])
    assert a["partial"] == "bad"
    b = run_json(["fit", d / "pb.json"])  # no --partial: the project's setting
    assert b["partial"] == "bad"
    assert [b["dD"], b["dP"], b["dH"]] == pytest.approx([a["dD"], a["dP"], a["dH"]], abs=1e-9)
    # counting 'partly' as bad changes the counts used (3 partial results in the demo)
    assert b["n_counted_bad"] == work["fit"]["n_counted_bad"] + 3


def test_save_refuses_to_overwrite_a_results_file(work, tmp_path):
    target = tmp_path / "results.csv"
    target.write_text(SMALL, encoding="utf-8")
    before = target.read_bytes()
    rc, out, err = run(["fit", target, "--save", target])
    assert rc == 2 and out == ""
    line = one_error_line(err)
    assert "results.csv" in line and "not overwriting" in line
    assert target.read_bytes() == before


def test_save_is_atomic_when_the_write_fails(work, tmp_path, monkeypatch):
    p = tmp_path / "p.json"
    rc, _, err = run(["fit", work["dir"] / "small.csv", "--save", p])
    assert rc == 0, err
    before = p.read_bytes()

    def broken(fh, data):
        fh.write(data[: len(data) // 2])
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(fileio, "_write_bytes", broken)
    rc, out, err = run(["fit", DEMO, "--save", p])
    assert rc == 2
    assert "p.json" in one_error_line(err)
    assert p.read_bytes() == before  # the old project is intact
    assert [x.name for x in tmp_path.iterdir()] == ["p.json"]  # no temporary left behind


# ------------------------------------------------------------------------------ bad input

@pytest.mark.parametrize("body, line, column", [
    ("solvent,outcome\ntoluene,good\nacetone,maybe\n", 3, "outcome"),
    ("solvent,outcome,dD,dP,dH\ntoluene,good,,,\nmine,bad,17,abc,3\n", 3, "dP"),
    ("# comment\nsolvent,outcome\ntoluene,good\nnot-a-solvent-xyz,bad\n", 4, "solvent"),
])
def test_bad_input_is_one_line_naming_file_line_column(tmp_path, body, line, column):
    f = tmp_path / "bench results.csv"
    f.write_text(body, encoding="utf-8")
    for cmd in ("fit", "rank", "blend"):
        rc, out, err = run([cmd, f])
        assert rc == 2 and out == ""
        msg = one_error_line(err)
        assert "bench results.csv" in msg and f"line {line}" in msg and f"column {column}" in msg


def test_bad_input_exit_code_in_a_real_process(tmp_path):
    if not SCRIPT.exists():
        pytest.skip("solsphere script not installed in this venv")
    f = tmp_path / "broken.csv"
    f.write_text("solvent,outcome\ntoluene,good\nacetone,perhaps\n", encoding="utf-8")
    p = subprocess.run([str(SCRIPT), "fit", str(f)], capture_output=True, text=True,
                       timeout=120)
    assert p.returncode == 2 and p.stdout == ""
    msg = one_error_line(p.stderr)
    assert "broken.csv" in msg and "line 3" in msg


@pytest.mark.parametrize("argv", [
    ["rank", "{small}", "--top", "0"],
    ["rank", "{small}", "--top", "-1"],
    ["blend", "{small}", "--top", "x"],
    ["rank", "{small}", "--min-flash-point", "abc"],
    ["blend", "{small}", "--max-boiling-point", "nan"],
    ["fit", "{small}", "--partial", "maybe"],
    ["frobnicate", "{small}"],
    ["fit"],
    ["share", "{small}"],  # -o is required
])
def test_usage_errors_exit_2_with_one_line(work, argv):
    argv = [a.format(small=work["dir"] / "small.csv") for a in argv]
    rc, out, err = run(argv)
    assert rc == 2 and out == ""
    assert "<command line>" in one_error_line(err)


def test_missing_file_and_folder(work, tmp_path):
    rc, out, err = run(["fit", tmp_path / "nope.csv"])
    assert rc == 2 and "nope.csv" in one_error_line(err) and "not found" in err
    rc, out, err = run(["rank", tmp_path])
    assert rc == 2 and str(tmp_path) in one_error_line(err) and "folder" in err
    rc, out, err = run(["rank", work["dir"] / "small.csv", "--candidates", tmp_path / "x.csv"])
    assert rc == 2 and "x.csv" in one_error_line(err)


def test_no_command_prints_help_and_exits_2():
    rc, out, err = run([])
    assert rc == 2 and "fit" in out and "rank" in out


@pytest.mark.parametrize("body, words", [
    ("solvent,outcome\ntoluene,good\nacetone,good\n", "does not dissolve"),
    ("solvent,outcome\ntoluene,bad\nwater,bad\n", "dissolves"),
    ("solvent,outcome\ntoluene,partly\nwater,bad\n", "partly"),
])
def test_no_good_or_no_bad_results_explained(tmp_path, body, words):
    f = tmp_path / "r.csv"
    f.write_text(body, encoding="utf-8")
    args = ["fit", f] + (["--partial", "skip"] if "partly" in body else [])
    for cmd in ("fit", "rank"):
        rc, out, err = run([cmd] + args[1:])
        assert rc == 2 and out == ""
        assert words in one_error_line(err)


def test_internal_error_is_exit_1_one_line(monkeypatch, work):
    def boom(args):
        raise RuntimeError("simulated bug")

    monkeypatch.setitem(commands.COMMANDS, "fit", boom)
    monkeypatch.delenv("SOLSPHERE_DEBUG", raising=False)
    rc, out, err = run(["fit", work["dir"] / "small.csv"])
    assert rc == 1
    assert "simulated bug" in one_error_line(err) and "internal error" in err


# ------------------------------------------------------------------------------ rank

def test_rank_json_sorted_with_contract_keys(work):
    f = work["fit"]
    r = run_json(["rank", work["project"], "--top", "40"])
    sols = r["solvents"]
    assert len(sols) == 40
    reds = [s["red"] for s in sols]
    assert reds == sorted(reds)
    c = (f["dD"], f["dP"], f["dH"])
    for s in sols:
        assert {"name", "dD", "dP", "dH", "red", "flags", "flash_point"} <= set(s)
        assert s["red"] == pytest.approx(red_of((s["dD"], s["dP"], s["dH"]), c, f["R0"]),
                                         rel=1e-9)
    tested = {row["name"] for row in f["table"]}
    assert not tested & {s["name"] for s in sols}


def test_rank_top_and_include_tested(work):
    small = work["dir"] / "small.csv"
    assert len(run_json(["rank", small, "--top", "5"])["solvents"]) == 5
    r = run_json(["rank", small, "--top", "2000", "--include-tested"])
    names = {s["name"]: s for s in r["solvents"]}
    assert names["toluene"]["tested"] is True and names["water"]["tested"] is True
    plain = run_json(["rank", small, "--top", "2000"])
    assert "toluene" not in {s["name"] for s in plain["solvents"]}
    assert len(r["solvents"]) == len(plain["solvents"]) + 7


def test_rank_candidates_shelf_restricts_pool(work, lib):
    r = run_json(["rank", work["dir"] / "small.csv", "--candidates", work["dir"] / "shelf.csv"])
    got = {s["name"] for s in r["solvents"]}
    expected = {lib.lookup("MEK").name, "cyclohexanone", lib.lookup("THF").name, "my thinner"}
    assert got == expected  # toluene is on the shelf but was tested
    mine = next(s for s in r["solvents"] if s["name"] == "my thinner")
    assert (mine["dD"], mine["dP"], mine["dH"]) == (17.2, 4.1, 5.9)


def test_exclude_alias_removes_2_butanone(work, lib):
    small = work["dir"] / "small.csv"
    assert lib.lookup("MEK").name == "2-butanone"
    full = {s["name"] for s in run_json(["rank", small, "--top", "2000"])["solvents"]}
    assert "2-butanone" in full
    cut = run_json(["rank", small, "--top", "2000", "--exclude", "MEK"])
    names = {s["name"] for s in cut["solvents"]}
    assert "2-butanone" not in names and len(names) == len(full) - 1
    # comma-separated and repeatable
    cut2 = run_json(["rank", small, "--top", "2000", "--exclude", "MEK,THF",
                     "--exclude", "cyclohexanone"])
    assert len(cut2["solvents"]) == len(full) - 3


def test_exclude_own_shelf_solvent_and_unknown_name(work, lib):
    small, shelf = work["dir"] / "small.csv", work["dir"] / "shelf.csv"
    r = run_json(["rank", small, "--candidates", shelf, "--exclude", "my thinner,MEK"])
    assert {s["name"] for s in r["solvents"]} == {"cyclohexanone", lib.lookup("THF").name}
    rc, out, err = run(["rank", small, "--exclude", "no-such-solvent-qq"])
    assert rc == 2 and "--exclude" in one_error_line(err) and "no-such-solvent-qq" in err


def _rank_all(work, *extra):
    return run_json(["rank", work["dir"] / "small.csv", "--top", "2000", *extra])["solvents"]


def test_rank_filters_are_honoured(work, lib):
    base = _rank_all(work)
    fp = _rank_all(work, "--min-flash-point", "40")
    assert fp and all(s["flash_point"] is not None and s["flash_point"] >= 40 for s in fp)
    assert any(s["flash_point"] is not None and s["flash_point"] < 40 for s in base)
    bp = _rank_all(work, "--max-boiling-point", "120")
    assert bp and all(s["boiling_point"] is not None and s["boiling_point"] <= 120 for s in bp)
    assert any(s["boiling_point"] is not None and s["boiling_point"] > 120 for s in base)
    nc = _rank_all(work, "--no-carcinogens")
    assert nc and all(s["carcinogen"] == "" for s in nc)
    assert any(s["carcinogen"] for s in base)
    both = _rank_all(work, "--min-flash-point", "23,5", "--no-carcinogens")  # decimal comma
    assert all(s["flash_point"] >= 23.5 and not s["carcinogen"] for s in both)


def test_filters_leaving_nothing_is_exit_2(work):
    rc, out, err = run(["rank", work["dir"] / "small.csv", "--max-boiling-point", "-90"])
    assert rc == 2 and out == ""
    assert "no candidate" in one_error_line(err)


def test_rank_human_table_has_safety_columns(work):
    rc, out, err = run(["rank", work["dir"] / "small.csv", "--top", "5"])
    assert rc == 0 and err == ""
    assert "flash °C" in out and "RED" in out and "confirm at the bench" in out
    assert len([ln for ln in out.splitlines() if "  " in ln]) >= 7  # header, rule, 5 rows


# ------------------------------------------------------------------------------ blend

def _check_blend(b, centre, R0, lib):
    assert {"solvents", "volume_fractions", "red", "inside_window"} <= set(b)
    assert len(b["solvents"]) == 2 and len(b["volume_fractions"]) == 2
    fa, fb = b["volume_fractions"]
    assert fa + fb == pytest.approx(1.0) and 0 <= fb <= fa <= 1
    pa, pb = (lib.lookup(n).point for n in b["solvents"])
    mix = [fa * x + fb * y for x, y in zip(pa, pb)]  # volume-fraction weighted mean
    assert b["red"] == pytest.approx(red_of(mix, centre, R0), rel=1e-7, abs=1e-9)
    w = b["inside_window"]
    if b["red"] > 1:
        assert w is None
    else:
        lo, hi = w
        assert 0 <= lo <= fa <= hi <= 1
        for edge in (lo, hi):  # an edge strictly inside (0, 1) lies on the surface
            if 1e-9 < edge < 1 - 1e-9:
                p = [edge * x + (1 - edge) * y for x, y in zip(pa, pb)]
                assert red_of(p, centre, R0) == pytest.approx(1.0, abs=1e-6)


def test_blend_json_contract_on_demo(work, lib):
    f = work["fit"]
    c = (f["dD"], f["dP"], f["dH"])
    out = run_json(["blend", work["project"], "--top", "15"])
    bl = out["blends"]
    assert len(bl) == 15
    reds = [b["red"] for b in bl]
    assert reds == sorted(reds)
    for b in bl:
        _check_blend(b, c, f["R0"], lib)
        assert 0 < b["volume_fractions"][1]  # a genuine blend by default


def test_blend_shelf_with_red_above_one_has_null_window(work, lib, tmp_path):
    # invented shelf of two solvents far from the small sphere
    shelf = tmp_path / "far.csv"
    shelf.write_text("solvent\nwater\nglycerol\nethylene glycol\n", encoding="utf-8")
    f = run_json(["fit", work["dir"] / "small.csv"])
    out = run_json(["blend", work["dir"] / "small.csv", "--candidates", shelf,
                    "--with-single"])
    assert out["blends"]
    for b in out["blends"]:
        _check_blend(b, (f["dD"], f["dP"], f["dH"]), f["R0"], lib)
        assert b["red"] > 1 and b["inside_window"] is None


def test_blend_filters_and_exclude_honoured(work, lib):
    small, shelf = work["dir"] / "small.csv", work["dir"] / "shelf_mek.csv"
    base = run_json(["blend", small, "--candidates", shelf, "--top", "100", "--with-single"])
    assert any("2-butanone" in b["solvents"] for b in base["blends"])
    cut = run_json(["blend", small, "--candidates", shelf, "--top", "100", "--with-single",
                    "--exclude", "MEK"])
    assert cut["blends"] and not any("2-butanone" in b["solvents"] for b in cut["blends"])
    fp = run_json(["blend", small, "--top", "50", "--min-flash-point", "40"])
    assert fp["blends"]
    for b in fp["blends"]:
        assert all(x is not None and x >= 40 for x in b["flash_points"])
    bp = run_json(["blend", small, "--top", "50", "--max-boiling-point", "110"])
    for b in bp["blends"]:
        assert all(x is not None and x <= 110 for x in b["boiling_points"])
    nc = run_json(["blend", small, "--top", "50", "--no-carcinogens"])
    for b in nc["blends"]:
        assert not any(lib.lookup(n).carcinogen for n in b["solvents"])


def test_blend_report_counts_what_the_flash_filter_removed(work):
    rc, out, err = run(["blend", work["dir"] / "small.csv", "--top", "3",
                        "--min-flash-point", "40"])
    assert rc == 0, err
    m = re.search(r"\((\d+) removed below it, (\d+) with unknown flash point\)", out)
    assert m, out
    assert int(m.group(1)) > 0 and int(m.group(2)) > 0  # the library has both kinds
    js = run_json(["blend", work["dir"] / "small.csv", "--top", "3", "--min-flash-point", "40"])
    assert len(js["filters"]["removed_low_flash_point"]) == int(m.group(1))


def test_blend_top(work):
    assert len(run_json(["blend", work["dir"] / "small.csv", "--top", "4"])["blends"]) == 4


# ------------------------------------------------------------------------------ share

@pytest.fixture(scope="module")
def shared(tmp_path_factory):
    d = tmp_path_factory.mktemp("share")
    f = d / "xss.csv"
    f.write_text("solvent,outcome,dD,dP,dH\n<script>alert(1)</script>,good,17.5,5.0,5.0\n"
                 + "\n".join(f"{ln},," for ln in SMALL.splitlines()[1:]) + "\n",
                 encoding="utf-8")
    out = d / "page.html"
    rc, stdout, err = run(["share", f, "-o", out, "--title", "Resin <b>R-1</b> & co"])
    assert rc == 0, err
    return {"html": out.read_text(encoding="utf-8"), "stdout": stdout, "dir": d, "csv": f}


def test_share_is_self_contained(shared):
    from plotly.offline import get_plotlyjs
    page = shared["html"]
    assert get_plotlyjs()[:2000] in page  # the bundle is inlined
    assert not re.search(r"<script[^>]*\bsrc\s*=", page, re.IGNORECASE)
    assert not re.search(r"""<link[^>]*href\s*=\s*["']?https?:""", page, re.IGNORECASE)
    assert "Wrote" in shared["stdout"]


def test_share_contains_the_fit_report_and_caution(shared):
    page = shared["html"]
    # the summary in plain words; the command line's report only folded away at the end
    assert "<h2>Summary</h2>" in page and "radius R0" in page and "RED (relative energy" in page
    assert page.index("<h2>Summary</h2>") < page.index("[[Fit]]")
    assert "<details>" in page[page.index("[[Fit]]") - 300:page.index("[[Fit]]")]
    assert "confirm every recommendation at the bench" in page
    assert "Read the safety data sheet" in page


def test_share_escapes_user_text(shared):
    page = shared["html"]
    assert "<script>alert(1)" not in page
    assert "alert(1)" in page  # the trial is there (in the figures' escaped JSON)
    assert "\\u0026lt;script\\u0026gt;alert(1)" in page
    assert "<b>R-1</b>" not in page and "Resin &lt;b&gt;R-1&lt;/b&gt; &amp; co" in page


def _figure(page: str, var: str) -> dict:
    m = re.search(rf"var {var} = (\{{.*?\}});\n", page, re.DOTALL)
    assert m, var
    return json.loads(m.group(1))


def test_share_figures_have_trials_and_blend_segments(shared):
    f3 = _figure(shared["html"], "f3")
    names = [t.get("name") for t in f3["data"]]
    assert "dissolves" in names and "does not" in names
    hov = " ".join(" ".join(t.get("hovertext") or []) for t in f3["data"])
    assert "alert(1)" in hov and "<script>" not in hov  # escaped inside the hover text
    seg = [t for t in f3["data"] if t.get("mode") == "lines" and
           t.get("line", {}).get("color") == "#e6ab02"]
    assert seg and any(x is not None for x in seg[0]["x"]), "blend segments are empty"
    f2 = _figure(shared["html"], "f2")
    assert len(f2["data"]) >= 3


def test_share_json_and_refuses_to_overwrite_data(shared, tmp_path):
    out = tmp_path / "x.html"
    obj = run_json(["share", shared["csv"], "-o", out])
    assert obj["output"] == str(out) and obj["bytes"] == len(out.read_bytes())
    before = shared["csv"].read_bytes()
    rc, o, err = run(["share", shared["csv"], "-o", shared["csv"]])
    assert rc == 2 and "not overwriting" in one_error_line(err)
    assert shared["csv"].read_bytes() == before
    rc, _, err = run(["share", shared["csv"], "-o", out])  # an old page may be replaced
    assert rc == 0, err


# ------------------------------------------------------------------------------ imports

def test_build_parser_does_not_import_plotting():
    code = ("import sys; from solsphere import cli; cli.build_parser(); "
            "print('plotly' in sys.modules, 'dash' in sys.modules, 'scipy' in sys.modules)")
    p = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                       timeout=120, cwd=str(ROOT))
    assert p.returncode == 0, p.stderr
    assert p.stdout.split() == ["False", "False", "False"]


def test_help_under_importtime_loads_no_heavy_modules():
    if not SCRIPT.exists():
        pytest.skip("solsphere script not installed in this venv")
    env = dict(os.environ, PYTHONDONTWRITEBYTECODE="1")
    p = subprocess.run([sys.executable, "-X", "importtime", str(SCRIPT), "--help"],
                       capture_output=True, text=True, timeout=120, env=env)
    assert p.returncode == 0
    assert "fit" in p.stdout and "blend" in p.stdout
    assert "import time:" in p.stderr  # importtime really ran
    heavy = [ln for ln in p.stderr.splitlines() if re.search(r"\b(plotly|dash|scipy)\b", ln)]
    assert heavy == []


def test_parser_choices_match_the_library():
    # the parser keeps its own copy of the choices so that --help imports no science
    from solsphere.library.pools import POOL_CHOICES
    from solsphere.workflows import RANK_CHOICES
    assert cli.POOLS == POOL_CHOICES and cli.RANK_CHOICES == RANK_CHOICES
