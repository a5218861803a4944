"""'Try next' screen: untried solvents nearest the sphere, with filters; a click puts
the solvent on the map."""

from __future__ import annotations

from dash import Input, Output, State, dcc, html
from dash.exceptions import PreventUpdate

from . import ids, logic, uncertainty
from .grids import clicked_row, column, grid
from .share import caution_line

#: The shortlist's columns: the hazard facts (flash point, exposure limit, flags) are
#: columns of their own, visible without a click.
COLUMNS = [column("name", "solvent", width=150, pinned=True, wrap=True),
           column("red_n", "RED", "number", width=90,
                  tip="distance to the centre / R0; below 1 is predicted inside"),
           column("fp_n", "flash pt °C", "number", tip="flash point (estimates are marked in "
                                                       "the flags)"),
           column("twa_n", "TWA ppm", "number", tip="8-hour exposure limit (— = not in "
                                                    "the data)"),
           column("flags_text", "flags", width=250, wrap=True,
                  tip="carcinogen and reproductive-toxicity listings, flammability, "
                      "estimated values"),
           column("bp_n", "bp °C", "number", width=80),
           column("dD_n", "δD", "number", width=70), column("dP_n", "δP", "number", width=70),
           column("dH_n", "δH", "number", width=70),
           column("spread_n", "spread", "number", width=85,
                  tip="how far the compilations disagree on this solvent's coordinates")]
#: The p_good column, shown once a bootstrap of the same results is stored.
P_COLUMN = column("p_n", "p_good", "number", tip="share of the resampled spheres that "
                                                 "contain the solvent")


def columns_with_p(with_p: bool) -> list[dict]:
    """The shortlist's columns (p_good after RED when there is a current bootstrap)."""
    cols = list(COLUMNS)
    if with_p:
        cols.insert(2, P_COLUMN)
    return cols


def pool_selector(prefix: str, value: str = "working"):
    """The pool of every recommendation screen (id ``{prefix}-pool``): the curated
    working solvents (default) or every library liquid, reagents included; the choice
    goes to :func:`solsphere.workflows.candidate_pool`, the one pool rule."""
    return html.Span(className="pool-choice", children=[
        html.Span("Pool", className="ctl-label"),
        dcc.RadioItems(id=f"{prefix}-pool", value=value, inline=True, className="radio",
                       options=[{"label": "working solvents", "value": "working"},
                                {"label": "all library liquids (reagents too)",
                                 "value": "all"}])])


def filters(prefix: str, with_liquids: bool = True, common: bool | None = None):
    """The safety filters shared by 'Try next', 'Next trials' and 'Replace'.

    ``common``: show the pool selector (working solvents when True, every library
    liquid when False); None leaves it out.
    """
    parts = [] if common is None else [pool_selector(prefix, "working" if common else "all")]
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
        grid("shortlist", COLUMNS, csv_name="try-next.csv"),
        html.Div(id="next-detail", className="detail"),
        dcc.Store(id="next-key"),
        html.Button("Clear picked solvents from the map", id="clear-picked",
                    className="btn btn-quiet"),
    ])


def register(app, get_library):
    """Callbacks: the shortlist and the click-to-map."""

    @app.callback(Output("shortlist", "rowData"), Output("next-key", "data"),
                  Output("next-message", "children"),
                  Output("next-caution", "children"),
                  Output("next-detail", "children", allow_duplicate=True),
                  Output("shortlist", "columnDefs"),
                  Output("next-p-note", "children"),
                  Input(ids.FIT, "data"), Input(ids.SHOWN["next"], "data"),
                  Input("next-liquids", "value"), Input("next-min-fp", "value"),
                  Input("next-max-bp", "value"), Input("next-no-carc", "value"),
                  Input("next-exclude", "value"), Input("next-top", "value"),
                  Input(ids.BOOT, "data"), Input("next-pool", "value"),
                  State("next-key", "data"), State(ids.TABS, "value"),
                  prevent_initial_call="initial_duplicate")
    def update(result, _shown, liquids, min_fp, max_bp, no_carc, exclude, top, boot, pool, seen,
               tab):
        if result is None or tab != "next":
            raise PreventUpdate  # computed only while the screen is shown
        key = logic.inputs_key(result, liquids, min_fp, max_bp, no_carc, exclude, top, boot,
                               pool)
        if key == seen:
            raise PreventUpdate  # shown again with the same inputs: keep what it shows
        b = uncertainty.bootstrap_of(boot, result.get("fit"))
        out = logic.shortlist(result, get_library(), liquids_only=bool(liquids),
                              min_flash_point=min_fp, max_boiling_point=max_bp,
                              no_carcinogens=bool(no_carc), exclude=exclude,
                              top=int(top or 30), bootstrap=b, pool=pool or "working")
        with_p = b is not None
        note = (p_note(boot) if with_p else
                "Press 'How sure?' beside the map for a p_good column (the share of "
                "resampled spheres that contain each solvent).")
        return (out["rows"], key, out["message"], out["caution"], None,
                columns_with_p(with_p), note)

    @app.callback(Output(ids.PICKED, "data"), Output("next-detail", "children"),
                  Input("shortlist", "cellClicked"), Input("clear-picked", "n_clicks"),
                  State("shortlist", "rowData"), State(ids.PICKED, "data"),
                  prevent_initial_call=True)
    def pick(cell, _clear, rows, picked):
        from dash import ctx
        if ctx.triggered_id == "clear-picked":
            return [], None
        r = clicked_row(cell, rows)
        if r is None:
            raise PreventUpdate
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
