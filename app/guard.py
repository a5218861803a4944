"""What the app's server does for every request, whatever a page or a hand-made request
sends: security headers, a body-size limit per callback, and a message in the page
(never an HTTP 500) when a callback cannot use what it was sent.

- **Headers.** ``X-Frame-Options: DENY`` and ``frame-ancestors 'none'`` (the app is
  never shown inside another site's frame), a content-security policy that allows
  scripts only from the app itself plus the hashes of Dash's own inline scripts (so a
  name or note that slipped through as HTML still could not run), styles from the app
  and inline (Dash and plotly set ``style`` attributes), pictures from the app and
  ``data:``/``blob:`` URLs (plotly's image export), ``X-Content-Type-Options:
  nosniff``, ``Referrer-Policy: no-referrer``. The ``Server`` header names no versions
  (``solsphere``, or ``gunicorn`` with ``--workers``).
- **Request size.** Callbacks that carry an uploaded file may receive up to
  :data:`UPLOAD_REQUEST_BYTES`; every other callback :data:`CALLBACK_BYTES` (a results
  table of :mod:`solsphere.limits`' maximum rows fits easily). Larger requests are
  answered 413 with a one-line reason: above the upload limit before the body is read,
  between the two limits once the body shows which callback it is for.
- **Numbers.** Every callback runs under :func:`solsphere.errors.numeric_notes`: a
  floating-point complaint of numpy (overflow, division by zero) becomes one line in
  the server's log, never a numpy trace (the fit's own notes are shown in the page with
  its warnings).
- **Errors.** A callback that raises (a hand-made request with rows as a number, a
  filename as a list ...) answers with a one-line message in the page's notice area;
  the server logs one line and keeps serving.
"""

from __future__ import annotations

import functools
import json

import flask
from dash import html, set_props
from werkzeug.exceptions import HTTPException
from werkzeug.serving import WSGIRequestHandler

from solsphere.errors import InputError, SolsphereError, numeric_notes
from solsphere.limits import clip

from . import ids

#: Largest request body of a callback that carries an uploaded file [bytes]: a 5 MB
#: file is about 6.7 MB as the browser's base64 data URL.
UPLOAD_REQUEST_BYTES = 7_500_000
#: Largest request body of any other callback [bytes].
CALLBACK_BYTES = 2_000_000
#: Component ids whose callbacks carry uploaded files.
UPLOAD_IDS = ("open-upload", "share-open-upload", "shelf-upload", "restricted-upload",
              ids.OPEN_PAYLOAD, "share-open-payload", ids.SHELF_PAYLOAD,
              ids.RESTRICTED_PAYLOAD)
#: The Server header (no versions of the server, Python or the frameworks).
SERVER_NAME = "solsphere"


def request_handler():
    """werkzeug's request handler, naming the server ``solsphere`` instead of
    ``Werkzeug/x.y Python/x.y`` (gunicorn, with ``--workers``, says ``gunicorn``)."""
    class Handler(WSGIRequestHandler):
        def version_string(self) -> str:
            return SERVER_NAME

    return Handler


def content_security_policy(script_hashes=()) -> str:
    """The policy sent with every response.

    >>> "frame-ancestors 'none'" in content_security_policy()
    True
    """
    scripts = " ".join(["'self'", *script_hashes])
    return ("default-src 'self'; "
            f"script-src {scripts}; "
            "style-src 'self' 'unsafe-inline'; "
            "img-src 'self' data: blob:; "
            "font-src 'self' data:; "
            "connect-src 'self'; "
            "worker-src 'self' blob:; "
            "object-src 'none'; "
            "base-uri 'self'; "
            "form-action 'self'; "
            "frame-ancestors 'none'")


def callback_error_message(exc: BaseException) -> str:
    """The one line the page shows when a callback fails.

    >>> callback_error_message(InputError("too busy; try again.", setting="max_jobs"))
    'too busy; try again.'
    >>> callback_error_message(TypeError("bad rows"))
    "This request could not be used (TypeError: 'bad rows'); nothing was changed. Reload the page if it keeps happening."
    """
    if isinstance(exc, SolsphereError):  # a refusal of ours says what to do itself
        return clip(str(exc), 300, quote=False)
    return (f"This request could not be used ({type(exc).__name__}: "
            f"{clip(str(exc), 120)}); nothing was changed. Reload the page if it keeps "
            f"happening.")


def error_notice(text: str):
    """The element the page's notice area shows for a refusal or a failure."""
    return html.Div(text, className="notice notice-error")


