"""Saving never loses data.

1. Every write in the package and the app goes through ``fileio.atomic_write_text``
   (temporary file in the same folder, fsync, ``os.replace``) or into a private
   temporary folder: a syntax-tree scan of the sources finds every other way of writing
   a file and fails on any that is not on the short, explained allow-list.
2. The save paths use that seam: a disk that fills up mid-save (simulated at
   ``fileio._write_bytes``) leaves the old project and the old share page as they were.
3. A process killed (SIGKILL) in the middle of saving a big project leaves the old
   file complete and loadable — once at a chosen moment (half the bytes written), and
   several times at random moments while it saves over and over.
4. The app never writes a server-side file: a project opened on the command line is
   byte for byte the same after edits, refits, downloads and uploads through the app's
   HTTP endpoint, and nothing new appears in its folder.
"""

from __future__ import annotations

import ast
import base64
import json
import os
import random
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

from clirun import run_cli
from solsphere.io import files as fileio
from solsphere.io import project as P
from solsphere.io import trials as T
from solsphere.library.table import load_library
from solsphere.limits import limited

ROOT = Path(__file__).resolve().parent.parent
SOURCES = sorted([*ROOT.glob("solsphere/**/*.py"), *ROOT.glob("app/*.py"), *ROOT.glob("data/*.py")])

# ------------------------------------------------------------------ 1. source scan

#: Attribute calls that write files.
WRITE_METHODS = {"write_text", "write_bytes", "write_html", "write_image", "write_json",
                 "savefig", "savetxt", "savez", "savez_compressed", "to_csv", "to_json",
                 "dump", "copy", "copy2", "copyfile", "copytree", "move", "rename",
                 "replace", "symlink_to", "touch", "mkstemp"}
#: Plain-name calls that write files.
WRITE_FUNCTIONS = {"open", "fdopen", "copyfile", "copy", "copy2", "move"}
#: The writes that are allowed, and why: (file, enclosing function) -> reason.
ALLOWED = {
    ("solsphere/io/files.py", "atomic_write_bytes"):
        "the atomic write itself (atomic_write_text encodes and calls it): a private temporary file, fsync-ed, then os.replace",
    ("solsphere/io/trials.py", "_table_text"):
        "DataFrame.to_csv() without a path returns the text; no file is written",
    ("data/build_solvents.py", "main"):
        "developer script that regenerates the packaged solvents.csv (never a user's file)",
    ("data/build_mixtures.py", "main"):
        "developer script that regenerates the packaged mixture_data.csv (never a user's file)",
    ("data/build_structure_model.py", "main"):
        "developer script that regenerates the packaged structure_model.zip (never a "
        "user's file)",
}


def _is_write(call: ast.Call) -> str | None:
    """A description of the call if it may write a file, else None."""
    f = call.func
    if isinstance(f, ast.Attribute):
        name = f.attr
        if name in ("to_csv", "to_json") and not call.args and not call.keywords:
            return None  # returns text (Trials.to_csv(), fig.to_json())
        if name in ("replace", "copy") and not (isinstance(f.value, ast.Name)
                                                and f.value.id in ("os", "shutil")):
            return None  # str.replace, dict.copy, dataclasses.replace ...
        if name == "dump" and not (isinstance(f.value, ast.Name) and f.value.id == "json"):
            return None if not (isinstance(f.value, ast.Name)) else f"{f.value.id}.dump"
        if name in WRITE_METHODS:
            return f".{name}()"
        if name == "fdopen" or (name == "open" and isinstance(f.value, ast.Name)
                                and f.value.id in ("io", "codecs", "gzip", "bz2", "lzma")):
            return _mode_write(call, f"{name}()", 1)
        return None
    if isinstance(f, ast.Name) and f.id in WRITE_FUNCTIONS:
        if f.id in ("open", "fdopen"):
            return _mode_write(call, f"{f.id}()", 1)
        return f"{f.id}()"
    return None


def _mode_write(call: ast.Call, what: str, pos: int) -> str | None:
    mode = None
    if len(call.args) > pos:
        mode = call.args[pos]
    for kw in call.keywords:
        if kw.arg == "mode":
            mode = kw.value
    if mode is None:
        return None  # default "r"
    if isinstance(mode, ast.Constant) and isinstance(mode.value, str):
        return f"{what} mode {mode.value!r}" if set(mode.value) & set("wax+") else None
    return f"{what} with a computed mode"


