"""'Replace a solvent' screen: what can take the place of a solvent that is restricted or
out of stock (``solsphere replace``): single solvents and pairs nearest it in Hansen
space, or, for this material, those on the same side of the sphere boundary. A click
puts the replacement (and the solvent it replaces) on the map."""

from __future__ import annotations

from dash import Input, Output, State, ctx, dcc, html
from dash.exceptions import PreventUpdate

from . import blendlogic, ids, logic
from .grids import clicked_row, column, grid
from .share import caution_line
from .trynext import filters, pool_selector

_VS = "compared with the solvent replaced"
SINGLE_COLUMNS = [column("name", "solvent", width=150, pinned=True, wrap=True),
                  column("Ra_n", "Ra to old", "number",
                         tip="Hansen distance to the solvent replaced (MPa½)"),
                  column("red_n", "RED", "number", width=90), column("side_text", "side", width=75),
                  column("fp_n", "flash pt °C", "number"),
                  column("vs_carc", "carcinogen", width=100, tip=f"carcinogen class {_VS}"),
                  column("vs_repro", "reprotoxic", width=100,
                         tip=f"reproductive-toxicity listing {_VS}"),
                  column("vs_tox", "corrosive / toxic", width=105,
                         tip=f"skin corrosion and acute toxicity {_VS}"),
                  column("vs_flam", "flammability", width=105,
                         tip=f"GHS flammability category {_VS}"),
                  column("flags_text", "flags", width=240, wrap=True),
                  column("bp_n", "bp °C", "number"), column("twa_n", "TWA ppm", "number")]
PAIR_COLUMNS = [column("label", "pair (volume %)", width=220, pinned=True, wrap=True),
                column("Ra_n", "Ra to old", "number"),
                column("fp_text", "flash pts °C", width=90),
                column("flags_text", "flags", width=260, wrap=True)]


def panel():
    """Layout of the 'Replace a solvent' screen."""
    return html.Div(className="panel", children=[
        html.P("A solvent is restricted or out of stock: find what behaves most like it. "
               "Ra to old: Hansen distance to the solvent replaced (MPa½). 'For this "
               "material' uses the sphere fitted now: replacements on the same side of the "
               "boundary as the old solvent come first ('side'), with their RED. Click a "
               "row to put it on the map.", className="tip"),
        html.Div(className="add-row", children=[
            html.Label("Replace", htmlFor="replace-name", className="add-label"),
            dcc.Input(id="replace-name", type="text", list="solvent-names", debounce=True,
                      placeholder="type a solvent: name, CAS number or abbreviation",
                      autoComplete="off", className="add-solvent"),
            dcc.Checklist(id="replace-material", value=["on"], inline=True, className="radio",
                          options=[{"label": "for this material", "value": "on"}]),
            html.Button("Find", id="replace-button", className="btn btn-main"),
        ]),
        html.Div(className="add-row", children=[
            pool_selector("replace"),
            dcc.Checklist(id="replace-allow-worse", value=[], inline=True, className="radio",
                          options=[{"label": "allow worse (a replacement may be more "
                                             "hazardous than the solvent replaced)",
                                    "value": "on"}]),
        ]),
        filters("replace", with_liquids=False),
        caution_line("replace-caution"),
        html.Div(id="replace-message", className="message"),
        html.H3("Single solvents"),
        grid("replace-singles", SINGLE_COLUMNS, page_size=10, csv_name="replacements.csv"),
        html.H3("Pairs"),
        grid("replace-pairs", PAIR_COLUMNS, page_size=5, csv_name="replacement-pairs.csv"),
        html.Div(id="replace-detail", className="detail"),
        dcc.Store(id="replace-target"),
        dcc.Store(id="replace-key"),
    ])


