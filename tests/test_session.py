"""Tests for solsphere.session: the steps the command line and the app share.

Bench results and shelves here are invented; the demo file is the invented demo scenario.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

from solsphere import workflows as session
from solsphere.report.share import share_page
from solsphere.errors import FitError, InputError, UnknownSolventError
from solsphere.library.table import load_library
from solsphere.io.project import Project
from solsphere.io.trials import read as read_trials

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "data" / "demo" / "varnish_binder.csv"
SMALL = ("solvent,outcome\ntoluene,good\nacetone,good\nethyl acetate,partly\nethanol,bad\n"
         "water,bad\nn-hexane,bad\nmethanol,bad\n")



@pytest.fixture(scope="module")
def small(tmp_path_factory, lib):
    d = tmp_path_factory.mktemp("session")
    f = d / "small.csv"
    f.write_text(SMALL, encoding="utf-8")
    return Project(trials=read_trials(f, library=lib))


@pytest.fixture(scope="module")
def demo(lib):
    p = Project(trials=read_trials(DEMO, library=lib))
    return p, session.fit_project(p, library=lib)


def test_fit_project_partial_default_setting_and_argument(small, lib):
    assert session.fit_project(small, library=lib).partial == "good"
    small.settings["partial"] = "skip"
    try:
        f = session.fit_project(small, library=lib)
        assert f.partial == "skip" and f.n_counted_good == 2
        g = session.fit_project(small, partial="bad", library=lib)  # the argument wins
        assert g.partial == "bad" and g.n_counted_bad == 5
    finally:
        small.settings.pop("partial")


def test_fit_project_is_deterministic(small, lib):
    a = session.fit_project(small, library=lib)
    b = session.fit_project(small, library=lib)
    assert (a.dD, a.dP, a.dH, a.R0) == (b.dD, b.dP, b.dH, b.R0)


def test_spread_warning_names_solvent_and_line(demo, lib):
    project, fit = demo
    spread = [t for t in project.trials if t.source == "library" and t.solvent.spread
              and t.solvent.spread > session.SPREAD_WARN]
    assert spread, "the demo lists solvents on which the compilations disagree"
    for t in spread:
        assert any(t.name in w and f"line {t.line}" in w for w in fit.warnings)
    calm = [t for t in project.trials if t.source == "library" and t.solvent.spread is not None
            and t.solvent.spread <= session.SPREAD_WARN]
    for t in calm:
        assert not any(f"for {t.name} (line" in w for w in fit.warnings)


def test_fit_project_without_bad_results_raises_fit_error(tmp_path, lib):
    f = tmp_path / "g.csv"
    f.write_text("solvent,outcome\ntoluene,good\nacetone,good\n", encoding="utf-8")
    with pytest.raises(FitError, match="no outer boundary"):
        session.fit_project(Project(trials=read_trials(f, library=lib)), library=lib)


# ------------------------------------------------------------------------ candidate pool

def test_library_pool_is_liquids(lib):
    pool, filters = session.candidate_pool(lib, pool="all")
    assert pool and all(s.liquid is True for s in pool)
    assert len(pool) < len(lib)  # some compounds are not liquid at 25 °C
    assert filters["pool"] == "library liquids" and filters["exclude"] == []


def test_pool_filters(lib):
    pool, f = session.candidate_pool(lib, min_flash_point=40, max_boiling_point=200,
                                     exclude_carcinogens=True, exclude=["MEK"])
    assert pool
    for s in pool:
        assert s.flash_point is not None and s.flash_point >= 40
        assert s.boiling_point is not None and s.boiling_point <= 200
        assert not s.carcinogen and s.name != "2-butanone"
    assert f["min_flash_point"] == 40 and f["exclude"] == ["MEK"]


def test_exclude_by_alias_and_unknown_name(lib):
    base, _ = session.candidate_pool(lib)
    pool, _ = session.candidate_pool(lib, exclude=["MEK", "THF"])
    gone = {s.name for s in base} - {s.name for s in pool}
    assert gone == {"2-butanone", lib.lookup("THF").name}
    with pytest.raises(UnknownSolventError):
        session.candidate_pool(lib, exclude=["no-such-solvent-qq"])


def test_shelf_pool_and_exclusions(tmp_path, lib):
    shelf = tmp_path / "shelf.csv"
    shelf.write_text("solvent,dD,dP,dH,flash_point\nMEK,,,,\nmy thinner,17.2,4.1,5.9,45\n"
                     "glycerol,,,,\n", encoding="utf-8")
    pool, f = session.candidate_pool(lib, shelf=str(shelf))
    assert [s.name for s in pool] == ["2-butanone", "my thinner", lib.lookup("glycerol").name]
    assert f["pool"] == str(shelf)
    pool, _ = session.candidate_pool(lib, shelf=str(shelf), exclude=["my thinner", "MEK"])
    assert [s.name for s in pool] == [lib.lookup("glycerol").name]
    pool, _ = session.candidate_pool(lib, shelf=str(shelf), min_flash_point=40)
    assert "my thinner" in {s.name for s in pool}  # its own flash point from the shelf


def test_empty_pool_is_an_input_error_with_a_hint(tmp_path, lib):
    shelf = tmp_path / "shelf.csv"
    shelf.write_text("solvent\nMEK\n", encoding="utf-8")
    with pytest.raises(InputError) as info:
        session.candidate_pool(lib, shelf=str(shelf), exclude=["MEK"])
    e = info.value  # neutral words: the front ends add their own hint
    assert e.file == str(shelf) and "no candidate" in e.message and e.setting == "filters"
    with pytest.raises(InputError, match="max_boiling_point=-90"):
        session.candidate_pool(lib, max_boiling_point=-90)


# ------------------------------------------------------------------------ share page

@pytest.fixture(scope="module")
def page(demo, lib):
    project, fit = demo
    return share_page(project, fit, lib, n_blends=3)


def _fig(page, var):
    m = re.search(rf"var {var} = (\{{.*?\}});\n", page, re.DOTALL)
    assert m
    return json.loads(m.group(1))


def test_share_page_title_report_and_sections(page, demo):
    project, fit = demo
    # the title is not the file name; the file is named on the line under it
    assert "<title>Solubility report</title>" in page
    assert f"Bench results: {project.trials.source}" in page
    assert f"δD {fit.dD:.1f}, δP {fit.dP:.1f}, δH {fit.dH:.1f} MPa½, radius R0 {fit.R0:.1f}" in page
    assert "<h2>Untried solvents to try</h2>" in page and "<h2>Blends</h2>" in page


def test_share_page_blends_have_segments(page, lib):
    f3 = _fig(page, "f3")
    seg = [t for t in f3["data"] if t.get("mode") == "lines"
           and t.get("line", {}).get("color") == "#e6ab02"]
    assert len(seg) == 1
    xs = [v for v in seg[0]["x"] if v is not None]
    assert len(xs) == 2 * 3  # one segment (two ends) per blend
    pts = [t for t in f3["data"] if t.get("name") == "blends"]
    assert len(pts) == 1 and len(pts[0]["x"]) == 3
    # each blend point lies on its segment (volume-fraction weighted mean of the ends)
    for k, x in enumerate(pts[0]["x"]):
        a, b = xs[2 * k], xs[2 * k + 1]
        assert min(a, b) - 1e-9 <= x <= max(a, b) + 1e-9


def test_share_page_untried_excludes_tested(page, demo):
    project, _ = demo
    f3 = _fig(page, "f3")
    untried = [t for t in f3["data"] if t.get("name") == "untried"]
    assert len(untried) == 1
    names = {re.sub(r"<.*?>", "", h.split("<br>")[0]) for h in untried[0]["hovertext"]}
    assert names and not names & set(project.trials.names)
