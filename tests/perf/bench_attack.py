"""Benchmark: an attacker and honest users on one lab server (``make bench``, not pytest).

``solsphere app --workers 2`` is started as its own process on 127.0.0.1 (loopback only;
:class:`appharness.ServedApp`). Honest clients (``HONEST`` threads, each with its own
invented project and its own loopback address, 127.0.0.10 and up, as separate machines
would be) drive the fit callback the way the browser does. First they run alone (the
unloaded pass); then, for each payload of the stall/exhaustion report, an attacker (its
own process on its own address, :data:`ATTACKER_ADDRESS`, with ``ATTACKERS`` connections,
one per worker) sends that payload over and over, encoded once, as a script would. The
honest clients repeat their pass twice during each attack: 0.3 s after it starts (the
"start" column: a new address's first CPU second runs at full priority) and
:data:`SETTLE_S` after it starts (the attack's lasting effect, which the target is
about). For each payload the bench prints the honest p95 latency and its ratio to the
unloaded p95, what the server answered the attacker (status and the start of its
message), and whether every honest answer was right (checked against solsphere's own fit
of the project, as in bench_app_concurrency.py).

    BENCH attack payloads=P honest_p95_ms=... worst_ratio=<max p95 attacked / p95 alone>
          target=2 ok|FAIL

FAIL (exit 1) when a ratio exceeds the target, an honest answer is wrong, or the server
stops answering. The unloaded pass runs again at the end, and the smaller of the two
unloaded p95s is the reference (the machine's other load weighs on both).

It then measures the peak memory (maximum resident set size) of the largest inputs the
limits allow, each in a fresh process: a results table of ``limits.rows`` own-coordinate
rows (fit), a shelf of ``limits.shelf`` solvents screened for ``limits.top`` blends,
``limits.samples`` posterior samples (``resample_work`` / samples rows), a bootstrap at
the resample-work limit, and the influence list of the largest panel it is computed for.

Bounded: ``ROUNDS`` honest requests per client per pass, ``ATTACK_S`` seconds of attack
at most per payload, 60 s per request; the server is stopped at the end (also on errors).
"""

from __future__ import annotations

import argparse
import base64
import json
import multiprocessing
import os
import statistics
import subprocess
import sys
import threading
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from appharness import Client, ServedApp, expected_fit, make_projects, update_body, verdict  # noqa: E402

HONEST = 3
ATTACKERS = 2
#: The attacker's own address: another machine, as far as the server can tell (the
#: whole 127.0.0.0/8 block is this computer's loopback; honest clients use 127.0.0.1).
ATTACKER_ADDRESS = "127.0.0.2"
ROUNDS = 10
ATTACK_S = 120.0
#: When the measured honest pass starts, after the attack began [s]. A new address's
#: first ``fairshare.SHARE_S`` CPU seconds run at full priority; by now the attacker
#: has used them. The pass at 0.3 s (the attack's start) is reported beside it.
SETTLE_S = 4.0
TARGET = 2.0


def data_url(text: str, mime: str = "text/csv") -> str:
    return f"data:{mime};base64," + base64.b64encode(text.encode()).decode()


def fit_table() -> dict:
    """A crafted fit store of 1,000 trials (the bootstrap payload)."""
    rows = [{"name": f"s{i}", "dD": 15 + i % 7, "dP": i % 17, "dH": i % 13,
             "outcome": "good" if i % 2 else "bad"} for i in range(1000)]
    return {"fit": {"dD": 18, "dP": 8, "dH": 8, "R0": 5, "partial": "good",
                    "bounds": [[10, 25], [0, 30], [0, 30]], "table": rows}}


