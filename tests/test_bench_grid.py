"""The bench-results grid (AG Grid) without a browser: the paste merge, deleting a row,
the grid's marks, its column definitions under the page's content-security policy, and
its callbacks called through Dash's HTTP endpoint as the browser calls them.

The browser side (editing, the type-ahead editor, the paste listener, tooltips, the new
row scrolled into view) is tested in real Chromium in tests/browser/test_results_grid.py.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

from solsphere.app import bench, logic

APP = Path(bench.__file__).resolve().parent
ASSET = APP / "assets" / "dashAgGridComponentFunctions.js"
ROWS = [{"solvent": s, "outcome": o, "dD": None, "dP": None, "dH": None, "note": None}
        for s, o in [("toluene", "dissolves"), ("acetone", "dissolves"),
                     ("water", "does not"), ("n-hexane", "does not"),
                     ("methanol", "does not")]]


# ----------------------------------------------------------------------------- paste

def test_paste_past_the_end_adds_rows_in_the_file_column_order():
    # what a spreadsheet puts on the clipboard: tabs between cells, a newline per row
    text = "glycerol\tbad\nmy own oil\tyes\t16.5\t3.1\t4.2\tinvented\nwater\tno\n"
    rows, n = logic.paste_cells(ROWS, 5, "solvent", text)
    assert n == 3 and len(rows) == 8
    assert rows[5] == {"solvent": "glycerol", "outcome": "does not", "dD": None,
                       "dP": None, "dH": None, "note": None}
    assert rows[6] == {"solvent": "my own oil", "outcome": "dissolves", "dD": 16.5,
                       "dP": 3.1, "dH": 4.2, "note": "invented"}
    assert rows[7]["outcome"] == "does not"
    assert rows[:5] == ROWS and len(ROWS) == 5  # the old rows untouched, the input too


def test_paste_overwrites_from_the_clicked_cell_rightwards_and_down():
    rows, n = logic.paste_cells(ROWS, 1, "outcome", "partly\t\t7\r\nfine\t1\t2\t3\tnote\textra")
    assert n == 2 and len(rows) == 5
    assert rows[1]["solvent"] == "acetone"  # left of the clicked cell: kept
    assert (rows[1]["outcome"], rows[1]["dD"], rows[1]["dP"]) == ("partly", None, 7.0)
    # an unknown outcome word is kept as typed (the table marks it); the cell past the
    # note ("extra") is dropped
    assert (rows[2]["outcome"], rows[2]["dH"], rows[2]["note"]) == ("fine", 3.0, "note")
    assert "extra" not in json.dumps(rows)
    assert rows[2]["solvent"] == "water"


def test_paste_into_a_read_only_column_starts_at_the_solvent_and_numbers_are_read(lib):
    rows, _ = logic.paste_cells(ROWS, 0, "line", "xylene\tgood\t17,8\tn/a")
    assert rows[0]["solvent"] == "xylene" and rows[0]["outcome"] == "dissolves"
    assert rows[0]["dD"] == 17.8 and rows[0]["dP"] == "n/a"  # a decimal comma; junk kept
    marks_result = logic.compute_fit(rows, "good", lib)
    assert any(p["column"] == "dP" and p["row"] == 0 for p in marks_result["problems"])


def test_paste_of_nothing_changes_nothing_and_a_far_row_lands_at_the_end():
    assert logic.paste_cells(ROWS, 0, "solvent", "\n\n")[1] == 0
    rows, n = logic.paste_cells(ROWS, 99, "solvent", "ethanol\tyes")
    assert n == 1 and len(rows) == 6 and rows[5]["solvent"] == "ethanol"


def test_a_pasted_header_row_places_the_cells_and_is_not_a_row():
    # a block copied with its header, in the lab's own column order and words; the dP
    # column in (cal/cm³)½ (converted at 2.0455 MPa½ per (cal/cm³)½, as in a file);
    # a column solsphere does not know (pH) is left out
    text = ("Result\tLiquid\tpH\tdP (cal/cm3)^0.5\tComments\n"
            "yes\tglycerol\t7\t2.0\tclear\nno\twater\t7\t\t\n")
    rows, n = logic.paste_cells(ROWS, 5, "solvent", text)
    assert n == 2 and len(rows) == 7  # the header is not a row
    assert rows[5] == {"solvent": "glycerol", "outcome": "dissolves", "dD": None,
                       "dP": 2.0 * 2.0455, "dH": None, "note": "clear"}
    assert (rows[6]["solvent"], rows[6]["outcome"]) == ("water", "does not")
    assert "7" not in json.dumps(rows[5:]) and "pH" not in json.dumps(rows)
    # the header alone adds nothing; one header cell over the column it lands in is
    # read as a header too; a data line is never a header
    assert logic.paste_cells(ROWS, 0, "solvent", "solvent\toutcome\n") == (ROWS, 0)
    rows, n = logic.paste_cells(ROWS, 0, "note", "Notes\nfirst\nsecond")
    assert n == 2 and [r["note"] for r in rows[:2]] == ["first", "second"]
    rows, n = logic.paste_cells(ROWS, 0, "solvent", "ethanol\tgood\nwater\tbad")
    assert n == 2 and rows[0]["solvent"] == "ethanol"
    # a repeated column name is not one of our headers: pasted as data, as typed
    rows, n = logic.paste_cells(ROWS, 0, "solvent", "solvent\tsolvent\nx\ty")
    assert n == 2 and rows[0]["solvent"] == "solvent"


def test_delete_row_by_its_place_in_the_data():
    rows = logic.delete_row(ROWS, 2)
    assert [r["solvent"] for r in rows] == ["toluene", "acetone", "n-hexane", "methanol"]
    assert logic.delete_row(ROWS, 9) == ROWS  # no such row: nothing deleted
    assert logic.delete_row([ROWS[0]], 0) == [logic.blank_row()]


# ----------------------------------------------------------------------------- marks

def test_marks_are_keyed_by_the_row_in_the_data(lib):
    rows = ROWS + [{"solvent": "chlorofrom", "outcome": "dissolves"},
                   {"solvent": "o-xylene", "outcome": None}]
    res = logic.compute_fit(rows, "good", lib)
    marks, problems = logic.table_marks(res, len(rows))
    assert "chlorofrom" in marks["5"]["bad"]["solvent"]
    assert "Waiting for the result" in marks["6"]["pending"]["outcome"]
    assert marks["0"]["red"].startswith("RED ") and "bad" not in marks["0"]
    assert {p["row"] for p in problems} == {5, 6}
    json.dumps(marks)  # sent to the browser as it is
    # a table that shrank since the fit: no marks past its end
    marks, _ = logic.table_marks(res, 3)
    assert set(marks) <= {"0", "1", "2"}


# ----------------------------------------------------------------------------- columns

def _function_strings(obj):
    """Every value a column definition asks the grid to run, as (key, value)."""
    if isinstance(obj, dict):
        for k, v in obj.items():
            if k in ("valueGetter", "valueFormatter", "valueParser", "valueSetter",
                     "tooltipValueGetter", "getRowId", "cellStyle") or k == "cellClassRules":
                yield k, v
            yield from _function_strings(v)
    elif isinstance(obj, list):
        for v in obj:
            yield from _function_strings(v)


def test_columns_run_no_code_from_strings_and_name_only_shipped_functions():
    cols = bench.table_columns()
    assert [c.get("field") for c in cols][:6] == list(logic.COLUMNS)
    found = list(_function_strings(cols))
    assert found, "the marks and tooltips are expected in the column definitions"
    asset = ASSET.read_text(encoding="utf-8")
    for key, value in found:
        rules = value.values() if key == "cellClassRules" else [value]
        for rule in rules:
            # {"function": ...} is read by dash-ag-grid's own parser; a plain string
            # would be compiled by AG Grid with new Function (refused by the policy)
            assert isinstance(rule, dict) and set(rule) == {"function"}, (key, rule)
            name = re.match(r"(\w+)\(", rule["function"]).group(1)
            assert f"fns.{name} = function" in asset, name
    for c in cols:
        for key in ("cellEditor", "cellRenderer"):
            if str(c.get(key, "ag")).startswith("Bench"):
                assert f"comps.{c[key]} = function" in asset, c[key]
    solvent = cols[0]
    assert solvent["cellEditor"] == "BenchSolventEditor"
    assert "list: 'solvent-names'" in asset  # the editor's input uses the page's datalist
    assert cols[1]["cellEditor"] == "agSelectCellEditor"
    assert cols[1]["cellEditorParams"]["values"] == ["dissolves", "partly", "does not"]
    line = next(c for c in cols if c.get("field") == "line")
    assert line["editable"] is False


def test_the_app_no_longer_uses_the_deprecated_table():
    for path in APP.glob("*.py"):
        text = path.read_text(encoding="utf-8")
        assert "dash_table" not in text and "DataTable" not in text, path.name
        assert "DeprecationWarning" not in text, path.name


# ----------------------------------------------------------------------------- callbacks

@pytest.fixture(scope="module")
def client():
    from solsphere.app.server import create_app
    app = create_app()
    c = app.server.test_client()
    c.deps = c.get("/_dash-dependencies").get_json()
    return c


def _dep(client, trigger: str, output: str) -> dict:
    """The callback with input ``trigger`` ("id.property") and ``output`` among its
    outputs."""
    return next(d for d in client.deps if output in d["output"] and any(
        f"{i['id']}.{i['property']}" == trigger for i in d["inputs"]))


def _body(dep: dict, changed: str, values: dict) -> dict:
    """The request the browser sends: ``values`` by "id.property" (others None; a
    pattern-matching input with no buttons drawn is an empty list)."""
    def prop(i):
        if i["id"].startswith("{"):  # a pattern-matching input, by its id as listed
            return values.get(i["id"], [])
        return {"id": i["id"], "property": i["property"],
                "value": values.get(f"{i['id']}.{i['property']}")}

    outs = [dict(zip(("id", "property"), part.split("@")[0].rsplit(".", 1)))
            for part in dep["output"].strip(".").split("...")]
    return {"output": dep["output"], "outputs": outs if dep["output"].startswith("..")
            else outs[0], "inputs": [prop(i) for i in dep["inputs"]],
            "state": [prop(i) for i in dep["state"]], "changedPropIds": [changed]}


def _call(client, trigger: str, output: str, values: dict, changed: str | None = None):
    body = _body(_dep(client, trigger, output), changed or trigger, values)
    r = client.post("/_dash-update-component", json=body)
    assert r.status_code in (200, 204), r.get_data(as_text=True)[:500]
    return r.get_json()["response"] if r.status_code == 200 else None


def test_a_pasted_block_reaches_the_table_and_the_new_rows_are_shown(client):
    block = {"row": 5, "column": "solvent", "text": "glycerol\tbad\nethanol\tyes\n",
             "nonce": 1}
    out = _call(client, "bench-paste.data", "results-table.rowData",
                {"bench-paste.data": block, "results-table.rowData": ROWS})
    rows = out["results-table"]["rowData"]
    assert [r["solvent"] for r in rows[5:]] == ["glycerol", "ethanol"]
    assert [r["outcome"] for r in rows[5:]] == ["does not", "dissolves"]
    assert out["bench-new-row"]["data"] == {"row": 6, "rows": 7, "edit": False}
    # junk from a crafted request: nothing changes
    assert _call(client, "bench-paste.data", "results-table.rowData",
                 {"bench-paste.data": {"row": "x", "text": "a"},
                  "results-table.rowData": ROWS}) is None


def test_the_delete_button_removes_the_row_it_belongs_to(client):
    event = {"value": "delete", "colId": "delete", "rowIndex": 1, "rowId": "1",
             "timestamp": 1}
    out = _call(client, "results-table.cellRendererData", "results-table.rowData",
                {"results-table.cellRendererData": event, "results-table.rowData": ROWS})
    rows = out["results-table"]["rowData"]
    assert [r["solvent"] for r in rows] == ["toluene", "water", "n-hexane", "methanol"]


def test_an_edit_in_the_grid_refits(client):
    edited = [dict(r) for r in ROWS]
    edited[4]["outcome"] = "dissolves"  # what the grid wrote into its row in place
    change = [{"rowIndex": 4, "rowId": "4", "data": edited[4], "oldValue": "does not",
               "value": "dissolves", "colId": "outcome", "timestamp": 1}]
    out = _call(client, "results-table.cellValueChanged", "fit-store.data",
                {"results-table.rowData": edited, "partial-choice.value": "good",
                 "results-table.cellValueChanged": change})
    fit = out["fit-store"]["data"]["fit"]
    assert fit["n_good"] == 3 and fit["n_bad"] == 2


def test_an_empty_row_added_is_opened_for_typing_and_a_fix_applies_to_its_row(client):
    out = _call(client, "add-empty.n_clicks", "bench-new-row.data",
                {"add-empty.n_clicks": 1, "results-table.rowData": ROWS})
    assert len(out["results-table"]["rowData"]) == 6
    assert out["bench-new-row"]["data"] == {"row": 5, "rows": 6, "edit": True}
    out = _call(client, "add-button.n_clicks", "bench-new-row.data",
                {"add-button.n_clicks": 1, "results-table.rowData": ROWS,
                 "add-solvent.value": "ethanol", "add-outcome.value": "dissolves"})
    assert out["results-table"]["rowData"][5]["solvent"] == "ethanol"
    assert out["bench-new-row"]["data"] == {"row": 5, "rows": 6, "edit": False}
    # a "Did you mean" button: the fix goes to the row of the data it names
    fix = {"type": "fix", "row": 2, "col": "solvent", "value": "chloroform"}
    key = json.dumps({"type": "fix", "row": ["ALL"], "col": ["ALL"], "value": ["ALL"]},
                     sort_keys=True, separators=(",", ":"))
    dep = _dep(client, "add-empty.n_clicks", "bench-new-row.data")
    assert key in [i["id"] for i in dep["inputs"]]
    body = _body(dep, json.dumps(fix, separators=(",", ":"), sort_keys=True) + ".n_clicks",
                 {key: [{"id": fix, "property": "n_clicks", "value": 1}],
                  "results-table.rowData": ROWS})
    r = client.post("/_dash-update-component", json=body)
    assert r.status_code == 200, r.get_data(as_text=True)[:500]
    rows = r.get_json()["response"]["results-table"]["rowData"]
    assert rows[2]["solvent"] == "chloroform" and rows[0]["solvent"] == "toluene"


def test_the_type_ahead_list_is_its_own_cached_answer_not_part_of_the_page():
    from solsphere.app import bench
    from solsphere.app.server import create_app
    app = create_app(None, initial={})
    client = app.server.test_client()
    r = client.get(bench.NAMES_PATH)
    assert r.status_code == 200 and r.mimetype == "application/json"
    assert "max-age=86400" in r.headers["Cache-Control"]
    pairs = json.loads(r.get_data(as_text=True))
    assert len(pairs) > 5000
    assert ["MEK", "2-butanone"] in pairs and ["108-88-3", "toluene"] in pairs
    layout = client.get("/_dash-layout").get_data(as_text=True)
    assert "108-88-3" not in layout  # (toluene's CAS number) the page's first answer carries only the address
    assert len(layout) < 150_000
