"""A fair share of the server for each client address: on a lab server, one user (or a
script) sending heavy requests over and over does not slow everyone else down.

How it works
------------
- **Accounting.** The CPU time of every callback request (the serving thread's own,
  measured around it) is charged to the address it came from, in a small table the
  worker processes share (:class:`Usage`, made before they are forked). A charge fades
  with a half-life of :data:`HALF_LIFE_S`, so the table says how much CPU each address
  has used lately.
- **Priority.** A callback request from an address that has used more than
  :data:`SHARE_S` CPU seconds lately, or whose body is larger than :data:`LARGE_BODY`
  bytes (a big table or an uploaded file), runs in the worker's *low-priority process*
  (:class:`LowPriority`, ``nice`` +:data:`NICENESS`) instead of in the worker itself.
  The operating system then answers the requests of everyone within their share first;
  the heavy requests take the CPU time left over. A separate process matters: threads
  of one Python process take turns on one interpreter lock whatever their priority,
  so a heavy request beside a light one in the same process slows the light one down
  several times.
- **Nothing is refused while there is room.** The low-priority process of a worker
  takes :data:`SLOTS` requests at a time, and up to :data:`QUEUE` wait for one; one
  more is answered at once with a line in the page (try again in a moment), so a flood
  of heavy requests never holds all the worker's threads.

On an idle server a low-priority request is as fast as any other (one more hop
through a pipe, about a millisecond). Behind a reverse proxy every user has the
proxy's address and so shares one fair share; the proxy's own rate limits then do
this job. Without a started low-priority process (the app in a test client, or on
Windows, which cannot fork a process) every request runs in the worker, as before.
"""

from __future__ import annotations

import hashlib
import io
import json
import multiprocessing
import os
import queue
import signal
import sys
import threading
import time
from multiprocessing.sharedctypes import RawArray

from .guard import UPLOAD_REQUEST_BYTES

#: Half-life of a charge [s]: CPU used this long ago counts half.
HALF_LIFE_S = 10.0
#: CPU seconds an address may have used lately before its requests run at low priority.
#: A fit of the demo's table costs about 0.015 s; a user editing a table every few
#: seconds stays well under this, a script sending requests back to back passes it
#: within a second or two.
SHARE_S = 1.0
#: Request bodies larger than this [bytes] run at low priority from the start (a table of
#: about 300 rows, or an uploaded file).
LARGE_BODY = 32_000
#: Requests one worker's low-priority process runs at once.
SLOTS = 4
#: Low-priority requests one worker holds at once, running or waiting for a slot (a
#: browser sends at most six at a time); one more is answered "busy" at once.
QUEUE = 8
#: Longest wait of a low-priority request for a slot [s] (then it is answered "busy").
WAIT_S = 30.0
#: How much lower the low-priority process's CPU priority is (Unix ``nice`` steps).
NICENESS = 10
#: Addresses the shared table remembers (the one that used least lately makes room).
TABLE_SIZE = 1024
#: Neighbouring places of the table searched for an address.
PROBES = 16
#: Response header of an answer from the low-priority process (for operators and tests).
PRIORITY_HEADER = "X-Solsphere-Priority"
#: The path of Dash's callback requests (the only ones that may run at low priority).
CALLBACK_PATH = "/_dash-update-component"


#: The line a low-priority request gets when every slot is taken.
BUSY_TEXT = ("The server is busy with earlier heavy requests from this address; nothing "
             "was changed. Try again in a moment.")


def notice_answer(notice_id: str, text: str) -> bytes:
    """Dash's answer to a callback request that changes nothing but shows ``text`` in
    the page's notice area.

    >>> json.loads(notice_answer("notice", "busy"))["sideUpdate"]["notice"]["children"]["type"]
    'Div'
    """
    div = {"type": "Div", "namespace": "dash_html_components",
           "props": {"children": text, "className": "notice notice-error"}}
    return json.dumps({"multi": True, "response": {},
                       "sideUpdate": {notice_id: {"children": div}}}).encode()