def _in_private_tempdir(stack: list[ast.AST]) -> bool:
    """Inside ``with tempfile.TemporaryDirectory(...)`` (a folder nobody else uses)."""
    for node in stack:
        if isinstance(node, (ast.With, ast.AsyncWith)):
            for item in node.items:
                e = item.context_expr
                if isinstance(e, ast.Call):
                    fn = e.func
                    name = fn.attr if isinstance(fn, ast.Attribute) else getattr(fn, "id", "")
                    if name == "TemporaryDirectory":
                        return True
    return False


def scan_writes(source: str, label: str) -> list[dict]:
    """Every call in ``source`` that may write a file, with where it is."""
    tree = ast.parse(source)
    found = []

    def visit(node, stack, func):
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
            func = node.name
        if isinstance(node, ast.Call):
            what = _is_write(node)
            if what:
                found.append({"file": label, "line": node.lineno, "function": func,
                              "what": what, "tempdir": _in_private_tempdir(stack)})
        for child in ast.iter_child_nodes(node):
            visit(child, stack + [node], func)

    visit(tree, [], "<module>")
    return found


def test_the_scanner_finds_plain_writes():
    snippet = textwrap.dedent("""
        import json, os, shutil, tempfile
        from pathlib import Path
        def save(p, text):
            with open(p, "w") as fh:
                fh.write(text)
            Path(p).write_text(text)
            open(p, mode="ab")
            json.dump({}, fh)
            shutil.copy(p, p + ".bak")
            os.replace(p, p)
        def fine(p, text):
            with open(p, "rb") as fh:
                fh.read()
            open(p)
            "a".replace("a", "b")
            with tempfile.TemporaryDirectory() as d:
                Path(d, "x").write_bytes(b"")
    """)
    got = scan_writes(snippet, "snippet.py")
    unsafe = [(w["function"], w["what"]) for w in got if not w["tempdir"]]
    assert unsafe == [("save", "open() mode 'w'"), ("save", ".write_text()"),
                      ("save", "open() mode 'ab'"), ("save", ".dump()"),
                      ("save", ".copy()"), ("save", ".replace()")]
    assert [w["what"] for w in got if w["tempdir"]] == [".write_bytes()"]


def test_every_write_in_the_package_and_the_app_is_atomic_or_private():
    found = []
    for path in SOURCES:
        label = path.relative_to(ROOT).as_posix()
        found += scan_writes(path.read_text(encoding="utf-8"), label)
    unexplained = [w for w in found
                   if not w["tempdir"] and (w["file"], w["function"]) not in ALLOWED]
    assert not unexplained, "writes that bypass fileio.atomic_write_text:\n" + "\n".join(
        f"  {w['file']}:{w['line']} in {w['function']}: {w['what']}" for w in unexplained)
    # the allow-list is not stale: each entry still matches a write
    for key in ALLOWED:
        assert any((w["file"], w["function"]) == key for w in found), key
    # and the user-facing saves do go through the atomic writer
    assert "atomic_write_text(path, text)" in (ROOT / "solsphere/io/project.py").read_text()
    assert "atomic_write_text(out, page)" in (ROOT / "solsphere/commands.py").read_text()


# ------------------------------------------------------------------ 2. the seam


run = run_cli


BENCH = ("solvent,outcome\ntoluene,good\nacetone,good\nethyl acetate,good\nethanol,bad\n"
         "water,bad\nn-hexane,bad\nmethanol,bad\n")  # invented


