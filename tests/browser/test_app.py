"""The app in a real headless Chromium: the demo renders, edits refit, bad uploads are
refused with a message, the blend designer draws, and the share files round-trip.

Screenshots of each main screen go to tests/artefacts/ (gitignored).
"""

from __future__ import annotations

import json
import statistics

import pytest
from benchgrid import cell, column, paste_tsv, row_count, set_outcome, outcome_of
from pagewait import wait_text

pytestmark = pytest.mark.browser

MAP = "#map3d .js-plotly-plot"
PLANES = "#plane .js-plotly-plot"
LADDER = "#ladder .js-plotly-plot"


# ----------------------------------------------------------------------------- helpers

def load_demo(page):
    page.click("#demo-button")
    page.wait_for_selector("#centre-text:has-text('δD')")
    wait_for_map(page)


def wait_for_map(page):
    page.wait_for_selector(MAP)
    page.wait_for_selector("#map3d .gl-container canvas")


def trace_names(page, sel=MAP) -> list[str]:
    return page.evaluate(f"() => document.querySelector('{sel}').data.map(t => t.name)")


def counts_text(page) -> str:
    return page.inner_text("#fit-summary .counts")


def wait_counts_change(page, before: str):
    page.wait_for_function(
        "(b) => { const e = document.querySelector('#fit-summary .counts');"
        " return e && e.innerText !== b; }", arg=before)


def upload(page, selector: str, name: str, data: bytes, mime: str = "text/csv"):
    page.set_input_files(f"{selector} input[type=file]",
                         files=[{"name": name, "mimeType": mime, "buffer": data}])


def wait_idle(page, settle_ms: int = 150):
    """Wait until the page has no callback request in flight (and none starts within
    ``settle_ms``): a re-render of the table after a refit cannot then steal the focus
    of a cell clicked next. Counts the page's fetch calls (patched in on first use)."""
    page.evaluate("""() => { if (window.__pending === undefined) { window.__pending = 0;
        const f = window.fetch; window.fetch = function(...a) { window.__pending++;
            return f.apply(this, a).finally(() => { window.__pending--; }); }; } }""")
    for _ in range(2):
        page.wait_for_function("() => window.__pending === 0")
        page.wait_for_timeout(settle_ms)
    page.wait_for_function("() => window.__pending === 0")


def table_rows(page) -> int:
    return row_count(page)


def assert_clean_console(page):
    assert page.errors == [], page.errors


def grid_cell(grid: str, col: str, row: int | None = None) -> str:
    """Selector of the AG Grid cells of column ``col`` (of display row ``row``)."""
    r = "" if row is None else f".ag-row[row-index='{row}'] "
    return f"#{grid} {r}.ag-cell[col-id='{col}']"


def wait_grid(page, grid: str, col: str):
    page.wait_for_selector(grid_cell(grid, col, 0))


def column_texts(page, grid: str, col: str) -> list[str]:
    """The texts of a grid column in display order (AG Grid orders rows by position,
    not by their place in the page)."""
    return page.evaluate(
        """([g, c]) => Array.from(document.querySelectorAll(`#${g} .ag-row`))
            .filter(r => r.querySelector(`.ag-cell[col-id='${c}']`))
            .sort((a, b) => (+a.getAttribute('row-index')) - (+b.getAttribute('row-index')))
            .map(r => r.querySelector(`.ag-cell[col-id='${c}']`).innerText.trim())""",
        [grid, col])


# ----------------------------------------------------------------------------- tests

