"""Background work of the app: the bootstrap, the posterior and the next-trial
suggestions run as Dash background callbacks, outside the request, with a progress bar
and a cancel button, so the page (and the worker serving it) stays responsive.

Dash's ``DiskcacheManager`` runs each job in a child process and keeps its progress and
result in a ``diskcache`` folder on disk. The folder is made once, when the app is
created, before ``solsphere app --workers N`` forks its worker processes (gunicorn's
``preload_app``): every worker of the machine sees the same jobs, so a progress poll or
a cancel answered by another worker than the one that started the job still finds it.

Jobs are forked from a server whose threads use the same folder, so the folder is used
through :class:`SharedCache`: no thread is inside SQLite while a job is forked, and a
job opens its own connection.

Jobs are processes, so their number is bounded: at most :func:`default_max_jobs` (two
per core) run at once on the machine, counted across the workers in the same folder; a
request for one more gets a one-line message in the page (try again in a moment), and a
lab server's operator raises the bound with ``solsphere app --max-jobs N``. One client
address may hold all but one of the places (:func:`per_address`), so a user (or a
script) asking for jobs over and over never shuts the others out. Without the
bound, a page (or a script) asking for jobs over and over would start a process for
each, and the machine would stall.
"""

from __future__ import annotations

import atexit
import contextlib
import functools
import os
import shutil
import tempfile
import threading
import time

import flask
import psutil

from solsphere.errors import InputError

from .fairshare import client_id, lower_priority

#: Seconds a finished job's result is kept for its page to fetch.
EXPIRE_S = 600
#: How often the page asks for progress [ms] (Dash's default is 1000).
POLL_MS = 300
#: Least time between two progress writes of one job [s] (each is a disk write).
PROGRESS_EVERY_S = 0.15


#: Cache key of the running jobs' process ids (shared by the workers).
RUNNING_KEY = "solsphere-running-jobs"
#: Longest time a job's process may take to start [s] (its slot is held meanwhile).
STARTING_S = 30.0


class ForkGuard:
    """One lock per process around every use of the jobs' folder, which every fork of
    the process waits for (``os.register_at_fork``; where there is no fork, a plain lock).

    The child gets a new lock: the old one stays held by the thread that forked, which
    the child does not have.
    """

    def __init__(self):
        self.lock = threading.RLock()
        if hasattr(os, "register_at_fork"):
            os.register_at_fork(before=self.hold, after_in_parent=self.release,
                                after_in_child=self.renew)

    def hold(self) -> None:
        self.lock.acquire()

    def release(self) -> None:
        self.lock.release()

    def renew(self) -> None:
        self.lock = threading.RLock()


#: The lock of this process's uses of the jobs' folders.
FORK_GUARD = ForkGuard()


class SharedCache:
    """The jobs' ``diskcache.Cache`` on ``folder``, used by the server's threads and by
    the jobs they fork.

    SQLite keeps a process's file-lock state in memory shared by all its connections. A
    job forked while another thread of the server is inside SQLite (answering a progress
    poll, say) inherits that state, and its first write then waits for a lock that no
    process holds: on a mutex for good, or through SQLite's busy timeouts (a minute each)
    until it dies; the page shows a progress bar with no text and never an answer. Measured here with Dash's own cache: 11 of 200 jobs
    forked beside four threads polling it never wrote; with this class, 0 of 300.

    So every use holds :data:`FORK_GUARD`'s lock, and each process opens its own
    connection (SQLite's rule for forked processes). The methods are the cache's.
    """

    def __init__(self, folder: str):
        import diskcache  # deferred: only the app needs it
        self.directory = folder
        self.pid = os.getpid()
        self.cache = diskcache.Cache(folder)
        #: Connections inherited from the parent process, never used or closed here.
        self.inherited: list = []

    def __reduce__(self):  # a job started without fork opens the folder itself
        return SharedCache, (self.directory,)

    def current(self):
        """The cache of this process (a forked process opens its own)."""
        if self.pid != os.getpid():
            import diskcache
            self.inherited.append(self.cache)
            self.cache = diskcache.Cache(self.directory)
            self.pid = os.getpid()
        return self.cache

    def __getattr__(self, name: str):
        attr = getattr(self.current(), name)
        if not callable(attr):
            return attr

        @functools.wraps(attr)
        def locked(*args, **kwargs):
            with FORK_GUARD.lock:
                return getattr(self.current(), name)(*args, **kwargs)

        return locked

    @contextlib.contextmanager
    def transact(self, retry: bool = False):
        """The cache's transaction, the lock held throughout."""
        with FORK_GUARD.lock, self.current().transact(retry):
            yield


def default_max_jobs() -> int:
    """Background jobs allowed at once by default: two per core (at least 4), so that a
    page changing its settings quickly (each change starts a job while the last is
    still being stopped) is not refused on a small machine."""
    return max(4, 2 * (os.cpu_count() or 1))


