"""'Bench results' screen: the editable table of trials, opening files, the demo.

Type-ahead: the solvent cells of the table are free text (so a blend such as
``toluene 70 + ethanol 30`` or an own solvent can be typed or pasted), and the
"Add a result" line above the table has a browser-native type-ahead (a datalist over
every library name, abbreviation, CAS number and synonym). A name the library does not
know is marked in place; the list under the table says why and offers the close
library names as one-click fixes.
"""

from __future__ import annotations

import warnings

from dash import ALL, Input, Output, State, ctx, dcc, html, no_update
from dash.exceptions import PreventUpdate

from . import ids, logic

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

#: After "Add" or "Add an empty row": once the new row is drawn, scroll the table to it
#: (new rows go at the end, which was out of sight in a long table).
SHOW_NEW_ROW_JS = """
function(a, b, c) {
    var t = document.getElementById('results-table');
    if (!t) { return window.dash_clientside.no_update; }
    var cells = function() { return t.querySelectorAll('td[data-dash-column="solvent"]'); };
    var before = cells().length, tries = 0;
    var tick = function() {
        var now = cells();
        if (now.length > before || tries++ > 60) {
            var show = function() {
                t.querySelectorAll('.dt-table-container__row').forEach(function(el) {
                    if (el.scrollHeight > el.clientHeight + 4) { el.scrollTop = el.scrollHeight; }
                });
                var last = cells();
                if (last.length) { last[last.length - 1].scrollIntoView({block: 'nearest'}); }
            };
            show();
            // again after the refit's marks redraw the table (later on a busy machine)
            [300, 800, 1600].forEach(function(ms) { setTimeout(show, ms); });
        } else { setTimeout(tick, 50); }
    };
    setTimeout(tick, 50);
    return Date.now();
}
"""

#: Fills the type-ahead list with plain <option> elements (thousands of names: cheaper
#: as DOM nodes than as components).
FILL_NAMES_JS = """
function(pairs) {
    var list = document.getElementById('solvent-names');
    if (!list || !pairs) { return window.dash_clientside.no_update; }
    var frag = document.createDocumentFragment();
    for (var i = 0; i < pairs.length; i++) {
        var o = document.createElement('option');
        o.value = pairs[i][0];
        if (pairs[i][1]) { o.label = pairs[i][1]; }
        frag.appendChild(o);
    }
    list.replaceChildren(frag);
    return 'filled';
}
"""


def results_table(rows):
    """The editable DataTable of trials."""
    from dash import dash_table
    with warnings.catch_warnings():  # Dash 4 announces the table's future move; it works
        warnings.simplefilter("ignore", DeprecationWarning)
        return dash_table.DataTable(
            id=ids.TABLE, data=rows, editable=True, row_deletable=True,
            columns=[{"id": "solvent", "name": "solvent"},
                     {"id": "outcome", "name": "outcome", "presentation": "dropdown"},
                     {"id": "dD", "name": "own δD", "type": "numeric"},
                     {"id": "dP", "name": "own δP", "type": "numeric"},
                     {"id": "dH", "name": "own δH", "type": "numeric"},
                     {"id": "note", "name": "note"},
                     {"id": "line", "name": "file line", "editable": False}],
            dropdown={"outcome": {"options": OUTCOME_OPTIONS, "clearable": False}},
            page_action="none", fixed_rows={"headers": True},
            style_table={"maxHeight": "52vh", "overflowY": "auto", "overflowX": "auto"},
            style_cell={"fontFamily": "inherit", "fontSize": "14px", "padding": "4px 6px",
                        "textAlign": "left", "whiteSpace": "normal", "height": "auto"},
            style_cell_conditional=[
                {"if": {"column_id": c}, "width": w, "minWidth": w, "maxWidth": w}
                for c, w in (("solvent", "185px"), ("outcome", "112px"), ("dD", "54px"),
                             ("dP", "54px"), ("dH", "54px"), ("note", "112px"),
                             ("line", "44px"))] + [
                {"if": {"column_id": "line"}, "color": "#6b7275", "fontSize": "12px"}],
            style_header={"backgroundColor": "#eef2f0", "fontWeight": "600"},
            tooltip_delay=0, tooltip_duration=None, css=[
                {"selector": ".Select-menu-outer", "rule": "display: block !important"},
                {"selector": ".dash-table-tooltip", "rule": "max-width: 420px; font-size: 13px"}],
        )


