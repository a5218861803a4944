"""Each client address's fair share of the app's server (app/fairshare.py).

- The usage table: charges add up and fade with the half-life, addresses are kept
  apart, a full table makes room by dropping the address that used least lately, and
  the table is shared by processes forked after it is made (the server's workers).
- The middleware: a callback request of an address over its share, or with a large
  body, is answered by the low-priority process (marked by a response header) with the
  same answer the worker gives, progress polls included; other addresses stay in the
  worker; no free place gives a line in the page, not an error (a progress poll is told
  to ask again), and one client never holds every place; a stopped or silent low-priority process gives a line (the request is
  not run again) and leaves the later requests to the worker; a callback request with
  no declared length is refused.
- Served for real (``solsphere app --workers 2`` and the single-process server), with
  clients on different loopback addresses standing for different machines.

Every project here is invented (``appharness.make_projects``).
"""

from __future__ import annotations

import json
import multiprocessing
import time
import types
import urllib.request

import pytest

from appharness import Client, ServedApp, expected_fit, make_projects, update_body, verdict
from solsphere.app import fairshare
from solsphere.app.fairshare import HALF_LIFE_S, PRIORITY_HEADER, Usage

#: the tests that fork (the low-priority process, gunicorn's workers)
forks = pytest.mark.skipif(fairshare.fork_context() is None, reason="no fork here")


# ----------------------------------------------------------------------------- the table


def test_charges_add_up_and_fade_with_the_half_life():
    u = Usage(size=16)
    u.charge("10.1.1.1", 0.6, now=100.0)
    u.charge("10.1.1.1", 0.4, now=100.0)
    assert u.level("10.1.1.1", now=100.0) == pytest.approx(1.0)
    assert u.level("10.1.1.1", now=100.0 + 2 * HALF_LIFE_S) == pytest.approx(0.25)
    assert u.level("10.1.1.2", now=100.0) == 0.0  # another address is another client
    u.charge("10.1.1.1", 1.0, now=100.0 + HALF_LIFE_S)  # fades, then adds
    assert u.level("10.1.1.1", now=100.0 + HALF_LIFE_S) == pytest.approx(1.5)


def test_a_full_table_drops_the_address_that_used_least():
    u = Usage(size=4)
    u.charge("heavy", 50.0, now=0.0)
    for i in range(40):  # many one-off visitors pass through the four places
        u.charge(f"visitor {i}", 0.01, now=1.0 + i)
    assert u.level("heavy", now=41.0) > 1.0  # the heavy address is still known
    assert u.level("visitor 0", now=41.0) == 0.0  # an early visitor made room


def _charge_in_child(u):
    u.charge("10.9.9.9", 2.0)


@forks
def test_the_table_is_shared_with_forked_processes():
    u = Usage(size=16)
    p = multiprocessing.get_context("fork").Process(target=_charge_in_child, args=(u,))
    p.start()
    p.join(30)
    assert p.exitcode == 0
    assert u.level("10.9.9.9") == pytest.approx(2.0, rel=0.01)


# ----------------------------------------------------------------------------- middleware


@pytest.fixture(scope="module")
def app():
    from solsphere.app.server import FAIR_SHARE, create_app
    a = create_app(None, initial={})
    return a, a.server.extensions[FAIR_SHARE]


@pytest.fixture(scope="module")
def projects(lib):
    rows = make_projects(lib, 3, seed=11)
    return rows, [expected_fit(r, lib) for r in rows]


def _fit_body(app, rows) -> dict:
    deps = app.server.test_client().get("/_dash-dependencies").get_json()
    dep = next(d for d in deps if "fit-store.data" in d["output"]
               and d["inputs"][0]["id"] == "results-table")
    return update_body(dep, {"results-table.rowData": rows, "partial-choice.value": "good"},
                       "results-table.rowData")