def test_demo_loads_and_draws_the_3d_map(page, artefacts):
    page.wait_for_selector("#centre-text:has-text('No bench results')")  # empty start
    # the type-ahead list holds every library name, abbreviation, CAS number and synonym
    page.wait_for_function("() => document.querySelectorAll('#solvent-names option').length > 5000")
    assert page.locator("#solvent-names option[value='MEK']").count() == 1
    assert page.get_attribute("#add-solvent", "list") == "solvent-names"
    load_demo(page)
    assert "varnish_binder.csv" in page.inner_text("#notice")
    assert "invented" in page.inner_text("#notice")
    names = trace_names(page)
    assert {"sphere", "dissolves", "does not", "untried"} <= set(names)
    assert page.locator(f"{PLANES} .main-svg").count() > 0
    r0 = page.inner_text("#r0-text")
    assert r0.endswith("MPa½") and float(r0.split()[0]) > 0
    page.wait_for_timeout(400)
    page.screenshot(path=str(artefacts / "1-bench-results.png"), full_page=True)
    page.locator("#map3d").screenshot(path=str(artefacts / "1b-sphere-map.png"))
    assert_clean_console(page)


def test_one_outcome_edit_refits_and_redraws(page):
    load_demo(page)
    centre = page.inner_text("#centre-text")
    row = column(page, "solvent").index("toluene")
    assert outcome_of(page, row) == "does not"
    before = counts_text(page)
    set_outcome(page, row, "dissolves")
    wait_counts_change(page, before)
    page.wait_for_function("(c) => document.querySelector('#centre-text').innerText !== c",
                           arg=centre)
    assert page.inner_text("#centre-text") != centre
    assert outcome_of(page, row) == "dissolves"
    assert_clean_console(page)


def test_edit_to_redraw_time_on_a_40_row_table(page, forty_rows_csv):
    """Measured in the page (performance.now): from the click on the new outcome to the
    new summary text and both figures redrawn. Printed, not asserted."""
    upload(page, "#open-upload", "forty.csv", forty_rows_csv)
    page.wait_for_selector("#notice:has-text('forty.csv')")
    page.wait_for_selector("#centre-text:has-text('δD')")
    wait_for_map(page)
    assert table_rows(page) == 40
    page.evaluate("""() => {
        const m = window.__marks = {down: 0, text: 0, map: 0, planes: 0};
        document.addEventListener('mousedown', () => { m.down = performance.now(); }, true);
        new MutationObserver(() => { m.text = performance.now(); }).observe(
            document.getElementById('fit-summary'), {childList: true, subtree: true, characterData: true});
        document.querySelector('#map3d .js-plotly-plot').on('plotly_afterplot', () => { m.map = performance.now(); });
        document.querySelector('#plane .js-plotly-plot').on('plotly_afterplot', () => { m.planes = performance.now(); });
    }""")

    def measure(n=6):
        times = []
        for k in range(n):
            row = k % 3
            word = "does not" if outcome_of(page, row) != "does not" else "dissolves"
            page.wait_for_timeout(250)  # let the previous redraw settle
            cell(page, row, "outcome").dblclick()
            page.locator("#results-table .ag-cell-inline-editing .ag-picker-field-wrapper").click()
            page.evaluate("() => { const m = window.__marks; m.text = m.map = m.planes = 0; }")
            page.locator(".ag-select-list-item", has_text=word).first.click()
            page.wait_for_function("() => { const m = window.__marks; return m.down > 0 &&"
                                   " m.text > m.down && m.map > m.down && m.planes > m.down; }")
            page.wait_for_timeout(150)  # a late second afterplot would move the mark
            m = page.evaluate("() => window.__marks")
            times.append(max(m["text"], m["map"], m["planes"]) - m["down"])
        return times

    def show(what, times):
        print(f"\nedit-to-redraw in the browser, 40-row table, {what}, {len(times)} edits: "
              f"median {statistics.median(times):.0f} ms (min {min(times):.0f}, max "
              f"{max(times):.0f}); all: {', '.join(f'{t:.0f}' for t in times)} ms")

    show("no intervals", measure())
    # with intervals computed: an edit only marks them out of date, it does not resample
    page.click("#boot-button")
    page.wait_for_selector("#centre-interval", timeout=60_000)
    show("after a bootstrap (stored, then out of date)", measure())
    # six flips of three rows: the table is back to the results the intervals belong to
    page.wait_for_selector("#centre-interval")
    assert_clean_console(page)