def fork_context():
    """multiprocessing's "fork" start method (None where there is none: Windows)."""
    try:
        return multiprocessing.get_context("fork")
    except ValueError:
        return None


def client_key(address: str) -> int:
    """A non-zero 63-bit number for a client address (the table stores numbers).

    >>> client_key("127.0.0.1") == client_key("127.0.0.1") != client_key("127.0.0.2")
    True
    """
    digest = hashlib.blake2b(address.encode("utf-8", "replace"), digest_size=8).digest()
    return (int.from_bytes(digest, "little") >> 1) or 1


class Usage:
    """Recent CPU use per client address, shared by the processes forked after it is made.

    >>> u = Usage(size=8)
    >>> u.charge("10.0.0.5", 1.0, now=0.0)
    >>> round(u.level("10.0.0.5", now=HALF_LIFE_S), 3), u.level("10.0.0.6", now=0.0)
    (0.5, 0.0)
    """

    def __init__(self, size: int = TABLE_SIZE):
        self.size = size
        self.keys = RawArray("q", size)     # 0: an empty place
        self.loads = RawArray("d", size)    # CPU seconds at ``whens``
        self.whens = RawArray("d", size)    # time.monotonic() of the last charge
        ctx = fork_context()
        self.lock = ctx.Lock() if ctx else threading.Lock()

    def _faded(self, i: int, now: float) -> float:
        return self.loads[i] * 0.5 ** (max(0.0, now - self.whens[i]) / HALF_LIFE_S)

    def _place(self, key: int, now: float, claim: bool) -> int | None:
        """Where ``key`` is (or, with ``claim``, the place it takes: an empty one, else
        the neighbour that used least lately)."""
        first = key % self.size
        spare, least = None, float("inf")
        for step in range(min(PROBES, self.size)):
            i = (first + step) % self.size
            if self.keys[i] == key:
                return i
            if not claim:
                continue
            load = -1.0 if self.keys[i] == 0 else self._faded(i, now)
            if load < least:
                spare, least = i, load
        if claim and spare is not None:
            self.keys[spare], self.loads[spare], self.whens[spare] = key, 0.0, now
        return spare if claim else None

    def charge(self, address: str, seconds: float, now: float | None = None) -> None:
        """Add ``seconds`` of CPU to ``address``'s recent use."""
        now = time.monotonic() if now is None else now
        key = client_key(address)
        if not self.lock.acquire(timeout=0.05):  # never wait long for bookkeeping
            return
        try:
            i = self._place(key, now, claim=True)
            self.loads[i] = self._faded(i, now) + max(0.0, seconds)
            self.whens[i] = now
        finally:
            self.lock.release()

    def level(self, address: str, now: float | None = None) -> float:
        """CPU seconds ``address`` has used lately (faded by age)."""
        now = time.monotonic() if now is None else now
        key = client_key(address)
        if not self.lock.acquire(timeout=0.05):
            return 0.0
        try:
            i = self._place(key, now, claim=False)
            return 0.0 if i is None else self._faded(i, now)
        finally:
            self.lock.release()


# ----------------------------------------------------------------- low-priority process

#: The parts of a request's environment sent to the low-priority process (the rest are
#: the worker's own objects: its socket, its input stream, its error stream).
SENT_KEYS = ("REQUEST_METHOD", "SCRIPT_NAME", "PATH_INFO", "QUERY_STRING", "CONTENT_TYPE",
             "CONTENT_LENGTH", "SERVER_NAME", "SERVER_PORT", "SERVER_PROTOCOL",
             "REMOTE_ADDR", "REMOTE_PORT", "wsgi.url_scheme")


def request_message(environ: dict, body: bytes) -> dict:
    """What the low-priority process needs of a request: its plain environment and body."""
    plain = {k: v for k, v in environ.items()
             if isinstance(v, str) and (k in SENT_KEYS or k.startswith("HTTP_"))}
    return {"environ": plain, "body": body}