def test_in_a_test_client_every_request_stays_in_the_worker(app, projects):
    a, share = app
    assert not share.low.alive  # nothing started: the app behaves as before
    r = a.server.test_client().post("/_dash-update-component", json=_fit_body(a, projects[0][0]),
                                    environ_base={"REMOTE_ADDR": "10.2.2.2"})
    assert r.status_code == 200 and PRIORITY_HEADER not in r.headers
    assert share.usage.level("10.2.2.2") > 0  # its CPU time was charged


class _Pipe:
    """Stands for a pipe to the low-priority process: answers with ``reply``, or fails."""

    def __init__(self, reply=None, fail=None, answers=True):
        self.reply, self.fail, self.answers, self.sent = reply, fail, answers, []

    def send(self, message):
        self.sent.append(message)

    def poll(self, timeout):
        return self.answers

    def recv(self):
        if self.fail:
            raise self.fail
        return self.reply

    def close(self):
        pass


def _low(monkeypatch, share, pipe):
    """Give ``share`` a stand-in low-priority process with one pipe."""
    import queue
    killed = []
    monkeypatch.setattr(share.low, "process", types.SimpleNamespace(
        is_alive=lambda: not killed, kill=lambda: killed.append(1)))
    free = queue.Queue()
    free.put(pipe)
    monkeypatch.setattr(share.low, "free", free)
    monkeypatch.setattr(share, "logged_stop", False)
    return killed


def _post_to(a, rows, address, **kw):
    return a.server.test_client().post("/_dash-update-component", json=_fit_body(a, rows),
                                       environ_base={"REMOTE_ADDR": address}, **kw)


def _notice(r) -> str:
    answer = r.get_json()
    assert answer["response"] == {}  # nothing changes in the page but the notice
    return answer["sideUpdate"]["notice"]["children"]["props"]["children"]


def test_over_its_share_a_request_goes_to_the_low_priority_process(app, projects, monkeypatch):
    a, share = app
    reply = ("200 OK", [("Content-Type", "application/json"), ("Content-Length", "99")],
             b'{"response": {}}', 0.25)
    pipe = _Pipe(reply)
    _low(monkeypatch, share, pipe)
    # over its share, but small: a charge fades while the request runs (100 s of it lose
    # 0.007 s per millisecond, enough to hide the 0.25 s charged for the request on a
    # slow machine; 2 s lose 0.00014)
    share.usage.charge("10.3.3.1", 2.0)
    before = share.usage.level("10.3.3.1")
    r = _post_to(a, projects[0][0], "10.3.3.1")
    assert r.status_code == 200 and r.headers[PRIORITY_HEADER] == "low"
    assert r.data == b'{"response": {}}' and r.headers["Content-Length"] == "16"
    assert pipe.sent[0]["environ"]["REMOTE_ADDR"] == "10.3.3.1"
    assert share.usage.level("10.3.3.1") > before + 0.2  # its CPU there is charged
    # a client within its share stays in the worker
    r = _post_to(a, projects[0][0], "10.3.3.2")
    assert PRIORITY_HEADER not in r.headers and "fit-store" in r.get_json()["response"]
    # a progress poll is no way round the share (Dash ignores the key elsewhere)
    r = _post_to(a, projects[0][0], "10.3.3.1", query_string={"cacheKey": "x", "job": "1"})
    assert r.headers[PRIORITY_HEADER] == "low" and len(pipe.sent) == 2


def test_no_free_place_gives_a_line_in_the_page_and_one_client_never_holds_all(
        app, projects, monkeypatch):
    a, share = app
    _low(monkeypatch, share, _Pipe(("200 OK", [], b"{}", 0.0)))
    share.usage.charge("10.3.3.3", 100.0)
    monkeypatch.setattr(share.low, "held", {"10.3.3.3": fairshare.PER_CLIENT})
    r = _post_to(a, projects[0][0], "10.3.3.3")
    assert r.headers[PRIORITY_HEADER] == "busy" and _notice(r) == fairshare.OWN_BUSY_TEXT
    # the others still get a place, and nothing held is lost
    share.usage.charge("10.3.3.4", 100.0)
    r = _post_to(a, projects[0][0], "10.3.3.4")
    assert r.headers[PRIORITY_HEADER] == "low"
    assert share.low.held == {"10.3.3.3": fairshare.PER_CLIENT}
    monkeypatch.setattr(share.low, "held", {f"10.8.0.{i}": 1 for i in range(fairshare.QUEUE)})
    r = _post_to(a, projects[0][0], "10.3.3.4")
    assert r.headers[PRIORITY_HEADER] == "busy" and _notice(r) == fairshare.BUSY_TEXT
    # a background job's progress poll is told to ask again (no "response": the page
    # keeps polling), not ended with a notice
    r = _post_to(a, projects[0][0], "10.3.3.4", query_string={"cacheKey": "k", "job": "9"})
    assert r.headers[PRIORITY_HEADER] == "busy" and r.get_json() == {}