def test_malformed_upload_shows_a_message_and_the_app_keeps_working(page, artefacts):
    load_demo(page)
    n = table_rows(page)
    upload(page, "#open-upload", "broken.csv", b"name;result\nfoo;bar\n")
    page.wait_for_selector("#notice .notice-error")
    msg = page.inner_text("#notice")
    assert "Not opened" in msg and "broken.csv" in msg
    assert table_rows(page) == n  # the table is untouched
    upload(page, "#open-upload", "typo.csv", b"solvent,outcome\ntoluene,good\nwater,maybe\n")
    page.wait_for_selector("#notice:has-text('typo.csv')")
    msg = page.inner_text("#notice")
    assert "line 3" in msg and "outcome" in msg and "maybe" in msg
    upload(page, "#open-upload", "huge.csv", b"solvent,outcome\n" + b"x" * 6_000_000)
    page.wait_for_selector("#notice:has-text('huge.csv')")
    assert "limit" in page.inner_text("#notice")
    page.screenshot(path=str(artefacts / "2-refused-upload.png"))
    # still working: an edit refits
    before = counts_text(page)
    set_outcome(page, 0, "does not")
    wait_counts_change(page, before)
    assert_clean_console(page)


def test_unknown_name_is_marked_with_one_click_fixes(page, artefacts):
    load_demo(page)
    n = table_rows(page)
    page.fill("#add-solvent", "chlorofrom")
    page.click("#add-button")
    page.wait_for_selector("#problems li")
    text = page.inner_text("#problems")
    assert f"row {n + 1}, solvent" in text and "chlorofrom" in text and "Did you mean" in text
    assert "need" in page.inner_text("#fit-summary")  # the summary says a cell needs fixing
    page.screenshot(path=str(artefacts / "3-unknown-solvent.png"), full_page=True)
    before = counts_text(page)
    page.locator("#problems button", has_text="chloroform").first.click()
    page.wait_for_selector("#problems li", state="detached")
    wait_counts_change(page, before)  # the fixed row now counts
    assert cell(page, n, "solvent").inner_text().strip() == "chloroform"
    assert_clean_console(page)


def test_rows_pasted_from_a_spreadsheet_are_added_and_counted(page):
    load_demo(page)
    n = table_rows(page)
    wait_idle(page)
    page.click("#add-empty")
    # the empty row is shown with its solvent cell open for typing
    page.wait_for_selector("#results-table input.bench-solvent-editor")
    assert table_rows(page) == n + 1
    page.keyboard.press("Escape")  # leave the editor: the cell keeps the focus
    wait_idle(page)  # the refit and the table's marks of the new row are back
    cell(page, n, "solvent").click()  # focused, not edited
    before = counts_text(page)
    # what a spreadsheet puts on the clipboard: tab-separated cells, one line per row
    paste_tsv(page, "glycerol\tbad\nmy own oil\tyes\t16.5\t3.1\t4.2\tinvented\n")
    wait_counts_change(page, before)
    assert table_rows(page) == n + 2
    assert f"{n + 2} trials" in counts_text(page)
    assert outcome_of(page, n) == "does not" and outcome_of(page, n + 1) == "dissolves"
    assert page.locator("#problems li").count() == 0
    assert_clean_console(page)