def register(app, get_library):
    """Callbacks: the search and the click-to-map."""

    @app.callback(Output("replace-singles", "rowData"), Output("replace-key", "data"),
                  Output("replace-pairs", "rowData"),
                  Output("replace-message", "children"), Output("replace-caution", "children"),
                  Output("replace-target", "data"),
                  Output("replace-detail", "children", allow_duplicate=True),
                  Input("replace-button", "n_clicks"), Input("replace-name", "n_submit"),
                  Input("replace-name", "value"), Input("replace-material", "value"),
                  Input(ids.FIT, "data"), Input(ids.SHOWN["replace"], "data"),
                  Input("replace-min-fp", "value"), Input("replace-max-bp", "value"),
                  Input("replace-no-carc", "value"), Input("replace-exclude", "value"),
                  Input("replace-top", "value"), Input("replace-pool", "value"),
                  Input("replace-allow-worse", "value"),
                  State("replace-key", "data"), State(ids.TABS, "value"),
                  prevent_initial_call=True)
    def search(_n, _submit, name, material, result, _shown, min_fp, max_bp, no_carc, exclude, top,
               pool, allow_worse, seen, tab):
        if tab != "replace" or not (name or "").strip():
            raise PreventUpdate
        key = logic.inputs_key(name, material, result if material else None, min_fp, max_bp,
                               no_carc, exclude, top, pool, allow_worse)
        if key == seen and ctx.triggered_id == ids.SHOWN["replace"]:
            raise PreventUpdate  # shown again with the same inputs: keep what it shows
        out = blendlogic.substitutes(result, get_library(), name, for_material=bool(material),
                                     exclude=exclude, min_flash_point=min_fp,
                                     max_boiling_point=max_bp, no_carcinogens=bool(no_carc),
                                     top=int(top or 10), pool=pool or "working",
                                     allow_worse=bool(allow_worse))
        return (out["singles"], key, out["pairs"], out["message"], out["caution"],
                out["target"], None)

    @app.callback(Output(ids.PICKED, "data", allow_duplicate=True),
                  Output(ids.BLEND, "data", allow_duplicate=True),
                  Output("replace-detail", "children"),
                  Input("replace-singles", "cellClicked"), Input("replace-pairs", "cellClicked"),
                  State("replace-singles", "rowData"), State("replace-pairs", "rowData"),
                  State("replace-target", "data"), State(ids.PICKED, "data"),
                  prevent_initial_call=True)
    def pick(cell_s, cell_p, singles, pairs, target, picked):
        which = ctx.triggered_id
        cell, rows = (cell_s, singles) if which == "replace-singles" else (cell_p, pairs)
        r = clicked_row(cell, rows)
        if r is None or not target:
            raise PreventUpdate
        old = {"name": f"{target['name']} (to replace)", "dD": target["dD"],
               "dP": target["dP"], "dH": target["dH"]}
        kept = [p for p in picked or [] if not p["name"].endswith("(to replace)")]
        if which == "replace-singles":
            item = {k: r.get(k) for k in ("name", "dD", "dP", "dH", "red", "for_fit")}
            kept = [p for p in kept if p["name"] != item["name"]]
            return (kept + [old, item])[-5:], [], detail_single(r, target)
        return (kept + [old])[-5:], [blendlogic.map_entry(r)], detail_pair(r, target)


def detail_single(r: dict, target: dict):
    facts = [f"δD {r['dD']:.1f}, δP {r['dP']:.1f}, δH {r['dH']:.1f} MPa½; Hansen distance "
             f"{r['Ra_text']} MPa½ to {target['name']}"
             + (f"; RED {r['red_text']} to the sphere ({r['side_text']} side as "
                f"{target['name']})." if r.get("red") is not None else "."),
             f"Boiling point {r['bp_text']} °C; flash point {r['fp_text']} °C; exposure limit "
             f"{r['twa_text']} ppm; CAS {r.get('cas') or '—'} (— = not in the data)."]
    return [html.Strong(r["name"]), f" in place of {target['name']} (both on the map now)",
            html.Ul([html.Li(t) for t in facts] +
                    [html.Li(f, className="flag") for f in r.get("flags") or []])]


def detail_pair(b: dict, target: dict):
    a, c = b["solvents"]
    facts = [f"The mix sits at δD {b['dD']:.1f}, δP {b['dP']:.1f}, δH {b['dH']:.1f} MPa½, "
             f"{b['Ra_text']} MPa½ from {target['name']}.",
             f"Flash points {b['fp_text']} °C ({a} / {c}; — = not in the data)."]
    return [html.Strong(b["label"]), f" in place of {target['name']} (on the map now)",
            html.Ul([html.Li(t) for t in facts] +
                    [html.Li(f, className="flag") for f in b.get("flags") or []])]