@pytest.mark.parametrize("pipe,killed", [(_Pipe(fail=EOFError()), False),
                                         (_Pipe(answers=False), True)])
def test_a_stopped_or_silent_low_priority_process_gives_a_line_and_is_not_rerun(
        app, projects, monkeypatch, capsys, pipe, killed):
    a, share = app
    kills = _low(monkeypatch, share, pipe)
    share.usage.charge("10.3.3.5", 100.0)
    r = _post_to(a, projects[0][0], "10.3.3.5")
    assert r.status_code == 200 and r.headers[PRIORITY_HEADER] == "stopped"
    assert "could not be finished" in _notice(r)  # not run a second time in the worker
    assert bool(kills) is killed  # a process that does not answer is stopped
    assert "warning" in capsys.readouterr().err
    if not killed:
        kills.append(1)  # it has stopped
    r = _post_to(a, projects[1][0], "10.3.3.5")  # from now on the worker runs everything
    assert PRIORITY_HEADER not in r.headers and "fit-store" in r.get_json()["response"]


def test_a_callback_request_without_a_length_is_refused(app):
    a, share = app
    out = []
    environ = {"REQUEST_METHOD": "POST", "PATH_INFO": "/_dash-update-component",
               "REMOTE_ADDR": "10.3.3.6", "HTTP_TRANSFER_ENCODING": "chunked"}
    body = share(environ, lambda status, headers: out.append(status))
    assert out == ["411 Length Required"] and b"Content-Length" in body[0]


def test_a_request_runs_the_same_in_the_low_priority_process(app, projects):
    # the low-priority process's own function on a request of the worker's kind
    a, _ = app
    rows, expected = projects
    body = json.dumps(_fit_body(a, rows[1])).encode()
    environ = {"REQUEST_METHOD": "POST", "PATH_INFO": "/_dash-update-component",
               "CONTENT_TYPE": "application/json", "CONTENT_LENGTH": str(len(body)),
               "SERVER_NAME": "127.0.0.1", "SERVER_PORT": "8050", "SERVER_PROTOCOL": "HTTP/1.1",
               "REMOTE_ADDR": "10.5.5.5", "wsgi.url_scheme": "http",
               "wsgi.input": object(), "gunicorn.socket": object()}  # not sent on
    message = fairshare.request_message(environ, body)
    assert set(message["environ"]) <= set(fairshare.SENT_KEYS)
    status, headers, out, cpu = fairshare.run_request(a.server.wsgi_app.wsgi_app, message)
    assert status.startswith("200") and cpu > 0
    fit = json.loads(out)["response"]["fit-store"]["data"]
    assert verdict(fit, 1, expected) == "ok"


def test_without_fork_every_request_stays_in_the_worker(app, projects, monkeypatch):
    # Windows has no fork: the table still counts, nothing is started, nothing breaks
    a, _ = app
    monkeypatch.setattr(fairshare, "fork_context", lambda: None)
    share = fairshare.FairShare(a.server.wsgi_app.wsgi_app, Usage(size=8))
    share.start_low_priority()
    assert share.low.process is None and not share.low_ready()
    share.usage.charge("10.6.6.6", 100.0)
    environ = {"REQUEST_METHOD": "POST", "PATH_INFO": "/_dash-update-component",
               "CONTENT_LENGTH": "100000", "REMOTE_ADDR": "10.6.6.6"}
    assert fairshare.fork_context() is None
    seen = []
    share.wsgi_app = lambda env, start: seen.append(env) or [b"{}"]
    assert share(environ, lambda *a: None) == [b"{}"] and seen == [environ]