def test_try_next_shortlist_puts_a_solvent_on_the_map(page, artefacts):
    load_demo(page)
    page.click("text=Try next")
    wait_grid(page, "shortlist", "name")
    assert "Predictions are guides" in page.inner_text("#next-caution")
    assert "working solvents" in page.inner_text("#next-message")
    first = page.locator(grid_cell("shortlist", "name", 0))
    name = first.inner_text().strip()
    first.click()
    page.wait_for_function(f"() => document.querySelector('{MAP}').data"
                           ".some(t => t.name === 'picked')")
    picked = page.evaluate(f"() => document.querySelector('{MAP}').data"
                           ".find(t => t.name === 'picked').text")
    assert name in picked
    assert name in page.inner_text("#next-detail")  # its facts are spelled out below
    before = page.inner_text("#next-message")
    page.fill("#next-min-fp", "60")
    page.press("#next-min-fp", "Enter")
    page.wait_for_function("(b) => document.querySelector('#next-message').innerText !== b",
                           arg=before)
    fps = column_texts(page, "shortlist", "fp_n")
    assert fps and all(float(x) >= 60 for x in fps)
    page.screenshot(path=str(artefacts / "4-try-next.png"), full_page=True)
    assert_clean_console(page)


def test_blend_designer_draws_the_segment(page, artefacts):
    load_demo(page)
    page.click("text=Blends")
    wait_grid(page, "blend-table", "label")
    assert "Predictions are guides" in page.inner_text("#blend-caution")
    assert page.locator("#blend-table .ag-header-cell[col-id='flags_text']").count() == 1
    assert "least hazardous" in page.inner_text("#blend-message")  # the CLI's default order
    assert "blend segments" not in trace_names(page)
    page.locator(grid_cell("blend-table", "label", 0)).click()
    page.wait_for_function(f"() => document.querySelector('{MAP}').data"
                           ".some(t => t.name === 'blend segments' && t.x.length >= 2)")
    seg = page.evaluate(f"() => document.querySelector('{MAP}').data"
                        ".find(t => t.name === 'blend segments').x")
    assert seg[0] is not None and seg[1] is not None
    detail = page.inner_text("#blend-detail")
    assert "Flash point of the blend" in detail and "RED" in detail
    page.wait_for_timeout(400)
    page.screenshot(path=str(artefacts / "5-blends.png"), full_page=True)
    # the ticked pool: only the chosen solvents are paired
    page.click("text=solvents I tick")
    page.click("#blend-ticked")
    for name in ("toluene", "ethanol", "acetone"):  # type-ahead search, then tick
        page.fill(".dash-dropdown-content input.dash-dropdown-search", name)
        page.locator(".dash-dropdown-content").get_by_text(name, exact=True).click()
    page.keyboard.press("Escape")
    wait_text(page, "#blend-message", "3 ticked solvents", ("#blend-ticked", "#bl-progress-text"))
    labels = " ".join(column_texts(page, "blend-table", "label"))
    assert labels and all(w in ("toluene", "ethanol", "acetone") or "%" in w or w == "+"
                          for w in labels.split())
    assert_clean_console(page)


