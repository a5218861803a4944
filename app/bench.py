"""'Bench results' screen: the editable grid of trials, opening files, the demo.

The trials sit in an AG Grid (``dash-ag-grid``) whose ``rowData`` is the one copy of
the table every screen reads; the sphere refits whenever it changes. Every cell but the
file line is editable: the solvent is free text (a blend such as
``toluene 70 + ethanol 30`` or an own solvent with its δD δP δH) typed in an editor
that offers the page's type-ahead list of library names; the outcome is chosen from
dissolves / partly / does not. A block of cells copied from a spreadsheet is pasted at
the clicked cell (:func:`solsphere.app.logic.paste_cells`), and a button per row deletes
it. Cells the reader cannot use are marked in place with the reason on hover; the list
under the grid repeats them and offers close library names as one-click fixes. Rows are
always addressed by their place in the data, never on screen, so sorting or filtering
the grid never changes which row an edit, a fix or a delete applies to.

The grid's browser-side parts (the editor, the delete button, the marks, the paste
listener, scrolling to a new row) are in ``assets/dashAgGridComponentFunctions.js``.
"""

from __future__ import annotations

import json

import flask
from dash import ALL, ClientsideFunction, Input, Output, State, ctx, dcc, html, no_update
from dash.exceptions import PreventUpdate

from . import grids, ids, logic

OUTCOME_OPTIONS = [{"label": w, "value": w} for w in ("dissolves", "partly", "does not")]
#: Clientside size check of an upload: refuses big files before they are sent.
CHECK_UPLOAD_JS = """
function(contents, filename) {
    if (!contents) { return [window.dash_clientside.no_update, null]; }
    var size = Math.floor((contents.length - contents.indexOf(',') - 1) * 3 / 4);
    if (size > %d) {
        return [{filename: filename, too_big: size, nonce: Date.now()}, null];
    }
    return [{filename: filename, contents: contents, nonce: Date.now()}, null];
}
""" % logic.UPLOAD_LIMIT

#: Fills the type-ahead list with plain <option> elements (thousands of names: cheaper
#: as DOM nodes than as components).
FILL_NAMES_JS = """
function(url) {
    // The list (some 5,000 names, 340 kB) is fetched once the page has drawn: it is
    // not part of the page's first answer, and the browser keeps it in its cache.
    if (!url) { return window.dash_clientside.no_update; }
    var fill = function() {
        fetch(url, {credentials: 'same-origin'}).then(function(r) { return r.json(); })
            .then(function(pairs) {
                var list = document.getElementById('solvent-names');
                if (!list || !Array.isArray(pairs)) { return; }
                var frag = document.createDocumentFragment();
                for (var i = 0; i < pairs.length; i++) {
                    var o = document.createElement('option');
                    o.value = pairs[i][0];
                    if (pairs[i][1]) { o.label = pairs[i][1]; }
                    frag.appendChild(o);
                }
                list.replaceChildren(frag);
                list.setAttribute('data-filled', String(pairs.length));
            });
    };
    if (window.requestIdleCallback) { window.requestIdleCallback(fill, {timeout: 3000}); }
    else { setTimeout(fill, 1500); }
    return 'filled';
}
"""


#: Widths [px] of the grid's columns (the left panel is at least 560 px wide).
WIDTHS = {"solvent": 150, "outcome": 100, "dD": 62, "dP": 62, "dH": 62, "note": 110,
          "line": 50, "delete": 36}
#: Cell marks: classes set by name-only functions of the asset file (no code from strings).
_CELL_CLASSES = {"bench-bad": {"function": "benchMarked(params, 'bad')"},
                 "bench-pending": {"function": "benchMarked(params, 'pending')"},
                 "bench-misfit": {"function": "benchMarked(params, 'misfit')"}}


def _col(field: str, header: str, **extra) -> dict:
    c = {"field": field, "headerName": header, "width": WIDTHS[field],
         "minWidth": WIDTHS[field],
         "cellClassRules": _CELL_CLASSES,
         "tooltipValueGetter": {"function": "benchTip(params)"}}
    c.update(extra)
    return c


