"""'Try next' screen: untried solvents nearest the sphere, with filters; a click puts
the solvent on the map."""

from __future__ import annotations

import warnings

from dash import Input, Output, State, dcc, html
from dash.exceptions import PreventUpdate

from . import ids, logic, uncertainty
from .share import caution_line

COLUMNS = [("name", "solvent"), ("red_text", "RED"), ("dD_text", "δD"), ("dP_text", "δP"),
           ("dH_text", "δH"), ("bp_text", "bp °C"), ("fp_text", "flash pt °C"),
           ("twa_text", "TWA ppm"), ("spread_text", "spread"), ("flags_text", "flags")]


#: The p_good column, shown once a bootstrap of the same results is stored.
P_COLUMN = ("p_text", "p_good")


def columns_with_p(with_p: bool) -> list[dict]:
    """The shortlist's columns (p_good after RED when there is a current bootstrap)."""
    cols = list(COLUMNS)
    if with_p:
        cols.insert(2, P_COLUMN)
    return [{"id": c, "name": n} for c, n in cols]


def table(table_id: str, columns, page_size: int = 15):
    """A read-only, clickable results table."""
    from dash import dash_table
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DeprecationWarning)
        return dash_table.DataTable(
            id=table_id, data=[], columns=[{"id": c, "name": n} for c, n in columns],
            editable=False, page_action="native", page_size=page_size, cell_selectable=True,
            style_table={"overflowX": "auto"},
            style_cell={"fontFamily": "inherit", "fontSize": "13px", "padding": "3px 6px",
                        "textAlign": "left", "whiteSpace": "normal", "height": "auto",
                        "cursor": "pointer"},
            style_header={"backgroundColor": "#eef2f0", "fontWeight": "600"},
            style_cell_conditional=[{"if": {"column_id": "flags_text"}, "minWidth": "300px"},
                                    {"if": {"column_id": "label"}, "minWidth": "220px"},
                                    {"if": {"column_id": "window_text"}, "minWidth": "120px"},
                                    {"if": {"column_id": "drying_text"}, "minWidth": "110px"},
                                    {"if": {"column_id": "twa_text"}, "minWidth": "70px"},
                                    {"if": {"column_id": "fp_text"}, "minWidth": "80px"},
                                    {"if": {"column_id": "name"}, "minWidth": "150px"}],
            style_data_conditional=[{"if": {"state": "active"},
                                     "backgroundColor": "#fdf3cf", "border": "1px solid #e6ab02"}],
        )


def common_checkbox(prefix: str, on: bool = False):
    """'common solvents only' (id ``{prefix}-common``): the curated list of solvents in
    common use instead of every library liquid (reagents included)."""
    return dcc.Checklist(id=f"{prefix}-common", value=["on"] if on else [], inline=True,
                         className="radio",
                         options=[{"label": "working solvents only (no reagents)",
                                   "value": "on"}])


def filters(prefix: str, with_liquids: bool = True, common: bool | None = None):
    """The safety filters shared by 'Try next', 'Next trials' and 'Replace'.

    ``common``: show the 'common solvents only' checkbox, ticked (True) or not (False);
    None leaves it out.
    """
    parts = [] if common is None else [common_checkbox(prefix, on=common)]
    if with_liquids:
        parts.append(dcc.Checklist(id=f"{prefix}-liquids", value=["on"], inline=True,
                                   className="radio",
                                   options=[{"label": "liquids only (at 25 °C)", "value": "on"}]))
    parts += [
        html.Label(["min flash point °C ",
                    dcc.Input(id=f"{prefix}-min-fp", type="number", debounce=True,
                              className="num")]),
        html.Label(["max boiling point °C ",
                    dcc.Input(id=f"{prefix}-max-bp", type="number", debounce=True,
                              className="num")]),
        dcc.Checklist(id=f"{prefix}-no-carc", value=[], inline=True, className="radio",
                      options=[{"label": "no carcinogens", "value": "on"}]),
        html.Label(["leave out ",
                    dcc.Input(id=f"{prefix}-exclude", type="text", debounce=True,
                              placeholder="e.g. benzene, DMF", className="exclude")]),
        html.Label(["how many ",
                    dcc.Input(id=f"{prefix}-top", type="number", min=1, max=200, step=1,
                              value=30 if prefix == "next" else 15, debounce=True,
                              className="num")]),
    ]
    return html.Div(className="filters", children=parts)