def _disk_full_halfway(fh, data):
    fh.write(data[: len(data) // 2])
    fh.flush()
    raise OSError(28, "No space left on device")


def test_disk_full_during_fit_save_keeps_the_old_project(tmp_path, monkeypatch):
    bench = tmp_path / "bench.csv"
    bench.write_text(BENCH)
    target = tmp_path / "project.json"
    assert run(["fit", bench, "--save", target])[0] == 0
    before = target.read_bytes()
    bench.write_text(BENCH.replace("methanol,bad", "methanol,good"))
    monkeypatch.setattr(fileio, "_write_bytes", _disk_full_halfway)
    rc, out, err = run(["fit", bench, "--save", target])
    assert rc == 2 and "disk is full" in err and "unchanged" in err and "Traceback" not in err
    assert target.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bench.csv", "project.json"]
    P.load(target)


def test_disk_full_during_share_keeps_the_old_page(tmp_path, monkeypatch):
    bench = tmp_path / "bench.csv"
    bench.write_text(BENCH)
    page = tmp_path / "map.html"
    page.write_text("<!DOCTYPE html><html><body>the page a colleague already has</body></html>")
    before = page.read_bytes()
    monkeypatch.setattr(fileio, "_write_bytes", _disk_full_halfway)
    rc, out, err = run(["share", bench, "-o", page])
    assert rc == 2 and "disk is full" in err
    assert page.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bench.csv", "map.html"]


# ------------------------------------------------------------------ 3. kill mid-write

CHILD = r"""
import os, sys, time
sys.path.insert(0, os.getcwd())
from solsphere.io import files as fileio
from solsphere.io import project as P
from solsphere.io import trials as T
from solsphere.library.table import load_library
from solsphere.limits import configure

mode, target, n = sys.argv[1], sys.argv[2], int(sys.argv[3])
configure(rows=max(n, 1000))  # a big project on purpose (a long write to interrupt)
lib = load_library()
rows = "".join(f"own solvent {i},{'good' if i % 3 else 'bad'},{14 + i % 7}.25,{i % 19}.5,"
               f"{i % 23}.75,note {i} " + "x" * 40 + "\n" for i in range(n))
trials = T.read_text("solvent,outcome,dD,dP,dH,note\n" + rows, source="big.csv", library=lib)

if mode == "half":
    def slow(fh, data):
        fh.write(data[: len(data) // 2])
        fh.flush()
        os.fsync(fh.fileno())
        print("HALF", flush=True)
        time.sleep(60)
        fh.write(data[len(data) // 2:])
    fileio._write_bytes = slow
    P.save(P.Project(trials=trials, settings={"version": "new"}), target)
    print("FINISHED", flush=True)
else:
    k = 0
    while True:
        k += 1
        P.save(P.Project(trials=trials, settings={"version": k}), target)
        print(f"SAVED {k}", flush=True)
"""


def _old_project(tmp_path: Path, lib) -> tuple[Path, bytes]:
    target = tmp_path / "big-project.json"
    trials = T.read_text(BENCH, source="old.csv", library=lib)
    P.save(P.Project(trials=trials, settings={"version": "old"}), target)
    return target, target.read_bytes()


def _child(mode: str, target: Path, n: int) -> subprocess.Popen:
    return subprocess.Popen([sys.executable, "-c", CHILD, mode, str(target), str(n)],
                            cwd=ROOT, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            text=True)


def _wait_for(proc: subprocess.Popen, word: str, timeout: float = 60.0) -> str:
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        line = proc.stdout.readline()
        if line.startswith(word):
            return line
        if not line and proc.poll() is not None:
            raise AssertionError(f"child ended early: {proc.stderr.read()}")
    raise AssertionError(f"no {word!r} from the child within {timeout} s")


def test_kill_in_the_middle_of_a_save_leaves_the_old_project(tmp_path):
    lib = load_library()
    target, before = _old_project(tmp_path, lib)
    proc = _child("half", target, 6000)
    try:
        _wait_for(proc, "HALF")
        temps = [p for p in tmp_path.iterdir() if p.name.endswith(".tmp")]
        assert len(temps) == 1 and temps[0].stat().st_size > 400_000  # really mid-write
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait(timeout=10)
    finally:
        if proc.poll() is None:
            os.kill(proc.pid, signal.SIGKILL)
            proc.wait(timeout=10)
        proc.stdout.close()
        proc.stderr.close()
    assert proc.returncode == -signal.SIGKILL
    assert target.read_bytes() == before
    loaded = P.load(target, library=lib)
    assert loaded.settings["version"] == "old" and len(loaded.trials) == 7
    # the half-written temporary is a hidden file beside it; the next save works
    P.save(P.Project(trials=loaded.trials, settings={"version": "after"}), target)
    assert P.load(target, library=lib).settings["version"] == "after"


@pytest.mark.slow
def test_kills_at_random_moments_never_leave_a_broken_project(tmp_path):
    """Six kills while a 2 MB project is saved over and over, each one a random 0-3 ms
    after a save's temporary file appears (so it lands inside the write, the fsync or
    the rename): the file is always one complete version, the old or a finished one."""
    lib = load_library()
    target, _ = _old_project(tmp_path, lib)
    rng = random.Random(2024)
    mid_save = 0
    for _ in range(6):
        before = set(os.listdir(tmp_path))
        proc = _child("loop", target, 6000)
        try:
            _wait_for(proc, "SAVED 1")  # one full save, then the next one in flight
            deadline = time.monotonic() + 30
            while time.monotonic() < deadline and not any(
                    n.endswith(".tmp") and n not in before for n in os.listdir(tmp_path)):
                pass
            time.sleep(rng.uniform(0.0, 0.003))
            os.kill(proc.pid, signal.SIGKILL)
            proc.wait(timeout=10)
            done = proc.stdout.read()
        finally:
            if proc.poll() is None:
                os.kill(proc.pid, signal.SIGKILL)
                proc.wait(timeout=10)
            proc.stdout.close()
            proc.stderr.close()
        mid_save += any(n.endswith(".tmp") for n in set(os.listdir(tmp_path)) - before)
        finished = [1] + [int(x.split()[1]) for x in done.splitlines() if x.startswith("SAVED")]
        doc = json.loads(target.read_text(encoding="utf-8"))  # complete JSON every time
        version = doc["settings"]["version"]
        # a finished save, or the one in flight if its rename had already happened
        assert version in finished or version == max(finished) + 1
        with limited(rows=6000):  # the big project is above the default row limit
            assert len(P.load(target, library=lib).trials) == 6000
    assert mid_save >= 1, "no kill landed inside a save: the test did not test anything"


# ------------------------------------------------------------------ 4. the app


def _post(client, deps, output_prefix: str, inputs: dict, state: dict | None = None):
    """Call one callback through Dash's HTTP endpoint; return the decoded response."""
    dep = next(d for d in deps if d["output"].startswith(output_prefix))
    outs = [dict(zip(("id", "property"), part.rsplit(".", 1)))
            for part in dep["output"].strip(".").split("...")]
    ins = [{"id": i["id"], "property": i["property"],
            "value": inputs.get(f"{i['id']}.{i['property']}")} for i in dep["inputs"]]
    sts = [{"id": s["id"], "property": s["property"],
            "value": (state or {}).get(f"{s['id']}.{s['property']}")} for s in dep["state"]]
    body = {"output": dep["output"], "outputs": outs, "inputs": ins, "state": sts,
            "changedPropIds": [f"{ins[0]['id']}.{ins[0]['property']}"]}
    r = client.post("/_dash-update-component", json=body)
    assert r.status_code in (200, 204), r.get_data(as_text=True)[:500]
    return r.get_json() if r.status_code == 200 else None


def test_the_app_never_writes_the_file_it_was_opened_on(tmp_path):
    from solsphere.app.server import create_app
    bench = tmp_path / "bench.csv"
    bench.write_text(BENCH)
    proj = tmp_path / "opened.json"
    assert run(["fit", bench, "--save", proj])[0] == 0
    os.utime(proj, (1_000_000_000, 1_000_000_000))  # an old, recognisable mtime
    snapshot = {p.name: (p.read_bytes(), p.stat().st_mtime_ns) for p in tmp_path.iterdir()}

    app = create_app(proj)
    client = app.server.test_client()
    deps = client.get("/_dash-dependencies").get_json()
    rows = [{"solvent": s, "outcome": o, "dD": None, "dP": None, "dH": None, "note": None}
            for s, o in [("toluene", "dissolves"), ("acetone", "dissolves"),
                         ("water", "does not"), ("n-hexane", "does not"),
                         ("methanol", "dissolves")]]  # edited: methanol now dissolves
    res = _post(client, deps, "..fit-store.data", {"results-table.rowData": rows,
                                                   "partial-choice.value": "good"})
    assert res["response"]["fit-store"]["data"]["fit"] is not None
    got = _post(client, deps, "..download-project.data", {"download-project-button.n_clicks": 1},
                {"results-table.rowData": rows, "partial-choice.value": "good",
                 "source-store.data": str(proj)})
    download = got["response"]["download-project"]["data"]
    assert json.loads(download["content"])["format"] == "solsphere-project"
    assert download["filename"] == "opened-project.json"  # a new name, in the browser
    # an upload named like the server's file (even with its full path) is only read
    data = "data:application/json;base64," + base64.b64encode(proj.read_bytes()).decode()
    opened = _post(client, deps, "..results-table.rowData...partial-choice.value",
                   {"open-payload.data": {"filename": str(proj), "contents": data}},
                   {"results-table.rowData": rows})
    assert len(opened["response"]["results-table"]["rowData"]) == 7
    junk = "data:text/csv;base64," + base64.b64encode(b"PK\x03\x04junk").decode()
    refused = _post(client, deps, "..results-table.rowData...partial-choice.value",
                    {"open-payload.data": {"filename": str(bench), "contents": junk}},
                    {"results-table.rowData": rows})
    assert "Not opened" in json.dumps(refused["response"]["notice"])

    after = {p.name: (p.read_bytes(), p.stat().st_mtime_ns) for p in tmp_path.iterdir()}
    assert after == snapshot
