"""Background work of the app: the bootstrap, the posterior and the next-trial
suggestions run as Dash background callbacks, outside the request, with a progress bar
and a cancel button, so the page (and the worker serving it) stays responsive.

Dash's ``DiskcacheManager`` runs each job in a child process and keeps its progress and
result in a ``diskcache`` folder on disk. The folder is made once, when the app is
created, before ``solsphere app --workers N`` forks its worker processes (gunicorn's
``preload_app``): every worker of the machine sees the same jobs, so a progress poll or
a cancel answered by another worker than the one that started the job still finds it.
"""

from __future__ import annotations

import atexit
import os
import shutil
import tempfile
import time

#: Seconds a finished job's result is kept for its page to fetch.
EXPIRE_S = 600
#: How often the page asks for progress [ms] (Dash's default is 1000).
POLL_MS = 300
#: Least time between two progress writes of one job [s] (each is a disk write).
PROGRESS_EVERY_S = 0.15


def manager(folder: str | None = None):
    """A ``dash.DiskcacheManager`` on ``folder`` (default: a new private temporary
    folder, removed when the process that made it exits).

    Returns
    -------
    dash.DiskcacheManager
    """
    import diskcache  # deferred: only the app needs it
    from dash import DiskcacheManager

    if folder is None:
        folder = tempfile.mkdtemp(prefix="solsphere-jobs-")
        owner = os.getpid()

        def remove():  # only the process that made it (forked workers exit too)
            if os.getpid() == owner:
                shutil.rmtree(folder, ignore_errors=True)

        atexit.register(remove)
    return DiskcacheManager(diskcache.Cache(folder), expire=EXPIRE_S)


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
