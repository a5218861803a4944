"""The package's shape: imports point one way, no private name crosses a module boundary,
no import cycle, imports at the top of modules (DEVELOPERS.md, "Layout and the one-way rule").

These tests read the source with :mod:`ast`; they fail on a new violation, naming it.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent

# Layers, lowest first. A module may import from its own layer or a lower one; within a
# layer, the import graph must still be free of cycles.
LAYERS = (
    ("solsphere.errors", "solsphere.formatting", "solsphere.results", "solsphere.limits"),
    ("solsphere.hansen",),
    ("solsphere.library", "solsphere.io"),
    ("solsphere.models",),
    ("solsphere.mixtures",),
    ("solsphere.uncertainty", "solsphere.design", "solsphere.estimate"),
    ("solsphere.workflows", "solsphere.batch"),
    ("solsphere.report",),
    ("solsphere.cli", "solsphere.commands", "solsphere.app", "solsphere.__init__",
     "solsphere.__main__"),
)

# Function-level imports are allowed only to defer a heavy optional dependency.
DEFERRABLE = ("plotly", "dash", "dash_ag_grid", "scipy.stats", "rdkit", "thermo", "gunicorn",
              "pandas", "sklearn", "kaleido", "openpyxl", "python_calamine", "odf", "emcee",
              "diskcache", "solsphere.app", "solsphere.commands", "solsphere.report.share",
              "solsphere.estimate", "chemicals", "numpy")
# (solsphere.estimate loads RDKit and chemicals its identifier database: optional extras)
# (numpy: solsphere.errors, which the command line loads for --help, needs it only while
# a command runs)


def _module_name(path: Path) -> str:
    rel = path.relative_to(ROOT)
    if rel.parts[0] == "app":
        parts = ["solsphere", "app", *rel.parts[1:]]
    else:
        parts = list(rel.parts)
    parts[-1] = parts[-1][:-3]
    if parts[-1] == "__init__" and len(parts) > 2:
        parts.pop()
    return ".".join(parts)


def _sources():
    paths = sorted([*ROOT.glob("solsphere/**/*.py"), *ROOT.glob("app/**/*.py")])
    return {_module_name(p): p for p in paths}


SOURCES = _sources()


def _package(module: str, path: Path) -> str:
    return module if path.name == "__init__.py" else module.rpartition(".")[0]


def _resolve(module: str, path: Path, node: ast.ImportFrom) -> str:
    if not node.level:
        return node.module or ""
    base = _package(module, path).split(".")
    base = base[: len(base) - node.level + 1]
    return ".".join(base + ([node.module] if node.module else []))


def _imports(module: str, path: Path):
    """(imported module, names, line, top level?) for every import of a solsphere module."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    top = set(id(n) for n in tree.body)
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for a in node.names:
                yield a.name, [], node.lineno, id(node) in top
        elif isinstance(node, ast.ImportFrom):
            target = _resolve(module, path, node)
            names = [a.name for a in node.names]
            # "from solsphere.io import trials" imports the module solsphere.io.trials
            subs = [f"{target}.{n}" for n in names if f"{target}.{n}" in SOURCES]
            if subs:
                for s in subs:
                    yield s, [], node.lineno, id(node) in top
                names = [n for n in names if f"{target}.{n}" not in SOURCES]
            if names:
                yield target, names, node.lineno, id(node) in top


def _layer(module: str) -> int:
    for i, names in enumerate(LAYERS):
        if any(module == n or module.startswith(n + ".") for n in names):
            return i
    raise AssertionError(f"{module} is in no layer: add it to LAYERS")


def _graph():
    graph = {}
    for module, path in SOURCES.items():
        graph[module] = {t for t, _, _, top in _imports(module, path)
                         if t in SOURCES and t != module and top}
    return graph


def test_every_module_has_a_layer():
    for module in SOURCES:
        _layer(module)


def test_no_private_name_crosses_a_module_boundary():
    found = []
    for module, path in SOURCES.items():
        for target, names, line, _ in _imports(module, path):
            if not target.startswith("solsphere"):
                continue
            for n in names:
                if n.startswith("_") and not n.startswith("__"):
                    found.append(f"{path.relative_to(ROOT)}:{line} imports {n} from {target}")
        # module._name through an imported module alias
        tree = ast.parse(path.read_text(encoding="utf-8"))
        aliases = set()
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom):
                target = _resolve(module, path, node)
                for a in node.names:
                    if f"{target}.{a.name}" in SOURCES:
                        aliases.add(a.asname or a.name)
            elif isinstance(node, ast.Import):
                for a in node.names:
                    if a.name.startswith("solsphere") and a.asname:
                        aliases.add(a.asname)
        for node in ast.walk(tree):
            if (isinstance(node, ast.Attribute) and isinstance(node.value, ast.Name)
                    and node.value.id in aliases and node.attr.startswith("_")
                    and not node.attr.startswith("__")):
                found.append(f"{path.relative_to(ROOT)}:{node.lineno} uses {node.value.id}.{node.attr}")
    assert not found, "private names used across modules:\n" + "\n".join(found)


def test_imports_point_one_way():
    wrong = []
    for module, path in SOURCES.items():
        for target, _, line, _ in _imports(module, path):
            if target in SOURCES or any(t.startswith(target + ".") for t in SOURCES):
                if target == "solsphere" and module.startswith("solsphere."):
                    # only the version string, which lives in the package's __init__
                    continue
                if target in SOURCES and _layer(target) > _layer(module):
                    wrong.append(f"{path.relative_to(ROOT)}:{line}: {module} (layer "
                                 f"{_layer(module)}) imports {target} (layer {_layer(target)})")
    assert not wrong, "imports that point upwards:\n" + "\n".join(wrong)


def test_no_import_cycle():
    graph = _graph()
    state: dict[str, int] = {}
    stack: list[str] = []

    def visit(m):
        state[m] = 1
        stack.append(m)
        for t in sorted(graph[m]):
            if state.get(t) == 1:
                cycle = stack[stack.index(t):] + [t]
                pytest.fail("import cycle: " + " -> ".join(cycle))
            if t not in state:
                visit(t)
        stack.pop()
        state[m] = 2

    for m in sorted(graph):
        if m not in state:
            visit(m)


def test_function_level_imports_only_defer_heavy_dependencies():
    found = []
    for module, path in SOURCES.items():
        for target, _, line, top in _imports(module, path):
            if top or target == "__future__":
                continue
            if any(target == d or target.startswith(d + ".") for d in DEFERRABLE):
                continue
            found.append(f"{path.relative_to(ROOT)}:{line} imports {target} inside a function")
    assert not found, "imports that belong at the top of the module:\n" + "\n".join(found)


def test_the_checks_can_fail(tmp_path):
    # the cycle finder and the private-name finder see a planted violation
    src = "from solsphere.io.trials import _sniff\n"
    tree = ast.parse(src)
    node = tree.body[0]
    assert isinstance(node, ast.ImportFrom)
    assert [a.name for a in node.names if a.name.startswith("_")] == ["_sniff"]
    assert _layer("solsphere.cli") > _layer("solsphere.hansen")


def test_the_wheel_installs_only_the_solsphere_package():
    import tomllib

    cfg = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["tool"]["setuptools"]
    assert all(p == "solsphere" or p.startswith("solsphere.") for p in cfg["packages"])
    assert cfg["package-dir"]["solsphere.app"] == "app"  # the app folder stays at the top
