"""'Blends' screen: blends of two or three solvents that land inside the sphere, from a
chosen pool under the constraints of ``solsphere blend`` (safety limits, restricted
list, share limits, process temperature), from the working solvents by default, in the
workflows' order (least hazardous by default, the same as ``solsphere blend``). A click draws
the blend's segment (or triangle), its best mix and its drying path on the map."""

from __future__ import annotations

from importlib.resources import files

from solsphere.workflows import DEFAULT_RANK

from dash import Input, Output, State, ctx, dcc, html
from dash.exceptions import PreventUpdate

from . import blendlogic, ids, logic
from .bench import CHECK_UPLOAD_JS
from .sphere import progress_box, progress_job
from .share import caution_line
from .grids import clicked_row, column, grid

#: The blend table's columns: the order's criteria (feasible, robust, hazard, RED) and
#: the hazard facts (flash point of the blend and of its components, exposure limits,
#: flags) are columns, visible without a click.
COLUMNS = [column("rank", "#", "number", width=55, pinned=True),
           column("label", "blend (volume %)", width=210, pinned=True, wrap=True),
           column("red_n", "RED", "number", width=90),
           column("fp_n", "flash pt °C", "number",
                  tip="the blend's flash point by Liaw's model minus a safety margin"),
           column("flags_text", "flags", width=250, wrap=True,
                  tip="carcinogen and reproductive-toxicity listings, flammability, "
                      "may not mix, estimated values"),
           column("twa_text", "TWA ppm", width=80, tip="8-hour exposure limits of the "
                                                     "components (— = not in the data)"),
           column("window_text", "inside for", width=150, wrap=True,
                  tip="range of the first solvent's share that stays inside (pairs), or the "
                      "share of all mixes of the three that is inside"),
           column("robust_n", "robustness", "number",
                  tip="window width or margin 1 − RED (0–1): larger stays inside more surely"),
           column("hazard_n", "hazard", "number", tip="hazard score used by the order "
                                                      "(lower is safer)"),
           column("fp_low_n", "lowest comp. fp °C", "number",
                  tip="the lowest flash point of its components"),
           column("fps_text", "comp. flash pts °C", width=90),
           column("drying_text", "drying", width=120, wrap=True),
           column("mix_text", "mixing", width=80),
           column("mass_text", "mass %", width=70),
           column("nonsolvents_text", "non-solvents alone", width=80)]
PRICE_COLUMN = column("price_n", "price / L", "number")


def columns(has_price: bool) -> list[dict]:
    """The blend table's columns (a price column when the shelf gives prices)."""
    cols = list(COLUMNS)
    if has_price:
        cols.insert(4, PRICE_COLUMN)
    return cols


def _num_input(label: str, element_id: str, **kw):
    return html.Label([label + " ", dcc.Input(id=element_id, type="number", debounce=True,
                                              className="num", **kw)])


def constraints():
    """The constraint controls (a foldable block, open)."""
    return html.Details(open=True, className="constraints", children=[
        html.Summary("Constraints"),
        html.Div(className="filters", children=[
            _num_input("min flash point °C", "blend-min-fp"),
            _num_input("min boiling point °C", "blend-min-bp"),
            _num_input("max boiling point °C", "blend-max-bp"),
            _num_input("min exposure limit ppm", "blend-min-twa", min=0),
            dcc.Checklist(id="blend-no-carc", value=[], inline=True, className="radio",
                          options=[{"label": "no carcinogens", "value": "on"}]),
            html.Label(["leave out ", dcc.Input(id="blend-exclude", type="text", debounce=True,
                                                placeholder="e.g. benzene, DMF",
                                                className="exclude")]),
            _num_input("process temperature °C", "blend-temperature", min=-50, max=250),
            _num_input("how many", "blend-top", min=1, max=200, step=1, value=15),
        ]),
        html.Div(className="filters", children=[
            dcc.Upload(id="restricted-upload", max_size=-1, accept=".csv,.tsv,.txt",
                       children=html.Button("Restricted list…", className="btn"),
                       className="upload-inline"),
            html.Span(id="restricted-name", className="muted",
                      children=" a CSV with a 'solvent' column; all left out."),
            html.Button("Example list (invented)", id="restricted-example-button",
                        className="btn btn-quiet"),
            html.Button("Forget the list", id="restricted-clear", className="btn btn-quiet"),
            dcc.Download(id="restricted-example"),
            dcc.Store(id="restricted-raw"),
        ]),
        html.Div(id="share-limits", className="filters", children=[
            html.Label(["at most ", dcc.Input(id="blend-max-frac", type="text", debounce=True,
                                              placeholder="e.g. toluene=30%",
                                              className="exclude")]),
            html.Label(["at least ", dcc.Input(id="blend-min-frac", type="text", debounce=True,
                                               placeholder="e.g. ethanol=10%",
                                               className="exclude")]),
            html.Span("share limits per solvent (volume %), three-solvent blends",
                      className="muted"),
        ]),
    ])