def payloads(client: Client, small_fit: dict) -> list[tuple[str, dict, dict, str]]:
    """(name, callback, values, changed input) for each payload of the report."""
    fit_dep = client.dep
    open_dep = client.dependency("results-table.rowData", "open-payload")
    boot_dep = client.dependency("boot-store.data")
    # the blend screen is a background job fed by a quick check in the request; an
    # attacker skips the check and sends the job its arguments directly
    blend_dep = client.dependency("blend-table.rowData", "blend-request")
    base_args = {"pool": "all", "shelf": None, "ticked": [], "min_fp": None, "max_bp": None,
                 "min_bp": None, "min_twa": None, "no_carc": [], "exclude": None,
                 "restricted": None, "components": 2, "max_frac": None, "min_frac": None,
                 "temperature": None, "rank_by": "red", "top": 15}

    def blend(**args):
        return {"blend-request.data": {"key": "attack", "args": dict(base_args, **args)},
                "fit-store.data": small_fit}

    header = "solvent,outcome,dd" + " " * 700 + "x\nacetone,good,\ntoluene,bad,\nhexane,bad,\n"
    names = [{"solvent": f"madeup{i}qz", "outcome": "dissolves"} for i in range(1000)]
    own = [{"solvent": f"own{i}", "outcome": "dissolves" if i % 3 else "does not",
            "dD": 14 + i % 7, "dP": i % 19, "dH": i % 23} for i in range(10_000)]
    shelf = "solvent,dD,dP,dH\n" + "".join(f"mine {i},{14 + i % 7},{i % 19},{i % 23}\n"
                                            for i in range(10_000))
    nested = "[" * 100_000 + "]" * 100_000
    return [
        ("header-spaces-upload", open_dep,
         {"open-payload.data": {"contents": data_url(header), "filename": "h.csv"}},
         "open-payload.data"),
        ("fraction-field-spaces", blend_dep,
         blend(components=3, max_frac="a" + " " * 2500 + "x"), "blend-request.data"),
        ("1000-unknown-names", fit_dep,
         {"results-table.rowData": names, "partial-choice.value": "good"}, "results-table.rowData"),
        ("10000-own-rows", fit_dep,
         {"results-table.rowData": own, "partial-choice.value": "good"}, "results-table.rowData"),
        ("bootstrap-1000rows-x2000", boot_dep,
         {"boot-button.n_clicks": 1, "fit-store.data": fit_table(), "boot-n.value": 2000,
          "boot-method.value": "classic"}, "boot-button.n_clicks"),
        ("blend-top-20000", blend_dep, blend(top=20_000), "blend-request.data"),
        ("shelf-10000", blend_dep,
         blend(pool="shelf", shelf={"contents": data_url(shelf), "filename": "shelf.csv"}),
         "blend-request.data"),
        ("blend-part-400-digits", fit_dep,
         {"results-table.rowData": [{"solvent": "toluene " + "9" * 400 + " + ethanol 1",
                                     "outcome": "dissolves"}], "partial-choice.value": "good"},
         "results-table.rowData"),
        ("temperature-1e308", blend_dep, blend(temperature=1e308), "blend-request.data"),
        ("three-solvent-screens", blend_dep, blend(components=3), "blend-request.data"),
        ("project-nested-100k", open_dep,
         {"open-payload.data": {"contents": data_url(nested, "application/json"),
                                "filename": "p.json"}}, "open-payload.data"),
        ("rows-as-integer", fit_dep,
         {"results-table.rowData": 5, "partial-choice.value": "good"}, "results-table.rowData"),
    ]


def attack_body(dep, values, changed) -> bytes:
    """The request an attacker sends over and over (encoded once, as a script would)."""
    return json.dumps(update_body(dep, values, changed)).encode()


def post(conn, base_path: str, body: bytes) -> tuple[int, str]:
    """(HTTP status, the start of the answer) of one callback request on ``conn``."""
    conn.request("POST", base_path + "_dash-update-component", body=body,
                 headers={"Content-Type": "application/json"})
    r = conn.getresponse()
    text = r.read()
    return r.status, text[:4000].decode("utf-8", "replace")


def attacker(base: str, body: bytes, threads: int, seconds: float, stop, out) -> None:
    """The attacker: its own process (its CPU and interpreter are not the honest
    clients'), from its own address (:data:`ATTACKER_ADDRESS`), ``threads`` connections
    sending ``body`` back to back until ``stop`` is set or ``seconds`` have passed; puts
    [(status, seconds)], the first answer's text on ``out``."""
    import http.client
    from urllib.parse import urlsplit

    url = urlsplit(base)
    answers, first, lock = [], [], threading.Lock()

    def run():
        conn = http.client.HTTPConnection(url.hostname, url.port, timeout=60,
                                          source_address=(ATTACKER_ADDRESS, 0))
        t_end = time.monotonic() + seconds
        while not stop.is_set() and time.monotonic() < t_end:
            t = time.perf_counter()
            try:
                status, text = post(conn, url.path or "/", body)
            except (OSError, http.client.HTTPException) as exc:
                status, text = 0, f"{type(exc).__name__}: {exc}"
                conn.close()
            with lock:
                answers.append((status, time.perf_counter() - t))
                if not first:
                    first.append(text)

    pool = [threading.Thread(target=run) for _ in range(threads)]
    for t in pool:
        t.start()
    for t in pool:
        t.join()
    out.put((answers, first[0] if first else "no answer"))


