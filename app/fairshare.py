"""A fair share of the server for each client: on a lab server, one user (or a script)
sending heavy requests over and over does not slow everyone else down.

How it works
------------
- **Accounting.** The CPU time of every callback request (the serving thread's own,
  measured around it) is charged to the client it came from (its address; for IPv6 its
  /64 network, which one machine may hold whole) in a small table the worker processes
  share (:class:`Usage`, made before they are forked). A charge fades with a half-life
  of :data:`HALF_LIFE_S`, so the table says how much CPU each client has used lately.
- **Priority.** A callback request from a client that has used more than
  :data:`SHARE_S` CPU seconds lately, or whose body is larger than :data:`LARGE_BODY`
  bytes (a big table or an uploaded file), runs in the worker's *low-priority process*
  (:class:`LowPriority`, ``nice`` +:data:`NICENESS`) instead of in the worker itself.
  The operating system then answers the requests of everyone within their share first;
  the heavy requests take the CPU time left over. A separate process matters: threads
  of one Python process take turns on one interpreter lock whatever their priority,
  so a heavy request beside a light one in the same process slows the light one down
  several times.
- **Bounded.** The low-priority process of a worker runs :data:`SLOTS` requests at a
  time; a worker holds at most :data:`QUEUE` low-priority requests (running or waiting
  for a slot), at most :data:`PER_CLIENT` of them from one client, so one client never
  holds all the places or all the worker's threads. One more is answered at once with a
  line in the page (try again in a moment). A request the low-priority process does not
  answer within :data:`ANSWER_S` is answered with a line too, and the process is
  stopped; the worker then runs every request itself (and says so once in its log).
- A progress poll of a background job that finds no place is told to ask again, so
  the page keeps waiting for its job. A callback request without a declared body
  length (a chunked body, which no browser sends) is refused with 411.

On an idle server a low-priority request is as fast as any other (one more hop
through a pipe, about a millisecond). Behind a reverse proxy every user has the
proxy's address and so shares one fair share; the proxy's own rate limits then do
this job. The low-priority process is forked, so there is none on Windows (no fork)
and on macOS (where forking a process that has loaded these libraries is unsafe):
there, as in a test client, the table still counts and every request runs in the
worker, as before.
"""

from __future__ import annotations

import hashlib
import io
import ipaddress
import multiprocessing
import os
import queue
import signal
import sys
import threading
import time
from multiprocessing.sharedctypes import RawArray

from .guard import UPLOAD_REQUEST_BYTES, callback_error_message, notice_answer, refusal

#: Half-life of a charge [s]: CPU used this long ago counts half.
HALF_LIFE_S = 10.0
#: CPU seconds a client may have used lately before its requests run at low priority.
#: A fit of the demo's table costs about 0.015 s; a user editing a table every few
#: seconds stays well under this, a script sending requests back to back passes it
#: within a second or two.
SHARE_S = 1.0
#: Request bodies larger than this [bytes] run at low priority from the start (a table of
#: about 300 rows, or an uploaded file).
LARGE_BODY = 32_000
#: Requests one worker's low-priority process runs at once.
SLOTS = 4
#: Low-priority requests one worker holds at once, running or waiting for a slot.
QUEUE = 12
#: Of those, the most one client may hold (a browser sends at most six at a time).
PER_CLIENT = 6
#: Longest wait of a low-priority request for a slot [s] (then it is answered "busy").
WAIT_S = 30.0
#: Longest time the low-priority process may take to answer one request [s].
ANSWER_S = 300.0
#: How much lower the CPU priority of the low-priority process and of the background
#: jobs (app/jobs.py) is than the server's (Unix ``nice`` steps).
NICENESS = 10
#: Clients the shared table remembers (the one that used least lately makes room).
TABLE_SIZE = 1024
#: Neighbouring places of the table searched for a client.
PROBES = 16
#: Response header of an answer from the low-priority process (for operators and tests).
PRIORITY_HEADER = "X-Solsphere-Priority"
#: The path of Dash's callback requests (the only ones that may run at low priority).
CALLBACK_PATH = "/_dash-update-component"
#: Signals whose handlers the low-priority process must not keep from the server.
SERVER_SIGNALS = ("SIGTERM", "SIGHUP", "SIGCHLD", "SIGUSR1", "SIGUSR2", "SIGWINCH",
                  "SIGQUIT", "SIGTTIN", "SIGTTOU")

