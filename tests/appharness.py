"""Shared by tests/test_app_workers.py and tests/perf/bench_app_concurrency.py: serve the
app as a separate process the way a user starts it, and drive its fit callback over HTTP
the way the browser does.

- :class:`ServedApp` runs ``python -m solsphere app --host 127.0.0.1 --port P --workers N``
  in a session of its own, waits (bounded) until ``/`` answers, and stops it for sure:
  SIGTERM, then SIGKILL to its whole process group (the master and its workers).
- :class:`Client` builds the fit callback's request from the app's own callback map at
  ``/_dash-dependencies`` and posts it to ``/_dash-update-component``.
- :func:`make_projects` invents projects (library solvents with outcomes from an invented
  sphere, plus one invented solvent of each project's own); :func:`expected_fit` is
  solsphere's own fit of one (the library path); :func:`verdict` compares an answer.
"""

from __future__ import annotations

import functools
import http.client
import json
import os
import signal
import socket
import subprocess
import sys
import tempfile
import time
import urllib.error
import urllib.request
from pathlib import Path

#: Debian's Chromium, driven headless by the browser tests and the latency bench.
CHROMIUM = os.environ.get("SOLSPHERE_CHROMIUM", "/usr/bin/chromium")
#: Flags that keep every request of the browser on loopback.
FLAGS = ["--headless=new", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--disable-quic", "--disable-extensions", "--disable-default-apps", "--no-first-run",
         "--no-default-browser-check",
         "--host-resolver-rules=MAP * ~NOTFOUND, EXCLUDE localhost, EXCLUDE 127.0.0.1",
         "--proxy-server=http://127.0.0.1:9", "--proxy-bypass-list=localhost;127.0.0.1"]

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
REQUEST_TIMEOUT = 60.0
#: longest wait for a started server to answer ``/`` [s] (it loads dash and the library)
STARTUP_TIMEOUT = 90.0
#: library solvents the invented projects draw from (well-known, distinct)
POOL = ["toluene", "acetone", "ethanol", "water", "n-hexane", "methanol", "ethyl acetate",
        "2-butanone", "dimethyl sulfoxide", "cyclohexane", "chloroform", "dichloromethane",
        "1,4-dioxane", "tetrahydrofuran", "acetonitrile", "1-butanol", "propylene carbonate",
        "diethyl ether", "benzyl alcohol", "p-xylene", "butyl acetate", "cyclohexanone",
        "2-propanol", "formamide", "ethylene glycol", "pyridine", "nitromethane",
        "1-octanol", "acetic acid", "N-methyl-2-pyrrolidone"]
WORDS = {"good": "dissolves", "bad": "does not"}


# ----------------------------------------------------------------------------- invented data


def make_projects(library, n: int, seed: int = 17) -> list[list[dict]]:
    """``n`` invented projects: table rows as the app's table holds them."""
    from solsphere.hansen import ra
    rng = np.random.default_rng(seed)
    sols = [library.lookup(s) for s in POOL]
    pts = np.array([s.point for s in sols])
    projects = []
    while len(projects) < n:
        centre = pts[rng.integers(len(pts))] + rng.normal(0, 1.0, 3)
        R0 = rng.uniform(5.0, 10.0)
        pick = rng.choice(len(sols), size=int(rng.integers(14, 26)), replace=False)
        inside = ra(pts[pick], centre) <= R0
        if inside.sum() < 3 or (~inside).sum() < 3:
            continue
        rows = [{"solvent": sols[i].name, "outcome": WORDS["good" if g else "bad"],
                 "dD": None, "dP": None, "dH": None, "note": None}
                for i, g in zip(pick, inside)]
        own = np.clip(centre + rng.normal(0, 1.5, 3), 0, 40).round(2)
        rows.append({"solvent": f"client {len(projects)} own mix", "outcome": "dissolves",
                     "dD": float(own[0]), "dP": float(own[1]), "dH": float(own[2]),
                     "note": f"invented, client {len(projects)}"})
        projects.append(rows)
    return projects


