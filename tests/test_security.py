"""Security basics for a lab server.

- The app binds the loopback address unless told otherwise, and says so loudly when it
  is told otherwise.
- Uploads are size-limited (in the app's logic, in the browser check, and in the HTTP
  server's request-body limit).
- Nothing user-supplied is evaluated, executed or unpickled: a token scan of every
  source file of the package, the app and the data scripts finds no ``eval``, ``exec``,
  ``compile``, ``__import__``, ``pickle``, ``marshal``, ``shelve``, ``yaml.load``,
  ``allow_pickle``, ``os.system`` or ``shell=True``.
- User-provided names, notes and titles are escaped in the share page, in the figures'
  hover text and in the app (no raw-HTML components).
"""

from __future__ import annotations

import base64
import html
import inspect
import io
import json
import re
import tokenize
from pathlib import Path

import pytest

from appharness import FakeApp
from clirun import run_cli
from solsphere import cli
from solsphere.library.table import load_library

ROOT = Path(__file__).resolve().parent.parent
SOURCES = sorted([*ROOT.glob("solsphere/**/*.py"), *ROOT.glob("app/*.py"), *ROOT.glob("data/*.py")])
EVIL_NAME = "<script>alert(1)</script>"
EVIL_NOTE = "<img src=x onerror=alert(2)>"
EVIL_TITLE = "<b onmouseover=alert(3)>binder</b>"


run = run_cli


# ------------------------------------------------------------------ loopback by default


def test_loopback_is_the_default_everywhere():
    from solsphere.app import server
    assert cli.build_parser().parse_args(["app"]).host == "127.0.0.1"
    assert inspect.signature(server.serve).parameters["host"].default == "127.0.0.1"


@pytest.mark.parametrize("host,loopback", [
    ("127.0.0.1", True), ("127.8.9.10", True), ("::1", True), ("[::1]", True),
    ("localhost", True), ("LOCALHOST", True),
    ("0.0.0.0", False), ("::", False), ("192.168.1.20", False), ("10.0.0.1", False),
    ("lab-server.example", False), ("", False), ("127.0.0.1.nip.io", False),
])
def test_loopback_detection(host, loopback):
    from solsphere.app.server import is_loopback, network_warning
    assert is_loopback(host) is loopback
    warning = network_warning(host, 8050)
    assert (warning is None) is loopback
    if warning:
        assert host in warning and "127.0.0.1" in warning and "\n" not in warning


@pytest.mark.parametrize("argv,warned", [(["app"], False),
                                         (["app", "--host", "0.0.0.0", "--port", "8123"], True),
                                         (["app", "--host", "::1"], False)])
def test_the_command_warns_on_public_binding(argv, warned, monkeypatch):
    from solsphere.app import server
    calls = []
    monkeypatch.setattr(server, "create_app", lambda path=None, **_: FakeApp(calls))
    rc, out, err = run(argv)
    assert rc == 0, err
    assert calls[0] == ("low",)  # the low-priority process starts before the server
    options = calls[1][1]
    assert options["host"] == (argv[2] if len(argv) > 2 else "127.0.0.1")
    assert options.get("debug") is False  # never the debugger on a served app
    assert ("warning" in err and "anyone who can reach" in err) is warned
    if not warned:
        assert err == ""


# ------------------------------------------------------------------ upload size limits


def test_upload_limit_is_enforced_at_the_boundary():
    from solsphere.app import logic
    from solsphere.errors import InputError
    limit = logic.UPLOAD_LIMIT
    assert limit == 5_000_000
    ok = "data:text/csv;base64," + base64.b64encode(b"a" * limit).decode()
    assert len(logic.decode_upload(ok, "ok.csv")) == limit
    big = "data:text/csv;base64," + base64.b64encode(b"a" * (limit + 1)).decode()
    with pytest.raises(InputError, match="limit is 5 MB"):
        logic.decode_upload(big, "big.csv")