def test_share_downloads_and_the_project_loads_back(page, browser, server, artefacts):
    load_demo(page)
    set_outcome(page, 0, "partly")  # an edited state, not the file as shipped
    page.wait_for_selector("#fit-summary .counts:has-text('4 partly')")
    centre = page.inner_text("#centre-text")
    r0 = page.inner_text("#r0-text")
    page.click("text=Share")
    page.fill("#share-title", "BX-7 test page")
    with page.expect_download() as dl:
        page.click("#download-html-button")
    html_path = artefacts / "shared-map.html"
    dl.value.save_as(html_path)
    html = html_path.read_text(encoding="utf-8")
    assert "Plotly.newPlot" in html and "BX-7 test page" in html and "Predictions are guides" in html
    viewer = browser.new_page(viewport={"width": 1300, "height": 900})  # it opens offline
    viewer_errors = []
    viewer.on("pageerror", lambda e: viewer_errors.append(str(e)))
    viewer.goto(html_path.as_uri())
    viewer.wait_for_selector("#map3d.js-plotly-plot .gl-container canvas")
    viewer.wait_for_selector("#planes.js-plotly-plot .main-svg")
    viewer.screenshot(path=str(artefacts / "7-shared-page.png"))
    viewer.close()
    assert viewer_errors == []
    with page.expect_download() as dl:
        page.click("#download-project-button")
    project_path = artefacts / "shared-project.json"
    dl.value.save_as(project_path)
    doc = json.loads(project_path.read_text(encoding="utf-8"))
    assert doc["format"] == "solsphere-project" and doc["fit"] is not None
    assert f"δD {doc['fit']['dD']:.1f}" in centre
    page.screenshot(path=str(artefacts / "6-share.png"), full_page=True)
    assert_clean_console(page)
    # a fresh browser tab (its own state) opens the project and shows the same fit
    ctx = browser.new_context(viewport={"width": 1500, "height": 1000})
    other = ctx.new_page()
    errors = []
    other.on("pageerror", lambda e: errors.append(str(e)))
    other.goto(server)
    other.wait_for_selector("#results-table")
    assert "δD" not in other.inner_text("#centre-text")  # nothing leaked from the first tab
    other.click("text=Share")
    other.set_input_files("#share-open-upload input[type=file]", str(project_path))
    other.wait_for_selector("#saved-fit-check")
    assert other.inner_text("#centre-text") == centre
    assert other.inner_text("#r0-text") == r0
    assert "Same fit" in other.inner_text("#saved-fit-check")
    assert "4 partly" in other.inner_text("#fit-summary .counts")
    ctx.close()
    assert errors == []


#: Whether the bench grid's row of data row ``row`` lies inside the grid's viewport.
ROW_IN_VIEW = """(row) => {
    const api = window.dash_ag_grid.getApi('results-table'); let at = null;
    api.forEachNode(n => { if (n.sourceRowIndex === row) { at = n.rowIndex; } });
    const el = at === null ? null : document.querySelector(
        `#results-table .ag-center-cols-container .ag-row[row-index='${at}']`);
    const vp = document.querySelector('#results-table .ag-body-viewport');
    if (!el || !vp) { return false; }
    const a = el.getBoundingClientRect(), b = vp.getBoundingClientRect();
    return a.height > 0 && a.top >= b.top - 1 && a.bottom <= b.bottom + 1; }"""


def tab(page, label: str):
    """Open a screen by its tab (an exact label, not any text on the page)."""
    page.locator("#tabs .tab", has_text=label).first.click()


def trace(page, name: str, sel=MAP):
    """The first drawn trace of the map whose name starts with ``name`` (None if none).
    From plotly's full data, where number arrays sent as binary are decoded."""
    return page.evaluate(f"(n) => {{ const t = (document.querySelector('{sel}')._fullData || [])"
                         f".find(t => (t.name || '').startsWith(n)); return t ? "
                         f"{{name: t.name, x: Array.from(t.x || []), text: t.text}} : null; }}",
                         name)


def wait_trace(page, name: str, min_points: int = 1):
    page.wait_for_function(
        f"([n, k]) => (document.querySelector('{MAP}')._fullData || [])"
        f".some(t => (t.name || '').startsWith(n) && t.x && t.x.length >= k)",
        arg=[name, min_points])


