"""The bench-results grid (AG Grid) in a real headless Chromium: editing every kind of
cell, the solvent editor on the page's type-ahead list, paste from a spreadsheet, the
marks of bad cells with their reasons on hover and the one-click fixes, deleting a row,
sorting that never changes which row an action applies to, the CSV download, and a
console free of errors (the content-security policy included).

Screenshots go to tests/artefacts/ (gitignored): look at them after a change.
"""

from __future__ import annotations

import csv
import io

import pytest
from benchgrid import (GRID, cell, column, editing, outcome_of, paste_tsv, row_count,
                       rows_data, set_outcome, type_solvent)

pytestmark = pytest.mark.browser


def load_demo(page):
    page.click("#demo-button")
    page.wait_for_selector("#centre-text:has-text('δD')")
    page.wait_for_selector("#table-status:has-text('35 trials counted')")


def counts(page) -> str:
    return page.inner_text("#fit-summary .counts")


def wait_counts_change(page, before: str):
    page.wait_for_function("(b) => document.querySelector('#fit-summary .counts')"
                           ".innerText !== b", arg=before)


def wait_marks(page):
    """Until the grid has drawn the marks of the latest fit (no request in flight)."""
    page.wait_for_function("() => !document.querySelector('._dash-loading-callback')")
    page.wait_for_timeout(300)


def hover_tip(page, loc, expect: str) -> str:
    """The tooltip of a cell once it says ``expect`` (the marks of a refit reach the
    grid a moment after its classes; a few hovers, bounded)."""
    text = ""
    # a tooltip that is fading out stays in the page a moment beside the new one:
    # only the shown one (not .ag-tooltip-hiding) is read
    shown = page.locator(".ag-tooltip:not(.ag-tooltip-hiding)")
    for _ in range(6):
        page.mouse.move(2, 2)  # off the grid first: a tooltip opens on entering a cell
        page.wait_for_function("() => !document.querySelector('.ag-tooltip')",
                               timeout=5000)
        loc.hover()
        shown.first.wait_for(timeout=5000)
        text = shown.first.inner_text()
        if expect in text:
            break
        page.wait_for_timeout(300)
    return text


def test_every_kind_of_cell_is_edited_and_the_sphere_refits(page, artefacts):
    load_demo(page)
    page.wait_for_timeout(400)
    page.screenshot(path=str(artefacts / "20-bench-grid-before-edit.png"))
    rows = column(page, "solvent")
    # an outcome from the list
    k = rows.index("toluene")
    before = counts(page)
    set_outcome(page, k, "dissolves")
    wait_counts_change(page, before)
    assert outcome_of(page, k) == "dissolves"
    assert rows_data(page)[k]["outcome"] == "dissolves"
    # the solvent editor is a plain input on the page's type-ahead list
    k = rows.index("anisole")
    cell(page, k, "solvent").dblclick()
    editor = page.locator(f"#{GRID} input.bench-solvent-editor")
    assert editor.get_attribute("list") == "solvent-names"
    page.wait_for_selector("#solvent-names option[value='MEK']", state="attached")
    assert page.locator("#solvent-names option[value='MEK']").count() == 1
    assert editor.input_value() == "anisole"
    editor.press("Escape")
    # a blend tested as one trial is typed as free text and counts
    type_solvent(page, k, "toluene 70 + ethanol 30")
    # refitted: the blend is a point of the RED ladder
    page.wait_for_function("() => JSON.stringify(document.querySelector('#ladder .js-plotly-plot')"
                           ".data.map(t => t.text || t.hovertext || t.customdata))"
                           ".includes('toluene 70 + ethanol 30')")
    assert rows_data(page)[k]["solvent"] == "toluene 70 + ethanol 30"
    assert page.locator("#problems li").count() == 0
    # an own solvent: a name of our own with δD δP δH typed as numbers, and a note
    n = row_count(page)
    page.click("#add-empty")
    page.wait_for_selector(f"#{GRID} input.bench-solvent-editor")  # opened for typing
    page.keyboard.type("my own resin thinner")
    page.keyboard.press("Enter")
    for field, value in (("dD", "16.4"), ("dP", "5.2"), ("dH", "7.1"), ("note", "invented")):
        cell(page, n, field).dblclick()
        page.keyboard.press("Control+A")
        page.keyboard.type(value)
        page.keyboard.press("Enter")
    set_outcome(page, n, "partly")
    page.wait_for_selector("#table-status:has-text('36 trials counted')")
    row = rows_data(page)[n]
    assert row == {"solvent": "my own resin thinner", "outcome": "partly", "dD": 16.4,
                   "dP": 5.2, "dH": 7.1, "note": "invented"}
    page.wait_for_timeout(400)
    page.screenshot(path=str(artefacts / "21-bench-grid-after-edit.png"))
    assert page.errors == [], page.errors


def test_a_bad_cell_is_marked_with_its_reason_and_fixed_in_one_click(page, artefacts):
    load_demo(page)
    n = row_count(page)
    page.fill("#add-solvent", "chlorofrom")
    page.click("#add-button")
    page.wait_for_selector(f"#{GRID} .ag-cell.bench-bad")
    wait_marks(page)
    bad = cell(page, n, "solvent")
    assert "bench-bad" in bad.get_attribute("class")
    assert page.locator(f"#{GRID} .ag-cell.bench-bad").count() == 1
    tip = hover_tip(page, bad, "chlorofrom")
    assert "chlorofrom" in tip and "unknown solvent" in tip
    page.screenshot(path=str(artefacts / "22-bench-grid-bad-cell.png"))
    # a good row says its RED on hover
    assert "RED" in hover_tip(page, cell(page, 0, "solvent"), "RED")
    assert "Did you mean" in page.inner_text("#problems")
    before = counts(page)
    page.locator("#problems button", has_text="chloroform").first.click()
    page.wait_for_selector("#problems li", state="detached")
    wait_counts_change(page, before)
    assert column(page, "solvent")[n] == "chloroform"
    page.wait_for_selector(f"#{GRID} .ag-cell.bench-bad", state="detached")
    assert page.errors == [], page.errors


