"""Register every screen's callbacks on an app.

One callback (``bench.refit``) turns the table and the 'partly' setting into the fit
result in the ``fit-store``; every other screen reads that store and does nothing
(``PreventUpdate``) while it is empty. Callbacks only read their inputs and return new
values: no module-level state, so two browser tabs never see each other's data.
"""

from __future__ import annotations

import json

from dash import Input, Output, State

from . import bench, blends, grids, ids, nexttrials, replace, share, sphere, trynext
from .layout import HIDDEN, SCREENS

#: Every recommendation grid (each has a CSV download button).
GRIDS = ("shortlist", "blend-table", "replace-singles", "replace-pairs")


def register_callbacks(app, get_library) -> None:
    """Attach the callbacks of all screens to ``app``.

    Parameters
    ----------
    app : dash.Dash
    get_library : callable
        Returns the (immutable, cached) solvent library.
    """
    for screen in (bench, sphere, trynext, nexttrials, blends, replace, share):
        screen.register(app, get_library)
    grids.register_csv(app, GRIDS)
    tabs = list(ids.SHOWN)  # a tab shown counts up its screen's store (no request)
    app.clientside_callback(
        """function(tab, ...counts) {
            var names = %s;
            return names.map(function(n, k) {
                return n === tab ? (counts[k] || 0) + 1 : window.dash_clientside.no_update;
            });
        }""" % json.dumps(tabs),
        [Output(ids.SHOWN[t], "data") for t in tabs], Input(ids.TABS, "value"),
        [State(ids.SHOWN[t], "data") for t in tabs])
    screens = [value for value, _ in SCREENS]  # the chosen screen shown, the others hidden
    app.clientside_callback(
        """function(tab) {
            var names = %s, hidden = %s;
            return names.map(function(n) { return n === tab ? null : hidden; });
        }""" % (json.dumps(screens), json.dumps(HIDDEN)),
        [Output(f"screen-{v}", "style") for v in screens], Input(ids.TABS, "value"),
        prevent_initial_call=True)
