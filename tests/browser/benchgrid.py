"""Driving the bench-results grid (AG Grid, id ``results-table``) in the browser tests.

Rows are named by their place in the table's data (as the server and the marks name
them), not by their place on screen: the grid draws only the rows in view and may be
sorted, so the helpers look the row up through the grid's API, scroll it into view and
then act on its cell as a user would (double-click, the outcome list, typing).
"""

from __future__ import annotations

GRID = "results-table"
API = f"window.dash_ag_grid.getApi('{GRID}')"


def rows_data(page) -> list[dict]:
    """The table's rows in data order (what the server gets as ``rowData``)."""
    return page.evaluate(f"() => {{ const out = []; {API}.forEachNode(n => out.push(n.data));"
                         " return out; }")


def row_count(page) -> int:
    return page.evaluate(f"() => {{ let n = 0; {API}.forEachNode(() => n++); return n; }}")


def column(page, field: str) -> list:
    """One column's values in data order."""
    return [r.get(field) for r in rows_data(page)]


def cell(page, row: int, field: str):
    """The cell of data row ``row``, scrolled into view (a Playwright locator)."""
    shown = page.evaluate(
        f"""([row, field]) => {{ const api = {API}; let at = null;
            api.forEachNode(n => {{ if (n.sourceRowIndex === row) {{ at = n.rowIndex; }} }});
            if (at === null) {{ return null; }}
            api.ensureIndexVisible(at, 'middle'); api.ensureColumnVisible(field);
            return at; }}""", [row, field])
    assert shown is not None, f"row {row} is not in the grid"
    loc = page.locator(f"#{GRID} .ag-row[row-index='{shown}'] .ag-cell[col-id='{field}']")
    loc.wait_for()
    return loc


def set_outcome(page, row: int, word: str):
    """Choose an outcome in data row ``row`` from the cell's list (double-click, open
    the list, click the word)."""
    cell(page, row, "outcome").dblclick()
    page.locator(f"#{GRID} .ag-cell-inline-editing .ag-picker-field-wrapper").click()
    page.locator(".ag-select-list-item", has_text=word).first.click()


def outcome_of(page, row: int) -> str:
    return cell(page, row, "outcome").inner_text().strip()


def type_solvent(page, row: int, text: str):
    """Type a solvent into data row ``row`` with the grid's own editor."""
    cell(page, row, "solvent").dblclick()
    editor = page.locator(f"#{GRID} input.bench-solvent-editor")
    editor.fill(text)
    editor.press("Enter")


def paste_tsv(page, text: str) -> bool:
    """Dispatch what a spreadsheet's copy puts on the clipboard at the focused element
    (a synthetic ClipboardEvent with a DataTransfer: headless Chromium has no
    clipboard of its own to paste from). True when the page left the event to the
    browser (not cancelled), False when the grid took it."""
    return page.evaluate("""(text) => { const dt = new DataTransfer();
        dt.setData('text/plain', text);
        return document.activeElement.dispatchEvent(new ClipboardEvent('paste',
            {clipboardData: dt, bubbles: true, cancelable: true})); }""", text)


def editing(page) -> list:
    """The cells being edited: [(display row, column)]."""
    return [tuple(x) for x in page.evaluate(
        f"() => {API}.getEditingCells().map(c => [c.rowIndex, c.column.getColId()])")]