def table_columns() -> list[dict]:
    """The grid's column definitions (functions only by name: no code from strings).

    >>> [c.get("field") or c["colId"] for c in table_columns()]
    ['solvent', 'outcome', 'dD', 'dP', 'dH', 'note', 'line', 'delete']
    """
    number = {"type": "numericColumn", "filter": "agNumberColumnFilter",
              "cellEditor": "agNumberCellEditor"}
    return [
        _col("solvent", "solvent", cellEditor="BenchSolventEditor", pinned="left",
             filter="agTextColumnFilter"),
        _col("outcome", "outcome", cellEditor="agSelectCellEditor",
             cellEditorParams={"values": [o["value"] for o in OUTCOME_OPTIONS]},
             filter="agTextColumnFilter"),
        *[_col(d, f"δ{d[1]}", headerTooltip=f"your own δ{d[1]} [MPa½] (empty: the "
                                              f"library's)", **number)
          for d in logic.NUMBER_COLUMNS],
        _col("note", "note", filter="agTextColumnFilter"),
        {"field": "line", "headerName": "file line", "width": WIDTHS["line"],
         "minWidth": WIDTHS["line"],
         "editable": False, "type": "numericColumn", "filter": False,
         "cellClass": "cell-line", "headerTooltip": "the line of the opened file"},
        {"colId": "delete", "headerName": "", "width": WIDTHS["delete"],
         "minWidth": WIDTHS["delete"], "maxWidth": WIDTHS["delete"], "editable": False,
         "sortable": False, "filter": False, "resizable": False,
         "cellRenderer": "BenchDeleteButton", "cellClass": "cell-delete"},
    ]


def results_table(rows):
    """The editable grid of trials (its rows are the table every screen reads), with a
    CSV download button like the other grids."""
    import dash_ag_grid as dag  # deferred: only the app needs the grid

    return html.Div(className="grid-box bench-grid", children=[
        dag.AgGrid(
            id=ids.TABLE, rowData=rows, columnDefs=table_columns(), className=grids.THEME,
            defaultColDef={"editable": True, "sortable": True, "filter": True,
                           "resizable": True, "wrapHeaderText": True,
                           "autoHeaderHeight": True},
            columnSize="responsiveSizeToFit",
            dashGridOptions={"tooltipShowDelay": 0, "tooltipHideDelay": 20000,
                             "stopEditingWhenCellsLoseFocus": True,
                             "enterNavigatesVerticallyAfterEdit": True,
                             "suppressColumnVirtualisation": True,
                             "rowHeight": 34},
            csvExportParams={"fileName": "bench-results.csv",
                             "columnKeys": [*logic.COLUMNS, "line"]},
            style={"height": "52vh", "minHeight": "260px", "width": "100%"},
        ),
        html.Div(className="grid-foot", children=[
            html.Button("Download this table (CSV)", id=f"{ids.TABLE}-csv",
                        className="btn btn-quiet btn-small"),
            html.Span("edit: double-click a cell or start typing · sort: click a header · "
                      "filter: the ≡ menu of a header", className="muted small"),
        ]),
        dcc.Store(id="bench-paste"),   # a block pasted into the grid (set in the browser)
        dcc.Store(id="bench-marks"),   # the cells' marks (logic.table_marks)
        dcc.Store(id="bench-new-row"),  # a row just added, to scroll to
        dcc.Store(id="bench-marks-shown"),
        dcc.Store(id="bench-row-shown"),
        dcc.Store(id="bench-pending-shown"),  # a row added from another screen, shown
    ])


#: Where the page fetches the type-ahead list (see :func:`serve_names`).
NAMES_PATH = "/solsphere/names.json"


def type_ahead(url: str = NAMES_PATH.lstrip("/")):
    """The page-wide type-ahead list (every library name, abbreviation, CAS number and
    synonym), filled in the browser from ``url`` once the page has drawn (relative to
    the page, so a server behind a path prefix works); outside the tabs, so every
    screen's inputs can use it."""
    return [html.Datalist(id="solvent-names"),
            dcc.Store(id="solvent-names-data", data=url)]


