"""A shared lab server: ``solsphere app --workers N`` (N pre-forked processes, gunicorn).

- Served as a separate process the way a user starts it, the app answers ``/`` and the
  fit callback (``/_dash-update-component``) gives solsphere's own fit of each invented
  project, whichever worker answers; the request-body limit holds in the workers; SIGTERM
  stops the master and every worker.
- Bad ``--workers`` values exit 2 with one line and no traceback; a busy port is one line
  too; a public address still warns; without gunicorn the app says so and serves with
  one process.
- No module-level state in ``app/`` that a callback could change (what would make two
  workers, or two users of one worker, answer differently).

Every project here is invented (``appharness.make_projects``).
"""

from __future__ import annotations

import ast
import copy
import http.client
import importlib
import socket
import subprocess
import sys
from pathlib import Path

import pytest

import appharness
from appharness import ROOT, Client, FakeApp, ServedApp, expected_fit, make_projects, verdict
from clirun import run_cli
from solsphere import cli
from solsphere.library.table import load_library

pytestmark = pytest.mark.skipif(sys.platform == "win32", reason="gunicorn is Unix only")



@pytest.fixture(scope="module")
def projects(lib):
    rows = make_projects(lib, 4, seed=5)
    return rows, [expected_fit(r, lib) for r in rows]


def _group_members(pgid: int) -> list[int]:
    """Processes in process group ``pgid`` (Linux /proc; empty list elsewhere)."""
    out = []
    for d in Path("/proc").glob("[0-9]*"):
        try:
            fields = (d / "stat").read_text().rsplit(")", 1)[1].split()
        except OSError:
            continue
        if int(fields[2]) == pgid and fields[0] != "Z":
            out.append(int(d.name))
    return out


run = run_cli


# ----------------------------------------------------------------------------- served for real


def test_two_workers_serve_the_library_fit_and_stop(projects):
    rows, expected = projects
    served = ServedApp(2).start()
    try:
        client = Client(served.base)
        page = client.get("").decode()
        assert "<title>solsphere</title>" in page
        # every project, twice: the answers come from either worker, all must be the fit
        answers = [verdict(client.fit(r), i, expected)
                   for _ in range(2) for i, r in enumerate(rows)]
        assert answers == ["ok"] * (2 * len(rows))
        if Path("/proc/self/stat").exists():
            # the master, 2 workers and each worker's low-priority process (fairshare)
            assert len(_group_members(served.proc.pid)) == 5
        out = served.output()
        assert "2 worker processes" in out and "warning" not in out
    finally:
        code = served.stop()
    assert code == 0, served.output()  # SIGTERM is a clean stop
    assert not served.group_alive()   # no worker left behind
    assert "Traceback" not in served.output()


def test_the_request_body_limit_holds_in_the_workers():
    from solsphere.app.server import MAX_REQUEST_BYTES
    with ServedApp(2) as served:
        port = int(served.base.rstrip("/").rsplit(":", 1)[1])
        conn = http.client.HTTPConnection("127.0.0.1", port, timeout=30)
        conn.putrequest("POST", "/_dash-update-component")
        conn.putheader("Content-Type", "application/json")
        conn.putheader("Content-Length", str(MAX_REQUEST_BYTES + 10))
        conn.putheader("Connection", "close")
        conn.endheaders()
        conn.send(b'{"output": "x", "pad": "' + b"a" * 65536)  # the rest never comes
        status = conn.getresponse().status
        conn.close()
        assert status == 413
        assert Client(served.base).get("")  # and the server still answers


@pytest.mark.slow
def test_a_bootstrap_in_a_worker_matches_the_library(projects):
    """The 'How sure?' callback starts its own process pool inside a worker."""
    from solsphere.app import uncertainty
    rows, _ = projects
    with ServedApp(2) as served:
        client = Client(served.base)
        result = client.fit(rows[0])
        dep = client.dependency("boot-store.data")
        values = {"boot-button.n_clicks": 1, "fit-store.data": result,
                  "boot-n.value": 200, "boot-method.value": "classic"}
        got = client.update(dep, values, "boot-button.n_clicks")["boot-store"]["data"]
    want = uncertainty.run_bootstrap(result, 200, "classic")
    assert "error" not in got, got.get("error")
    assert got["key"] == want["key"]
    for k in ("centres", "radii", "intervals", "n_bootstrap", "seed"):
        assert got["boot"][k] == want["boot"][k], k


# ----------------------------------------------------------------------------- the option


@pytest.mark.parametrize("bad", ["0", "-1", "two", "1.5", "", "65"])
def test_bad_workers_values_exit_2_on_one_line(bad):
    rc, out, err = run(["app", "--workers", bad])
    assert rc == 2 and out == ""
    assert "--workers" in err and "Traceback" not in err
    assert len(err.strip().splitlines()) == 1


def test_bad_workers_value_as_a_process_has_no_traceback():
    p = subprocess.run([sys.executable, "-m", "solsphere", "app", "--workers", "0"], cwd=ROOT,
                       capture_output=True, text=True, timeout=60)
    assert p.returncode == 2 and p.stdout == ""
    assert "--workers" in p.stderr and "≥ 1" in p.stderr and "Traceback" not in p.stderr
    assert len(p.stderr.strip().splitlines()) == 1