def run_request(wsgi_app, message: dict) -> tuple[str, list, bytes, float]:
    """Run one request of :func:`request_message` through ``wsgi_app``: (status, headers,
    body, CPU seconds of this thread)."""
    environ = dict(message["environ"])
    environ.update({"wsgi.input": io.BytesIO(message["body"]), "wsgi.errors": sys.stderr,
                    "wsgi.version": (1, 0), "wsgi.multithread": True,
                    "wsgi.multiprocess": True, "wsgi.run_once": False})
    started = time.thread_time()
    answer: dict = {}

    def start_response(status, headers, exc_info=None):
        answer["status"], answer["headers"] = status, list(headers)

    chunks = wsgi_app(environ, start_response)
    try:
        body = b"".join(chunks)
    finally:
        if hasattr(chunks, "close"):
            chunks.close()
    return answer["status"], answer["headers"], body, time.thread_time() - started


def serve_slots(wsgi_app, conns, notice_id: str, theirs=()) -> None:
    """The low-priority process: lower its priority, then answer each pipe's requests in
    its own thread until the worker closes the pipes (then the process ends).

    ``theirs`` are the worker's ends of the pipes, copied by the fork: closed here, so
    that the worker's exit (even a killed one) ends this process.
    """
    for conn in theirs:
        conn.close()
    for sig in (signal.SIGTERM, signal.SIGHUP, signal.SIGCHLD, signal.SIGUSR1,
                signal.SIGUSR2, signal.SIGWINCH):
        signal.signal(sig, signal.SIG_DFL)  # not the server's handlers, inherited
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # Ctrl+C stops the worker, then this
    try:
        os.nice(NICENESS)
    except (OSError, AttributeError):  # not allowed or not on this system: run as is
        pass

    def answer(conn):
        while True:
            try:
                message = conn.recv()
            except (EOFError, OSError):
                return
            try:
                reply = run_request(wsgi_app, message)
            except Exception as exc:  # noqa: BLE001 -- answered with a line in the page
                text = (f"This request could not be run ({type(exc).__name__}); nothing "
                        f"was changed. Reload the page if it keeps happening.")
                reply = ("200 OK", [("Content-Type", "application/json")],
                         notice_answer(notice_id, text), 0.0)
            try:
                conn.send(reply)
            except (OSError, ValueError):
                return

    threads = [threading.Thread(target=answer, args=(c,), daemon=True) for c in conns]
    for t in threads:
        t.start()
    for t in threads:
        t.join()


class LowPriority:
    """A worker's low-priority process, with :data:`SLOTS` pipes to it.

    :meth:`start` forks it; call it while the calling process has one thread (gunicorn's
    ``post_fork``, or before the single-process server starts), because a fork copies
    only the calling thread.
    """

    def __init__(self, wsgi_app, notice_id: str, slots: int = SLOTS):
        self.wsgi_app = wsgi_app
        self.notice_id = notice_id
        self.slots = slots
        self.process = None
        self.free: queue.Queue | None = None
        self.held = threading.BoundedSemaphore(QUEUE)

    @property
    def alive(self) -> bool:
        return self.process is not None and self.process.is_alive()

    def start(self) -> None:
        ctx = fork_context()
        if ctx is None:  # no fork here: every request stays in the worker
            return
        pairs = [ctx.Pipe() for _ in range(self.slots)]
        self.process = ctx.Process(target=serve_slots, name="solsphere-low-priority",
                                   args=(self.wsgi_app, [far for _, far in pairs],
                                         self.notice_id, [near for near, _ in pairs]),
                                   daemon=True)
        self.process.start()
        self.free = queue.Queue()
        for near, far in pairs:
            far.close()
            self.free.put(near)

    def run(self, environ: dict, body: bytes):
        """The answer (status, headers, body, CPU seconds) of the low-priority process;
        None when :data:`QUEUE` requests are already held or no slot came free in
        :data:`WAIT_S`; raises OSError when the process has stopped."""
        if not self.held.acquire(blocking=False):
            return None
        try:
            try:
                conn = self.free.get(timeout=WAIT_S)
            except queue.Empty:
                return None
            try:
                conn.send(request_message(environ, body))
                reply = conn.recv()
            except (EOFError, OSError, ValueError) as exc:
                conn.close()
                raise OSError(f"the low-priority process stopped "
                              f"({type(exc).__name__})") from None
            self.free.put(conn)
            return reply
        finally:
            self.held.release()