def serve_names(app, get_library) -> None:
    """The type-ahead list as one JSON answer at :data:`NAMES_PATH` (made once per
    process; the browser may keep it a day: it changes only with the library)."""
    cache: dict = {}

    def names():
        if "body" not in cache:
            pairs = [list(p) for p in logic.type_ahead_options(get_library())]
            cache["body"] = json.dumps(pairs, ensure_ascii=False, separators=(",", ":"))
        r = flask.Response(cache["body"], mimetype="application/json")
        r.headers["Cache-Control"] = "private, max-age=86400"
        return r

    app.server.add_url_rule(NAMES_PATH, "solsphere_names", names)


def panel(rows, library, has_demo: bool):
    """Layout of the 'Bench results' screen."""
    return html.Div(className="panel", children=[
        html.Div(className="toolbar", children=[
            dcc.Upload(id="open-upload", multiple=False, max_size=-1,
                       accept=".csv,.tsv,.txt,.json",
                       children=html.Button("Open results or project file…", className="btn"),
                       className="upload-inline"),
            html.Button("Load the demo (invented data)", id="demo-button", className="btn",
                        disabled=not has_demo),
            html.Button("Add an empty row", id="add-empty", className="btn btn-quiet"),
            html.Button("Clear the table", id="clear-table", className="btn btn-quiet"),
        ]),
        html.Div(className="add-line", children=[
            html.Div(className="add-row", children=[
                html.Label("Add a result", htmlFor="add-solvent", className="add-label"),
                dcc.Input(id="add-solvent", type="text", list="solvent-names", debounce=False,
                          placeholder="type a solvent: name, CAS number or abbreviation",
                          autoComplete="off", className="add-solvent"),
            ]),
            html.Div(className="add-row", children=[
                dcc.RadioItems(id="add-outcome", options=OUTCOME_OPTIONS, value="dissolves",
                               inline=True, className="radio"),
                dcc.Input(id="add-note", type="text", placeholder="note (optional)",
                          className="add-note"),
                html.Button("Add", id="add-button", className="btn btn-main"),
            ]),
        ]),
        html.P(className="tip", children=[
            "Solvent: a library name, CAS number or abbreviation, or your own solvent with "
            "its δD δP δH. Edit any cell (double-click it or start typing); the sphere "
            "refits on every change. Paste rows from a spreadsheet: click a cell once, "
            "then Ctrl+V (columns solvent, outcome, δD, δP, δH, note from the clicked "
            "one on, or as a copied header row names them); rows pasted past the end "
            "are added. × deletes a row. A blend "
            "tested as one trial is written ",
            html.Code("toluene 70 + ethanol 30"), ". Leave δD δP δH empty to use the "
            "library's values."]),
        results_table(rows),
        html.Div(id="problems", className="problems"),
    ])


def _problem_items(problems):
    items = []
    for p in problems:
        if p.get("pending"):
            items.append(html.Li([html.Strong(f"row {p['row'] + 1} ({p.get('solvent')}): "),
                                  "waiting for its outcome; choose dissolves, partly or does "
                                  "not once tested."],
                                 className="pending"))
            continue
        where = f"row {p['row'] + 1}, {p['column'] or 'solvent'}"
        fixes = [html.Button(s, id={"type": "fix", "row": p["row"], "col": p["column"] or "solvent",
                                    "value": s}, className="btn btn-fix", n_clicks=0)
                 for s in p.get("suggestions") or []]
        items.append(html.Li([html.Strong(where + ": "), p["message"],
                              (" " + p["hint"]) if p.get("hint") and not fixes else "",
                              html.Span([" Did you mean "] + fixes + ["?"]) if fixes else ""]))
    return html.Ul(items) if items else None