#: The line a low-priority request gets when the worker's places are all taken.
BUSY_TEXT = ("The server is busy with heavy requests; nothing was changed. Try again in "
             "a moment.")
#: ... and when its own client already holds its share of them.
OWN_BUSY_TEXT = ("The server is still working on earlier heavy requests from this "
                 "computer; nothing was changed. Try again when they are done.")


class Busy(Exception):
    """No place for a low-priority request now (the text says why)."""


def fork_context():
    """multiprocessing's "fork" start method, where forking this process is safe (None on
    Windows, which has none, and on macOS)."""
    if sys.platform == "darwin":
        return None
    try:
        return multiprocessing.get_context("fork")
    except ValueError:
        return None


def lower_priority() -> None:
    """Lower this process's CPU priority by :data:`NICENESS` (where that is not allowed
    or not possible, it runs as it is)."""
    try:
        os.nice(NICENESS)
    except (OSError, AttributeError):
        pass


def client_id(address: str) -> str:
    """Who a request's address stands for: the address itself, the /64 network of an
    IPv6 address (one machine may hold a whole /64), the IPv4 address inside an
    IPv4-mapped IPv6 one.

    >>> client_id("192.0.2.7"), client_id("2001:db8::1:2"), client_id("::ffff:192.0.2.7")
    ('192.0.2.7', '2001:db8::/64', '192.0.2.7')
    """
    try:
        ip = ipaddress.ip_address(address)
    except ValueError:
        return address
    if ip.version == 6:
        if ip.ipv4_mapped:
            return str(ip.ipv4_mapped)
        return str(ipaddress.ip_network(f"{ip}/64", strict=False))
    return str(ip)


def client_key(client: str) -> int:
    """A non-zero 63-bit number for a client (the table stores numbers).

    >>> client_key("127.0.0.1") == client_key("127.0.0.1") != client_key("127.0.0.2")
    True
    """
    digest = hashlib.blake2b(client.encode("utf-8", "replace"), digest_size=8).digest()
    return (int.from_bytes(digest, "little") >> 1) or 1


class Usage:
    """Recent CPU use per client, shared by the processes forked after it is made.

    The table's lock is only ever tried, never waited for: should a process die while
    holding it, the bookkeeping stops (the server says so once) but no request waits.

    >>> u = Usage(size=8)
    >>> u.charge("10.0.0.5", 1.0, now=0.0)
    >>> round(u.level("10.0.0.5", now=HALF_LIFE_S), 3), u.level("10.0.0.6", now=0.0)
    (0.5, 0.0)
    """

    #: Failed tries in a row after which the lock is taken to be lost.
    LOST_AFTER = 2000

    def __init__(self, size: int = TABLE_SIZE):
        self.size = size
        self.keys = RawArray("q", size)     # 0: an empty place
        self.loads = RawArray("d", size)    # CPU seconds at ``whens``
        self.whens = RawArray("d", size)    # time.monotonic() of the last charge
        ctx = fork_context()
        self.lock = ctx.Lock() if ctx else threading.Lock()
        self.missed = 0

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

    def _try_lock(self) -> bool:
        for _ in range(50):  # held for microseconds at a time: a few tries suffice
            if self.lock.acquire(False):
                self.missed = 0
                return True
            time.sleep(0)
        self.missed += 1
        if self.missed == self.LOST_AFTER:
            print("solsphere app: warning: the CPU-use table's lock was left held by a "
                  "stopped process; the fair share is off until the server restarts.",
                  file=sys.stderr, flush=True)
        return False

    def charge(self, client: str, seconds: float, now: float | None = None) -> None:
        """Add ``seconds`` of CPU to ``client``'s recent use."""
        now = time.monotonic() if now is None else now
        key = client_key(client)
        if not self._try_lock():
            return
        try:
            i = self._place(key, now, claim=True)
            self.loads[i] = self._faded(i, now) + max(0.0, seconds)
            self.whens[i] = now
        finally:
            self.lock.release()

    def level(self, client: str, now: float | None = None) -> float:
        """CPU seconds ``client`` has used lately (faded by age)."""
        now = time.monotonic() if now is None else now
        key = client_key(client)
        if not self._try_lock():
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

    body = drain(wsgi_app(environ, start_response))
    return answer["status"], answer["headers"], body, time.thread_time() - started


