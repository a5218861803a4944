"""Create and serve the solsphere web app.

``create_app(path)`` builds a fresh :class:`dash.Dash` app (the app object is kept apart
from layouts and callbacks); ``serve(path, host, port, workers)`` runs it. The app binds
127.0.0.1 by default; any other address prints a warning, because anyone who can reach
it can use it. Per-user state lives in the browser (``dcc.Store``, the table), so with
``workers >= 2`` (a shared lab server) the pre-forked worker processes share nothing and
any of them gives the same answer to the same request.
"""

from __future__ import annotations

import errno
import ipaddress
import os
import socket
import sys
from importlib.resources import files
from importlib.util import find_spec
from pathlib import Path

from solsphere.errors import InputError
from solsphere.io.project import load_any
from solsphere.library.table import load_library

from . import logic

#: Largest HTTP request body the server accepts [bytes]: a 5 MB upload as the browser's
#: data URL (each callback has its own smaller limit, see ``guard``); uploads are checked
#: against ``logic.UPLOAD_LIMIT`` with a message first.
MAX_REQUEST_BYTES = 7_500_000
#: Most worker processes ``serve`` starts (``--workers``): about one per core is enough.
MAX_WORKERS = 64
#: Threads per worker process: a slow connection never holds a whole process, and the
#: requests held for the low-priority process (``fairshare.QUEUE``) leave enough free.
WORKER_THREADS = 20
#: Where the app keeps its :class:`fairshare.FairShare` (Flask's ``extensions``).
FAIR_SHARE = "solsphere-fair-share"
#: Seconds a worker may stay unresponsive before it is replaced (the longest app request,
#: a large bootstrap on a slow machine, stays well under this).
WORKER_TIMEOUT = 120


def _library():
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
    library = library or _library()
    project = load_any(path, library=library)
    return logic.project_state(project, Path(path).name)


def create_app(path=None, initial: dict | None = None, max_jobs: int | None = None):
    """A new Dash app, optionally opened on a project or results file.

    Parameters
    ----------
    path : str or os.PathLike or None
        File to open (see :func:`initial_state`).
    initial : dict or None
        An already computed initial state (overrides ``path``).
    max_jobs : int or None
        Background jobs allowed at once (default: :func:`jobs.default_max_jobs`).

    Returns
    -------
    dash.Dash
    """
    import dash
    from . import fairshare, guard, jobs
    from .callbacks import register_callbacks
    from .layout import build_layout

    library = _library()
    if initial is None:
        initial = initial_state(path, library)
    assets = Path(__file__).with_name("assets")
    app = dash.Dash(__name__, title="solsphere", assets_folder=str(assets),
                    serve_locally=True, update_title=None, on_error=guard.on_callback_error,
                    background_callback_manager=jobs.manager(max_jobs=max_jobs))
    app.server.config["MAX_CONTENT_LENGTH"] = MAX_REQUEST_BYTES
    app.layout = build_layout(initial, library, has_demo=_demo_installed())
    register_callbacks(app, _library)
    guard.install(app)  # after the callbacks: the policy hashes their inline scripts
    # made here, before any worker is forked: the usage table is shared by all of them
    share = fairshare.FairShare(app.server.wsgi_app, fairshare.Usage())
    app.server.wsgi_app = share
    app.server.extensions[FAIR_SHARE] = share
    return app


def _demo_installed() -> bool:
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


def serve(path=None, host: str = "127.0.0.1", port: int = 8050, workers: int = 1,
          max_jobs: int | None = None) -> None:
    """Serve the app until interrupted.

    Parameters
    ----------
    path : str or os.PathLike or None
        Project or results file to open.
    host : str, default="127.0.0.1"
        Address to bind; anything but a loopback address prints a warning.
    port : int, default=8050
    workers : int, default=1
        1: one process, threaded (werkzeug). 2 or more: that many pre-forked worker
        processes on the same port (gunicorn, Unix only; the app is loaded once, before
        the fork), so several users at once use several cores. Without gunicorn this
        says so and serves with one process.
    max_jobs : int or None
        Long computations (bootstrap, posterior, next trials, blend screens) running at
        once on the machine, all workers together (default: two per core, at least 4).

    Raises
    ------
    InputError
        ``workers`` out of range, or (with ``workers >= 2``) the address cannot be bound.
    """
    if isinstance(workers, bool) or not isinstance(workers, int) or not 1 <= workers <= MAX_WORKERS:
        raise InputError(f"--workers must be a whole number from 1 to {MAX_WORKERS}, "
                         f"found {workers!r}.", file="<command line>",
                         hint="use about one worker per core, e.g. --workers 2")
    if workers > 1:
        missing = prefork_unavailable()
        if missing:
            print(f"solsphere: note: --workers {workers} needs {missing}; serving with one "
                  f"process instead.", file=sys.stderr)
            workers = 1
    app = create_app(path, max_jobs=max_jobs)
    warning = network_warning(host, port)
    if warning:
        print(warning, file=sys.stderr)
    # with workers, bind first: a busy port is one message, before "open ..." is printed
    sock = listen_socket(host, port) if workers > 1 else None
    shown = f"[{host}]" if ":" in host else host
    how = f" ({workers} worker processes)" if workers > 1 else ""
    print(f"solsphere app: open http://{shown}:{port}/ in your browser{how} (Ctrl+C stops it)",
          flush=True)
    if sock is None:
        from . import guard
        app.server.extensions[FAIR_SHARE].start_low_priority()  # still one thread here
        app.run(host=host, port=port, debug=False, request_handler=guard.request_handler())
    else:
        _serve_workers(app.server, sock, workers)


