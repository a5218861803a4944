"""The share page as a report (solsphere.report.share, .page, .facts) and the share
command's figure export (solsphere.report.export).

The image tests need a Chromium-based browser (kaleido drives it); they are marked
``browser`` and skip only when none is installed (``make test`` installs Debian's).
"""

from __future__ import annotations

import html
import json
import os
import re
import shutil
import struct

import pytest

from clirun import run_cli
from solsphere.design.ranking import rank_solvents
from solsphere.errors import InputError
from solsphere.io.project import load_any
from solsphere.report import facts
from solsphere.report.export import image_format, render_images
from solsphere.report.page import table_html
from solsphere.report.share import CAUTIONS, RED_TEXT, build_share
from solsphere.workflows import candidate_pool, design_blends, fit_project

HAZARD_COLUMNS = ("flash point", "exposure limit (8 h)", "carcinogen", "reprotoxic / restricted",
                  "corrosive / toxic")


@pytest.fixture(scope="module")
def demo(lib, demo_path):
    project = load_any(str(demo_path), library=lib)
    return project, fit_project(project, library=lib)


@pytest.fixture(scope="module")
def report(demo, lib):
    project, fit = demo
    return build_share(project, fit, lib, material="BX-7 <binder>", notes="film 24 h & dry",
                       top=8, n_blends=4, replace="toluene", n_pairs=2)


@pytest.fixture(scope="module")
def page(report):
    return report.html()


# ------------------------------------------------------------------------- content

def test_tested_table_has_every_result_with_outcome_red_and_agreement(report, demo):
    project, fit = demo
    rows = report.tested
    assert len(rows) == len(project.trials) == fit.n_trials
    table = fit.to_dict()["table"]
    for row, t in zip(rows, table):
        assert row["solvent"].startswith(t["name"])
        assert row["outcome"] == {"good": "dissolves", "partial": "partly",
                                  "bad": "does not"}[t["outcome"]]
        assert row["RED"] == f"{t['red']:.2f}"
        assert row["agrees"] == ("yes" if t["agrees"] else "NO (misfit)")
    # names typed otherwise than the library's are shown as resolved, notes kept
    mek = next(r for r in rows if r["solvent"].startswith("2-butanone"))
    assert "(typed: MEK)" in mek["solvent"]
    assert any(r["note"] == "clear in 10 min" for r in rows)


def test_untried_solvents_come_from_the_working_pool_by_default(report, lib, demo):
    project, fit = demo
    working = {s.name for s in lib.working()}
    names = [r["solvent"] for r in report.untried]
    assert len(names) == 8 and set(names) <= working
    assert not set(names) & set(project.trials.names)
    # in the ranking's own order (nothing re-ranked here)
    pool, _ = candidate_pool(lib)
    ranked = rank_solvents(pool, (fit.dD, fit.dP, fit.dH), fit.R0, top=8,
                           tested=list(project.trials.names)
                           + [t.cas for t in project.trials if t.cas])
    assert names == [r.solvent.name for r in ranked.solvents]
    for row in report.blends:
        label = row["blend (volume %)"]
        assert any(n in label for n in working)
    assert "working solvents" in report.pool_text and "no reagents" in report.pool_text


def test_pool_all_says_reagents_are_included(demo, lib):
    project, fit = demo
    r = build_share(project, fit, lib, top=3, n_blends=0, pool="all")
    assert "reagents" in r.pool_text and "--pool all" in r.pool_text
    assert r.blends == []


def test_blends_are_design_blends_in_its_order(report, demo, lib):
    _, fit = demo
    design = design_blends(fit, lib, top=4, drying=True)
    want = [" + ".join(f"{round(100 * f):.0f}% {n}" for n, f in
                       zip(b["solvents"], b["volume_fractions"])) for b in design.blends]
    assert [r["blend (volume %)"] for r in report.blends] == want
    for r in report.blends:  # the real-mixture facts beside each blend
        assert r["flash point"] and r["drying"] and r["phases"]


