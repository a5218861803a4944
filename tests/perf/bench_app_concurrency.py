"""Benchmark: many users on one app (run by ``make bench``, not by pytest).

The app is started as a separate process, the way a user starts a shared lab server:
``python -m solsphere app --host 127.0.0.1 --port <free port> --workers 2`` (the
``solsphere`` command), and the bench waits (bounded) until it answers. 20 client
threads in this process, each with its own invented project (its own library solvents,
outcomes from its own invented sphere, one own solvent), drive the fit callback through
Dash's HTTP endpoint ``/_dash-update-component`` — the request is built from the app's
callback map at ``/_dash-dependencies``, as the browser does. Every answer is checked
against solsphere's own fit of that client's project (``trials.from_rows`` +
``session.fit_project``, the library path): same centre and R0 to 1e-9 and the same
trial names. An answer that is another client's fit counts as cross-talk; any other
mismatch, HTTP error or timeout counts as an error. The server is stopped at the end
(SIGTERM, then SIGKILL to its process group), also on errors.

A serial pass (one client, ``SERIAL_ROUNDS`` requests per project) and a concurrent
pass (20 threads released together, ``ROUNDS`` requests each), interleaved twice so
that other load on the machine weighs on both alike. Prints

    BENCH app_concurrency clients=20 requests=N errors=E crosstalk=X median_ms=...
          p95_ms=... ratio=<concurrent throughput / serial throughput> target=0.5 ok|FAIL

(one line) and detail lines, one of them naming the worker processes used. The ratio
says whether serving 20 users at once keeps the throughput of serving them one by one.
With 2 workers on 2 otherwise idle cores expect about 2 (a little more is possible: in
the serial pass the client's own work never overlaps the server's); other work on the
machine lowers it. FAIL (exit 1) on any error or cross-talk, or a ratio below the target.
It also measures ``--workers 1`` (the threaded single-process server) and prints that
ratio as information (``--no-baseline`` skips it). Bounded: ``ROUNDS`` requests per
client, 60 s per request, 300 s per measurement; it stops by itself.
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import threading
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from appharness import Client, ServedApp, expected_fit, make_projects, verdict  # noqa: E402

CLIENTS = 20
ROUNDS = 4
SERIAL_ROUNDS = 2
WORKERS = 2
#: the concurrent pass must keep at least half the serial throughput (our own bar: 20
#: users at once may wait longer each, but the server must not thrash)
TARGET = 0.5
DEADLINE = 300.0


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


def measure(workers: int, projects, expected) -> dict:
    """Start ``solsphere app --workers N``, run the passes, stop it; the figures."""
    started = time.monotonic()
    serial, serial_wall, runs = [], 0.0, []
    with ServedApp(workers) as served:
        client = Client(served.base)
        client.fit(projects[0])  # warm-up (first imports inside the callbacks)
        # serial and concurrent passes interleaved twice, so that load from other
        # work on the machine weighs on both alike
        for _ in range(2):
            t, w = serial_pass(client, projects, expected)
            serial += t
            serial_wall += w
            runs.append(concurrent_pass(served.base, projects, expected, started))
    if served.group_alive():
        raise RuntimeError(f"the server (process group {served.proc.pid}) is still running")
    times = [t for r in runs for t in r["times"]]
    conc_wall = sum(r["wall"] for r in runs)
    conc_rate, serial_rate = len(times) / conc_wall, len(serial) / serial_wall
    return {"workers": workers, "runs": runs, "times": times, "serial": serial,
            "conc_rate": conc_rate, "serial_rate": serial_rate,
            "ratio": conc_rate / serial_rate,
            "errors": sum(r["error"] + r["missing"] for r in runs),
            "crosstalk": sum(r["crosstalk"] for r in runs),
            "ok": sum(r["ok"] for r in runs)}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description="many users on one app")
    ap.add_argument("--workers", type=int, default=WORKERS,
                    help=f"worker processes of the measured server (default {WORKERS})")
    ap.add_argument("--no-baseline", dest="baseline", action="store_false",
                    help="skip the information run with --workers 1 (about 15 s)")
    args = ap.parse_args(argv)
    from solsphere.library.table import load_library
    library = load_library()
    projects = make_projects(library, CLIENTS)
    expected = [expected_fit(rows, library) for rows in projects]
    centres = {tuple(round(e[k], 6) for k in ("dD", "dP", "dH")) for e in expected}
    # the checker bites: another client's fit is cross-talk, a changed centre an error
    assert verdict({"fit": expected[1]}, 0, expected) == "crosstalk"
    assert verdict({"fit": dict(expected[0], dD=expected[0]["dD"] + 1e-6)}, 0, expected) == "error"
    load_before = os.getloadavg()
    m = measure(args.workers, projects, expected)
    base = measure(1, projects, expected) if args.baseline and args.workers != 1 else None
    load_after = os.getloadavg()

    runs, times = m["runs"], m["times"]
    median = statistics.median(times) * 1e3 if times else float("nan")
    p95 = float(np.percentile(times, 95)) * 1e3 if times else float("nan")
    ok = m["errors"] == 0 and m["crosstalk"] == 0 and m["ratio"] >= TARGET
    print(f"BENCH app_concurrency clients={CLIENTS} requests={len(times)} errors={m['errors']} "
          f"crosstalk={m['crosstalk']} median_ms={median:.0f} p95_ms={p95:.0f} "
          f"ratio={m['ratio']:.2f} target={TARGET:g} {'ok' if ok else 'FAIL'}")
    print(f"  server: a separate process, 'solsphere app --workers {args.workers}' "
          + (f"({args.workers} pre-forked worker processes)" if args.workers > 1 else
             "(one process, threaded)")
          + f"; {os.cpu_count()} cores; load average {load_before[0]:.2f} before, "
          f"{load_after[0]:.2f} after")
    print(f"  ratio = concurrent throughput {m['conc_rate']:.1f} req/s / serial throughput "
          f"{m['serial_rate']:.1f} req/s ({len(m['serial'])} serial requests, median "
          f"{statistics.median(m['serial']) * 1e3:.0f} ms); concurrent passes "
          + ", ".join(f"{r['wall']:.1f} s" for r in runs)
          + f"; most requests in flight at once {max(r['max_in_flight'] for r in runs)}")
    print(f"  {CLIENTS} projects of {min(map(len, projects))}-{max(map(len, projects))} rows, "
          f"{len(centres)} distinct expected centres; verdicts ok={m['ok']} "
          f"crosstalk={m['crosstalk']} error={m['errors']}")
    if base is not None:
        bt = base["times"]
        print(f"  information: with --workers 1 ratio={base['ratio']:.2f} (concurrent "
              f"{base['conc_rate']:.1f} / serial {base['serial_rate']:.1f} req/s), median_ms="
              f"{statistics.median(bt) * 1e3:.0f} p95_ms={float(np.percentile(bt, 95)) * 1e3:.0f} "
              f"errors={base['errors']} crosstalk={base['crosstalk']}")
    for p in [p for r in runs for p in r["problems"]][:5]:
        print(f"  problem: {p}")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
