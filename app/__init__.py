"""The solsphere web app (Dash): enter bench results, watch the sphere refit, look for
solvents and blends to try next, share the map.

Start it with ``solsphere app [PROJECT.json | RESULTS.csv]`` or
``app.server.serve(path, host="127.0.0.1", port=8050)``. Every computation is a call
into the :mod:`solsphere` library; the app only arranges and draws the results.
"""

__all__ = ["create_app", "serve"]


def create_app(*args, **kwargs):
    """See :func:`app.server.create_app` (imported lazily: Dash loads on first use)."""
    from .server import create_app as _create
    return _create(*args, **kwargs)


def serve(*args, **kwargs):
    """See :func:`app.server.serve`."""
    from .server import serve as _serve
    return _serve(*args, **kwargs)