def panel(library):
    """Layout of the 'Blends' screen."""
    names = [{"label": n, "value": n} for n in sorted(library.liquids().names, key=str.casefold)]
    return html.Div(className="panel", children=[
        html.P("Blends whose best mix (volume fractions) sits closest to the sphere centre. "
               "'Inside for': the range of the first solvent's share that stays inside "
               "(pairs) or the share of all mixes of the three that is inside (triples). "
               "Drying: when the evaporating liquid would leave the sphere (activity "
               "coefficients, evaporative cooling). Click a row to draw it, with its drying path, on the map.",
               className="tip"),
        html.Div(className="pool", children=[
            html.Span("Components", className="ctl-label"),
            dcc.RadioItems(id="blend-components", value=2, inline=True, className="radio",
                           options=[{"label": "2", "value": 2}, {"label": "3", "value": 3}]),
            html.Span("Rank by", className="ctl-label"),
            dcc.RadioItems(id="blend-rank", value=DEFAULT_RANK, inline=True, className="radio",
                           options=[{"label": v, "value": k}
                                    for k, v in blendlogic.RANK_CHOICES.items()]),
        ]),
        html.Div(className="pool", children=[
            html.Span("Pool", className="ctl-label"),
            dcc.RadioItems(id="blend-pool", value="working", inline=True, className="radio",
                           options=[{"label": v, "value": k}
                                    for k, v in blendlogic.POOL_CHOICES.items()]),
        ]),
        html.Div(id="shelf-box", className="pool-box", children=[
            dcc.Upload(id="shelf-upload", max_size=-1, accept=".csv,.tsv,.txt",
                       children=html.Button("Upload a shelf file…", className="btn"),
                       className="upload-inline"),
            html.Span(id="shelf-name", className="muted",
                      children=" CSV with a 'solvent' column (optional dD, dP, dH, price)."),
        ]),
        html.Div(id="ticked-box", className="pool-box", children=[
            dcc.Dropdown(id="blend-ticked", options=names, multi=True, value=[],
                         placeholder="type to find solvents you have…"),
        ]),
        constraints(),
        caution_line("blend-caution"),
        progress_box("bl"),
        html.Div(id="blend-message", className="message"),
        html.Ul(id="blend-notes", className="notes"),
        grid("blend-table", COLUMNS, page_size=10, csv_name="blends.csv"),
        html.Div(id="blend-detail", className="detail"),
        dcc.Store(id="blend-key"),
        dcc.Store(id="blend-request"),
        html.Button("Clear the blend from the map", id="clear-blend", className="btn btn-quiet"),
    ])


