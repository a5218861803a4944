"""The screens of issue 15 in a real headless Chromium: the map screen (RED ladder with
its hover, one chosen 2D plane), the recommendation grids (sorting, CSV download), the
background jobs (progress bar, cancel), the pool selectors and 'allow worse', the banner
that follows the table, and a new row scrolled into view.

Screenshots go to tests/artefacts/ (gitignored).
"""

from __future__ import annotations

import csv
import io

import pytest

from benchgrid import column, set_outcome
from pagewait import JOB_START_MS, wait_text

pytestmark = pytest.mark.browser

MAP = "#map3d .js-plotly-plot"
LADDER = "#ladder .js-plotly-plot"
PLANE = "#plane .js-plotly-plot"


def load_demo(page):
    page.click("#demo-button")
    page.wait_for_selector("#centre-text:has-text('δD')")
    page.wait_for_selector(f"{MAP} .gl-container canvas")
    page.wait_for_selector(f"{LADDER} .scatterlayer .trace", state="attached")


def tab(page, label: str):
    page.locator("#tabs .tab", has_text=label).first.click()


def column_texts(page, grid: str, col: str) -> list[str]:
    return page.evaluate(
        """([g, c]) => Array.from(document.querySelectorAll(`#${g} .ag-row`))
            .filter(r => r.querySelector(`.ag-cell[col-id='${c}']`))
            .sort((a, b) => (+a.getAttribute('row-index')) - (+b.getAttribute('row-index')))
            .map(r => r.querySelector(`.ag-cell[col-id='${c}']`).innerText.trim())""",
        [grid, col])


def hover(page, graph: str, name: str):
    """Hover the point whose hover text holds ``name``; the shown label's text."""
    return page.evaluate("""([sel, name]) => {
        const gd = document.querySelector(sel);
        for (let k = 0; k < gd.data.length; k++) {
            const ht = gd.data[k].hovertext || [];
            for (let j = 0; j < ht.length; j++) {
                if (String(ht[j]).startsWith('<b>' + name + '</b>')) {
                    Plotly.Fx.hover(gd, [{curveNumber: k, pointNumber: j}], 'xy');
                    const layer = gd.querySelector('.hoverlayer');
                    return {trace: gd.data[k].name, shown: layer ? layer.textContent : null};
                }
            }
        }
        return null;
    }""", [graph, name])


def full_trace(page, graph: str, name: str):
    return page.evaluate("""([sel, n]) => { const t = (document.querySelector(sel)._fullData
        || []).find(t => t.name === n); return t ? {x: Array.from(t.x), y: Array.from(t.y)}
        : null; }""", [graph, name])


def assert_clean_console(page):
    assert page.errors == [], page.errors


def test_red_ladder_hover_misfit_ring_and_the_plane_chooser(page, artefacts):
    load_demo(page)
    # every tested solvent on the ladder at its RED, the boundary at 1
    line = full_trace(page, LADDER, "RED 1 (boundary)")
    assert line["y"] == [1, 1]
    good = full_trace(page, LADDER, "dissolves")
    bad = full_trace(page, LADDER, "does not")
    assert len(good["y"]) + len(bad["y"]) + len(full_trace(page, LADDER, "partly")["y"]) == 35
    assert max(good["x"]) < min(bad["x"])  # one column per outcome
    shown = hover(page, LADDER, "toluene")
    assert shown and "toluene" in shown["shown"] and "RED" in shown["shown"]
    assert "δD" in shown["shown"] and "does not" in shown["shown"]
    # a misfit gets its ring: ethanol marked as dissolving lies outside
    set_outcome(page, column(page, "solvent").index("ethanol"), "dissolves")
    page.wait_for_function(f"() => (document.querySelector('{LADDER}')._fullData || [])"
                           ".some(t => t.name === 'misfits')")
    ring = full_trace(page, LADDER, "misfits")
    assert ring and len(ring["y"]) >= 1
    assert "misfit" in hover(page, LADDER, "ethanol")["shown"]
    page.wait_for_timeout(300)
    page.locator(".map-row").screenshot(path=str(artefacts / "13-map-and-red-ladder.png"))
    # one plane at a time, chosen by the user; the 3D map is not redrawn for it
    assert page.evaluate(f"() => document.querySelector('{PLANE}').layout.title.text") == "δP–δH"
    page.evaluate(f"""() => {{ window.__mapDraws = 0; document.querySelector('{MAP}')
        .on('plotly_afterplot', () => {{ window.__mapDraws++; }}); }}""")
    page.locator("#plane-choice label", has_text="δD–δH").click()
    page.wait_for_function(f"() => document.querySelector('{PLANE}').layout.title.text"
                           " === 'δD–δH'")
    assert "δD" in page.evaluate(f"() => document.querySelector('{PLANE}')._fullLayout"
                                 ".xaxis.title.text")
    page.wait_for_timeout(500)
    assert page.evaluate("() => window.__mapDraws") == 0
    assert "toluene" in (hover(page, PLANE, "toluene") or {}).get("shown", "")
    page.locator("#plane").screenshot(path=str(artefacts / "14-one-plane.png"))
    assert_clean_console(page)