def test_hazard_columns_beside_every_recommendation(report):
    for rows in (report.untried, report.replacement["singles"]):
        assert rows
        for col in HAZARD_COLUMNS:
            assert all(col in r and r[col] not in ("", None) for r in rows), col
    for col in ("exposure limit (8 h)", "carcinogen / reprotoxic / corrosive"):
        assert all(r[col] for r in report.blends)
        assert all(r[col] for r in report.replacement["pairs"])
    # an exposure limit always names its jurisdiction
    limits = [r["exposure limit (8 h)"] for r in report.untried
              if r["exposure limit (8 h)"] != facts.NO_DATA]
    assert limits and all(re.search(r"ppm \(\w+", x) for x in limits)


def test_facts_of_listed_and_unknown_solvents(lib):
    nmp, benzene, water = lib.lookup("NMP"), lib.lookup("benzene"), lib.lookup("water")
    assert facts.listing_text(nmp).startswith("Repr. 1B") and "(EU)" in facts.listing_text(nmp)
    assert "IARC group 1" in facts.carcinogen_text(benzene)
    assert facts.flash_text(water) == "none (not flammable)"
    assert facts.ghs_text(water) == "not flammable"
    assert facts.exposure_text(lib.lookup("toluene")).endswith("(Ontario)")
    assert facts.health_text(lib.lookup("acetic acid")).startswith("Skin Corr. 1")
    assert facts.health_text(lib.lookup("toluene")) == "none listed"
    assert facts.listings_text(lib.lookup("toluene")) == "reprotoxic Repr. 2, restricted (EU)"
    assert "IARC group 1" in facts.listings_text(benzene)
    # data caveats the hazard cells do not already say
    assert any(c.startswith("compilations disagree")
               for c in facts.caveats(lib.lookup("dimethyl carbonate")))
    assert not any(c.startswith(("flash point", "exposure limit"))
                   for c in facts.caveats(lib.lookup("toluene")))
    # absence of data is said, never a blank
    unknown = type(nmp)("invented", 16.0, 5.0, 5.0)
    assert facts.flash_text(unknown) == facts.exposure_text(unknown) == facts.NO_DATA


def test_replacements_are_never_worse_by_default(report, lib):
    r = report.replacement
    assert r["target"] == "toluene" and r["singles"] and not r["allow_worse"]
    assert r["target_facts"]["reprotoxic / restricted"].startswith("Repr. 2")
    for row in r["singles"]:
        assert not any("WORSE" in v or v.endswith(" worse") for v in row["versus old"])
    assert all("benzene" != row["solvent"] for row in r["singles"])


def test_summary_in_plain_words(report, demo):
    _, fit = demo
    text = " ".join(report.paragraphs)
    assert f"δD {fit.dD:.1f}, δP {fit.dP:.1f}, δH {fit.dH:.1f} MPa½" in text
    assert f"R0 {fit.R0:.1f} MPa½" in text
    assert RED_TEXT in text and "Hansen's classic sphere" in text
    assert "No intervals were computed" in text
    assert "[[" not in text and "desirability =" not in text


def test_summary_gives_intervals_when_resampled(demo, lib):
    from solsphere.uncertainty.bootstrap import bootstrap
    project, fit = demo
    boot = bootstrap(project.trials, n_bootstrap=20, seed=1, partial=fit.partial,
                     bounds=fit.bounds)
    r = build_share(project, fit, lib, top=3, n_blends=0, bootstrap=boot)
    text = " ".join(r.paragraphs)
    lo, hi = boot.intervals["R0"]
    assert f"95 % intervals from 20 resamples" in text and f"R0 {lo:.1f} to {hi:.1f}" in text
    assert all(re.fullmatch(r"\d\.\d\d", row["p_good"]) for row in r.untried)


def test_results_left_out_of_the_fit_are_not_called_misfits(demo, lib):
    project, _ = demo
    fit = fit_project(project, library=lib, partial="skip")
    r = build_share(project, fit, lib, top=1, n_blends=0)
    partly = [row for row in r.tested if row["outcome"] == "partly"]
    assert partly and all(row["agrees"] == "not counted" for row in partly)
    n_counted = len(r.tested) - len(partly)
    assert any(f"of the {n_counted} results it was fitted to" in p for p in r.paragraphs)
    assert '<tr class="misfit">' not in table_html(r.tested, "t")