def test_three_component_designer_draws_a_triangle(page, artefacts):
    load_demo(page)
    tab(page, "Blends")
    wait_grid(page, "blend-table", "label")
    before = page.inner_text("#blend-message")
    page.locator("#blend-components label", has_text="3").click()
    page.wait_for_function("(b) => document.querySelector('#blend-message').innerText !== b"
                           " && document.querySelector('#blend-message').innerText.includes("
                           "'three-solvent')", arg=before)
    assert "nearest the sphere centre" in page.inner_text("#blend-notes")  # the cut is said
    page.wait_for_function("() => { const c = document.querySelector(\"#blend-table "
                           ".ag-row[row-index='0'] .ag-cell[col-id='label']\"); return c && "
                           "(c.innerText.match(/%/g) || []).length === 3; }")
    labels = column_texts(page, "blend-table", "label")
    assert labels and all(t.count("%") == 3 for t in labels)
    assert any("triangle" in t for t in column_texts(page, "blend-table", "window_text"))
    assert page.locator("#share-limits").is_visible()  # share limits shown for triples
    page.locator(grid_cell("blend-table", "label", 0)).click()
    wait_trace(page, "blend segments", 9)  # three edges, each closed by a gap
    seg = trace(page, "blend segments")
    assert len(seg["x"]) == 9 and seg["x"][2] is None and seg["x"][8] is None
    assert "Drying:" in page.inner_text("#blend-detail")
    assert "Flash point of the blend" in page.inner_text("#blend-detail")
    # a share limit narrows the blends: at most 10 % of the first blend's main solvent
    main = labels[0].split("% ", 1)[1].split(" + ")[0]
    page.fill("#blend-max-frac", f"{main}=10%")
    page.press("#blend-max-frac", "Enter")
    page.wait_for_function("(l) => { const c = document.querySelector(\"#blend-table "
                           ".ag-row[row-index='0'] .ag-cell[col-id='label']\");"
                           " return c && c.innerText !== l; }", arg=labels[0])
    for text in column_texts(page, "blend-table", "label"):
        for part in text.split(" + "):
            pct, name = part.split("% ", 1)
            assert name != main or float(pct) <= 10.5
    page.wait_for_timeout(400)
    page.screenshot(path=str(artefacts / "8-three-solvent-blends.png"), full_page=True)
    assert_clean_console(page)


def test_clicking_a_blend_draws_its_drying_path(page, artefacts):
    load_demo(page)
    tab(page, "Blends")
    wait_grid(page, "blend-table", "label")
    before = page.inner_text("#blend-message")
    page.locator("#blend-rank label", has_text="drying").click()
    page.wait_for_function("(b) => document.querySelector('#blend-message').innerText !== b",
                           arg=before)
    assert "while drying" in page.inner_text("#blend-message")
    page.wait_for_timeout(300)
    drying = column_texts(page, "blend-table", "drying_text")
    assert drying and all(("stays inside" in t or "leaves at" in t or t.strip() in
                           ("no data", "starts outside")) for t in drying)
    assert any("stays inside" in t or "leaves at" in t for t in drying)
    assert "Predictions are guides" in page.inner_text("#blend-caution")
    assert trace(page, "drying path") is None
    row = next(i for i, t in enumerate(drying) if "stays inside" in t or "leaves at" in t)
    page.locator(grid_cell("blend-table", "label", row)).click()
    wait_trace(page, "drying path", 10)
    path = trace(page, "drying path")
    assert all(v is not None for v in path["x"])
    assert "dotted line" in page.inner_text("#blend-detail")
    page.wait_for_timeout(400)
    page.locator("#map3d").screenshot(path=str(artefacts / "9-drying-path-map.png"))
    page.screenshot(path=str(artefacts / "9b-drying-ranked-blends.png"), full_page=True)
    # an editable example of a restricted list (invented, marked so) can be downloaded
    with page.expect_download() as dl:
        page.click("#restricted-example-button")
    example = artefacts / "restricted_example.csv"
    dl.value.save_as(example)
    assert example.read_text(encoding="utf-8").startswith("# EXAMPLE ONLY")
    # a restricted list leaves its solvents out of every blend
    first = page.locator(grid_cell("blend-table", "label", 0)).inner_text()
    banned = first.split("% ", 1)[1].split(" + ")[0]
    upload(page, "#restricted-upload", "site-list.csv", f"solvent\n{banned}\n".encode())
    page.wait_for_selector("#restricted-name:has-text('site-list.csv')")
    page.wait_for_function("(f) => { const c = document.querySelector(\"#blend-table "
                           ".ag-row[row-index='0'] .ag-cell[col-id='label']\");"
                           " return c && c.innerText !== f; }", arg=first)
    labels = column_texts(page, "blend-table", "label")
    names = {part.split("% ", 1)[1] for t in labels for part in t.split(" + ")}
    assert names and banned not in names
    # cost needs shelf prices: the message says how to give them
    page.locator("#blend-rank label", has_text="cost").click()
    page.wait_for_selector("#blend-message:has-text('price')")
    page.click("#clear-blend")
    page.wait_for_function(f"() => !document.querySelector('{MAP}').data"
                           ".some(t => (t.name || '').startsWith('drying path'))")
    assert_clean_console(page)