def drain(chunks) -> bytes:
    """A WSGI answer's body in one piece (the answer closed after, as WSGI asks)."""
    try:
        return b"".join(chunks)
    finally:
        if hasattr(chunks, "close"):
            chunks.close()


def json_answer(text: str) -> tuple[str, list, bytes, float]:
    """A notice answer as :func:`run_request` gives answers (nothing charged)."""
    body = notice_answer(text)
    return "200 OK", [("Content-Type", "application/json")], body, 0.0


def serve_slots(wsgi_app, conns, theirs=(), fds=()) -> None:
    """The low-priority process: lower its priority, then answer each pipe's requests in
    its own thread until the worker closes the pipes or stops (then this process ends).

    ``theirs`` are the worker's ends of the pipes and ``fds`` the server's listening
    sockets, copied by the fork: closed here, so that this process never keeps the port
    and the worker's exit (even a killed one) ends it.
    """
    parent = os.getppid()
    for conn in theirs:
        conn.close()
    for fd in fds:
        try:
            os.close(fd)
        except OSError:
            pass
    for name in SERVER_SIGNALS:
        if hasattr(signal, name):
            signal.signal(getattr(signal, name), signal.SIG_DFL)  # not the server's
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # Ctrl+C stops the worker, then this
    lower_priority()

    def answer(conn):
        while True:
            try:
                message = conn.recv()
            except (EOFError, OSError):
                return
            try:
                reply = run_request(wsgi_app, message)
            except Exception as exc:  # noqa: BLE001 -- answered with a line in the page
                reply = json_answer(callback_error_message(exc))
            try:
                conn.send(reply)
            except (OSError, ValueError):
                return

    def watch():  # a worker that stopped without closing its pipes still ends this one
        while os.getppid() == parent:
            time.sleep(1.0)
        os._exit(0)

    threading.Thread(target=watch, daemon=True).start()
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

    def __init__(self, wsgi_app, slots: int = SLOTS):
        self.wsgi_app = wsgi_app
        self.slots = slots
        self.process = None
        self.free: queue.Queue | None = None
        self.count = threading.Lock()
        self.held: dict[str, int] = {}  # requests held per client

    @property
    def alive(self) -> bool:
        return self.process is not None and self.process.is_alive()

    def start(self, fds=()) -> None:
        """Fork the process (nothing where :func:`fork_context` has no fork); ``fds``:
        the server's listening sockets, which the process closes."""
        ctx = fork_context()
        if ctx is None:
            return
        pairs = [ctx.Pipe() for _ in range(self.slots)]
        self.process = ctx.Process(target=serve_slots, name="solsphere-low-priority",
                                   args=(self.wsgi_app, [far for _, far in pairs],
                                         [near for near, _ in pairs], list(fds)),
                                   daemon=True)
        self.process.start()
        self.free = queue.Queue()
        for near, far in pairs:
            far.close()
            self.free.put(near)

    def hold(self, client: str) -> None:
        """Take one of the worker's places for ``client`` (raises :class:`Busy`)."""
        with self.count:
            if sum(self.held.values()) >= QUEUE:
                raise Busy(BUSY_TEXT)
            if self.held.get(client, 0) >= PER_CLIENT:
                raise Busy(OWN_BUSY_TEXT)
            self.held[client] = self.held.get(client, 0) + 1

    def release(self, client: str) -> None:
        with self.count:
            self.held[client] -= 1
            if not self.held[client]:
                del self.held[client]

    def run(self, environ: dict, body: bytes, client: str):
        """The answer (status, headers, body, CPU seconds) of the low-priority process.

        Raises :class:`Busy` when no place or slot is free, OSError when the process has
        stopped or did not answer in :data:`ANSWER_S` (then it is stopped).
        """
        self.hold(client)
        try:
            try:
                conn = self.free.get(timeout=WAIT_S)
            except queue.Empty:
                raise Busy(BUSY_TEXT) from None
            try:
                conn.send(request_message(environ, body))
                if not conn.poll(ANSWER_S):
                    self.process.kill()
                    raise OSError(f"it did not answer within {ANSWER_S:.0f} s")
                reply = conn.recv()
            except (EOFError, OSError, ValueError) as exc:
                conn.close()
                raise OSError(f"the low-priority process stopped ({exc or type(exc).__name__})"
                              ) from None
            self.free.put(conn)
            return reply
        finally:
            self.release(client)


