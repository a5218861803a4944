"""'Share' screen: download the standalone map page (the same as ``solsphere share``)
and the project file; open a project file back."""

from __future__ import annotations

from dash import Input, Output, State, dcc, html
from dash.exceptions import PreventUpdate

from . import ids, logic


def caution_line(element_id: str | None = None):
    """The caution shown near every recommendation."""
    kw = {"id": element_id} if element_id else {}
    return html.P(logic.caution_text(), className="caution", **kw)


def panel():
    """Layout of the 'Share' screen."""
    return html.Div(className="panel", children=[
        html.H3("Send the map to a colleague"),
        html.P("One HTML file with the 3D map, the projections, the fit report, the "
               "nearest untried solvents and the best blends. It opens offline in any "
               "browser (about 5 MB).", className="tip"),
        html.Label(["Page title ", dcc.Input(id="share-title", type="text", debounce=True,
                                              placeholder="e.g. Binder B-12 in varnish solvents",
                                              className="title-input")]),
        html.Div(className="toolbar", children=[
            html.Button("Download the map page (HTML)", id="download-html-button",
                        className="btn btn-main"),
            html.Button("Download the project file (JSON)", id="download-project-button",
                        className="btn btn-main"),
        ]),
        html.Div(id="share-message", className="message"),
        html.H3("Open a project"),
        html.P("A project file keeps the bench results, the 'partly' setting and the fit; "
               "opening it here shows the same fit.", className="tip"),
        dcc.Upload(id="share-open-upload", max_size=-1, accept=".json,.csv,.tsv,.txt",
                   children=html.Button("Open a project file…", className="btn"),
                   className="upload-inline"),
        caution_line(),
        dcc.Download(id="download-html"),
        dcc.Download(id="download-project"),
    ])


def register(app, get_library):
    """Callbacks: the two downloads and the project upload check."""
    from .bench import CHECK_UPLOAD_JS
    app.clientside_callback(CHECK_UPLOAD_JS, Output("share-open-payload", "data"),
                            Output("share-open-upload", "contents"),
                            Input("share-open-upload", "contents"),
                            State("share-open-upload", "filename"))

    @app.callback(Output("download-html", "data"), Output("share-message", "children",
                                                          allow_duplicate=True),
                  Input("download-html-button", "n_clicks"), State(ids.TABLE, "rowData"),
                  State(ids.PARTIAL, "value"), State("share-title", "value"),
                  State(ids.SOURCE, "data"), prevent_initial_call=True)
    def download_html(n, rows, partial, title, source):
        if not n:
            raise PreventUpdate
        try:
            page = logic.share_page_text(rows, partial or "good", get_library(), title)
        except logic.SolsphereError as exc:
            return None, _msg(f"Not written: {exc}", "error")
        name = logic.download_name(source, "-sphere.html")
        return (dcc.send_string(page, name, type="text/html"),
                _msg(f"Map page ready: {name} ({len(page.encode()) / 1e6:.1f} MB).", "ok"))

    @app.callback(Output("download-project", "data"), Output("share-message", "children",
                                                             allow_duplicate=True),
                  Input("download-project-button", "n_clicks"), State(ids.TABLE, "rowData"),
                  State(ids.PARTIAL, "value"), State(ids.SOURCE, "data"),
                  prevent_initial_call=True)
    def download_project(n, rows, partial, source):
        if not n:
            raise PreventUpdate
        try:
            text = logic.project_file_text(rows, partial or "good", get_library())
        except logic.SolsphereError as exc:
            return None, _msg(f"Not saved: {exc}", "error")
        name = logic.download_name(source, "-project.json")
        return (dcc.send_string(text, name, type="application/json"),
                _msg(f"Project file ready: {name}.", "ok"))


def _msg(text: str, kind: str):
    return html.Div(text, className=f"notice notice-{kind}")