def panel():
    """Layout of the 'Try next' screen."""
    return html.Div(className="panel", children=[
        html.P("Untried solvents sorted by RED (distance to the centre over R0; below 1 "
               "is predicted inside the sphere). Click a row to put it on the map.",
               className="tip"),
        html.P(id="next-p-note", className="tip"),
        filters("next", common=True),
        caution_line("next-caution"),
        html.Div(id="next-message", className="message"),
        table("shortlist", COLUMNS),
        html.Div(id="next-detail", className="detail"),
        html.Button("Clear picked solvents from the map", id="clear-picked",
                    className="btn btn-quiet"),
    ])


def register(app, get_library):
    """Callbacks: the shortlist and the click-to-map."""

    @app.callback(Output("shortlist", "data"), Output("next-message", "children"),
                  Output("next-caution", "children"),
                  Output("next-detail", "children", allow_duplicate=True),
                  Output("shortlist", "active_cell"), Output("shortlist", "columns"),
                  Output("next-p-note", "children"),
                  Input(ids.FIT, "data"), Input(ids.TABS, "value"),
                  Input("next-liquids", "value"), Input("next-min-fp", "value"),
                  Input("next-max-bp", "value"), Input("next-no-carc", "value"),
                  Input("next-exclude", "value"), Input("next-top", "value"),
                  Input(ids.BOOT, "data"), Input("next-common", "value"),
                  prevent_initial_call="initial_duplicate")
    def update(result, tab, liquids, min_fp, max_bp, no_carc, exclude, top, boot, common):
        if result is None or tab != "next":
            raise PreventUpdate  # computed only while the screen is shown
        b = uncertainty.bootstrap_of(boot, result.get("fit"))
        out = logic.shortlist(result, get_library(), liquids_only=bool(liquids),
                              min_flash_point=min_fp, max_boiling_point=max_bp,
                              no_carcinogens=bool(no_carc), exclude=exclude,
                              top=int(top or 30), bootstrap=b, common_only=bool(common))
        with_p = b is not None
        note = (p_note(boot) if with_p else
                "Press 'How sure?' beside the map for a p_good column (the share of "
                "resampled spheres that contain each solvent).")
        return (out["rows"], out["message"], out["caution"], None, None,
                columns_with_p(with_p), note)

    @app.callback(Output(ids.PICKED, "data"), Output("next-detail", "children"),
                  Input("shortlist", "active_cell"), Input("clear-picked", "n_clicks"),
                  State("shortlist", "derived_viewport_data"), State(ids.PICKED, "data"),
                  prevent_initial_call=True)
    def pick(cell, _clear, rows, picked):
        from dash import ctx
        if ctx.triggered_id == "clear-picked":
            return [], None
        if not cell or not rows or cell["row"] >= len(rows):
            raise PreventUpdate
        r = rows[cell["row"]]
        item = {k: r[k] for k in ("name", "dD", "dP", "dH", "red", "for_fit")}
        kept = [p for p in (picked or []) if p["name"] != item["name"]]
        return (kept + [item])[-5:], detail(r)


def p_note(boot: dict) -> str:
    """What the p_good column means, for the bootstrap it comes from."""
    d = boot["boot"]
    return (f"p_good: the share of {uncertainty.samples_text(d)} that contain the "
            f"solvent; a guide to how likely it is to dissolve the material, not a "
            f"guarantee.")


def detail(r: dict):
    """The clicked solvent in full, with its safety facts."""
    facts = [f"δD {r['dD_text']}, δP {r['dP_text']}, δH {r['dH_text']} MPa½; RED {r['red_text']} "
             f"({'predicted inside' if r['red'] <= 1 else 'predicted outside'} the sphere)"
             + (f"; inside {100 * r['p_good']:.0f} % of the resampled spheres."
                if r.get("p_good") is not None else "."),
             f"Boiling point {r['bp_text']} °C; flash point {r['fp_text']} °C; exposure limit "
             f"{r['twa_text']} ppm; CAS {r.get('cas') or '—'} (— = not in the data)."]
    return [html.Strong(r["name"]), " (on the map now)",
            html.Ul([html.Li(t) for t in facts] +
                    [html.Li(f, className="flag") for f in r.get("flags") or []])]