def test_the_cli_cap_is_the_servers():
    from solsphere.app.server import MAX_WORKERS
    parse = cli.build_parser().parse_args
    assert parse(["app"]).workers == 1
    assert parse(["app", "--workers", str(MAX_WORKERS)]).workers == MAX_WORKERS
    rc, _, err = run(["app", "--workers", str(MAX_WORKERS + 1)])
    assert rc == 2 and f"at most {MAX_WORKERS}" in err


def test_serve_checks_workers_itself():
    from solsphere.app.server import serve
    from solsphere.errors import InputError
    for bad in (0, -3, 2.5, "2", True):
        with pytest.raises(InputError, match="--workers"):
            serve(workers=bad)


@pytest.fixture
def fake_serving(monkeypatch):
    """serve() with the app, the socket and gunicorn replaced by recorders."""
    from solsphere.app import server
    calls = []
    monkeypatch.setattr(server, "create_app", lambda path=None, **_: FakeApp(calls))
    monkeypatch.setattr(server, "listen_socket",
                        lambda host, port: calls.append(("bind", host, port)) or "sock")
    monkeypatch.setattr(server, "_serve_workers",
                        lambda app, sock, n: calls.append(("workers", sock, n)))
    monkeypatch.setattr(server, "prefork_unavailable", lambda: None)
    return calls


@pytest.mark.parametrize("host,warned", [("0.0.0.0", True), ("192.168.1.20", True),
                                         ("127.0.0.1", False), ("::1", False)])
def test_a_public_address_with_workers_still_warns(fake_serving, host, warned):
    rc, out, err = run(["app", "--host", host, "--port", "8123", "--workers", "2"])
    assert rc == 0, err
    assert fake_serving == [("bind", host, 8123), ("workers", "sock", 2)]
    assert ("warning" in err and "anyone who can reach" in err and host in err) is warned
    assert (err == "") is not warned
    assert "2 worker processes" in out


def test_one_worker_is_the_threaded_server(fake_serving):
    rc, _, err = run(["app", "--workers", "1"])
    assert rc == 0 and err == ""
    [low, (what, kw)] = fake_serving
    assert low == ("low",)  # the low-priority process starts before the server
    handler = kw.pop("request_handler")  # names the server without versions
    assert what == "run" and kw == {"host": "127.0.0.1", "port": 8050, "debug": False}
    assert handler.version_string(None) == "solsphere"


def test_without_gunicorn_it_says_so_and_serves_with_one_process(fake_serving, monkeypatch):
    from solsphere.app import server
    monkeypatch.setattr(server, "prefork_unavailable",
                        lambda: "the 'gunicorn' package (install it with: pip install gunicorn)")
    rc, _, err = run(["app", "--workers", "3"])
    assert rc == 0
    assert [c[0] for c in fake_serving] == ["low", "run"]
    assert len(err.strip().splitlines()) == 1
    assert "--workers 3 needs the 'gunicorn' package" in err and "one process" in err


def test_a_busy_port_is_one_line_and_exit_2(monkeypatch):
    from solsphere.app import server
    monkeypatch.setattr(server, "create_app", lambda path=None, **_: FakeApp([]))
    with socket.socket() as taken:
        taken.bind(("127.0.0.1", 0))
        taken.listen(1)
        port = taken.getsockname()[1]
        rc, out, err = run(["app", "--port", str(port), "--workers", "2"])
    assert rc == 2 and out == ""  # nothing claims to be serving
    assert f"127.0.0.1:{port}" in err and "in use" in err and "--port" in err
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err


def test_an_unknown_host_is_one_line():
    from solsphere.app.server import listen_socket
    from solsphere.errors import InputError
    with pytest.raises(InputError, match="not known") as exc:
        listen_socket("no-such-host.invalid", 8050)
    assert "\n" not in str(exc.value)


def test_the_worker_settings_are_real_gunicorn_settings():
    pytest.importorskip("gunicorn")
    from gunicorn.config import Config
    from solsphere.app.server import WORKER_TIMEOUT, worker_options
    opts = worker_options(7, 3)
    cfg = Config()
    for k, v in opts.items():
        cfg.set(k, v)  # an unknown name raises AttributeError
    assert cfg.workers == 3 and cfg.preload_app and cfg.control_socket_disable
    assert cfg.worker_class_str == "gthread" and cfg.timeout == WORKER_TIMEOUT
    assert cfg.address == [7]  # the socket bound (and checked) before the fork


# ----------------------------------------------------------------------------- shared nothing


APP_MODULES = sorted(p.stem for p in (ROOT / "app").glob("*.py") if p.stem != "__init__")


def test_no_global_statements_in_the_app():
    for name in APP_MODULES:
        tree = ast.parse((ROOT / "app" / f"{name}.py").read_text(encoding="utf-8"))
        bad = [n.lineno for n in ast.walk(tree) if isinstance(n, (ast.Global, ast.Nonlocal))]
        assert not bad, f"app/{name}.py: global/nonlocal at lines {bad}"


