"""'Sphere' panel: the fit's numbers, misfits and warnings, the 3D map and the three
2D projections. Always visible beside the other screens."""

from __future__ import annotations

from dash import Input, Output, dcc, html
from dash.exceptions import PreventUpdate

from . import ids, logic

GRAPH_CONFIG = {"displaylogo": False, "responsive": True,
                "modeBarButtonsToRemove": ["sendDataToCloud"]}


def panel(partial: str):
    """Layout of the 'Sphere' panel."""
    return html.Div(className="panel sphere-panel", children=[
        html.Div(className="sphere-head", children=[
            html.H2("Sphere"),
            html.Div(className="controls", children=[
                html.Span("Count 'partly' results", className="ctl-label"),
                dcc.RadioItems(id=ids.PARTIAL, value=partial, inline=True, className="radio",
                               options=[{"label": v, "value": k}
                                        for k, v in logic.PARTIAL_CHOICES.items()]),
                dcc.Checklist(id="show-untried", value=["on"], inline=True, className="radio",
                              options=[{"label": "show untried library liquids",
                                        "value": "on"}]),
            ]),
        ]),
        html.Div(id="fit-summary", className="fit-summary",
                 children=html.P("Waiting for results…", className="muted")),
        dcc.Graph(id="map3d", config=GRAPH_CONFIG, className="map3d",
                  figure=logic.empty_figure("Waiting for results…")),
        dcc.Graph(id="planes", config=GRAPH_CONFIG, className="planes",
                  figure=logic.empty_figure("", height=300)),
    ])


def summary_children(result, saved_fit):
    """The summary block (centre, R0, desirability, counts, misfits, warnings)."""
    s = logic.summary(result)
    if not s["ok"]:
        out = [html.P(s["message"], id="centre-text", className="no-fit")]
    else:
        out = [html.Div(className="numbers", children=[
            html.Div([html.Span("centre", className="k"),
                      html.Span(s["centre"], id="centre-text", className="v")]),
            html.Div([html.Span("R0", className="k"), html.Span(s["R0"], id="r0-text", className="v")]),
            html.Div([html.Span("desirability", className="k"),
                      html.Span(s["desirability"], className="v")]),
        ]), html.P(s["counts"], className="counts")]
        same = logic.fit_matches(saved_fit, (result or {}).get("fit"))
        if same is True:
            out.append(html.P("Same fit as the one saved in the project file.",
                              id="saved-fit-check", className="ok-line"))
        elif same is False:
            out.append(html.P("This fit differs from the one saved in the project file "
                              "(the library or the settings changed since it was saved).",
                              id="saved-fit-check", className="warn-line"))
        if s["misfits"]:
            out.append(html.Div(className="misfits", children=[
                html.Strong("Misfits (ringed on the map, shaded in the table): "),
                html.Span("; ".join(s["misfits"]))]))
        else:
            out.append(html.P("No misfits: every counted result agrees with the sphere.",
                              className="muted"))
    if s["warnings"]:
        out.append(html.Ul([html.Li(w) for w in s["warnings"]], className="warnings"))
    return out


def register(app, get_library):
    """Callbacks: summary and figures from the stored fit."""

    @app.callback(Output("fit-summary", "children"), Input(ids.FIT, "data"),
                  Input(ids.SAVED_FIT, "data"))
    def show_summary(result, saved_fit):
        if result is None:
            raise PreventUpdate
        return summary_children(result, saved_fit)

    @app.callback(Output("map3d", "figure"), Output("planes", "figure"),
                  Input(ids.FIT, "data"), Input("show-untried", "value"),
                  Input(ids.PICKED, "data"), Input(ids.BLEND, "data"))
    def draw(result, untried, picked, blend):
        # one callback for both figures: measured faster than two (they would compete
        # for the server's CPU and double the round trips)
        if result is None:
            raise PreventUpdate
        return logic.figures_for(result, get_library(), show_untried=bool(untried),
                                 picked=picked, blends=blend)