def test_the_browser_check_uses_the_same_limit():
    from solsphere.app import bench, logic
    assert f"size > {logic.UPLOAD_LIMIT}" in bench.CHECK_UPLOAD_JS


def test_the_http_server_refuses_huge_request_bodies():
    from solsphere.app.server import MAX_REQUEST_BYTES, create_app
    app = create_app()
    assert app.server.config["MAX_CONTENT_LENGTH"] == MAX_REQUEST_BYTES
    client = app.server.test_client()
    body = b'{"output": "x", "inputs": [], "pad": "' + b"a" * (MAX_REQUEST_BYTES + 10) + b'"}'
    r = client.post("/_dash-update-component", data=body, content_type="application/json")
    assert r.status_code == 413


# ------------------------------------------------------------------ nothing is executed

#: name tokens that execute or deserialise code/objects
FORBIDDEN_NAMES = {"eval", "exec", "__import__", "pickle", "cPickle", "_pickle", "marshal",
                   "shelve", "dill", "cloudpickle", "jsonpickle", "allow_pickle"}
YAML_LOADERS = {"load", "load_all", "unsafe_load", "full_load", "Loader", "UnsafeLoader"}


def dangerous_tokens(source: str) -> list[str]:
    """Code tokens (strings and comments are skipped) that run or unpickle data."""
    toks = [t for t in tokenize.generate_tokens(io.StringIO(source).readline)
            if t.type in (tokenize.NAME, tokenize.OP)]
    found = []
    for i, t in enumerate(toks):
        prev = toks[i - 1].string if i else ""
        nxt = toks[i + 1].string if i + 1 < len(toks) else ""
        after = toks[i + 2].string if i + 2 < len(toks) else ""
        where = f"line {t.start[0]}: "
        if t.type != tokenize.NAME:
            continue
        if t.string in FORBIDDEN_NAMES and prev != ".":
            found.append(where + t.string)
        elif t.string == "compile" and prev != "." and nxt == "(":
            found.append(where + "compile(")  # the builtin, not re.compile
        elif t.string == "yaml" and nxt == "." and after in YAML_LOADERS:
            found.append(where + f"yaml.{after}")
        elif t.string == "os" and nxt == "." and after in ("system", "popen"):
            found.append(where + f"os.{after}")
        elif t.string == "shell" and nxt == "=" and after == "True":
            found.append(where + "shell=True")
    return found


def test_the_scanner_bites():
    snippet = ("import pickle, yaml, os\nx = eval(s)\nexec(code)\ny = pickle.loads(b)\n"
               "z = yaml.load(t)\nc = compile(s, 'f', 'exec')\nos.system(cmd)\n"
               "subprocess.run(c, shell=True)\nnp.load(p, allow_pickle=True)\n"
               "ok = re.compile('x')  # eval( in a comment\ns = 'exec(' \nast.literal_eval(s)\n")
    got = [f.split(": ", 1)[1] for f in dangerous_tokens(snippet)]
    assert got == ["pickle", "eval", "exec", "pickle", "yaml.load",
                   "compile(", "os.system", "shell=True", "allow_pickle"]


def test_no_eval_exec_pickle_yaml_or_marshal_anywhere():
    hits = []
    for path in SOURCES:
        for h in dangerous_tokens(path.read_text(encoding="utf-8")):
            hits.append(f"{path.relative_to(ROOT)} {h}")
    assert hits == [], "code that may run user data:\n" + "\n".join(hits)
    assert len(SOURCES) > 20  # the scan did look at the package and the app


# ------------------------------------------------------------------ escaping


@pytest.fixture(scope="module")
def evil_bench(tmp_path_factory) -> Path:
    p = tmp_path_factory.mktemp("evil") / "evil.csv"
    p.write_text("solvent,outcome,dD,dP,dH,note\n"
                 f'"{EVIL_NAME}",good,17.0,6.0,7.0,"{EVIL_NOTE}"\n'
                 "toluene,good,,,,\nacetone,good,,,,\nethyl acetate,good,,,,\n"
                 "water,bad,,,,\nn-hexane,bad,,,,\nmethanol,bad,,,,\nethanol,bad,,,,\n",
                 encoding="utf-8")
    return p