def test_misfit_and_waiting_rows_are_marked(page):
    load_demo(page)
    k = column(page, "solvent").index("ethanol")  # marked as dissolving: a misfit
    set_outcome(page, k, "dissolves")
    page.wait_for_selector(f"#{GRID} .ag-cell.bench-misfit")
    assert "bench-misfit" in cell(page, k, "solvent").get_attribute("class")
    assert "MISFIT" in hover_tip(page, cell(page, k, "outcome"), "MISFIT")
    n = row_count(page)
    page.click("#add-empty")  # a solvent pasted without its outcome: waiting for it
    page.wait_for_selector(f"#{GRID} input.bench-solvent-editor")
    page.keyboard.press("Escape")
    cell(page, n, "solvent").click()
    assert paste_tsv(page, "o-xylene") is False  # the grid took it
    page.wait_for_selector(f"#{GRID} .ag-cell.bench-pending")
    assert "Waiting for the result" in hover_tip(page, cell(page, n, "outcome"), "Waiting")
    assert page.errors == [], page.errors


def test_three_pasted_rows_are_merged_and_a_paste_into_an_editor_stays_in_it(page):
    load_demo(page)
    n = row_count(page)
    k = column(page, "solvent").index("MEK")
    cell(page, k, "outcome").click()  # focused, not edited
    before = counts(page)
    # what a spreadsheet copy holds: three rows, tab-separated, from the outcome column
    assert paste_tsv(page, "yes\t\t\t\tre-tested\ngood\nbad\n") is False
    wait_counts_change(page, before)
    data = rows_data(page)
    assert len(data) == n  # inside the table: no row added
    assert [data[k + i]["outcome"] for i in range(3)] == ["dissolves", "dissolves", "does not"]
    assert data[k]["note"] == "re-tested" and data[k]["solvent"] == "MEK"
    # three rows past the end are added
    cell(page, n - 1, "solvent").click()
    before = counts(page)
    paste_tsv(page, "glycerol\tbad\nmy oil\tyes\t16.5\t3.1\t4.2\tinvented\n"
                    "isopropyl acetate\tpartly")
    page.wait_for_function(f"() => {{ let k = 0; window.dash_ag_grid.getApi('{GRID}')"
                           f".forEachNode(() => k++); return k === {n + 2}; }}")
    wait_counts_change(page, before)
    data = rows_data(page)
    assert [r["solvent"] for r in data[n - 1:]] == ["glycerol", "my oil", "isopropyl acetate"]
    assert data[n]["dD"] == 16.5 and data[n + 1]["outcome"] == "partly"
    # a cell being edited keeps the browser's own paste into its input
    cell(page, 0, "note").dblclick()
    editor = page.locator(f"#{GRID} .ag-cell-inline-editing input")
    editor.fill("")
    assert paste_tsv(page, "pasted\ttext") is True  # left to the browser
    page.wait_for_timeout(500)
    assert editing(page), "the editor must stay open"
    assert row_count(page) == n + 2 and rows_data(page)[0]["solvent"] == "acetone"
    editor.press("Escape")
    assert page.errors == [], page.errors


def test_delete_and_fixes_apply_to_their_row_whatever_the_sort(page, artefacts):
    load_demo(page)
    names = column(page, "solvent")
    n = len(names)
    # sort by solvent, descending: the screen order is no longer the data order
    header = page.locator(f"#{GRID} .ag-header-cell[col-id='solvent'] .ag-header-cell-label")
    header.click()
    header.click()
    page.wait_for_timeout(300)
    first_shown = page.locator(f"#{GRID} .ag-row[row-index='0'] .ag-cell[col-id='solvent']")
    assert first_shown.inner_text().strip() == max(names) != names[0]
    victim = names.index("heptane")
    before = counts(page)
    cell(page, victim, "delete").locator("button").click()
    wait_counts_change(page, before)
    after = column(page, "solvent")
    assert len(after) == n - 1 and "heptane" not in after
    assert after == names[:victim] + names[victim + 1:]
    # an unknown name in the sorted grid: its fix lands on its own row
    type_solvent(page, 2, "chlorofrom")
    page.wait_for_selector("#problems button:has-text('chloroform')")
    page.locator("#problems button", has_text="chloroform").first.click()
    page.wait_for_selector("#problems li", state="detached")
    fixed = column(page, "solvent")
    assert fixed[2] == "chloroform" and fixed[:2] == after[:2] and fixed[3:] == after[3:]
    page.screenshot(path=str(artefacts / "23-bench-grid-sorted.png"))
    assert page.errors == [], page.errors


def test_the_table_downloads_as_csv(page, artefacts):
    load_demo(page)
    with page.expect_download() as dl:
        page.click(f"#{GRID}-csv")
    path = artefacts / "bench-results.csv"
    dl.value.save_as(path)
    rows = list(csv.DictReader(io.StringIO(path.read_text(encoding="utf-8-sig"))))
    assert len(rows) == 35
    assert list(rows[0]) == ["solvent", "outcome", "δD", "δP", "δH", "note", "file line"]
    assert rows[0]["solvent"] == "acetone" and rows[0]["file line"] == "5"
    assert page.errors == [], page.errors
