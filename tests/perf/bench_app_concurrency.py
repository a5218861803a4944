"""Benchmark: many users on one app (run by ``make bench``, not by pytest).

The app is served in this process on a free loopback port (werkzeug, threaded, in a
daemon thread). 20 client threads, each with its own invented project (its own
library solvents, outcomes from its own invented sphere, one own solvent), drive the
fit callback through Dash's HTTP endpoint ``/_dash-update-component`` — the request
is built from the app's callback map at ``/_dash-dependencies``, as the browser does.
Every answer is checked against solsphere's own fit of that client's project
(``trials.from_rows`` + ``session.fit_project``, the library path): same centre and
R0 to 1e-9 and the same trial names. An answer that is another client's fit counts as
cross-talk; any other mismatch, HTTP error or timeout counts as an error.

A serial pass (one client, ``SERIAL_ROUNDS`` requests per project) and a concurrent
pass (20 threads released together, ``ROUNDS`` requests each), interleaved twice so
that other load on the machine weighs on both alike. Prints

    BENCH app_concurrency clients=20 requests=N errors=E crosstalk=X median_ms=...
          p95_ms=... ratio=<concurrent throughput / serial throughput> target=0.5 ok|FAIL

(one line). The ratio says whether serving 20 users at once keeps the throughput of
serving them one by one (2 shared cores: don't expect more than ~2; the figure is
noisy when other work shares the machine). FAIL (exit 1) on
any error or cross-talk, or a ratio below the target. Bounded: ``ROUNDS`` requests per
client, 60 s per request, 300 s in all; it stops by itself.
"""

from __future__ import annotations

import json
import logging
import statistics
import sys
import threading
import time
import urllib.request
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

CLIENTS = 20
ROUNDS = 4
SERIAL_ROUNDS = 2
#: the concurrent pass must keep at least half the serial throughput (our own bar: 20
#: users at once may wait longer each, but the server must not thrash)
TARGET = 0.5
REQUEST_TIMEOUT = 60.0
DEADLINE = 300.0
#: library solvents the invented projects draw from (well-known, distinct)
POOL = ["toluene", "acetone", "ethanol", "water", "n-hexane", "methanol", "ethyl acetate",
        "2-butanone", "dimethyl sulfoxide", "cyclohexane", "chloroform", "dichloromethane",
        "1,4-dioxane", "tetrahydrofuran", "acetonitrile", "1-butanol", "propylene carbonate",
        "diethyl ether", "benzyl alcohol", "p-xylene", "butyl acetate", "cyclohexanone",
        "2-propanol", "formamide", "ethylene glycol", "pyridine", "nitromethane",
        "1-octanol", "acetic acid", "N-methyl-2-pyrrolidone"]
WORDS = {"good": "dissolves", "bad": "does not"}


def make_projects(library, n: int, seed: int = 17) -> list[list[dict]]:
    """``n`` invented projects: table rows as the app's table holds them."""
    from solsphere.hsp import ra
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
    from app import logic
    from solsphere import trials as T
    from solsphere.project import Project
    from solsphere.session import fit_project
    trials = T.from_rows(logic.clean_rows(rows), library=library)
    fit = fit_project(Project(trials, {"partial": "good"}), partial="good", library=library)
    return fit.to_dict()


class Client:
    """Builds the fit callback's request from the app's own callback map."""

    def __init__(self, base: str):
        self.base = base
        self.opener = urllib.request.build_opener(urllib.request.ProxyHandler({}))
        deps = json.loads(self.get("_dash-dependencies"))
        self.dep = next(d for d in deps if "fit-store.data" in d["output"]
                        and d["inputs"][0]["id"] == "results-table")
        self.outputs = [dict(zip(("id", "property"), part.rsplit(".", 1)))
                        for part in self.dep["output"].strip(".").split("...")]

    def get(self, path: str) -> bytes:
        with self.opener.open(self.base + path, timeout=REQUEST_TIMEOUT) as r:
            return r.read()

    def fit(self, rows) -> dict:
        values = {"results-table.data": rows, "partial-choice.value": "good"}
        body = {"output": self.dep["output"], "outputs": self.outputs,
                "inputs": [{"id": i["id"], "property": i["property"],
                            "value": values[f"{i['id']}.{i['property']}"]}
                           for i in self.dep["inputs"]],
                "state": [], "changedPropIds": ["results-table.data"]}
        req = urllib.request.Request(self.base + "_dash-update-component",
                                     data=json.dumps(body).encode(),
                                     headers={"Content-Type": "application/json"})
        with self.opener.open(req, timeout=REQUEST_TIMEOUT) as r:
            if r.status != 200:
                raise RuntimeError(f"HTTP {r.status}")
            doc = json.loads(r.read())
        return doc["response"]["fit-store"]["data"]


def verdict(result: dict, own: int, expected: list[dict]) -> str:
    """'ok', 'crosstalk' (another client's fit) or 'error'."""
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


