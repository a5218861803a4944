"""'Sphere' panel: the fit's numbers, misfits and warnings; the 3D map with the RED
ladder beside it (every tested solvent on a RED axis, by outcome, the boundary at RED 1,
misfits ringed); one 2D plane at a time, chosen by the user. Always visible beside the
other screens."""

from __future__ import annotations

from dash import Input, Output, State, dcc, html
from dash.exceptions import PreventUpdate

from solsphere.report.figures import PLANE_CHOICES, plane_label

from . import ids, jobs, logic, uncertainty

GRAPH_CONFIG = {"displaylogo": False, "responsive": True,
                "modeBarButtonsToRemove": ["sendDataToCloud"]}


SHOW, HIDE = {}, {"display": "none"}


def progress_box(prefix: str):
    """A progress bar with its text and a cancel button (ids ``{prefix}-progress``,
    ``{prefix}-progress-text``, ``{prefix}-cancel``), shown while a job runs."""
    return html.Div(id=f"{prefix}-progress-box", className="progress-box", style=HIDE,
                    children=[html.Progress(id=f"{prefix}-progress", value="0", max="100"),
                              html.Span(id=f"{prefix}-progress-text", className="muted small"),
                              html.Button("Cancel", id=f"{prefix}-cancel",
                                          className="btn btn-quiet btn-small")])


def progress_job(prefix: str, running=()) -> dict:
    """The keyword arguments of a background callback shown with :func:`progress_box`
    ``prefix``: polled every :data:`jobs.POLL_MS`, the box shown while it runs (after
    the ``running`` entries of its own), the bar and its text as its progress, its
    Cancel button as the cancel."""
    return dict(prevent_initial_call=True, background=True, interval=jobs.POLL_MS,
                running=[*running, (Output(f"{prefix}-progress-box", "style"), SHOW, HIDE)],
                progress=[Output(f"{prefix}-progress", "value"),
                          Output(f"{prefix}-progress-text", "children")],
                progress_default=["0", ""],
                cancel=[Input(f"{prefix}-cancel", "n_clicks")])


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
        html.Div(className="sure-bar", children=[
            html.Button("How sure? Compute the 95 % intervals", id="boot-button",
                        className="btn"),
            html.Label(["spheres ", dcc.Input(id="boot-n", type="number", min=20,
                                              max=uncertainty.MAX_RESAMPLES, step=10,
                                              value=uncertainty.DEFAULT_RESAMPLES,
                                              className="num")]),
            dcc.RadioItems(id="boot-method", value="classic", inline=True, className="radio",
                           options=[{"label": v, "value": k}
                                    for k, v in uncertainty.METHODS.items()]),
            dcc.Checklist(id="show-cloud", value=["on"], inline=True, className="radio",
                          options=[{"label": "their centres on the map", "value": "on"}]),
            html.Span(id="boot-running", className="running"),
        ]),
        progress_box("boot"),
        html.Div(id="boot-status", className="boot-status"),
        html.Div(className="map-row", children=[
            dcc.Graph(id="map3d", config=GRAPH_CONFIG, className="map3d",
                      figure=logic.empty_figure("Waiting for results…")),
            dcc.Graph(id="ladder", config=GRAPH_CONFIG, className="ladder",
                      figure=logic.empty_figure("", height=logic.MAP_HEIGHT)),
        ]),
        html.Div(className="plane-bar", children=[
            html.Span("Plane", className="ctl-label"),
            dcc.RadioItems(id="plane-choice", value="dP-dH", inline=True, className="radio",
                           options=[{"label": plane_label(v), "value": k}
                                    for k, v in PLANE_CHOICES.items()]),
            html.Span("one 2D view of Hansen space at a time; the outline is the sphere's "
                      "cut through its centre", className="muted small"),
        ]),
        dcc.Graph(id="plane", config=GRAPH_CONFIG, className="plane",
                  figure=logic.empty_figure("", height=logic.PLANE_HEIGHT)),
    ])