def test_grid_sorts_and_downloads_what_it_shows(page, artefacts):
    load_demo(page)
    tab(page, "Try next")
    page.wait_for_selector("#shortlist .ag-row[row-index='0'] .ag-cell[col-id='name']")
    reds = [float(x) for x in column_texts(page, "shortlist", "red_n")]
    assert reds == sorted(reds)  # as ranked: nearest first
    # the hazard facts are columns, visible without a click
    for col in ("fp_n", "twa_n", "flags_text"):
        assert page.locator(f"#shortlist .ag-header-cell[col-id='{col}']").count() == 1
    # sort by flash point, highest first (two clicks on the header)
    header = page.locator("#shortlist .ag-header-cell[col-id='fp_n'] .ag-header-cell-label")
    header.click()
    header.click()
    page.wait_for_timeout(300)
    fps = [float(x) for x in column_texts(page, "shortlist", "fp_n") if x]
    assert fps and fps == sorted(fps, reverse=True)
    with page.expect_download() as dl:
        page.click("#shortlist-csv")
    path = artefacts / "try-next.csv"
    dl.value.save_as(path)
    rows = list(csv.DictReader(io.StringIO(path.read_text(encoding="utf-8-sig"))))
    assert rows and {"solvent", "RED", "flash pt °C", "flags"} <= set(rows[0])
    assert len(rows) == 30  # every row, not just the page shown
    shown = [float(r["flash pt °C"]) for r in rows if r["flash pt °C"]]
    assert shown == sorted(shown, reverse=True)  # as sorted on screen
    page.screenshot(path=str(artefacts / "15-try-next-grid.png"), full_page=True)
    assert_clean_console(page)


def test_bootstrap_runs_in_the_background_with_progress_and_cancel(page):
    load_demo(page)
    page.fill("#boot-n", "2000")
    page.click("#boot-button")
    page.wait_for_selector("#boot-progress-box", state="visible")
    page.wait_for_function("() => /\\d+ of 2000 resampled/.test("
                           "document.querySelector('#boot-progress-text').innerText)",
                           timeout=JOB_START_MS)
    # the page stays responsive: a screen that does not wait for the intervals answers
    # meanwhile (Try next waits for them: its p_good column comes from them)
    tab(page, "Blends")
    page.wait_for_selector("#blend-table .ag-row[row-index='0'] .ag-cell[col-id='label']",
                           timeout=60_000)
    assert page.locator("#boot-button").is_disabled()
    page.click("#boot-cancel")
    page.wait_for_selector("#boot-progress-box", state="hidden")
    page.wait_for_function("() => !document.querySelector('#boot-button').disabled")
    page.wait_for_timeout(1500)
    assert page.locator("#centre-interval").count() == 0  # cancelled: no intervals
    # a smaller run finishes, with the bar shown while it runs
    page.fill("#boot-n", "100")
    page.click("#boot-button")
    page.wait_for_selector("#centre-interval", timeout=90_000)
    assert "100 resamples" in page.inner_text("#boot-about")
    page.wait_for_selector("#boot-progress-box", state="hidden")
    assert_clean_console(page)


def test_blend_screen_runs_in_the_background_with_progress_and_cancel(page, artefacts):
    load_demo(page)
    tab(page, "Blends")
    page.wait_for_selector("#blend-table .ag-row[row-index='0'] .ag-cell[col-id='label']",
                           timeout=60_000)
    pairs = page.inner_text("#blend-message")
    assert "pairs" in pairs
    # a three-solvent screen of every liquid takes seconds: the bar shows, then cancel
    page.locator("#blend-pool label", has_text="all library liquids").click()
    page.locator("#blend-components label", has_text="3").click()
    page.wait_for_selector("#bl-progress-box", state="visible", timeout=30_000)
    wait_text(page, "#bl-progress-text", "three-solvent", ("#bl-progress-box", "#blend-message"))
    page.screenshot(path=str(artefacts / "17-blends-running.png"), full_page=True)
    page.click("#bl-cancel")
    page.wait_for_selector("#bl-progress-box", state="hidden", timeout=30_000)
    page.wait_for_timeout(1500)
    assert page.inner_text("#blend-message") == pairs  # cancelled: the last answer stays
    # the tab shown again with other inputs than the answer's: it computes, to the end
    tab(page, "Try next")
    tab(page, "Blends")
    page.wait_for_selector("#blend-message:has-text('three-solvent')", timeout=90_000)
    page.wait_for_selector("#bl-progress-box", state="hidden")
    assert_clean_console(page)