def message_of(text: str) -> str:
    for key in ("fit_error", "error", "message", "children"):
        i = text.find(f'"{key}": "')
        if i < 0:
            i = text.find(f'"{key}":"')
        if i >= 0:
            return text[i:i + 110].replace("\n", " ")
    return text[:110].replace("\n", " ")


def honest_pass(base: str, projects, expected) -> tuple[list[float], int]:
    """Every honest client runs ROUNDS fits at once; (latencies [s], wrong answers)."""
    lat, wrong, lock = [], [0], threading.Lock()
    start = threading.Barrier(len(projects))

    def run(k: int):
        client = Client(base, source=f"127.0.0.{10 + k}")  # each user has a machine
        start.wait()
        for _ in range(ROUNDS):
            t = time.perf_counter()
            try:
                ok = verdict(client.fit(projects[k]), k, expected) == "ok"
            except (OSError, RuntimeError, ValueError, KeyError):
                ok = False
            dt = time.perf_counter() - t
            with lock:
                lat.append(dt)
                wrong[0] += not ok

    threads = [threading.Thread(target=run, args=(k,)) for k in range(len(projects))]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    return lat, wrong[0]


def p95(xs: list[float]) -> float:
    return float(sorted(xs)[max(0, int(round(0.95 * len(xs))) - 1)])


def attack_table(served: ServedApp, library) -> tuple[list[dict], float, bool]:
    projects = make_projects(library, HONEST)
    expected = [expected_fit(p, library) for p in projects]
    client = Client(served.base)
    small_fit = client.fit(projects[0])
    honest_pass(served.base, projects, expected)  # warm-up (imports, caches)
    alone, bad0 = honest_pass(served.base, projects, expected)
    rows, ok = [], bad0 == 0
    for name, dep, values, changed in payloads(client, small_fit):
        ctx = multiprocessing.get_context("fork")  # no other thread runs at this point
        stop, out = ctx.Event(), ctx.Queue()
        body = attack_body(dep, values, changed)
        proc = ctx.Process(target=attacker, args=(served.base, body, ATTACKERS, ATTACK_S,
                                                   stop, out))
        proc.start()
        began = time.monotonic()
        time.sleep(0.3)  # the attack is under way before the honest pass starts
        early, wrong_early = honest_pass(served.base, projects, expected)
        # the attacker has used its fair share by now: the attack's lasting effect
        time.sleep(max(0.0, began + SETTLE_S - time.monotonic()))
        lat, wrong = honest_pass(served.base, projects, expected)
        wrong += wrong_early
        stop.set()
        answers, first = out.get(timeout=ATTACK_S + 90)
        proc.join()
        statuses = sorted({s for s, _ in answers})
        slowest = max((d for _, d in answers), default=float("nan"))
        rows.append({"payload": name, "honest_p95_ms": 1000 * p95(lat),
                     "first_p95_ms": 1000 * p95(early),
                     "honest_median_ms": 1000 * statistics.median(lat), "wrong": wrong,
                     "attack_requests": len(answers), "attack_status": statuses,
                     "attack_slowest_s": slowest,
                     "answer": message_of(first)})
        ok &= wrong == 0 and 500 not in statuses
    again, bad1 = honest_pass(served.base, projects, expected)
    ref = min(p95(alone), p95(again))
    ok &= bad1 == 0
    for r in rows:
        r["ratio"] = r["honest_p95_ms"] / (1000 * ref)
        r["first_ratio"] = r["first_p95_ms"] / (1000 * ref)
    return rows, 1000 * ref, ok


# ----------------------------------------------------------------------- peak memory