def test_share_page_escapes_user_names_notes_and_title(evil_bench, tmp_path):
    out = tmp_path / "page.html"
    rc, _, err = run(["share", evil_bench, "-o", out, "--title", EVIL_TITLE])
    assert rc == 0, err
    page = out.read_text(encoding="utf-8")
    for raw in (EVIL_NAME, EVIL_NOTE, EVIL_TITLE, "alert(1)</script>", "onerror=alert(2)>"):
        assert raw not in page, f"raw user text {raw!r} in the share page"
    assert html.escape(EVIL_TITLE) in page
    # the name is in the map's hover text: HTML-escaped (plotly renders hover text as
    # HTML), then script-safe encoded inside the embedded JSON
    assert "\\u0026lt;script\\u0026gt;alert(1)\\u0026lt;\\u002fscript\\u0026gt;" in page
    # bench notes are shown in the tested-solvents table, escaped
    assert html.escape(EVIL_NOTE) in page
    # the page has as many script elements as the page of a harmless panel
    plain = tmp_path / "plain.csv"
    plain.write_text(evil_bench.read_text(encoding="utf-8").replace(EVIL_NAME, "my thinner")
                     .replace(EVIL_NOTE, "clear"), encoding="utf-8")
    rc, _, err = run(["share", plain, "-o", tmp_path / "plain.html"])
    assert rc == 0, err
    n_plain = len(re.findall(r"<script\b", (tmp_path / "plain.html").read_text(encoding="utf-8"),
                             flags=re.I))
    assert len(re.findall(r"<script\b", page, flags=re.I)) == n_plain


def test_figure_hover_text_is_escaped(evil_bench):
    from solsphere.report import figures
    from solsphere.io import trials as T
    from solsphere.models.classic import SphereModel
    lib = load_library()
    fit = SphereModel().fit(T.read(evil_bench, library=lib)).result_.to_dict()
    fig = figures.map3d(fit, highlight=[{"name": EVIL_NAME, "dD": 17, "dP": 6, "dH": 7}])
    texts = []
    for tr in list(fig.data) + list(figures.projections(fit).data):
        for key in ("hovertext", "text"):
            v = getattr(tr, key, None)
            if v is not None:
                texts += list(v) if isinstance(v, (list, tuple)) else [v]
    joined = " ".join(map(str, texts))
    assert EVIL_NAME not in joined
    assert html.escape(EVIL_NAME) in joined


def test_the_app_has_no_raw_html_components():
    """Dash renders strings as text (React escapes them) unless told otherwise; the app
    never tells it otherwise."""
    bad = re.compile(r"dangerously_allow_html|dcc\.Markdown|html\.Iframe|srcDoc|"
                     r"\"presentation\":\s*\"markdown\"|innerHTML|outerHTML|insertAdjacentHTML|"
                     r"document\.write")
    hits = [f"{p.name}:{i}" for p in sorted((ROOT / "app").rglob("*.py"))
            for i, line in enumerate(p.read_text(encoding="utf-8").splitlines(), 1)
            if bad.search(line)]
    assert hits == []


def test_app_messages_carry_user_text_as_plain_strings(evil_bench):
    """The summary and the problem list get the name as a string child (text), and the
    download name made from a hostile file name is harmless."""
    from solsphere.app import logic, sphere
    lib = load_library()
    st = logic.open_upload("data:text/csv;base64," + base64.b64encode(evil_bench.read_bytes())
                           .decode(), f"{EVIL_NOTE}.csv", lib)
    assert any(r["solvent"] == EVIL_NAME and r["note"] == EVIL_NOTE for r in st["rows"])
    result = logic.compute_fit(st["rows"], "good", lib)
    children = sphere.summary_children(result, None)
    assert json.dumps([c.to_plotly_json() for c in children], default=str)  # serialisable
    name = logic.download_name(f"../{EVIL_NOTE}.csv", "-project.json")
    assert re.fullmatch(r"[\w.+-]+", name) and "/" not in name and "<" not in name