def register(app, get_library):
    """Callbacks: the screen, the uploads, the click-to-map."""
    app.clientside_callback(CHECK_UPLOAD_JS, Output(ids.SHELF_PAYLOAD, "data"),
                            Output("shelf-upload", "contents"),
                            Input("shelf-upload", "contents"), State("shelf-upload", "filename"))
    app.clientside_callback(CHECK_UPLOAD_JS, Output("restricted-raw", "data"),
                            Output("restricted-upload", "contents"),
                            Input("restricted-upload", "contents"),
                            State("restricted-upload", "filename"))

    @app.callback(Output("shelf-box", "style"), Output("ticked-box", "style"),
                  Output("share-limits", "style"),
                  Input("blend-pool", "value"), Input("blend-components", "value"))
    def show_pool(pool, components):
        hide, show = {"display": "none"}, {}
        return ((show if pool == "shelf" else hide), (show if pool == "ticked" else hide),
                (show if components == 3 else hide))

    @app.callback(Output("shelf-name", "children"), Input(ids.SHELF_PAYLOAD, "data"),
                  prevent_initial_call=True)
    def shelf_name(payload):
        if not payload:
            raise PreventUpdate
        if payload.get("too_big"):
            return " " + logic.too_big_message(payload.get("filename"), payload["too_big"])
        return f" Shelf: {payload.get('filename')}"

    @app.callback(Output("restricted-name", "children"), Output(ids.RESTRICTED_PAYLOAD, "data"),
                  Input("restricted-raw", "data"), Input("restricted-clear", "n_clicks"),
                  prevent_initial_call=True)
    def restricted_name(payload, _clear):
        if ctx.triggered_id == "restricted-clear":
            return " no restricted list.", None
        if not payload:
            raise PreventUpdate
        if payload.get("too_big"):
            return " " + logic.too_big_message(payload.get("filename"), payload["too_big"]), None
        return f" Restricted list: {payload.get('filename')} (left out).", payload

    @app.callback(Output("restricted-example", "data"),
                  Input("restricted-example-button", "n_clicks"), prevent_initial_call=True)
    def example(n):
        if not n:
            raise PreventUpdate
        text = files("solsphere.data").joinpath("restricted_example.csv").read_text("utf-8")
        return dict(content=text, filename="restricted_example.csv", type="text/csv")

    @app.callback(Output("blend-request", "data"),
                  Input(ids.FIT, "data"), Input(ids.SHOWN["blends"], "data"), Input("blend-pool", "value"),
                  Input(ids.SHELF_PAYLOAD, "data"), Input("blend-ticked", "value"),
                  Input("blend-min-fp", "value"), Input("blend-max-bp", "value"),
                  Input("blend-min-bp", "value"), Input("blend-min-twa", "value"),
                  Input("blend-no-carc", "value"), Input("blend-exclude", "value"),
                  Input(ids.RESTRICTED_PAYLOAD, "data"), Input("blend-components", "value"),
                  Input("blend-max-frac", "value"), Input("blend-min-frac", "value"),
                  Input("blend-temperature", "value"), Input("blend-rank", "value"),
                  Input("blend-top", "value"),
                  State("blend-key", "data"), State(ids.TABS, "value"))
    def plan(result, _shown, pool, shelf, ticked, min_fp, max_bp, min_bp, min_twa, no_carc,
             exclude, restricted, components, max_frac, min_frac, temperature, rank_by, top,
             seen, tab):
        """A quick check in the request: whether the screen needs computing (shown, with
        inputs other than those of what it shows). Only then the background job starts,
        so a tab switch back to the screen costs no job."""
        if result is None or tab != "blends":
            raise PreventUpdate  # computed only while the screen is shown
        args = dict(pool=pool, shelf=shelf, ticked=ticked, min_fp=min_fp, max_bp=max_bp,
                    min_bp=min_bp, min_twa=min_twa, no_carc=no_carc, exclude=exclude,
                    restricted=restricted, components=components, max_frac=max_frac,
                    min_frac=min_frac, temperature=temperature, rank_by=rank_by, top=top)
        key = logic.inputs_key(result, *args.values())
        if key == seen:
            raise PreventUpdate  # shown again with the same inputs: keep what it shows
        return {"key": key, "args": args}

    @app.callback(Output("blend-table", "rowData"), Output("blend-key", "data"),
                  Output("blend-message", "children"),
                  Output("blend-caution", "children"),
                  Output("blend-detail", "children", allow_duplicate=True),
                  Output("blend-table", "columnDefs"), Output("blend-notes", "children"),
                  Input("blend-request", "data"), State(ids.FIT, "data"),
                  **progress_job("bl"))
    def update(set_progress, request, result):
        """The screen itself, as a background job (a three-solvent screen of every
        liquid takes seconds): a progress bar and a cancel button, the page responsive."""
        if not request or result is None:
            raise PreventUpdate
        a = request["args"]
        shelf = a["shelf"]
        if a["pool"] == "shelf" and shelf and shelf.get("too_big"):
            return ([], request["key"], logic.too_big_message(shelf.get("filename"),
                                                              shelf["too_big"]),
                    logic.caution_text(), None, columns(False), [])
        n = int(a["components"] or 2)
        set_progress((None, f"screening the {'pairs' if n == 2 else 'three-solvent blends'} "
                            "of the pool (no step count)…"))
        out = blendlogic.blend_designer(
            result, get_library(), pool_choice=a["pool"], shelf=shelf, ticked=a["ticked"],
            exclude=a["exclude"], min_flash_point=a["min_fp"], max_boiling_point=a["max_bp"],
            min_boiling_point=a["min_bp"], min_exposure_limit=a["min_twa"],
            no_carcinogens=bool(a["no_carc"]), restricted=a["restricted"],
            components=n, max_fraction=a["max_frac"], min_fraction=a["min_frac"],
            temperature=a["temperature"], rank_by=a["rank_by"] or DEFAULT_RANK,
            top=int(a["top"] or 15))
        return (out["blends"], request["key"], out["message"], out["caution"], None,
                columns(out["has_price"]), [html.Li(n) for n in out["notes"]])

    @app.callback(Output(ids.BLEND, "data"), Output("blend-detail", "children"),
                  Input("blend-table", "cellClicked"), Input("clear-blend", "n_clicks"),
                  State("blend-table", "rowData"), prevent_initial_call=True)
    def pick(cell, _clear, rows):
        if ctx.triggered_id == "clear-blend":
            return [], None
        b = clicked_row(cell, rows)
        if b is None:
            raise PreventUpdate
        return [blendlogic.map_entry(b)], detail(b)