# ------------------------------------------------------------------------ the middleware

class FairShare:
    """WSGI middleware: charge each callback request's CPU time to its address and run
    the requests of addresses over their share (or with large bodies) at low priority.

    Parameters
    ----------
    wsgi_app : callable
        The app's own WSGI callable (Flask's ``wsgi_app``).
    usage : Usage
        The table shared by the worker processes.
    notice_id : str
        The page's notice area (for the busy answer).
    """

    def __init__(self, wsgi_app, usage: Usage, notice_id: str):
        self.wsgi_app = wsgi_app
        self.usage = usage
        self.notice_id = notice_id
        self.low = LowPriority(wsgi_app, notice_id)
        self.logged_stop = False

    def start_low_priority(self) -> None:
        """Fork the low-priority process (see :meth:`LowPriority.start`)."""
        self.low.start()

    def __call__(self, environ, start_response):
        if environ.get("REQUEST_METHOD") != "POST" or not str(
                environ.get("PATH_INFO", "")).endswith(CALLBACK_PATH):
            return self.wsgi_app(environ, start_response)
        address = str(environ.get("REMOTE_ADDR") or "unknown")
        size = content_length(environ)
        if self.low_ready() and size is not None and size <= UPLOAD_REQUEST_BYTES and (
                size > LARGE_BODY or self.usage.level(address) > SHARE_S):
            return self.at_low_priority(environ, start_response, address, size)
        started = time.thread_time()
        try:
            chunks = self.wsgi_app(environ, start_response)
            body = b"".join(chunks)
            if hasattr(chunks, "close"):
                chunks.close()
            return [body]
        finally:
            self.usage.charge(address, time.thread_time() - started)

    def low_ready(self) -> bool:
        """True while the low-priority process runs (it was started and has not stopped)."""
        if self.low.process is None:
            return False
        if not self.low.alive:
            self.stopped("the low-priority process stopped")
            return False
        return True

    def stopped(self, why: str) -> None:
        """Say once, in the server's log, that heavy requests now run in the worker."""
        if not self.logged_stop:
            self.logged_stop = True
            print(f"solsphere app: warning: {why}; heavy requests now run in the worker "
                  f"itself.", file=sys.stderr, flush=True)

    def at_low_priority(self, environ, start_response, address: str, size: int):
        body = environ["wsgi.input"].read(size) if size else b""
        try:
            reply = self.low.run(environ, body)
        except OSError as exc:
            self.stopped(str(exc))
            environ = dict(environ, **{"wsgi.input": io.BytesIO(body)})
            return self.wsgi_app(environ, start_response)
        if reply is None:
            answer = notice_answer(self.notice_id, BUSY_TEXT)
            start_response("200 OK", [("Content-Type", "application/json"),
                                      ("Content-Length", str(len(answer))),
                                      ("Retry-After", "2"), (PRIORITY_HEADER, "busy")])
            return [answer]
        status, headers, answer, cpu = reply
        self.usage.charge(address, cpu)
        start_response(status, [*headers, (PRIORITY_HEADER, "low")])
        return [answer]


def content_length(environ) -> int | None:
    """The request body's declared length (None: not given, as with a chunked body, or
    not a number: such a request stays in the worker, whose server reads it).

    >>> content_length({"CONTENT_LENGTH": "12"}), content_length({}), content_length({"CONTENT_LENGTH": "x"})
    (12, None, None)
    """
    try:
        n = int(environ.get("CONTENT_LENGTH") or "")
    except (TypeError, ValueError):
        return None
    return n if n >= 0 else None