def busy_message(limit: int) -> str:
    """The line a refused job shows.

    >>> busy_message(2)
    'The server is already running 2 long computations, its limit; try again in a moment (a lab server raises the limit with solsphere app --max-jobs N).'
    """
    return (f"The server is already running {limit} long computations, its limit; try "
            f"again in a moment (a lab server raises the limit with solsphere app "
            f"--max-jobs N).")


def per_address(limit: int) -> int:
    """Jobs one client address may run at once: all but one of the places (at least one).

    >>> per_address(4), per_address(1)
    (3, 1)
    """
    return max(1, limit - 1)


def own_busy_message(running: int) -> str:
    """The line a job refused for its client (its computer's address) shows.

    >>> own_busy_message(3)[:60]
    'This computer is already running 3 long computations, the mo'
    """
    return (f"This computer is already running {running} long computations, the most one "
            f"computer may run at once here; wait for one to finish or cancel it.")


def requester() -> str | None:
    """The client of the request being answered (:func:`fairshare.client_id` of its
    address; None outside a request)."""
    if not flask.has_request_context():
        return None
    return client_id(str(flask.request.remote_addr or "unknown"))


def run_niced(job_fn, *args):
    """Run a job at a lower CPU priority (:data:`fairshare.NICENESS`): the machine answers its
    users' clicks first, and the long computations take the time left over."""
    lower_priority()
    return job_fn(*args)


def manager(folder: str | None = None, max_jobs: int | None = None):
    """A ``dash.DiskcacheManager`` on ``folder`` (default: a new private temporary
    folder, removed when the process that made it exits) that runs at most
    ``max_jobs`` jobs at once (default :func:`default_max_jobs`).

    Returns
    -------
    dash.DiskcacheManager
    """
    from dash import DiskcacheManager  # deferred: only the app needs it

    limit = default_max_jobs() if max_jobs is None else int(max_jobs)
    if limit < 1:
        raise InputError(f"--max-jobs must be at least 1, found {limit}.",
                         file="<command line>", hint="e.g. --max-jobs 2")

    def alive(entry) -> bool:
        """A job still running: [pid, start time, client address]; a slot taken a
        moment ago whose process is still starting has pid None."""
        pid, started = entry[:2]
        if pid is None:
            return time.time() - started < STARTING_S
        try:
            return psutil.Process(pid).status() != psutil.STATUS_ZOMBIE
        except psutil.Error:
            return False

    class BoundedManager(DiskcacheManager):
        """Dash's manager, refusing a job while ``limit`` are running."""

        max_jobs = limit

        def call_job_fn(self, key, job_fn, args, context):
            who = requester()
            slot = [None, time.time(), who]
            with self.handle.transact():  # one worker at a time counts and takes a slot
                running = [e for e in self.handle.get(RUNNING_KEY, []) if alive(e)]
                mine = sum(who is not None and e[2:] == [who] for e in running)
                if len(running) >= limit or mine >= per_address(limit):
                    self.handle.set(RUNNING_KEY, running)
                    text = busy_message(limit) if len(running) >= limit else own_busy_message(mine)
                    raise InputError(text, setting="max_jobs")
                self.handle.set(RUNNING_KEY, running + [slot])
            pid = None
            try:
                pid = super().call_job_fn(key, functools.partial(run_niced, job_fn), args,
                                          context)
                return pid
            finally:  # the slot becomes the process (or is freed if it did not start)
                with self.handle.transact():
                    running = [e for e in self.handle.get(RUNNING_KEY, []) if e != slot]
                    if pid:
                        running.append([pid, *slot[1:]])
                    self.handle.set(RUNNING_KEY, [e for e in running if alive(e)])

    if folder is None:
        folder = tempfile.mkdtemp(prefix="solsphere-jobs-")
        owner = os.getpid()

        def remove():  # only the process that made it (forked workers exit too)
            if os.getpid() == owner:
                shutil.rmtree(folder, ignore_errors=True)

        atexit.register(remove)
    shared = SharedCache(folder)
    bounded = BoundedManager(shared.cache, expire=EXPIRE_S)  # Dash checks for a Cache
    bounded.handle = shared
    return bounded


class Reporter:
    """A ``progress(done, total)`` callable for the library's long computations that
    passes a throttled percentage and a line of text to Dash's ``set_progress``.

    Parameters
    ----------
    set_progress : callable
        Dash's progress setter (takes a tuple: percentage, text).
    what : str
        Words for the text, e.g. "resampled spheres".
    start, stop : float, default=0, 100
        The part of the bar this stage fills (percent).
    """

    def __init__(self, set_progress, what: str, start: float = 0.0, stop: float = 100.0):
        self.set_progress = set_progress
        self.what = what
        self.start, self.stop = start, stop
        self.last = float("-inf")  # the first step is always reported

    def __call__(self, done: int, total: int) -> None:
        now = time.monotonic()
        if done < total and now - self.last < PROGRESS_EVERY_S:
            return
        self.last = now
        share = done / total if total else 1.0
        pct = self.start + (self.stop - self.start) * share
        self.set_progress((str(round(pct)), f"{done} of {total} {self.what}"))
