"""The lowest allowed version of every dependency, as a pip constraints file.

Reads the ``>=`` lower bounds of ``pyproject.toml`` (the run-time dependencies and the
``test`` and ``structure`` extras that ``make test`` installs) and writes
``constraints/lowest.txt`` with one ``name==bound`` line each (``name==X.Y.*`` for a bound
of two parts: the lowest release series, see :func:`_series`; a name bounded twice takes
the higher bound: both extras are installed together; an environment marker is kept).
``make test-lowest`` installs the package with these constraints into ``.venv-lowest``
and runs the fast tests, so a lower bound that is too low fails there.

    python tools/lowest_versions.py          # write constraints/lowest.txt
    python tools/lowest_versions.py --check  # exit 1 when the file is out of date
"""

from __future__ import annotations

import re
import sys
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
OUT = ROOT / "constraints" / "lowest.txt"
EXTRAS = ("test", "structure")
_REQ = re.compile(r"^\s*([A-Za-z0-9][A-Za-z0-9._-]*)\s*>=\s*([0-9][0-9A-Za-z.]*)\s*(;.*)?$")


def _key(version: str) -> tuple:
    return tuple(int(p) if p.isdigit() else 0 for p in version.split("."))


def _series(version: str) -> str:
    """``X.Y.Z`` exactly; a shorter bound such as ``2023.9`` as its release series
    ``2023.9.*`` (no release may be numbered exactly ``2023.9.0``: pip then takes the
    newest of that series, the lowest that exists)."""
    return version if version.count(".") >= 2 else version + ".*"


def lowest(pyproject: Path = ROOT / "pyproject.toml") -> str:
    """The constraints text for ``pyproject``."""
    project = tomllib.loads(pyproject.read_text(encoding="utf-8"))["project"]
    reqs = list(project.get("dependencies", []))
    for extra in EXTRAS:
        reqs += project.get("optional-dependencies", {}).get(extra, [])
    bounds: dict[str, tuple[str, str]] = {}
    for req in reqs:
        m = _REQ.match(req)
        if not m:
            raise SystemExit(f"pyproject.toml: {req!r} has no '>=' lower bound; give one")
        name, version, marker = m.group(1).lower(), m.group(2), (m.group(3) or "")
        if name not in bounds or _key(version) > _key(bounds[name][0]):
            bounds[name] = (version, marker)
    lines = ["# The lowest versions pyproject.toml allows (tools/lowest_versions.py writes this",
             "# file; make test-lowest installs them and runs the fast tests)."]
    lines += [f"{n}=={_series(v)}{m}" for n, (v, m) in sorted(bounds.items())]
    return "\n".join(lines) + "\n"


def main(argv: list[str]) -> int:
    text = lowest()
    if "--check" in argv:
        if not OUT.is_file() or OUT.read_text(encoding="utf-8") != text:
            print(f"{OUT.relative_to(ROOT)} is out of date: run python tools/lowest_versions.py",
                  file=sys.stderr)
            return 1
        return 0
    OUT.parent.mkdir(exist_ok=True)
    OUT.write_text(text, encoding="utf-8")
    print(f"wrote {OUT.relative_to(ROOT)}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