def _module_state():
    """Deep copies of every module-level container in app/ (what a callback could change)."""
    state = {}
    for name in APP_MODULES:
        mod = importlib.import_module(f"app.{name}")
        for k, v in vars(mod).items():
            if not k.startswith("__") and isinstance(v, (dict, list, set, bytearray)):
                state[f"app.{name}.{k}"] = copy.deepcopy(v)
    return state


def test_callbacks_leave_module_state_alone(lib, projects):
    """Drive the fit, summary, figures and bootstrap callbacks in-process; every
    module-level container of app/ is unchanged, so a worker's answers depend on the
    request only."""
    import json
    from solsphere.app.server import create_app
    rows, expected = projects
    dash_app = create_app()
    before = _module_state()
    assert before  # the check looks at something
    http = dash_app.server.test_client()
    deps = http.get("/_dash-dependencies").get_json()

    def call(dep, values, changed):
        body = appharness.update_body(dep, values, changed)
        r = http.post("/_dash-update-component", data=json.dumps(body),
                      content_type="application/json")
        assert r.status_code in (200, 204), r.status_code
        return r.get_json() if r.status_code == 200 else None

    fit_dep = next(d for d in deps if "fit-store.data" in d["output"]
                   and d["inputs"][0]["id"] == "results-table")
    for i, r in enumerate(rows):
        res = call(fit_dep, {"results-table.rowData": r, "partial-choice.value": "good"},
                   "results-table.rowData")["response"]["fit-store"]["data"]
        assert verdict(res, i, expected) == "ok"
        for d in deps:  # every callback fed by the fit store alone
            if [x["id"] for x in d["inputs"]][:1] == ["fit-store"]:
                call(d, {"fit-store.data": res}, "fit-store.data")
    assert _module_state() == before


def _sleeper(*_args):
    import time
    time.sleep(30)


def test_background_jobs_are_bounded_across_workers(tmp_path):
    # two managers on one folder stand for two workers of one server
    from solsphere.app import jobs
    from solsphere.errors import InputError

    a = jobs.manager(str(tmp_path), max_jobs=2)
    b = jobs.manager(str(tmp_path), max_jobs=2)
    started = []
    try:
        started.append(a.call_job_fn("k1", _sleeper, (), {}))
        started.append(b.call_job_fn("k2", _sleeper, (), {}))
        with pytest.raises(InputError) as exc:
            a.call_job_fn("k3", _sleeper, (), {})
        assert str(exc.value) == jobs.busy_message(2)
        assert "--max-jobs" in str(exc.value)
        a.terminate_job(started.pop(0))  # one ends: a slot is free again, for either
        started.append(b.call_job_fn("k4", _sleeper, (), {}))
        assert len(set(started)) == 2
    finally:
        for pid in started:
            a.terminate_job(pid)


def test_max_jobs_option_reaches_the_app_and_refuses_nonsense():
    from solsphere.app.server import create_app
    app = create_app(None, initial={}, max_jobs=3)
    managers = [v for v in vars(app).values() if hasattr(v, "call_job_fn")]
    assert [m.max_jobs for m in managers] == [3]
    code, out, err = run_cli(["app", "--max-jobs", "0"])
    assert code == 2 and "--max-jobs" in err and "Traceback" not in err


def _report_niceness(*_args):
    import os
    from pathlib import Path
    Path(os.environ["SOLSPHERE_TEST_NICE_FILE"]).write_text(str(os.nice(0)))


def test_background_jobs_run_at_a_lower_priority(tmp_path, monkeypatch):
    import os
    import time
    from solsphere.app import fairshare, jobs
    out = tmp_path / "nice.txt"
    monkeypatch.setenv("SOLSPHERE_TEST_NICE_FILE", str(out))
    m = jobs.manager(str(tmp_path / "jobs"), max_jobs=2)
    m.call_job_fn("k", _report_niceness, (), {})
    deadline = time.monotonic() + 30
    while not out.exists() and time.monotonic() < deadline:
        time.sleep(0.05)
    assert int(out.read_text()) == min(19, os.nice(0) + fairshare.NICENESS)


def test_one_address_never_takes_every_job_place(tmp_path):
    # a user (or a script) asking for jobs over and over leaves a place for the others
    import flask
    from solsphere.app import jobs
    from solsphere.errors import InputError

    m = jobs.manager(str(tmp_path), max_jobs=3)
    app = flask.Flask("t")
    started = []

    def start(address, key):
        with app.test_request_context(environ_base={"REMOTE_ADDR": address}):
            started.append(m.call_job_fn(key, _sleeper, (), {}))

    try:
        start("10.0.0.7", "k1")
        start("10.0.0.7", "k2")
        with pytest.raises(InputError) as exc:
            start("10.0.0.7", "k3")
        assert str(exc.value) == jobs.own_busy_message(2)
        start("10.0.0.8", "k4")  # the place left over is another address's
        with pytest.raises(InputError) as exc:
            start("10.0.0.9", "k5")
        assert str(exc.value) == jobs.busy_message(3)
    finally:
        for pid in started:
            m.terminate_job(pid)