def expected_fit(rows, library) -> dict:
    """solsphere's own fit of a project's rows (``trials.from_rows`` + ``fit_project``)."""
    from solsphere.app import logic
    from solsphere.io import trials as T
    from solsphere.io.project import Project
    from solsphere.workflows import fit_project
    trials = T.from_rows(logic.clean_rows(rows), library=library)
    fit = fit_project(Project(trials, {"partial": "good"}), partial="good", library=library)
    return fit.to_dict()


def verdict(result: dict, own: int, expected: list[dict]) -> str:
    """'ok', 'crosstalk' (another project's fit) or 'error'."""
    fit = (result or {}).get("fit")
    if not fit:
        return "error"

    def same(e):
        return (all(abs(fit[k] - e[k]) <= 1e-9 for k in ("dD", "dP", "dH", "R0"))
                and [r["name"] for r in fit["table"]] == [r["name"] for r in e["table"]])

    if same(expected[own]):
        return "ok"
    if any(same(e) for i, e in enumerate(expected) if i != own):
        return "crosstalk"
    return "error"


# ----------------------------------------------------------------------------- HTTP client


def update_body(dep: dict, values: dict, changed: str) -> dict:
    """The JSON body of ``/_dash-update-component`` for callback ``dep`` (an entry of
    ``/_dash-dependencies``), with ``values`` ({"id.property": value}) for its inputs and
    states, as the browser sends it."""
    def props(items):
        return [{"id": i["id"], "property": i["property"],
                 "value": values.get(f"{i['id']}.{i['property']}")} for i in items]

    parts = [dict(zip(("id", "property"), part.rsplit(".", 1)))
             for part in dep["output"].strip(".").split("...")]
    return {"output": dep["output"],
            "outputs": parts if dep["output"].startswith("..") else parts[0],
            "inputs": props(dep["inputs"]), "state": props(dep.get("state", [])),
            "changedPropIds": [changed]}


class FromAddress(urllib.request.HTTPHandler):
    """Connect from ``address`` (e.g. 127.0.0.12): the server sees another client."""

    def __init__(self, address: str):
        super().__init__()
        self.address = address

    def http_open(self, req):
        return self.do_open(functools.partial(http.client.HTTPConnection,
                                              source_address=(self.address, 0)), req)


class Client:
    """Builds callback requests from the app's own callback map, as the browser does."""

    def __init__(self, base: str, timeout: float = REQUEST_TIMEOUT, source: str | None = None):
        self.base = base
        self.timeout = timeout
        handlers = [urllib.request.ProxyHandler({})]
        if source:  # another loopback address (127.0.0.0/8): another user, to the server
            handlers.append(FromAddress(source))
        self.opener = urllib.request.build_opener(*handlers)
        self.deps = json.loads(self.get("_dash-dependencies"))
        self.dep = self.dependency("fit-store.data", "results-table")

    def dependency(self, output: str, first_input: str | None = None) -> dict:
        """The callback whose outputs include ``output`` (``id.property``)."""
        return next(d for d in self.deps if output in d["output"]
                    and (first_input is None or d["inputs"][0]["id"] == first_input))

    def get(self, path: str) -> bytes:
        with self.opener.open(self.base + path, timeout=self.timeout) as r:
            return r.read()

    def update(self, dep: dict, values: dict, changed: str) -> dict:
        """Run callback ``dep`` with ``values`` ({"id.property": value}) for its inputs
        and states; the ``response`` part of the answer."""
        body = json.dumps(update_body(dep, values, changed)).encode()
        query = ""
        deadline = time.monotonic() + self.timeout
        while True:
            req = urllib.request.Request(self.base + "_dash-update-component" + query,
                                         data=body,
                                         headers={"Content-Type": "application/json"})
            with self.opener.open(req, timeout=self.timeout) as r:
                if r.status not in (200, 202):
                    raise RuntimeError(f"HTTP {r.status}")
                answer = json.loads(r.read() or b"{}")
            if "response" in answer:
                return answer["response"]
            # a background callback: poll its job as the browser does, until it answers
            if "cacheKey" in answer:
                query = f"?cacheKey={answer['cacheKey']}&job={answer.get('job', '')}"
            if time.monotonic() > deadline:
                raise RuntimeError("no answer from the background job in time")
            time.sleep(0.2)

    def fit(self, rows) -> dict:
        """The fit callback's stored result for these table rows ('partly' as good)."""
        values = {"results-table.rowData": rows, "partial-choice.value": "good"}
        return self.update(self.dep, values, "results-table.rowData")["fit-store"]["data"]