def test_pool_selectors_allow_worse_and_resolved_names(page, artefacts):
    load_demo(page)
    tab(page, "Try next")
    page.wait_for_selector("#next-message:has-text('working solvents')")
    page.locator("#next-pool label", has_text="all library liquids").click()
    page.wait_for_selector("#next-message:has-text('library liquids')")
    tab(page, "Replace a solvent")
    page.fill("#replace-top", "40")
    page.press("#replace-top", "Enter")
    page.fill("#replace-name", "PM acetate")
    page.press("#replace-name", "Enter")
    page.wait_for_selector("#replace-message:has-text('PM acetate → 1-methoxy-2-propyl acetate')")
    assert "working solvents" in page.inner_text("#replace-message")
    page.fill("#replace-name", "NMP")
    page.press("#replace-name", "Enter")
    page.wait_for_selector("#replace-message:has-text('NMP → 1-methyl-2-pyrrolidinone')")
    page.wait_for_selector("#replace-singles .ag-row[row-index='0']")
    for col in ("vs_carc", "vs_repro", "vs_tox", "vs_flam"):
        assert "worse" not in column_texts(page, "replace-singles", col)
    page.locator("#replace-pool label", has_text="all library liquids").click()
    page.wait_for_selector("#replace-message:has-text('all library liquids')")
    page.locator("#replace-allow-worse label").click()
    page.wait_for_selector("#replace-message:has-text('allow worse')")
    page.wait_for_timeout(300)
    with page.expect_download() as dl:  # every row of the grid, not just the page shown
        page.click("#replace-singles-csv")
    path = artefacts / "replacements-allow-worse.csv"
    dl.value.save_as(path)
    rows = list(csv.DictReader(io.StringIO(path.read_text(encoding="utf-8-sig"))))
    assert len(rows) == 40
    assert any("worse" in (r["carcinogen"], r["reprotoxic"], r["corrosive / toxic"],
                           r["flammability"]) for r in rows)
    page.screenshot(path=str(artefacts / "16-replace-allow-worse.png"), full_page=True)
    tab(page, "Blends")
    page.wait_for_selector("#blend-message:has-text('working solvents')")
    page.locator("#blend-pool label", has_text="all library liquids").click()
    page.wait_for_selector("#blend-message:has-text('library liquids')", timeout=60_000)
    tab(page, "Next trials")
    assert page.locator("#nt-pool input[value='working']").is_checked()
    assert_clean_console(page)


def test_banner_follows_the_table_and_a_new_row_is_shown(page, artefacts):
    load_demo(page)
    page.wait_for_selector("#table-status:has-text('35 trials counted')")
    # warnings name the same file lines as `solsphere fit` (three comment lines first)
    assert "cyclohexanone (line 10)" in page.inner_text("#fit-summary")
    page.fill("#add-solvent", "PnB")
    page.click("#add-button")
    page.wait_for_selector("#table-status:has-text('36 trials counted')")
    assert "PnB → 1-butoxy-2-propanol" in page.inner_text("#resolved-names")
    # the new row is where the user sees it: inside the table's visible area
    page.wait_for_function("""() => {
        const grid = document.getElementById('results-table');
        const cells = Array.from(grid.querySelectorAll(".ag-cell[col-id='solvent']"))
            .filter(c => c.innerText.trim() === 'PnB');
        if (cells.length !== 1) { return false; }
        const r = cells[0].getBoundingClientRect();
        const b = grid.querySelector('.ag-body-viewport').getBoundingClientRect();
        return r.top >= b.top && r.bottom <= b.bottom + 1 && r.bottom <= window.innerHeight;
    }""")
    assert column(page, "solvent")[-1] == "PnB"  # the last row of 36: out of sight before
    page.screenshot(path=str(artefacts / "17-new-row-shown.png"))
    assert_clean_console(page)


def test_a_tab_switch_shows_a_kept_screen_without_rebuilding_it(page):
    load_demo(page)
    tab(page, "Try next")
    page.wait_for_selector("#shortlist .ag-row[row-index='0']")
    assert page.is_hidden("#screen-bench") and page.is_visible("#screen-next")
    # the screen stays on the page while hidden: the grid's own sort survives a switch
    page.locator("#shortlist .ag-header-cell[col-id='name'] .ag-header-cell-label").click()
    page.wait_for_selector("#shortlist .ag-header-cell[col-id='name'][aria-sort='ascending']")
    page.evaluate("() => { window.__kept = document.querySelector('#shortlist .ag-root'); }")
    tab(page, "Bench results")
    assert page.is_visible("#screen-bench") and page.is_hidden("#screen-next")
    tab(page, "Try next")
    assert page.evaluate("() => window.__kept === document.querySelector('#shortlist .ag-root')")
    assert page.locator("#shortlist .ag-header-cell[col-id='name'][aria-sort='ascending']").count() == 1
    assert_clean_console(page)