def test_replace_a_solvent_lists_singles_and_pairs(page, artefacts):
    load_demo(page)
    tab(page, "Replace a solvent")
    assert page.get_attribute("#replace-name", "list") == "solvent-names"
    # the page-wide type-ahead list survives switching tabs
    page.wait_for_selector("#solvent-names option[value='MEK']", state="attached")
    assert page.locator("#solvent-names option[value='MEK']").count() == 1
    page.fill("#replace-name", "toluene")
    page.press("#replace-name", "Enter")
    wait_grid(page, "replace-singles", "name")
    wait_grid(page, "replace-pairs", "label")
    msg = page.inner_text("#replace-message")
    assert "Replacing toluene" in msg and "for this material" in msg
    sides = column_texts(page, "replace-singles", "side_text")
    assert sides and set(s.strip() for s in sides) <= {"same", "other"}
    assert "Predictions are guides" in page.inner_text("#replace-caution")
    first = page.locator(grid_cell("replace-singles", "name", 0))
    name = first.inner_text().strip()
    first.click()
    page.wait_for_function(f"() => document.querySelector('{MAP}').data"
                           ".some(t => t.name === 'picked')")
    text = " ".join(trace(page, "picked")["text"])
    assert name in text and "toluene (to replace)" in text
    assert name in page.inner_text("#replace-detail")
    page.locator(grid_cell("replace-pairs", "label", 0)).click()
    wait_trace(page, "blend segments", 2)
    page.wait_for_timeout(400)
    page.screenshot(path=str(artefacts / "10-replace.png"), full_page=True)
    assert_clean_console(page)


def test_intervals_cloud_and_p_good_then_stale_after_an_edit(page, artefacts):
    load_demo(page)
    assert page.locator("#centre-interval").count() == 0
    t0 = page.evaluate("() => performance.now()")
    page.click("#boot-button")
    page.wait_for_selector("#boot-running:has-text('plausible spheres')")  # says it is working
    page.wait_for_selector("#centre-interval", timeout=60_000)
    print(f"\nbootstrap of the demo (35 trials, 200 resamples) from click to intervals: "
          f"{page.evaluate('() => performance.now()') - t0:.0f} ms")
    assert page.inner_text("#centre-interval").startswith("95 % stability range: δD")
    assert page.inner_text("#r0-interval").startswith("95 % stability range")
    assert "200 resamples" in page.inner_text("#boot-about")
    wait_trace(page, "resampled centres", 200)
    page.wait_for_timeout(400)
    page.locator(".sphere-panel").screenshot(path=str(artefacts / "11-intervals-cloud.png"))
    tab(page, "Try next")
    page.wait_for_selector("#shortlist .ag-header-cell[col-id='p_n']")
    wait_grid(page, "shortlist", "p_n")
    ps = column_texts(page, "shortlist", "p_n")
    assert ps and all(0.0 <= float(p) <= 1.0 for p in ps)
    assert "resampled spheres" in page.inner_text("#next-p-note")
    page.click("#boot-method label:has-text('graded')")  # the cloud can be switched off
    page.click("#show-cloud label")
    page.wait_for_function(f"() => !document.querySelector('{MAP}').data"
                           ".some(t => t.name === 'resampled centres')")
    page.click("#show-cloud label")
    wait_trace(page, "resampled centres", 200)
    tab(page, "Bench results")
    before = counts_text(page)
    set_outcome(page, 0, "does not")
    wait_counts_change(page, before)
    page.wait_for_selector("#boot-stale")  # out of date, so not shown as if current
    assert page.locator("#centre-interval").count() == 0
    page.wait_for_function(f"() => !document.querySelector('{MAP}').data"
                           ".some(t => t.name === 'resampled centres')")
    assert_clean_console(page)