def serial_pass(client: Client, projects, expected) -> tuple[list[float], float]:
    """One client, ``SERIAL_ROUNDS`` requests per project, one after the other."""
    times = []
    t0 = time.perf_counter()
    for i, rows in [(i, r) for _ in range(SERIAL_ROUNDS) for i, r in enumerate(projects)]:
        t = time.perf_counter()
        res = client.fit(rows)
        times.append(time.perf_counter() - t)
        if verdict(res, i, expected) != "ok":
            raise AssertionError(f"serial answer for project {i} is wrong")
    return times, time.perf_counter() - t0


def concurrent_pass(base: str, projects, expected, started: float) -> dict:
    """``CLIENTS`` threads released together, ``ROUNDS`` requests each."""
    lock = threading.Lock()
    out = {"times": [], "ok": 0, "crosstalk": 0, "error": 0, "problems": [], "max_in_flight": 0}
    now = [0]
    gate = threading.Barrier(CLIENTS)

    def user(i: int):
        c = Client(base)
        gate.wait(timeout=60)
        for _ in range(ROUNDS):
            if time.monotonic() - started > DEADLINE:
                with lock:
                    out["problems"].append(f"client {i}: overall deadline reached")
                return
            with lock:
                now[0] += 1
                out["max_in_flight"] = max(out["max_in_flight"], now[0])
            t = time.perf_counter()
            try:
                v = verdict(c.fit(projects[i]), i, expected)
            except Exception as exc:  # HTTP error, timeout, bad JSON: all count
                v = "error"
                with lock:
                    out["problems"].append(f"client {i}: {type(exc).__name__}: {exc}")
            dt = time.perf_counter() - t
            with lock:
                now[0] -= 1
                out["times"].append(dt)
                out[v] += 1

    workers = [threading.Thread(target=user, args=(i,), daemon=True) for i in range(CLIENTS)]
    t0 = time.perf_counter()
    for w in workers:
        w.start()
    for w in workers:
        w.join(timeout=max(1.0, DEADLINE - (time.monotonic() - started)))
    out["wall"] = time.perf_counter() - t0
    out["missing"] = CLIENTS * ROUNDS - len(out["times"])  # hung or stopped by the deadline
    return out


def main() -> int:
    from werkzeug.serving import make_server
    from app.server import create_app
    from solsphere.library import load_library
    logging.getLogger("werkzeug").setLevel(logging.ERROR)
    started = time.monotonic()
    library = load_library()
    projects = make_projects(library, CLIENTS)
    expected = [expected_fit(rows, library) for rows in projects]
    centres = {tuple(round(e[k], 6) for k in ("dD", "dP", "dH")) for e in expected}
    # the checker bites: another client's fit is cross-talk, a changed centre an error
    assert verdict({"fit": expected[1]}, 0, expected) == "crosstalk"
    assert verdict({"fit": dict(expected[0], dD=expected[0]["dD"] + 1e-6)}, 0, expected) == "error"
    dash_app = create_app()
    srv = make_server("127.0.0.1", 0, dash_app.server, threaded=True)
    thread = threading.Thread(target=srv.serve_forever, daemon=True)
    thread.start()
    base = f"http://127.0.0.1:{srv.server_port}/"
    serial, serial_wall, runs = [], 0.0, []
    try:
        client = Client(base)
        client.fit(projects[0])  # warm-up (first imports inside the callbacks)
        # serial and concurrent passes interleaved twice, so that load from other
        # work on the machine weighs on both alike
        for _ in range(2):
            t, w = serial_pass(client, projects, expected)
            serial += t
            serial_wall += w
            runs.append(concurrent_pass(base, projects, expected, started))
    finally:
        srv.shutdown()
        thread.join(timeout=10)

    times = [t for r in runs for t in r["times"]]
    answered = len(times)
    errors = sum(r["error"] + r["missing"] for r in runs)
    crosstalk = sum(r["crosstalk"] for r in runs)
    conc_wall = sum(r["wall"] for r in runs)
    median = statistics.median(times) * 1e3 if times else float("nan")
    p95 = float(np.percentile(times, 95)) * 1e3 if times else float("nan")
    conc_rate, serial_rate = answered / conc_wall, len(serial) / serial_wall
    ratio = conc_rate / serial_rate
    ok = errors == 0 and crosstalk == 0 and ratio >= TARGET
    print(f"BENCH app_concurrency clients={CLIENTS} requests={answered} errors={errors} "
          f"crosstalk={crosstalk} median_ms={median:.0f} p95_ms={p95:.0f} ratio={ratio:.2f} "
          f"target={TARGET:g} {'ok' if ok else 'FAIL'}")
    print(f"  ratio = concurrent throughput {conc_rate:.1f} req/s / serial throughput "
          f"{serial_rate:.1f} req/s ({len(serial)} serial requests, median "
          f"{statistics.median(serial) * 1e3:.0f} ms); concurrent passes "
          + ", ".join(f"{r['wall']:.1f} s" for r in runs)
          + f"; most requests in flight at once {max(r['max_in_flight'] for r in runs)}")
    print(f"  {CLIENTS} projects of {min(map(len, projects))}-{max(map(len, projects))} rows, "
          f"{len(centres)} distinct expected centres; verdicts ok={sum(r['ok'] for r in runs)} "
          f"crosstalk={crosstalk} error={errors}")
    for p in [p for r in runs for p in r["problems"]][:5]:
        print(f"  problem: {p}")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
