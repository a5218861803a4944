"""'Next trials' screen: the untried solvents whose results would pin the sphere down
best (``solsphere next``), each with its reason and an 'add to the table' button, and
the results to re-check first (the trials that move the sphere most). Computed only
when asked: it samples a thousand plausible spheres and scores every candidate."""

from __future__ import annotations

from dash import Input, Output, State, dcc, html
from dash.exceptions import PreventUpdate

from . import ids, jobs, uncertainty
from .sphere import progress_box, progress_job
from .share import caution_line
from .trynext import filters


def panel():
    """Layout of the 'Next trials' screen."""
    return html.Div(className="panel", children=[
        html.P("Bench time is scarce: these are the untried solvents whose results would "
               "narrow down the sphere most (the first splits the plausible spheres "
               "about in half; each next one is expected to narrow the intervals most once "
               "the results above are in, so together they test different parts of the "
               "boundary). 'Add to "
               "the table' puts one in the bench results with an empty outcome to fill in "
               "after the test.", className="tip"),
        html.Div(className="toolbar", children=[
            html.Button("Suggest next trials", id="next-trials-button", className="btn btn-main"),
            html.Label(["how many ", dcc.Input(id="next-trials-n", type="number", min=1, max=20,
                                               step=1, value=5, className="num")]),
            html.Label(["sampled spheres ", dcc.Input(id="next-trials-samples", type="number",
                                                      min=uncertainty.MIN_SAMPLES,
                                                      max=uncertainty.MAX_SAMPLES, step=100,
                                                      value=uncertainty.DEFAULT_SAMPLES,
                                                      className="num")]),
            html.Span(id="next-trials-running", className="running"),
        ]),
        progress_box("nt"),
        filters("nt", with_liquids=False, common=True),
        caution_line("next-trials-caution"),
        html.Div(id="next-trials-message", className="message"),
        html.Div(id="next-trials-list"),
        html.Button("Add all to the table", id="add-all-next", className="btn",
                    style={"display": "none"}),
        html.H3("Re-check these vials first"),
        html.P("The results that move the sphere most when left out: a wrong one of these "
               "would mislead the fit most.", className="tip"),
        html.Div(id="recheck-list", children=html.P("Press 'Suggest next trials'.",
                                                    className="muted")),
    ])


def register(app, get_library):
    """Callbacks: the computation (on the button only) and the list it draws."""

    @app.callback(Output(ids.NEXT, "data"), Input("next-trials-button", "n_clicks"),
                  State(ids.FIT, "data"), State("next-trials-n", "value"),
                  State("next-trials-samples", "value"), State("nt-min-fp", "value"),
                  State("nt-max-bp", "value"), State("nt-no-carc", "value"),
                  State("nt-exclude", "value"), State("nt-pool", "value"),
                  **progress_job("nt", running=[
                      (Output("next-trials-button", "disabled"), True, False),
                      (Output("next-trials-running", "children"),
                       "Sampling spheres and scoring the candidates…", "")]))
    def compute(set_progress, n, result, how_many, n_samples, min_fp, max_bp, no_carc,
                exclude, pool):
        """A background job (progress bar, cancel button): the page stays responsive."""
        if not n:
            raise PreventUpdate
        set_progress((None, "sampling the plausible spheres and choosing (no step count)…"))
        return uncertainty.next_trials(
            result, get_library(), n=int(how_many or 5), n_samples=n_samples,
            min_flash_point=min_fp, max_boiling_point=max_bp, no_carcinogens=bool(no_carc),
            exclude=exclude, pool=pool or "working",
            progress=jobs.Reporter(set_progress, "suggestions chosen", 0, 80),
            recheck_progress=jobs.Reporter(set_progress, "refits to rank the results to "
                                                         "re-check", 80, 100))

    @app.callback(Output("next-trials-list", "children"), Output("recheck-list", "children"),
                  Output("next-trials-message", "children"), Output("add-all-next", "style"),
                  Output("add-all-next", "disabled"),
                  Input(ids.NEXT, "data"), Input(ids.TABLE, "rowData"), Input(ids.FIT, "data"))
    def show(store, rows, result):  # an edit in the grid refits, so FIT follows it too
        if not store:
            raise PreventUpdate
        in_table = {str(r.get("solvent") or "").strip().casefold() for r in rows or []}
        fit = (result or {}).get("fit")
        msg = [store.get("message") or ""]
        if fit and store.get("key") and store["key"] != uncertainty.trials_key(fit):
            msg.append(html.Span(" The results changed since: press the button again for "
                                 "suggestions that use them.", id="next-stale",
                                 className="warn-line"))
        names = [s["name"] for s in store.get("suggestions") or []]
        all_in = all(n.casefold() in in_table for n in names)
        return (suggestion_list(store, in_table), recheck_list(store.get("recheck")), msg,
                {} if names else {"display": "none"}, all_in)


def suggestion_list(store: dict, in_table: set):
    """The suggestions as cards, each with its reason, safety facts and button."""
    rows = store.get("suggestions") or []
    if not rows:
        return None
    items = []
    for k, s in enumerate(rows, 1):
        there = s["name"].casefold() in in_table
        button = (html.Span("in the table ✓", className="ok-line") if there else
                  html.Button("Add to the table", id={"type": "add-next", "name": s["name"]},
                              className="btn btn-fix", n_clicks=0))
        facts = (f"p_good {s['p_text']} · RED {s['red_text']} · δD {s['dD']:.1f}, δP "
                 f"{s['dP']:.1f}, δH {s['dH']:.1f} · flash point {s['fp_text']} °C · bp "
                 f"{s['bp_text']} °C · TWA {s['twa_text']} ppm")
        items.append(html.Li(className="suggestion", children=[
            html.Div([html.Strong(f"{k}. {s['name']}"), " ", button]),
            html.Div(facts, className="facts"),
            html.Div(s["reason"], className="reason"),
        ] + [html.Div(f, className="flag") for f in s.get("flags") or []]))
    extra = [html.Li(w, className="warn-line") for w in store.get("warnings") or []]
    return [html.Ol(items, id="next-trials-items", className="suggestions"),
            html.P(store.get("caution"), className="tip"),
            html.Ul(extra, className="warnings") if extra else None]


def recheck_list(rows):
    """The most influential results, with what changes without each."""
    if not rows:
        return html.P("Nothing to list.", className="muted")
    return html.Ol(id="recheck-items", className="recheck", children=[
        html.Li([html.Strong(r["name"]), f" ({r['counted']}"
                 + ("; a misfit" if r["misfit"] else "") + "): ", r["text"]])
        for r in rows])