# ----------------------------------------------------------------------------- the server


def free_port(host: str = "127.0.0.1") -> int:
    """A port nobody listens on right now (the server may still lose a race for it)."""
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind((host, 0))
        return s.getsockname()[1]


def app_command(port: int, workers: int, host: str = "127.0.0.1", *extra: str) -> list[str]:
    """How a user starts the app (``python -m solsphere`` = the ``solsphere`` command)."""
    return [sys.executable, "-m", "solsphere", "app", "--host", host, "--port", str(port),
            "--workers", str(workers), *extra]


class FakeApp:
    """Stands for the app when a test replaces ``server.create_app``: records how it
    would be served, ("run", options), and that its low-priority process starts
    first, ("low",)."""

    def __init__(self, calls: list):
        import types
        from solsphere.app.server import FAIR_SHARE
        self.calls = calls
        share = types.SimpleNamespace(start_low_priority=lambda: calls.append(("low",)))
        self.server = types.SimpleNamespace(extensions={FAIR_SHARE: share})

    def run(self, **kw):
        self.calls.append(("run", kw))


class ServedApp:
    """``solsphere app --workers N`` as a separate process on a free loopback port.

    Use as a context manager; the server is stopped on leaving, also on errors.
    """

    def __init__(self, workers: int, startup_timeout: float = STARTUP_TIMEOUT, tries: int = 3):
        self.workers = workers
        self.startup_timeout = startup_timeout
        self.tries = tries
        self.proc: subprocess.Popen | None = None
        self.base = ""
        self._log = None

    # -- start / stop
    def start(self) -> "ServedApp":
        last = ""
        for _ in range(self.tries):
            port = free_port()
            self._log = tempfile.TemporaryFile()
            self.proc = subprocess.Popen(app_command(port, self.workers), cwd=ROOT,
                                         stdin=subprocess.DEVNULL, stdout=self._log,
                                         stderr=subprocess.STDOUT, start_new_session=True)
            self.base = f"http://127.0.0.1:{port}/"
            if self._wait_ready():
                return self
            last = self.output()
            self.stop()
            if "in use" not in last:  # only a lost race for the port is worth a new try
                break
        raise RuntimeError(f"the app did not start with --workers {self.workers}: "
                           f"{last.strip()[-800:] or 'no output'}")

    def _wait_ready(self) -> bool:
        opener = urllib.request.build_opener(urllib.request.ProxyHandler({}))
        deadline = time.monotonic() + self.startup_timeout
        while time.monotonic() < deadline:
            if self.proc.poll() is not None:
                return False
            try:
                with opener.open(self.base, timeout=5) as r:
                    if r.status == 200:
                        return True
            except (urllib.error.URLError, OSError):
                pass
            time.sleep(0.1)
        return False

    def stop(self, grace: float = 15.0) -> int | None:
        """SIGTERM and wait; then SIGKILL the whole process group. Returns the exit code."""
        proc = self.proc
        if proc is None:
            return None
        if proc.poll() is None:
            proc.terminate()
            try:
                proc.wait(timeout=grace)
            except subprocess.TimeoutExpired:
                pass
        self._kill_group()
        try:
            proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            pass
        return proc.returncode

    def _kill_group(self) -> None:
        try:
            os.killpg(self.proc.pid, signal.SIGKILL)  # the group this object started
        except (ProcessLookupError, PermissionError):
            pass

    def group_alive(self) -> bool:
        """True while any process of the server's group (master or worker) exists."""
        try:
            os.killpg(self.proc.pid, 0)
        except ProcessLookupError:
            return False
        except PermissionError:
            return True
        return True

    def output(self) -> str:
        """What the server printed so far (stdout and stderr)."""
        if self._log is None:
            return ""
        self._log.seek(0)
        return self._log.read().decode("utf-8", "replace")

    def __enter__(self) -> "ServedApp":
        return self.start()

    def __exit__(self, *exc) -> None:
        self.stop()