def detail(b: dict):
    """The clicked blend in full, with its safety facts and its drying."""
    def fmt(x, f="{:.0f}"):
        return "—" if x is None else f.format(x)

    def each(key, f="{:.0f}"):
        return " / ".join(fmt(x, f) for x in b.get(key) or [])

    names = b["solvents"]
    alone = ", ".join(f"{n} {r:.2f}" for n, r in zip(names, b["red_components"]))
    if len(names) == 3:
        inside = (f"{b['window_text']} (all mixes of the three) is inside the sphere."
                  if b.get("inside_area") else "No mix of the three is inside the sphere.")
    else:
        inside = (f"Inside the sphere for {b['window_text']}." if b.get("inside_window") else
                  "No mix of the two is inside the sphere.")
    fpe = b.get("flash_point_estimate") or {}
    facts = [
        f"At its best mix the blend sits at δD {b['dD']:.1f}, δP {b['dP']:.1f}, δH {b['dH']:.1f} "
        f"MPa½ (RED {b['red']:.2f}); alone: {alone}.",
        inside,
        f"Mass ratio {b['mass_text']} ({' : '.join(names)})." if b.get("mass_fractions") else
        "Mass ratio unknown (a density is missing).",
        f"Flash point of the blend: {b['fp_text']} °C (≈ Liaw's model with activity "
        f"coefficients, minus a safety margin; lowest = the lowest component's); {fpe.get('caveat') or 'not a guarantee'}."
        + (f" {'; '.join(fpe['notes'])}." if fpe.get("notes") else ""),
        f"Components: flash points {each('flash_points')} °C; boiling points "
        f"{each('boiling_points')} °C; exposure limits {each('twa_ppm', '{:.3g}')} ppm "
        f"(— = not in the data).",
        f"Drying: {b['drying_text']}"
        + (f"; {b['drying_last']} is left last" if b.get("drying_last") else "")
        + (" (the dotted line on the map)" if b.get("drying_points") else
           " (vapour pressure, molar volume or boiling point missing)")
        + ". Model: activity coefficients (UNIFAC), gas-side mass transfer, evaporative cooling.",
    ]
    if b.get("price_per_litre") is not None:
        facts.append(f"Price about {b['price_per_litre']:.2f} per litre (shelf prices).")
    facts += list(b.get("drying_notes") or [])
    return [html.Strong(b["label"]), " (on the map now)",
            html.Ul([html.Li(t) for t in facts] +
                    [html.Li(f, className="flag") for f in b.get("flags") or []])]