def test_posterior_intervals_and_their_p_good(page, artefacts):
    load_demo(page)
    page.click("#boot-method label:has-text('posterior')")
    page.click("#boot-button")
    page.wait_for_selector("#centre-interval", timeout=60_000)
    about = page.inner_text("#boot-about")
    assert "200 spheres sampled" in about and "credible" in about
    assert page.inner_text("#r0-interval").startswith("95 % interval")
    wait_trace(page, "resampled centres", 200)
    tab(page, "Try next")
    page.wait_for_selector("#shortlist .ag-header-cell[col-id='p_n']")
    assert "sampled spheres (posterior" in page.inner_text("#next-p-note")
    page.screenshot(path=str(artefacts / "11b-posterior.png"), full_page=True)
    assert_clean_console(page)


def test_next_trials_panel_and_add_to_the_table(page, artefacts):
    load_demo(page)
    n = table_rows(page)
    page.evaluate("() => window.dash_ag_grid.getApi('results-table').ensureIndexVisible(0, 'top')")
    assert not page.evaluate(ROW_IN_VIEW, n - 1)  # the grid shows its top rows only
    tab(page, "Next trials")
    page.fill("#nt-min-fp", "23")
    page.click("#next-trials-button")
    page.wait_for_selector("#next-trials-items li", timeout=60_000)
    items = page.locator("#next-trials-items li.suggestion")
    assert items.count() == 5
    first = items.first.inner_text()
    assert "p_good" in first and "flash point" in first
    assert page.locator("#recheck-items li").count() >= 1
    assert "centre moves" in page.inner_text("#recheck-items")
    assert "Predictions are guides" in page.inner_text("#next-trials-caution")
    name = items.first.locator("strong").inner_text().split(". ", 1)[1]
    page.screenshot(path=str(artefacts / "12-next-trials.png"), full_page=True)
    items.first.locator("button", has_text="Add to the table").click()
    page.wait_for_selector("#next-trials-items li.suggestion >> nth=0 >> text=in the table")
    assert f"Added {name}" in page.inner_text("#notice")
    tab(page, "Bench results")
    page.wait_for_function(f"() => {{ let k = 0; window.dash_ag_grid.getApi('results-table')"
                           f".forEachNode(() => k++); return k === {n + 1}; }}")
    page.wait_for_function(ROW_IN_VIEW, arg=n, timeout=10_000)  # scrolled to the new row
    assert cell(page, n, "solvent").inner_text().strip() == name
    page.wait_for_selector("#fit-summary .warnings:has-text('waits for its outcome')")
    assert "row " + str(n + 1) in page.inner_text("#problems")
    page.screenshot(path=str(artefacts / "12b-added-row.png"), full_page=True)
    set_outcome(page, n, "dissolves")  # the chemist fills it in: it counts
    page.wait_for_selector(f"#fit-summary .counts:has-text('{n + 1} trials')")
    assert page.locator("#problems li").count() == 0
    assert_clean_console(page)


# ----------------------------------------------------------------------------- data

@pytest.fixture
def forty_rows_csv() -> bytes:
    """40 rows: the invented demo's 35 plus 5 more invented results."""
    from importlib.resources import files
    text = files("solsphere.data.demo").joinpath("varnish_binder.csv").read_text(encoding="utf-8")
    extra = ["ethyl benzoate,dissolves,invented", "diacetone alcohol,dissolves,invented",
             "glycerol,does not,invented", "formamide,does not,invented",
             "isopropyl acetate,dissolves,invented"]
    return (text.rstrip("\n") + "\n" + "\n".join(extra) + "\n").encode("utf-8")