def register(app, get_library):
    """Callbacks: the one fit, the grid's marks, and every edit of the table."""
    grids.register_csv(app, [ids.TABLE])

    @app.callback(Output(ids.FIT, "data"), Output(ids.TABLE, "rowData", allow_duplicate=True),
                  Input(ids.TABLE, "rowData"), Input(ids.PARTIAL, "value"),
                  Input(ids.TABLE, "cellValueChanged"),
                  prevent_initial_call="initial_duplicate")
    def refit(rows, partial, _edited=None):
        """The one callback that fits; it also rewrites typed outcome words ('yes',
        'bad' …) in the table's words so the outcome cells show them.

        An edit in the grid changes its ``rowData`` in place (the grid writes into the
        row objects), which Dash does not see as a change: the grid's
        ``cellValueChanged`` is the trigger then, and ``rowData`` still the table read."""
        result = logic.compute_fit(rows or [], partial or "good", get_library())
        fixed = logic.normalise_outcomes(rows)
        return result, (no_update if fixed is None else fixed)

    @app.callback(Output("bench-marks", "data"), Output("problems", "children"),
                  Input(ids.FIT, "data"), State(ids.TABLE, "rowData"))
    def mark_table(result, rows):
        if result is None:
            raise PreventUpdate
        marks, problems = logic.table_marks(result, len(rows or []))
        return marks, _problem_items(problems)

    app.clientside_callback(ClientsideFunction("solsphereBench", "showMarks"),
                            Output("bench-marks-shown", "data"), Input("bench-marks", "data"))
    app.clientside_callback(ClientsideFunction("solsphereBench", "showRow"),
                            Output("bench-row-shown", "data"),
                            Input("bench-new-row", "data"), prevent_initial_call=True)
    app.clientside_callback(ClientsideFunction("solsphereBench", "showPendingRow"),
                            Output("bench-pending-shown", "data"),
                            Input(ids.TABS, "value"), prevent_initial_call=True)

    @app.callback(Output("table-status", "children"), Input(ids.FIT, "data"),
                  Input(ids.SOURCE, "data"))
    def status(result, source):
        """The banner follows the table: counts as they are now, after every edit."""
        if result is None:
            raise PreventUpdate
        return logic.table_status(result, source)

    @app.callback(Output(ids.TABLE, "rowData", allow_duplicate=True),
                  Output("bench-new-row", "data", allow_duplicate=True),
                  Input("bench-paste", "data"), State(ids.TABLE, "rowData"),
                  prevent_initial_call=True)
    def paste(block, rows):
        """A block of spreadsheet cells pasted at the focused cell."""
        if not isinstance(block, dict) or not isinstance(block.get("text"), str):
            raise PreventUpdate
        try:
            row = int(block.get("row"))
        except (TypeError, ValueError):
            raise PreventUpdate from None
        new, n = logic.paste_cells(rows, row, block.get("column"), block["text"])
        if not n:
            raise PreventUpdate
        last = min(row, len(rows or [])) + n - 1
        return new, {"row": last, "rows": len(new), "edit": False}

    @app.callback(Output(ids.TABLE, "rowData", allow_duplicate=True),
                  Input(ids.TABLE, "cellRendererData"), State(ids.TABLE, "rowData"),
                  prevent_initial_call=True)
    def delete_clicked(event, rows):
        """The × button of a row (the row's place in the data, whatever the sort)."""
        if not isinstance(event, dict) or event.get("colId") != "delete":
            raise PreventUpdate
        try:
            row = int(event.get("rowIndex"))
        except (TypeError, ValueError):
            raise PreventUpdate from None
        return logic.delete_row(rows, row)

    serve_names(app, get_library)
    app.clientside_callback(FILL_NAMES_JS, Output("solvent-names", "className"),
                            Input("solvent-names-data", "data"))

    app.clientside_callback(CHECK_UPLOAD_JS, Output(ids.OPEN_PAYLOAD, "data"),
                            Output("open-upload", "contents"),
                            Input("open-upload", "contents"), State("open-upload", "filename"))

    @app.callback(Output(ids.TABLE, "rowData"), Output(ids.PARTIAL, "value"),
                  Output(ids.SAVED_FIT, "data"), Output(ids.SOURCE, "data"),
                  Output(ids.NOTICE, "children"), Output("add-solvent", "value"),
                  Output("bench-new-row", "data"),
                  Input(ids.OPEN_PAYLOAD, "data"), Input("share-open-payload", "data"),
                  Input("demo-button", "n_clicks"),
                  Input("add-button", "n_clicks"), Input("add-solvent", "n_submit"),
                  Input("add-empty", "n_clicks"), Input("clear-table", "n_clicks"),
                  Input({"type": "fix", "row": ALL, "col": ALL, "value": ALL}, "n_clicks"),
                  Input({"type": "add-next", "name": ALL}, "n_clicks"),
                  Input("add-all-next", "n_clicks"),
                  State(ids.TABLE, "rowData"), State("add-solvent", "value"),
                  State("add-outcome", "value"), State("add-note", "value"),
                  State(ids.NEXT, "data"),
                  prevent_initial_call=True)
    def edit_table(payload, share_payload, _demo, _add, _submit, _empty, _clear, _fix,
                   _next, _all_next, rows, solvent, outcome, note, suggested):
        out = _edit(ctx.triggered_id, payload, share_payload, rows, solvent, outcome, note,
                    suggested)
        new = out[0]
        from_next = ctx.triggered_id == "add-all-next" or (
            isinstance(ctx.triggered_id, dict) and ctx.triggered_id.get("type") == "add-next")
        if (from_next or ctx.triggered_id in ("add-button", "add-solvent", "add-empty")) \
                and isinstance(new, list):
            # the row just written: the first one that differs from before (an empty
            # row at the end is reused), else the last; shown, and an empty one opened
            old = list(rows or [])
            k = next((i for i, r in enumerate(new) if i >= len(old) or r != old[i]),
                     len(new) - 1)
            return *out, {"row": k, "rows": len(new), "edit": ctx.triggered_id == "add-empty"}
        return *out, no_update

    def _edit(trig, payload, share_payload, rows, solvent, outcome, note, suggested):
        keep = (no_update,) * 4
        if trig == "add-all-next" or (isinstance(trig, dict) and trig.get("type") == "add-next"):
            if not ctx.triggered or not ctx.triggered[0].get("value"):
                raise PreventUpdate  # buttons just drawn, not clicked
            names = ([trig["name"]] if isinstance(trig, dict) else
                     [s["name"] for s in (suggested or {}).get("suggestions") or []])
            rows, added = logic.add_pending(rows, names, "suggested next trial")
            if not added:
                return *keep, _notice("Already in the table.", "ok"), no_update
            return (rows, no_update, no_update, no_update,
                    _notice(f"Added {', '.join(added)} to the table with an empty outcome: "
                            f"fill it in after the test.", "ok"), no_update)
        if trig in (ids.OPEN_PAYLOAD, "share-open-payload"):
            payload = payload if trig == ids.OPEN_PAYLOAD else share_payload
            if not payload:
                raise PreventUpdate
            if payload.get("too_big"):
                return *keep, _notice(logic.too_big_message(payload.get("filename"),
                                                            payload["too_big"]), "error"), no_update
            try:
                st = logic.open_upload(payload["contents"], payload.get("filename"),
                                       get_library())
            except logic.InputError as exc:
                return *keep, _notice(f"Not opened: {exc}", "error"), no_update
            return (st["rows"], st["partial"] or no_update, st["saved_fit"], st["source"],
                    _notice(st["message"], "ok"), no_update)
        if trig == "demo-button":
            st = logic.demo_state(get_library())
            if st is None:
                return *keep, _notice("The demo file is not installed.", "error"), no_update
            return st["rows"], "good", None, st["source"], _notice(st["message"], "ok"), no_update
        if trig in ("add-button", "add-solvent"):
            if not (solvent or "").strip():
                return *keep, _notice("Type a solvent first, then Add.", "error"), no_update
            rows = logic.add_row(rows, solvent, outcome, note)
            return rows, no_update, no_update, no_update, no_update, ""
        if trig == "add-empty":
            return (list(rows or []) + [logic.blank_row()], no_update, no_update, no_update,
                    no_update, no_update)
        if trig == "clear-table":
            return ([logic.blank_row() for _ in range(3)], no_update, None, None,
                    _notice("Table cleared.", "ok"), no_update)
        if isinstance(trig, dict) and trig.get("type") == "fix":
            if not ctx.triggered or not ctx.triggered[0].get("value"):
                raise PreventUpdate  # buttons just drawn, not clicked
            rows = logic.apply_suggestion(rows, int(trig["row"]), trig["col"], trig["value"])
            return rows, no_update, no_update, no_update, no_update, no_update
        raise PreventUpdate


def _notice(text: str, kind: str):
    return html.Div(text, className=f"notice notice-{kind}")