def notice_answer(text: str) -> bytes:
    """Dash's answer to a callback request that changes none of its outputs but shows
    ``text`` in the page's notice area: what :func:`on_callback_error` makes Dash send,
    for requests answered before they reach Dash.

    >>> json.loads(notice_answer("busy"))["sideUpdate"]["notice"]["children"]["props"]
    {'children': 'busy', 'className': 'notice notice-error'}
    """
    return json.dumps({"multi": True, "response": {}, "sideUpdate": {
        ids.NOTICE: {"children": error_notice(text).to_plotly_json()}}}).encode()


def refusal(reason: str) -> bytes:
    """The body of a request refused before Dash answers it: one JSON line.

    >>> refusal("too big")
    b'{"error": "too big"}'
    """
    return json.dumps({"error": reason}).encode()


def on_callback_error(exc: BaseException):
    """Dash's ``on_error`` hook: the message goes to the page's notice area, the
    outputs stay as they were, the server logs one line."""
    flask.current_app.logger.warning("callback failed: %s: %s", type(exc).__name__,
                                     clip(str(exc), 300))
    set_props(ids.NOTICE, {"children": error_notice(callback_error_message(exc))})
    return None  # no update of the callback's own outputs


def quiet_numbers(func, logger):
    """``func`` run under :func:`~solsphere.errors.numeric_notes`; each note becomes one
    warning line in ``logger`` (safe in the server's threads).

    >>> import logging, numpy as np
    >>> f = quiet_numbers(lambda x: np.float64(x) / 0.0, logging.getLogger("t"))
    >>> float(f(1.0))
    inf
    """
    @functools.wraps(func)
    def run(*args, **kwargs):
        with numeric_notes() as notes:
            out = func(*args, **kwargs)
        for note in notes:
            logger.warning("note: %s", note)
        return out

    return run


def limit_for(body) -> int:
    """The size limit of the callback a (parsed) request body is for: the upload limit
    when its inputs carry an uploaded file, else :data:`CALLBACK_BYTES`.

    >>> limit_for({"inputs": [{"id": "shelf-upload", "property": "contents"}]})
    7500000
    >>> limit_for({"inputs": [{"id": "results-table", "property": "rowData"}]}), limit_for("x")
    (2000000, 2000000)
    """
    if not isinstance(body, dict):
        return CALLBACK_BYTES
    items = [*(body.get("inputs") or []), *(body.get("state") or [])]
    for item in items if isinstance(items, list) else []:
        for one in (item if isinstance(item, list) else [item]):
            if isinstance(one, dict) and one.get("id") in UPLOAD_IDS:
                return UPLOAD_REQUEST_BYTES
    return CALLBACK_BYTES


def install(app) -> None:
    """Add the headers, the per-callback size limit and the error answers to a
    :class:`dash.Dash` app (after its callbacks are registered: the policy hashes the
    inline scripts they add)."""
    server = app.server
    policy = content_security_policy(sorted(set(app.csp_hashes())))
    for entry in app.callback_map.values():
        if callable(entry.get("callback")):
            entry["callback"] = quiet_numbers(entry["callback"], server.logger)

    @server.before_request
    def limit_callback_bodies():
        if flask.request.path.endswith("/_dash-update-component"):
            size = flask.request.content_length
            if size is None or size <= CALLBACK_BYTES:
                return None
            # bigger than any table needs: only a callback that carries a file may
            # (the parsed body is cached; Dash's dispatcher reuses it)
            limit = limit_for(flask.request.get_json(silent=True))
            if size > limit:
                return flask.Response(
                    refusal(f"request of {size:,} bytes; this part of the app accepts at "
                            f"most {limit:,}."),
                    status=413, mimetype="application/json")
        return None

    @server.after_request
    def headers(response):
        h = response.headers
        h["Content-Security-Policy"] = policy
        h["X-Frame-Options"] = "DENY"
        h["X-Content-Type-Options"] = "nosniff"
        h["Referrer-Policy"] = "no-referrer"
        return response

    def unreadable(exc):
        """A request the dispatcher itself cannot read (not JSON, not an object)."""
        if isinstance(exc, HTTPException):
            return exc
        server.logger.warning("request refused: %s: %s", type(exc).__name__,
                              clip(str(exc), 300))
        return flask.Response(refusal(callback_error_message(exc)), status=400,
                              mimetype="application/json")

    server.register_error_handler(Exception, unreadable)