def summary_children(result, saved_fit, boot=None):
    """The summary block (centre, R0 with their intervals when a bootstrap of the same
    results is stored, desirability, counts, misfits, warnings)."""
    s = logic.summary(result)
    if not s["ok"]:
        out = [html.P(s["message"], id="centre-text", className="no-fit")]
    else:
        iv = uncertainty.interval_texts(boot, (result or {}).get("fit")) or {}
        ok = iv and not iv.get("stale") and not iv.get("error")
        out = [html.Div(className="numbers", children=[
            html.Div([html.Span("centre", className="k"),
                      html.Span(s["centre"], id="centre-text", className="v"),
                      html.Div(iv["centre"], id="centre-interval", className="interval")
                      if ok else None]),
            html.Div([html.Span("R0", className="k"), html.Span(s["R0"], id="r0-text", className="v"),
                      html.Div(iv["R0"], id="r0-interval", className="interval")
                      if ok else None]),
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
    if s.get("resolved"):
        out.append(html.P(["Names resolved: ", "; ".join(s["resolved"])], id="resolved-names",
                          className="muted small"))
    if s["warnings"]:
        out.append(html.Ul([html.Li(w) for w in s["warnings"]], className="warnings"))
    return out


def register(app, get_library):
    """Callbacks: summary and figures from the stored fit."""

    @app.callback(Output("fit-summary", "children"), Output("boot-status", "children"),
                  Input(ids.FIT, "data"), Input(ids.SAVED_FIT, "data"), Input(ids.BOOT, "data"))
    def show_summary(result, saved_fit, boot):
        if result is None:
            raise PreventUpdate
        return summary_children(result, saved_fit, boot), boot_status(result, boot)

    @app.callback(Output(ids.BOOT, "data"), Input("boot-button", "n_clicks"),
                  State(ids.FIT, "data"), State("boot-n", "value"), State("boot-method", "value"),
                  **progress_job("boot", running=[
                      (Output("boot-button", "disabled"), True, False),
                      (Output("boot-running", "children"), "Computing the plausible spheres…",
                       "")]))
    def run_bootstrap(set_progress, n, result, n_resamples, method):
        """A background job, run only on the button: the refit on every edit stays fast,
        and the page stays responsive meanwhile (progress bar, cancel button)."""
        if not n or not (result or {}).get("fit"):
            raise PreventUpdate
        method = method or "classic"
        if method == "posterior":  # the sampler reports no steps: an indefinite bar
            set_progress((None, "sampling the posterior (no step count)…"))
        return uncertainty.run_bootstrap(result, n_resamples, method,
                                         progress=jobs.Reporter(set_progress,
                                                                "resampled spheres"))

    @app.callback(Output("map3d", "figure"),
                  Input(ids.FIT, "data"), Input("show-untried", "value"),
                  Input(ids.PICKED, "data"), Input(ids.BLEND, "data"),
                  Input(ids.BOOT, "data"), Input("show-cloud", "value"))
    def draw(result, untried, picked, blend, boot, show_cloud):
        if result is None:
            raise PreventUpdate
        cloud = uncertainty.cloud(boot, result.get("fit")) if show_cloud else None
        return logic.map_figure(result, get_library(), show_untried=bool(untried),
                                picked=picked, blends=blend, cloud=cloud)

    @app.callback(Output("ladder", "figure"), Output("plane", "figure"),
                  Input(ids.FIT, "data"), Input(ids.BLEND, "data"),
                  Input("plane-choice", "value"))
    def draw_2d(result, blend, choice):
        # its own callback: choosing a plane never redraws the 3D map
        if result is None:
            raise PreventUpdate
        return (logic.ladder_figure(result),
                logic.plane_figure(result, choice or "dP-dH", blend))


def boot_status(result, boot):
    """The line under the summary: what the intervals come from, their warnings, or
    that they are out of date."""
    iv = uncertainty.interval_texts(boot, (result or {}).get("fit"))
    if not iv:
        return html.P("Intervals: press the button to resample the results (it refits the "
                      "sphere a few hundred times; the table stays editable meanwhile).",
                      className="muted small")
    if iv.get("error"):
        return html.P(iv["error"], className="warn-line")
    if iv.get("stale"):
        return html.P(iv["about"], id="boot-stale", className="warn-line")
    return [html.P(iv["about"], id="boot-about", className="small"),
            html.Ul([html.Li(w) for w in iv["warnings"]], className="warnings")
            if iv["warnings"] else None]