# ----------------------------------------------------------------------------- served


def _post(client: Client, rows) -> tuple[str | None, dict]:
    body = json.dumps(update_body(client.dep, {"results-table.rowData": rows,
                                               "partial-choice.value": "good"},
                                  "results-table.rowData")).encode()
    req = urllib.request.Request(client.base + "_dash-update-component", data=body,
                                 headers={"Content-Type": "application/json"})
    with client.opener.open(req, timeout=client.timeout) as r:
        return r.headers.get(PRIORITY_HEADER), json.loads(r.read())


def _heavy_rows(first: int = 0, n: int = 1000) -> list[dict]:
    """A table well over LARGE_BODY of made-up names (new names cost a suggestion search)."""
    return [{"solvent": f"madeup{i}qz", "outcome": "dissolves"} for i in range(first, first + n)]


def _helpers(served: ServedApp, workers: int = 2) -> list:
    """The low-priority processes, one child of each worker (no background job runs in
    these tests), once every worker has started (bounded wait)."""
    import psutil
    deadline = time.monotonic() + 30
    while True:
        found = [w.children() for w in psutil.Process(served.proc.pid).children()]
        if len(found) == workers and all(len(k) == 1 for k in found):
            return [k[0] for k in found]
        assert time.monotonic() < deadline, f"workers and their processes: {found}"
        time.sleep(0.1)


@forks
def test_a_heavy_address_runs_at_low_priority_and_the_others_do_not(projects):
    rows, expected = projects
    with ServedApp(2) as served:
        heavy = Client(served.base, source="127.0.0.21")
        light = Client(served.base, source="127.0.0.22")
        assert _post(heavy, _heavy_rows())[0] == "low"  # a large body: low from the start
        for k in range(1, 200):  # its CPU time there counts against its share: sooner
            _post(heavy, _heavy_rows(first=1000 * k))  # or later (faster machines take
            priority, answer = _post(heavy, rows[0])   # more) its small requests are low
            if priority == "low":
                break
        assert priority == "low"
        assert verdict(answer["response"]["fit-store"]["data"], 0, expected) == "ok"
        for k in range(3):  # another address, within its share, stays in the worker
            priority, answer = _post(light, rows[k])
            assert priority is None
            assert verdict(answer["response"]["fit-store"]["data"], k, expected) == "ok"
        helpers = _helpers(served)
        assert len(helpers) == 2  # one per worker
        import psutil
        for h in helpers:
            assert h.nice() == min(19, psutil.Process(h.ppid()).nice() + fairshare.NICENESS)
    assert "Traceback" not in served.output()


@forks
@pytest.mark.slow  # a server of its own; the logic is covered above with a stand-in
def test_a_stopped_low_priority_process_leaves_the_work_to_the_worker(projects):
    rows, expected = projects
    with ServedApp(2) as served:
        for h in _helpers(served):
            h.kill()
        time.sleep(0.3)
        client = Client(served.base, source="127.0.0.23")
        for k in range(4):  # large bodies: each worker finds its process gone
            priority, answer = _post(client, rows[k % 3] + [{"solvent": "toluene",
                                                             "outcome": "dissolves",
                                                             "note": "n" * 40_000}])
            assert priority is None and "response" in answer
        priority, answer = _post(client, rows[2])
        assert verdict(answer["response"]["fit-store"]["data"], 2, expected) == "ok"
        out = served.output()
    assert "low-priority process stopped" in out and "Traceback" not in out


@forks
@pytest.mark.slow  # a server of its own
def test_the_single_process_server_has_its_low_priority_process_too(projects):
    rows, expected = projects
    with ServedApp(1) as served:
        client = Client(served.base, source="127.0.0.24")
        priority, answer = _post(client, _heavy_rows())
        assert priority == "low" and "response" in answer
    assert "Traceback" not in served.output()