# ----------------------------------------------------- headers, request size, versions


@pytest.fixture(scope="module")
def app_client():
    import logging
    from solsphere.app.server import create_app
    app = create_app()
    app.server.logger.setLevel(logging.CRITICAL)
    return app.server.test_client()


def test_every_response_carries_the_security_headers(app_client):
    for path in ("/", "/_dash-layout", "/_dash-dependencies", "/no-such-page"):
        r = app_client.get(path)
        h = r.headers
        csp = h["Content-Security-Policy"]
        assert "frame-ancestors 'none'" in csp and "object-src 'none'" in csp, path
        assert "'unsafe-inline'" not in csp.split("script-src")[1].split(";")[0]
        assert h["X-Frame-Options"] == "DENY" and h["X-Content-Type-Options"] == "nosniff"
        assert "Werkzeug" not in h.get("Server", "") and "Python" not in h.get("Server", "")


def test_the_policy_hashes_exactly_the_inline_scripts_the_page_has(app_client):
    """Each inline script of the page is allowed by its hash, and nothing else is."""
    import base64
    import hashlib
    r = app_client.get("/")
    page = re.sub(r"<!--.*?-->", "", r.get_data(as_text=True), flags=re.S)  # IE-only notes
    scripts = re.findall(r"<script(?![^>]*\bsrc=)([^>]*)>(.*?)</script>", page, re.S)
    executable = [body for attrs, body in scripts if "application/json" not in attrs]
    assert executable  # Dash's renderer start-up at least
    allowed = set(re.findall(r"'sha256-([^']+)'", r.headers["Content-Security-Policy"]))
    for body in executable:
        digest = base64.b64encode(hashlib.sha256(body.encode()).digest()).decode()
        assert digest in allowed, body[:80]


def test_no_version_in_the_page_beyond_what_dash_needs(app_client):
    from solsphere import __version__
    page = app_client.get("/").get_data(as_text=True)
    assert f"solsphere {__version__}" not in page and "Werkzeug" not in page


def test_callback_bodies_are_limited_per_callback(app_client):
    """A table callback takes 2 MB at most; only a callback carrying a file takes more."""
    from solsphere.app import guard
    big = {"output": "..fit-store.data...results-table.rowData..", "outputs": [],
           "inputs": [{"id": "results-table", "property": "rowData",
                       "value": [{"solvent": "x" * 100, "outcome": "good"}] * 30_000}],
           "changedPropIds": ["results-table.rowData"], "state": []}
    r = app_client.post("/_dash-update-component", json=big)
    assert r.status_code == 413 and "at most 2,000,000" in r.get_json()["error"]
    assert guard.limit_for({"inputs": [{"id": "open-payload", "property": "data"}]}) \
        == guard.UPLOAD_REQUEST_BYTES
    r = app_client.post("/_dash-update-component", data=b"{" + b" " * 8_000_000 + b"}",
                        content_type="application/json")
    assert r.status_code == 413


def test_no_regular_expression_in_the_sources_nests_unbounded_quantifiers():
    """A coarse guard against the patterns that stalled the parsers: no '.*' or '.+'
    directly followed or preceded by another unbounded run over whitespace."""
    bad = re.compile(r"(\.\*\??|\.\+\??)\)?\\s[*+]|\\s[*+]\)?(\[[^\]]*\]\?)?\\s[*+]")
    found = []
    for path in SOURCES:
        for tok in tokenize.generate_tokens(io.StringIO(path.read_text()).readline):
            if tok.type == tokenize.STRING and bad.search(tok.string):
                found.append(f"{path.name}:{tok.start[0]}: {tok.string[:60]}")
    assert found == [], found