def test_graded_model_is_named(demo, lib):
    project, _ = demo
    g = fit_project(project, library=lib, method="graded")
    r = build_share(project, g, lib, top=2, n_blends=0)
    assert any("graded boundary" in p for p in r.paragraphs)


# ------------------------------------------------------------------------- page

def test_page_has_title_material_notes_tables_and_cautions(page):
    assert "<title>BX-7 &lt;binder&gt;" not in page  # title given by material: escaped
    assert "<title>Solubility report: BX-7 &lt;binder&gt;</title>" in page
    assert "Material: <strong>BX-7 &lt;binder&gt;</strong>" in page
    assert "film 24 h &amp; dry" in page
    for tid in ("tested-table", "untried-table", "blends-table", "replace-singles",
                "replace-pairs"):
        assert f'<table class="report" id="{tid}">' in page, tid
    head = page[page.index('id="untried-table"'):]
    head = head[:head.index("</thead>")]
    for col in HAZARD_COLUMNS:
        assert f"<th>{html.escape(col)}</th>" in head
    for c in CAUTIONS:
        assert page.count(html.escape(c)) == 2  # at the top and at the end


def test_page_has_the_three_figures(page, report):
    for var, div in (("f3", "map3d"), ("f2", "planes"), ("fl", "ladder")):
        assert f"var {var} = " in page and f'Plotly.newPlot("{div}", {var}.data' in page
    ladder = report.figures()["ladder"]
    names = {t.name for t in ladder.data}
    assert {"dissolves", "does not"} <= names  # every tested solvent, by outcome


def test_page_has_print_styles_and_opens_offline(page):
    css = page[page.index("<style>"):page.index("</style>")]
    assert "@media print" in css and "@page" in css and "size: A4" in css
    assert "thead { display: table-header-group; }" in css
    assert "overflow-wrap: anywhere" in css
    assert not re.search(r"<script[^>]*\bsrc\s*=", page, re.IGNORECASE)
    assert not re.search(r"""<link[^>]*href\s*=\s*["']?https?:""", page, re.IGNORECASE)


def test_title_option_wins_and_default_title_is_not_the_file_name(demo, lib, demo_path):
    project, fit = demo
    r = build_share(project, fit, lib, title="Batch 12", top=1, n_blends=0)
    assert r.title == "Batch 12"
    r = build_share(project, fit, lib, top=1, n_blends=0)
    assert r.title == "Solubility report" and demo_path.name not in r.title


def test_table_html_escapes_and_marks_misfits():
    out = table_html([{"solvent": "<x>", "RED": "1.20", "outcome": "dissolves",
                       "_outcome": "good", "_agrees": False}], "t")
    assert "&lt;x&gt;" in out and '<tr class="misfit">' in out
    assert '<td class="o-good">dissolves</td>' in out and "_agrees" not in out
    assert "Nothing" in table_html([], "t")


# ------------------------------------------------------------------------- command line

def test_share_command_with_pool_options_and_json(tmp_path, demo_path):
    out = tmp_path / "r.html"
    rc, stdout, err = run_cli(["share", demo_path, "-o", out, "--top", "3", "--blends", "2",
                               "--exclude", "dimethyl isosorbide", "--min-flash-point", "60",
                               "--title", "T", "--material-name", "M", "--json"])
    assert rc == 0, err
    obj = json.loads(stdout)
    assert obj["output"] == str(out) and obj["bytes"] == out.stat().st_size
    rep = obj["report"]
    assert rep["title"] == "T" and rep["material"] == "M"
    assert len(rep["untried"]) == 3 and len(rep["blends"]) <= 2
    assert all(r["solvent"] != "dimethyl isosorbide" for r in rep["untried"])
    for r in rep["untried"]:  # every listed solvent passes the flash-point limit
        assert int(r["flash point"].split()[0]) >= 60


