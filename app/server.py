"""Create and serve the solsphere web app.

``create_app(path)`` builds a fresh :class:`dash.Dash` app (the app object is kept apart
from layouts and callbacks); ``serve(path, host, port)`` runs it. The app binds
127.0.0.1 by default; any other address prints a warning, because anyone who can reach
it can use it. Per-user state lives in the browser (``dcc.Store``, the table).
"""

from __future__ import annotations

import ipaddress
import sys
from pathlib import Path

#: Largest HTTP request body the server accepts [bytes]; uploads are checked against a
#: smaller limit (``logic.UPLOAD_LIMIT``) with a message first.
MAX_REQUEST_BYTES = 16_000_000


def _library():
    from solsphere.library import load_library
    return load_library()  # loaded once per process and cached by the library


def initial_state(path=None, library=None) -> dict | None:
    """The state a file given on the command line opens with (None: empty table).

    Parameters
    ----------
    path : str or os.PathLike or None
        A project file (.json) or a bench results file (CSV/TSV).

    Raises
    ------
    InputError
        The file cannot be read (the CLI turns this into exit code 2).
    """
    if path is None:
        return None
    from solsphere.project import load_any
    from . import logic
    library = library or _library()
    project = load_any(path, library=library)
    return logic.project_state(project, Path(path).name)


def create_app(path=None, initial: dict | None = None):
    """A new Dash app, optionally opened on a project or results file.

    Parameters
    ----------
    path : str or os.PathLike or None
        File to open (see :func:`initial_state`).
    initial : dict or None
        An already computed initial state (overrides ``path``).

    Returns
    -------
    dash.Dash
    """
    import dash
    from .callbacks import register_callbacks
    from .layout import build_layout

    library = _library()
    if initial is None:
        initial = initial_state(path, library)
    assets = Path(__file__).with_name("assets")
    app = dash.Dash(__name__, title="solsphere", assets_folder=str(assets),
                    serve_locally=True, update_title=None)
    app.server.config["MAX_CONTENT_LENGTH"] = MAX_REQUEST_BYTES
    app.layout = build_layout(initial, library, has_demo=_demo_installed())
    register_callbacks(app, _library)
    return app


def _demo_installed() -> bool:
    from importlib.resources import files
    try:
        return any(e.name.endswith(".csv") for e in files("solsphere.data.demo").iterdir())
    except (ModuleNotFoundError, FileNotFoundError, OSError):
        return False


def is_loopback(host: str) -> bool:
    """True for addresses only this computer can reach (127.0.0.0/8, ::1, localhost)."""
    if host.strip().lower() in ("localhost", "localhost."):
        return True
    try:
        return ipaddress.ip_address(host.strip("[]")).is_loopback
    except ValueError:
        return False


def network_warning(host: str, port: int) -> str | None:
    """The warning printed when the app is served beyond this computer (else None)."""
    if is_loopback(host):
        return None
    return (f"solsphere: warning: serving on {host}:{port}: anyone who can reach this "
            f"address on the network can use the app and see the results entered in it. "
            f"Use --host 127.0.0.1 to keep it on this computer.")


def serve(path=None, host: str = "127.0.0.1", port: int = 8050) -> None:
    """Serve the app until interrupted.

    Parameters
    ----------
    path : str or os.PathLike or None
        Project or results file to open.
    host : str, default="127.0.0.1"
        Address to bind; anything but a loopback address prints a warning.
    port : int, default=8050
    """
    app = create_app(path)
    warning = network_warning(host, port)
    if warning:
        print(warning, file=sys.stderr)
    shown = f"[{host}]" if ":" in host else host
    print(f"solsphere app: open http://{shown}:{port}/ in your browser (Ctrl+C stops it)")
    app.run(host=host, port=port, debug=False)