# ------------------------------------------------------------------------ the middleware

class FairShare:
    """WSGI middleware: charge each callback request's CPU time to its client and run
    the requests of clients over their share (or with large bodies) at low priority.

    Parameters
    ----------
    wsgi_app : callable
        The app's own WSGI callable (Flask's ``wsgi_app``).
    usage : Usage
        The table shared by the worker processes.
    """

    def __init__(self, wsgi_app, usage: Usage):
        self.wsgi_app = wsgi_app
        self.usage = usage
        self.low = LowPriority(wsgi_app)
        self.logged_stop = False

    def start_low_priority(self, fds=()) -> None:
        """Fork the low-priority process (see :meth:`LowPriority.start`)."""
        self.low.start(fds)

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

    def __call__(self, environ, start_response):
        if environ.get("REQUEST_METHOD") != "POST" or not str(
                environ.get("PATH_INFO", "")).endswith(CALLBACK_PATH):
            return self.wsgi_app(environ, start_response)
        size = content_length(environ)
        if size is None:
            return refuse(start_response, "411 Length Required",
                          "a callback request must give its body's length (Content-Length).")
        client = client_id(str(environ.get("REMOTE_ADDR") or "unknown"))
        if size <= UPLOAD_REQUEST_BYTES and self.low_ready() and (
                size > LARGE_BODY or self.usage.level(client) > SHARE_S):
            return self.at_low_priority(environ, start_response, client, size)
        started = time.thread_time()
        try:
            return [drain(self.wsgi_app(environ, start_response))]
        finally:
            self.usage.charge(client, time.thread_time() - started)

    def at_low_priority(self, environ, start_response, client: str, size: int):
        body = environ["wsgi.input"].read(size) if size else b""
        # a background job's progress poll that finds no place is told to ask again
        # (an answer without a "response"): the page keeps waiting for its job
        poll = "cacheKey=" in str(environ.get("QUERY_STRING", ""))
        marker = "low"
        try:
            status, headers, answer, cpu = self.low.run(environ, body, client)
        except Busy as exc:
            (status, headers, answer, cpu), marker = json_answer(str(exc)), "busy"
            headers.append(("Retry-After", "2"))
        except OSError as exc:  # not run again in the worker: it may be what stopped it
            self.stopped(str(exc))
            status, headers, answer, cpu = json_answer(
                "This request could not be finished (the server's low-priority process "
                "stopped); nothing was changed. Try again.")
            marker = "stopped"
        if poll and marker != "low":
            answer = b"{}"
        self.usage.charge(client, cpu)
        headers = [(k, v) for k, v in headers if k.lower() != "content-length"]
        start_response(status, [*headers, ("Content-Length", str(len(answer))),
                                (PRIORITY_HEADER, marker)])
        return [answer]


def refuse(start_response, status: str, reason: str):
    """A one-line JSON refusal (:func:`guard.refusal`)."""
    body = refusal(reason)
    start_response(status, [("Content-Type", "application/json"),
                            ("Content-Length", str(len(body)))])
    return [body]


def content_length(environ) -> int | None:
    """The request body's declared length (None: not given, as with a chunked body, or
    not a number).

    >>> content_length({"CONTENT_LENGTH": "12"}), content_length({}), content_length({"CONTENT_LENGTH": "x"})
    (12, None, None)
    """
    try:
        n = int(environ.get("CONTENT_LENGTH") or "")
    except (TypeError, ValueError):
        return None
    return n if n >= 0 else None
