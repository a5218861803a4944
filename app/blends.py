"""'Blends' screen: two-solvent blends that land inside the sphere, from a chosen pool
under the same constraints as ``solsphere blend``; a click draws the blend's segment
and point on the map."""

from __future__ import annotations

from dash import Input, Output, State, ctx, dcc, html
from dash.exceptions import PreventUpdate

from . import ids, logic
from .bench import CHECK_UPLOAD_JS
from .share import caution_line
from .trynext import filters, table

COLUMNS = [("rank", "#"), ("label", "blend (volume %)"), ("red_text", "RED"),
           ("window_text", "inside for"), ("fp_text", "flash pts °C"),
           ("twa_text", "TWA ppm"), ("mass_text", "mass %"),
           ("nonsolvents_text", "two non-solvents")]


def panel(library):
    """Layout of the 'Blends' screen."""
    names = [{"label": n, "value": n} for n in sorted(library.liquids().names, key=str.casefold)]
    return html.Div(className="panel", children=[
        html.P("Pairs whose best mix (volume fractions) sits closest to the sphere centre. "
               "'Inside for' is the range of the first solvent's share that stays inside. "
               "'Two non-solvents': neither alone is inside, the mix is. Click a row to "
               "draw it on the map and see its safety facts.", className="tip"),
        html.Div(className="pool", children=[
            html.Span("Pool", className="ctl-label"),
            dcc.RadioItems(id="blend-pool", value="library", inline=True, className="radio",
                           options=[{"label": "all library liquids", "value": "library"},
                                    {"label": "my shelf (file)", "value": "shelf"},
                                    {"label": "solvents I tick", "value": "ticked"}]),
        ]),
        html.Div(id="shelf-box", className="pool-box", children=[
            dcc.Upload(id="shelf-upload", max_size=-1, accept=".csv,.tsv,.txt",
                       children=html.Button("Upload a shelf file…", className="btn"),
                       className="upload-inline"),
            html.Span(id="shelf-name", className="muted",
                      children=" CSV with a 'solvent' column (optional dD, dP, dH)."),
        ]),
        html.Div(id="ticked-box", className="pool-box", children=[
            dcc.Dropdown(id="blend-ticked", options=names, multi=True, value=[],
                         placeholder="type to find solvents you have…"),
        ]),
        filters("blend", with_liquids=False),
        caution_line("blend-caution"),
        html.Div(id="blend-message", className="message"),
        table("blend-table", COLUMNS, page_size=10),
        html.Div(id="blend-detail", className="detail"),
        html.Button("Clear the blend from the map", id="clear-blend", className="btn btn-quiet"),
    ])


def register(app, get_library):
    """Callbacks: the screen, the shelf upload, the click-to-map."""
    app.clientside_callback(CHECK_UPLOAD_JS, Output(ids.SHELF_PAYLOAD, "data"),
                            Output("shelf-upload", "contents"),
                            Input("shelf-upload", "contents"), State("shelf-upload", "filename"))

    @app.callback(Output("shelf-box", "style"), Output("ticked-box", "style"),
                  Input("blend-pool", "value"))
    def show_pool(pool):
        hide, show = {"display": "none"}, {}
        return (show if pool == "shelf" else hide), (show if pool == "ticked" else hide)

    @app.callback(Output("shelf-name", "children"), Input(ids.SHELF_PAYLOAD, "data"),
                  prevent_initial_call=True)
    def shelf_name(payload):
        if not payload:
            raise PreventUpdate
        if payload.get("too_big"):
            return " " + logic.too_big_message(payload.get("filename"), payload["too_big"])
        return f" Shelf: {payload.get('filename')}"

    @app.callback(Output("blend-table", "data"), Output("blend-message", "children"),
                  Output("blend-caution", "children"), Output("blend-table", "active_cell"),
                  Output("blend-detail", "children", allow_duplicate=True),
                  Input(ids.FIT, "data"), Input(ids.TABS, "value"), Input("blend-pool", "value"),
                  Input(ids.SHELF_PAYLOAD, "data"), Input("blend-ticked", "value"),
                  Input("blend-min-fp", "value"), Input("blend-max-bp", "value"),
                  Input("blend-no-carc", "value"), Input("blend-exclude", "value"),
                  Input("blend-top", "value"), prevent_initial_call="initial_duplicate")
    def update(result, tab, pool, shelf, ticked, min_fp, max_bp, no_carc, exclude, top):
        if result is None or tab != "blends":
            raise PreventUpdate  # computed only while the screen is shown
        if shelf and shelf.get("too_big") and pool == "shelf":
            return [], logic.too_big_message(shelf.get("filename"), shelf["too_big"]), \
                logic.caution_text(), None, None
        out = logic.blend_designer(result, get_library(), pool_choice=pool, shelf=shelf,
                                   ticked=ticked, exclude=exclude, min_flash_point=min_fp,
                                   max_boiling_point=max_bp, no_carcinogens=bool(no_carc),
                                   top=int(top or 15))
        return out["blends"], out["message"], out["caution"], None, None

    @app.callback(Output(ids.BLEND, "data"), Output("blend-detail", "children"),
                  Input("blend-table", "active_cell"), Input("clear-blend", "n_clicks"),
                  State("blend-table", "derived_viewport_data"), prevent_initial_call=True)
    def pick(cell, _clear, rows):
        if ctx.triggered_id == "clear-blend":
            return [], None
        if not cell or not rows or cell["row"] >= len(rows):
            raise PreventUpdate
        b = rows[cell["row"]]
        keep = ("solvents", "volume_fractions", "dD", "dP", "dH", "red", "component_points",
                "for_fit")
        return [{k: b[k] for k in keep}], detail(b)


def detail(b: dict):
    """The clicked blend in full, with its safety facts."""
    def fmt(x, f="{:.0f}"):
        return "—" if x is None else f.format(x)
    a, c = b["solvents"]
    facts = [
        f"At its best mix the blend sits at δD {b['dD']:.1f}, δP {b['dP']:.1f}, δH {b['dH']:.1f} "
        f"MPa½ (RED {b['red']:.2f}); {a} alone has RED {b['red_components'][0]:.2f}, {c} "
        f"alone {b['red_components'][1]:.2f}.",
        f"Inside the sphere for {b['window_text']}." if b.get("inside_window") else
        "No mix of the two is inside the sphere.",
        f"Mass ratio {b['mass_text']} ({a} : {c})." if b.get("mass_fractions") else
        "Mass ratio unknown (a density is missing).",
        f"Flash points {fmt(b['flash_points'][0])} / {fmt(b['flash_points'][1])} °C; boiling "
        f"points {fmt(b['boiling_points'][0])} / {fmt(b['boiling_points'][1])} °C; exposure "
        f"limits {fmt(b['twa_ppm'][0], '{:.3g}')} / {fmt(b['twa_ppm'][1], '{:.3g}')} ppm "
        f"(— = not in the data).",
    ]
    return [html.Strong(b["label"]), html.Ul([html.Li(t) for t in facts] +
                                             [html.Li(f, className="flag") for f in b.get("flags") or []])]