def test_share_refuses_unknown_replace_name_in_one_line(tmp_path, demo_path):
    rc, _, err = run_cli(["share", demo_path, "-o", tmp_path / "r.html", "--replace",
                          "tolulene", "--blends", "0"])
    assert rc == 2 and len(err.strip().splitlines()) == 1 and "tolulene" in err
    assert not (tmp_path / "r.html").exists()


def test_image_size_options_are_checked(tmp_path, demo_path):
    rc, _, err = run_cli(["share", demo_path, "-o", tmp_path / "m.png", "--width", "9000"])
    assert rc == 2 and "--width" in err and "6000" in err
    with pytest.raises(InputError, match="outside 50"):
        render_images([(None, "png")], width=10)


def test_image_format_by_suffix():
    assert [image_format(p) for p in ("a.png", "b.SVG", "c.pdf", "d.html", "e")] == \
        ["png", "svg", "pdf", None, None]


def test_missing_browser_is_one_line_exit_2(tmp_path, demo_path, monkeypatch):
    # kaleido looks at BROWSER_PATH first: a path that does not exist = no browser
    monkeypatch.setenv("BROWSER_PATH", str(tmp_path / "no-such-chromium"))
    old = tmp_path / "m.png"
    old.write_bytes(b"old picture")
    rc, out, err = run_cli(["share", demo_path, "-o", old, "--blends", "0", "--top", "1"])
    assert rc == 2, err
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1 and "Traceback" not in err
    assert "-o" in lines[0] and "Chromium" in lines[0] and "apt-get install chromium" in lines[0]
    assert old.read_bytes() == b"old picture"  # nothing saved is lost


# ------------------------------------------------------------------------- images

def _chromium() -> str | None:
    return (os.environ.get("BROWSER_PATH") or shutil.which("chromium")
            or shutil.which("chromium-browser") or shutil.which("google-chrome"))


needs_chromium = pytest.mark.skipif(_chromium() is None,
                                    reason="no Chromium: install Debian's chromium "
                                           "(make test does it as root)")


@pytest.mark.browser
@needs_chromium
def test_png_svg_pdf_export_through_one_browser(tmp_path, demo_path):
    outs = [tmp_path / "map.png", tmp_path / "map.svg", tmp_path / "map.pdf",
            tmp_path / "page.html"]
    argv = ["share", demo_path, "--blends", "2", "--top", "3", "--width", "640",
            "--height", "480", "--json"]
    for o in outs:
        argv += ["-o", o]
    rc, stdout, err = run_cli(argv)
    assert rc == 0, err
    obj = json.loads(stdout)
    assert [w["format"] for w in obj["outputs"]] == ["html", "png", "svg", "pdf"]
    png, svg, pdf = (p.read_bytes() for p in outs[:3])
    assert png.startswith(b"\x89PNG\r\n\x1a\n")
    w, h = struct.unpack(">II", png[16:24])  # IHDR: drawn at scale 2
    assert (w, h) == (1280, 960)
    assert b"<svg" in svg[:200] and b'width="640"' in svg[:400]  # vectors: not scaled
    assert b"dissolves" in svg and b"<image" in svg  # the legend as text, the scene drawn
    assert pdf.startswith(b"%PDF-") and pdf.rstrip().endswith(b"%%EOF")
    for blob in (png, svg, pdf):
        assert len(blob) > 20_000  # a drawn map, not an empty page
    for want in obj["outputs"]:
        assert os.path.getsize(want["path"]) == want["bytes"]


@pytest.mark.browser
@needs_chromium
def test_planes_figure_export(tmp_path, demo_path):
    out = tmp_path / "planes.svg"
    rc, _, err = run_cli(["share", demo_path, "-o", out, "--figure", "planes",
                          "--blends", "0", "--top", "1"])
    assert rc == 0, err
    svg = out.read_text(encoding="utf-8")
    # the three planes as vectors: their titles and axis titles are SVG text
    for title in ("δP–δH", "δD–δP", "δD–δH", "δD (MPa½)"):
        assert title in svg, title
    assert "<image" not in svg
