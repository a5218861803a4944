"""The page: a header, the screens in tabs on the left, the 'Sphere' panel on the right,
and the stores that hold each user's state (in the browser, never on the server)."""

from __future__ import annotations

from dash import dcc, html

from . import bench, blends, ids, logic, nexttrials, replace, share, sphere, trynext
from .share import caution_line


#: The screens: (tab value, tab label), in the order of the tabs.
SCREENS = [("bench", "Bench results"), ("next", "Try next"), ("next-trials", "Next trials"),
           ("blends", "Blends"), ("replace", "Replace a solvent"), ("share", "Share")]
#: Style of a screen not shown.
HIDDEN = {"display": "none"}


def build_layout(initial: dict | None, library, has_demo: bool):
    """The whole page.

    Parameters
    ----------
    initial : dict or None
        The opened file's state (``logic.project_state``): rows, partial, saved_fit,
        source, message. None starts with an empty table.
    library : Library
    has_demo : bool
        Whether the invented demo file is installed (enables its button).
    """
    initial = initial or {}
    rows = initial.get("rows") or [logic.blank_row() for _ in range(3)]
    partial = initial.get("partial") or "good"
    message = initial.get("message") or ("Start by adding results below, opening a results "
                                         "file, or loading the invented demo.")
    return html.Div(className="page", children=[
        html.Header(className="top", children=[
            html.Div(className="brand", children=[
                html.Span("solsphere", className="name"),
                html.Span("Hansen solubility sphere from your bench results", className="sub"),
            ]),
            html.Div(className="notice-box", children=[
                html.Div(id=ids.NOTICE, children=html.Div(message, className="notice notice-ok")),
                html.Div(id="table-status", className="table-status muted small"),
            ]),
        ]),
        html.Main(className="columns", children=[
            html.Section(className="left", children=[
                # the tabs are only the switch: every screen stays on the page and is
                # shown or hidden by the browser (a switch redraws nothing; measured
                # 200-400 ms per switch when each screen was rebuilt on every visit)
                dcc.Tabs(id=ids.TABS, value="bench", className="tabs", children=[
                    dcc.Tab(label=label, value=value) for value, label in SCREENS]),
                html.Div(className="screens", children=[
                    html.Div(id=f"screen-{value}", className="screen",
                             style=None if value == "bench" else HIDDEN,
                             children=content)
                    for (value, _), content in zip(SCREENS, (
                        bench.panel(rows, library, has_demo), trynext.panel(),
                        nexttrials.panel(), blends.panel(library), replace.panel(),
                        share.panel()))]),
            ]),
            html.Section(className="right", children=[sphere.panel(partial)]),
        ]),
        html.Footer(className="foot", children=[
            caution_line(),
            html.P("Hansen parameters from published compilations (see the solvent "
                   "library's notes). The demo is an invented scenario, not measured data.",
                   className="muted"),
        ]),
        dcc.Store(id=ids.FIT),
        dcc.Store(id=ids.SAVED_FIT, data=initial.get("saved_fit")),
        dcc.Store(id=ids.SOURCE, data=initial.get("source")),
        dcc.Store(id=ids.PICKED, data=[]),
        dcc.Store(id=ids.BLEND, data=[]),
        dcc.Store(id=ids.OPEN_PAYLOAD),
        dcc.Store(id="share-open-payload"),
        dcc.Store(id=ids.SHELF_PAYLOAD),
        dcc.Store(id=ids.RESTRICTED_PAYLOAD),
        dcc.Store(id=ids.BOOT),
        dcc.Store(id=ids.NEXT),
        *[dcc.Store(id=v, data=0) for v in ids.SHOWN.values()],
        *bench.type_ahead(),
    ])
