"""The app's recommendation tables on AG Grid (``dash-ag-grid``, the maintained grid for
Dash): every column sorts and filters, the hazard facts (flash point, exposure limit,
flags) are columns of their own, and a button under each table downloads it as CSV.

No JavaScript functions are passed to the grid (the page's content-security policy
allows no code built from strings): numbers are rounded on the server, and a click is
read from the grid's ``cellClicked`` event, whose ``rowId`` is the row's place in the
data as sent (so sorting or filtering never changes what a click picks).
"""

from __future__ import annotations

from dash import Input, Output, html

#: Column kinds: (filter, alignment class).
_KIND = {"text": "agTextColumnFilter", "number": "agNumberColumnFilter"}
#: Row height [px]: three lines of wrapped text (a measured height per row would be
#: wrong for grids drawn while their tab is hidden).
ROW_HEIGHT = 58
#: Grid look (AG Grid's own quartz theme in its plain form; our colours in the CSS).
THEME = "ag-theme-quartz"


def column(field: str, header: str, kind: str = "text", width: int | None = None,
           wrap: bool = False, pinned: bool = False, tip: str | None = None) -> dict:
    """One column definition.

    Parameters
    ----------
    field : str
        The row key shown.
    header : str
    kind : {"text", "number"}, default="text"
        Filter kind (numbers sort and filter as numbers).
    width : int or None
        Width [px] (default 110 for numbers, 115 for text); the grid scrolls sideways.
    wrap : bool, default=False
        Wrap long text over up to three lines; the whole text shows on hover.
    pinned : bool, default=False
        Keep the column at the left while scrolling sideways.
    tip : str or None
        A header tooltip saying what the column means.

    >>> column("red", "RED", "number")["filter"]
    'agNumberColumnFilter'
    """
    c = {"field": field, "headerName": header, "filter": _KIND[kind], "sortable": True,
         "resizable": True}
    if kind == "number":
        c["type"] = "numericColumn"
    c["width"] = width or (110 if kind == "number" else 115)
    if wrap:  # a fixed row height (ROW_HEIGHT: three lines); the whole text on hover
        c.update(wrapText=True, cellClass="wrap-cell", tooltipField=field)
    if pinned:
        c["pinned"] = "left"
    if tip:
        c["headerTooltip"] = tip
    return c


def grid(grid_id: str, columns: list[dict], page_size: int = 15, csv_name: str = "table.csv"):
    """A read-only, clickable, sortable and filterable table with a CSV download button
    (id ``{grid_id}-csv``).

    Returns
    -------
    dash.html.Div
    """
    import dash_ag_grid as dag  # deferred: only the app needs the grid

    return html.Div(className="grid-box", children=[
        dag.AgGrid(
            id=grid_id, rowData=[], columnDefs=columns, className=THEME,
            defaultColDef={"sortable": True, "filter": True, "resizable": True,
                           "wrapHeaderText": True, "autoHeaderHeight": True,
                           "floatingFilter": False, "minWidth": 70},
            dashGridOptions={"rowHeight": ROW_HEIGHT, "pagination": True, "paginationPageSize": page_size,
                             "paginationPageSizeSelector": False, "domLayout": "autoHeight",
                             "tooltipShowDelay": 0, "enableCellTextSelection": True,
                             "suppressCellFocus": False,
                             # every column drawn (small grids): filters, tests and
                             # screen readers see all of them
                             "suppressColumnVirtualisation": True},
            csvExportParams={"fileName": csv_name},
            style={"width": "100%"},
        ),
        html.Div(className="grid-foot", children=[
            html.Button("Download this table (CSV)", id=f"{grid_id}-csv",
                        className="btn btn-quiet btn-small"),
            html.Span("sort: click a header · filter: the ≡ menu of a header",
                      className="muted small"),
        ]),
    ])


def clicked_row(event, rows):
    """The row a ``cellClicked`` event is about, or None.

    >>> clicked_row({"rowId": "1", "colId": "name"}, [{"name": "a"}, {"name": "b"}])
    {'name': 'b'}
    >>> clicked_row({"rowId": "7"}, [{"name": "a"}]) is None
    True
    """
    if not isinstance(event, dict) or not rows:
        return None
    try:
        k = int(event.get("rowId"))
    except (TypeError, ValueError):
        return None
    return rows[k] if 0 <= k < len(rows) else None


def register_csv(app, grid_ids) -> None:
    """The download buttons: each asks its grid to export what it shows (the grid's own
    CSV export, in the browser: sorted and filtered as on screen)."""
    for gid in grid_ids:
        app.clientside_callback(
            "function(n) { return n ? true : window.dash_clientside.no_update; }",
            Output(gid, "exportDataAsCsv"), Input(f"{gid}-csv", "n_clicks"),
            prevent_initial_call=True)