def prefork_unavailable() -> str | None:
    """Why ``workers >= 2`` cannot be served here (None: it can).

    The worker processes come from gunicorn, which runs on Unix only.
    """
    if sys.platform == "win32":
        return "gunicorn, which does not run on Windows"
    if find_spec("gunicorn") is None:
        return "the 'gunicorn' package (install it with: pip install gunicorn)"
    return None


def listen_socket(host: str, port: int) -> socket.socket:
    """A TCP socket bound to ``host:port`` and listening, or a one-line InputError.

    Binding here, before any worker starts, turns a busy port or a wrong address into
    one message (the worker processes then share this socket).
    """
    where = f"{host}:{port}"
    try:
        infos = socket.getaddrinfo(host.strip("[]") or None, port, type=socket.SOCK_STREAM,
                                   flags=socket.AI_PASSIVE)
    except (socket.gaierror, UnicodeError) as exc:
        raise InputError(f"cannot serve on {where}: the address {host!r} is not known "
                         f"({exc}).", file="<command line>",
                         hint="give --host an address of this computer, e.g. 127.0.0.1") from None
    family, kind, proto, _, addr = infos[0]
    sock = socket.socket(family, kind, proto)
    try:
        sock.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        if family == socket.AF_INET6 and hasattr(socket, "IPPROTO_IPV6"):
            sock.setsockopt(socket.IPPROTO_IPV6, socket.IPV6_V6ONLY, 1)
        sock.bind(addr)
        sock.listen(2048)
    except OSError as exc:
        sock.close()
        if exc.errno == errno.EADDRINUSE:
            msg, hint = (f"cannot serve on {where}: the port is in use by another program.",
                         "choose another port with --port, or stop the other program")
        elif exc.errno == errno.EACCES:
            msg, hint = (f"cannot serve on {where}: permission denied.",
                         "use a port above 1023, e.g. --port 8050")
        elif exc.errno == errno.EADDRNOTAVAIL:
            msg, hint = (f"cannot serve on {where}: {host!r} is not an address of this "
                         f"computer.", "use 127.0.0.1, or one of this computer's addresses")
        else:
            msg, hint = (f"cannot serve on {where}: {exc.strerror or exc}.",
                         "check --host and --port")
        raise InputError(msg, file="<command line>", hint=hint) from None
    return sock


def worker_options(fd: int, workers: int) -> dict:
    """gunicorn settings for ``workers`` processes sharing the listening socket ``fd``."""
    return {
        "bind": [f"fd://{fd}"],
        "workers": workers,
        "worker_class": "gthread",
        "threads": WORKER_THREADS,
        "timeout": WORKER_TIMEOUT,
        "graceful_timeout": 10,
        "keepalive": 5,
        "preload_app": True,              # the app and the solvent library load once
        "control_socket_disable": True,   # no control socket file in the user's home
        "proc_name": "solsphere-app",
        "accesslog": None,
        "errorlog": "-",
        "loglevel": "warning",
    }


def _serve_workers(wsgi_app, sock: socket.socket, workers: int) -> None:
    """Serve ``wsgi_app`` on the listening ``sock`` with ``workers`` pre-forked gunicorn
    processes until stopped (Ctrl+C or SIGTERM stops the workers, then returns).

    The request-size limit is the Flask app's own (``MAX_CONTENT_LENGTH``), so it holds
    in every worker.
    """
    from gunicorn.app.base import BaseApplication

    options = worker_options(sock.detach(), workers)  # gunicorn owns the socket from here
    share = wsgi_app.extensions[FAIR_SHARE]
    # each worker forks its low-priority process at once, while it has one thread (the
    # process closes its copy of the listening socket)
    options["post_fork"] = lambda arbiter, worker: share.start_low_priority(
        [s.fileno() for s in worker.sockets])

    class _Workers(BaseApplication):
        def load_config(self):
            for key, value in options.items():
                self.cfg.set(key, value)

        def load(self):
            return wsgi_app

    master = os.getpid()
    try:
        _Workers().run()
    except SystemExit as exc:
        # a worker process leaves through here too: its exit status is gunicorn's business
        if os.getpid() != master or exc.code in (0, None):
            raise
        print(f"solsphere: error: the app's worker processes stopped (status {exc.code}); "
              f"see the messages above.", file=sys.stderr)
        raise SystemExit(1) from None