def type_ahead(library):
    """The page-wide type-ahead list (every library name, abbreviation, CAS number and
    synonym) and its data; outside the tabs, so every screen's inputs can use it."""
    opts = [list(p) for p in logic.type_ahead_options(library)]
    return [html.Datalist(id="solvent-names"),  # filled in the browser from the store
            dcc.Store(id="solvent-names-data", data=opts)]


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
            "its δD δP δH. Edit any cell; the sphere refits on every change. Paste rows from a "
            "spreadsheet: click a solvent cell, then Ctrl+V (columns solvent, outcome, "
            "δD, δP, δH, note); to add rows, paste into the solvent cell of an empty row "
            "(Add an empty row). A blend tested as one trial is written ",
            html.Code("toluene 70 + ethanol 30"), ". Leave δD δP δH empty to use the "
            "library's values."]),
        results_table(rows),
        dcc.Store(id="new-row-shown"),
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
    """Callbacks: the one fit, the table's marks, and every edit of the table."""

    @app.callback(Output(ids.FIT, "data"), Output(ids.TABLE, "data", allow_duplicate=True),
                  Input(ids.TABLE, "data"), Input(ids.PARTIAL, "value"),
                  prevent_initial_call="initial_duplicate")
    def refit(rows, partial):
        """The one callback that fits; it also rewrites pasted outcome words ('yes',
        'bad' …) in the display words so the outcome menus show them."""
        result = logic.compute_fit(rows or [], partial or "good", get_library())
        fixed = logic.normalise_outcomes(rows)
        return result, (no_update if fixed is None else fixed)

    @app.callback(Output(ids.TABLE, "style_data_conditional"), Output(ids.TABLE, "tooltip_data"),
                  Output("problems", "children"), Input(ids.FIT, "data"), State(ids.TABLE, "data"))
    def mark_table(result, rows):
        if result is None:
            raise PreventUpdate
        styles, tips, problems = logic.table_marks(result, len(rows or []))
        return styles, tips, _problem_items(problems)

    @app.callback(Output("table-status", "children"), Input(ids.FIT, "data"),
                  Input(ids.SOURCE, "data"))
    def status(result, source):
        """The banner follows the table: counts as they are now, after every edit."""
        if result is None:
            raise PreventUpdate
        return logic.table_status(result, source)

    app.clientside_callback(SHOW_NEW_ROW_JS, Output("new-row-shown", "data"),
                            Input("add-button", "n_clicks"), Input("add-solvent", "n_submit"),
                            Input("add-empty", "n_clicks"), prevent_initial_call=True)

    app.clientside_callback(FILL_NAMES_JS, Output("solvent-names", "className"),
                            Input("solvent-names-data", "data"))

    app.clientside_callback(CHECK_UPLOAD_JS, Output(ids.OPEN_PAYLOAD, "data"),
                            Output("open-upload", "contents"),
                            Input("open-upload", "contents"), State("open-upload", "filename"))

    @app.callback(Output(ids.TABLE, "data"), Output(ids.PARTIAL, "value"),
                  Output(ids.SAVED_FIT, "data"), Output(ids.SOURCE, "data"),
                  Output(ids.NOTICE, "children"), Output("add-solvent", "value"),
                  Input(ids.OPEN_PAYLOAD, "data"), Input("share-open-payload", "data"),
                  Input("demo-button", "n_clicks"),
                  Input("add-button", "n_clicks"), Input("add-solvent", "n_submit"),
                  Input("add-empty", "n_clicks"), Input("clear-table", "n_clicks"),
                  Input({"type": "fix", "row": ALL, "col": ALL, "value": ALL}, "n_clicks"),
                  Input({"type": "add-next", "name": ALL}, "n_clicks"),
                  Input("add-all-next", "n_clicks"),
                  State(ids.TABLE, "data"), State("add-solvent", "value"),
                  State("add-outcome", "value"), State("add-note", "value"),
                  State(ids.NEXT, "data"),
                  prevent_initial_call=True)
    def edit_table(payload, share_payload, _demo, _add, _submit, _empty, _clear, _fix,
                   _next, _all_next, rows, solvent, outcome, note, suggested):
        trig = ctx.triggered_id
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