CHILD = r"""
import json, resource, sys, time
import numpy as np
from solsphere import limits
from solsphere.io import trials as T
from solsphere.library.table import load_library
lib = load_library()
L = limits.current()
what = sys.argv[1]
rng = np.random.default_rng(3)

def panel(n):
    X = np.column_stack([rng.uniform(14, 21, n), rng.uniform(0, 20, n), rng.uniform(0, 25, n)])
    good = 4 * (X[:, 0] - 18) ** 2 + (X[:, 1] - 8) ** 2 + (X[:, 2] - 8) ** 2 < 49
    text = "solvent,outcome,dD,dP,dH\n" + "".join(
        f"own {i},{'good' if g else 'bad'},{x:.2f},{y:.2f},{z:.2f}\n"
        for i, ((x, y, z), g) in enumerate(zip(X, good)))
    return T.read_text(text, library=lib)

t = time.perf_counter()
if what == "fit":
    from solsphere.models.classic import SphereModel
    SphereModel().fit(panel(L.rows))
    size = f"{L.rows} own-coordinate rows"
elif what == "blend":
    import tempfile, os
    from solsphere.design.pairs import screen_blends
    from solsphere.io.shelf import read_shelf
    rows = "".join(f"mine {i},{14 + (i * 7) % 80 / 10:.1f},{(i * 13) % 200 / 10:.1f},"
                   f"{(i * 17) % 250 / 10:.1f}\n" for i in range(L.shelf))
    with tempfile.NamedTemporaryFile("w", suffix=".csv", delete=False) as fh:
        fh.write("solvent,dD,dP,dH\n" + rows)
    pool = read_shelf(fh.name, lib)
    os.unlink(fh.name)
    screen_blends(pool, (18.0, 8.0, 8.0), 6.0, top=L.top)
    size = f"shelf of {L.shelf} solvents, top {L.top} blends"
elif what == "posterior":
    from solsphere.uncertainty.posterior import sample_posterior
    n = L.resample_work // L.samples
    sample_posterior(panel(n), n_samples=L.samples)
    size = f"{L.samples} posterior samples x {n} rows"
elif what == "bootstrap":
    from solsphere.uncertainty.bootstrap import bootstrap
    n = 100
    bootstrap(panel(n), n_bootstrap=L.resample_work // n)
    size = f"{L.resample_work // n} resamples x {n} rows"
elif what == "influence":
    from solsphere.uncertainty.bootstrap import influence
    n = int(L.resample_work ** 0.5)
    influence(panel(n), flips=False)
    size = f"influence of {n} rows (leave-one-out)"
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
kids = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
print(json.dumps({"input": size, "seconds": time.perf_counter() - t, "peak_MB": peak,
                  "worker_peak_MB": kids}))
"""


def peak_memory(which: list[str], timeout: float) -> list[dict]:
    out = []
    root = Path(__file__).resolve().parents[2]
    for what in which:
        try:
            r = subprocess.run([sys.executable, "-c", CHILD, what], cwd=root,
                               capture_output=True, text=True, timeout=timeout)
            out.append(json.loads(r.stdout.strip().splitlines()[-1]) if r.returncode == 0
                       else {"input": what, "error": r.stderr.strip()[-300:]})
        except subprocess.TimeoutExpired:
            out.append({"input": what, "error": f"over {timeout:.0f} s (stopped)"})
    return out


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--no-memory", action="store_true", help="skip the peak-memory part")
    ap.add_argument("--memory-only", action="store_true")
    ap.add_argument("--memory", default="fit,blend,posterior,influence,bootstrap",
                    help="which largest inputs to measure (comma-separated)")
    ap.add_argument("--memory-timeout", type=float, default=600.0)
    args = ap.parse_args()
    ok = True
    if not args.memory_only:
        from solsphere.library.table import load_library
        with ServedApp(workers=2) as served:
            rows, ref, ok = attack_table(served, load_library())
        print(f"unloaded honest p95: {ref:.0f} ms ({HONEST} honest clients, {ROUNDS} fits "
              f"each; {ATTACKERS} attacker threads per payload)")
        print(f"{'payload':26} {'p95 ms':>8} {'ratio':>6} {'median':>7} {'start':>6} "
              f"{'wrong':>5} {'attacks':>7} {'status':>10} {'slowest':>8}  answer")
        worst = 0.0
        for r in rows:
            worst = max(worst, r["ratio"])
            print(f"{r['payload']:26} {r['honest_p95_ms']:8.0f} {r['ratio']:6.2f} "
                  f"{r['honest_median_ms']:7.0f} {r['first_ratio']:6.2f} "
                  f"{r['wrong']:5d} {r['attack_requests']:7d} "
                  f"{','.join(map(str, r['attack_status'])):>10} "
                  f"{r['attack_slowest_s']:7.2f}s  {r['answer'][:70]}")
        ok &= worst <= TARGET
        print(f"BENCH attack payloads={len(rows)} honest_p95_ms={ref:.0f} "
              f"ratio={worst:.2f} target={TARGET:g} {'ok' if ok else 'FAIL'}")
    if not args.no_memory:
        print(f"load average before the memory part: {os.getloadavg()[0]:.1f}")
        for m in peak_memory(args.memory.split(","), args.memory_timeout):
            if "error" in m:
                print(f"peak memory: {m['input']}: {m['error']}")
            else:
                print(f"peak memory: {m['input']}: {m['peak_MB']:.0f} MB "
                      f"(worker processes {m['worker_peak_MB']:.0f} MB), {m['seconds']:.1f} s")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
