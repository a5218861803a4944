"""Every parser of user text finishes on 100,000-character adversarial strings.

The strings are the shapes that make backtracking patterns explode (long runs of
spaces between a name and a stray letter, runs of opening brackets, separators
repeated). Nothing is timed: each test must simply finish within pytest-timeout's
generous limit (a backtracking pattern on these inputs runs for hours). The header
and blend-part strings are the ones that stalled a fit and the app for minutes.
"""

from __future__ import annotations

import pytest

from solsphere.errors import InputError
from solsphere.io import trials as T
from solsphere.library.table import load_library

pytestmark = pytest.mark.timeout(120)

N = 100_000
EVIL = [
    " " * N + "x",
    "a" + " " * N + "x",
    "dd" + " " * N + "x",
    "(" * N,
    "([" * (N // 2),
    "a (" + " " * N,
    "j" + " " * N + "x",
    "j " * (N // 2),
    " /" * (N // 2) + "x",
    " ," * (N // 2) + "mpa",
    "mpa" * (N // 3),
    "1" + " " * N,
    "1 %" * (N // 3),
    "a=" * (N // 2),
    "a:" + " " * N + "x",
    "9" * N,
    "1." * (N // 2),
    "% " * (N // 2),
    "Did you mean " + " " * N + "x",
]
IDS = [f"{len(s)}:{s[:6]!r}" for s in EVIL]


@pytest.fixture(scope="module")
def lib():
    return load_library()


@pytest.mark.parametrize("text", EVIL, ids=IDS)
def test_header_cell(text):
    key, unit = T._canon_header(text)
    assert key is None or key in T.COLUMNS


@pytest.mark.parametrize("text", EVIL, ids=IDS)
def test_blend_part_readers(text):
    for reader in (T._trail, T._lead):
        m = reader(text)
        assert m is None or set(m) == {"name", "num", "pct"}


@pytest.mark.parametrize("text", EVIL, ids=IDS)
def test_number_cell(text):
    with pytest.raises(T.CellProblem):
        T.parse_coordinate(text + "x", "dD", False)


@pytest.mark.parametrize("text", EVIL, ids=IDS)
def test_shelf_header(text):
    from solsphere.io.shelf import _key
    assert _key(text) in (None, "solvent", "dD", "dP", "dH", "note", "price")


@pytest.mark.parametrize("text", EVIL, ids=IDS)
def test_fraction_limits_field(text, lib):
    from solsphere.workflows import parse_fraction_limits
    with pytest.raises(InputError) as info:
        parse_fraction_limits(text, lib, ["toluene"])
    assert len(str(info.value)) < 2000  # the echo is clipped


@pytest.mark.parametrize("text", EVIL, ids=IDS)
def test_problem_message(text):
    from solsphere.app.logic import problem_dict
    err = InputError(text + " Did you mean 'toluene'?")
    err.suggestions = ["toluene"]
    assert "Did you mean" not in problem_dict(err)["message"][-30:]


@pytest.mark.parametrize("text", EVIL[:8], ids=IDS[:8])
def test_whole_results_file(text, lib):
    """The same strings in a results file: header cell, solvent cell, blend, note."""
    short = text[:9_000]  # cells are limited to 10,000 characters
    for body in (f"solvent,outcome,{short}\nacetone,good,\ntoluene,bad,\nhexane,bad,\n",
                 f"solvent,outcome\ntoluene {short} + ethanol 1,good\nhexane,bad\n",
                 f"solvent,outcome\n{short} + 1 ethanol,good\nhexane,bad\n",
                 f"solvent,outcome,note\nacetone,good,{short}\nhexane,bad,\n"):
        try:
            T.read_text(body, source="evil.csv", library=lib)
        except InputError as exc:
            assert len(str(exc)) < 1500, str(exc)[:200]


def test_the_reported_header_file_reads(tmp_path, lib):
    """The 759-byte file of the report (91 s before): read at once, header warned."""
    p = tmp_path / "h.csv"
    p.write_text("solvent,outcome,dd" + " " * 700 + "x\nacetone,good,\ntoluene,bad,\nhexane,bad,\n")
    trials = T.read(p, library=lib)
    assert len(trials) == 3 and any("ignored" in w for w in trials.warnings)


def test_rewritten_parsers_keep_their_meaning(lib):
    """The tokenisers read what the patterns they replace read."""
    assert T._canon_header("dD (MPa½)") == ("dD", "mpa½")
    assert T._canon_header("dP [MPa^0.5]") == ("dP", "mpa^0.5")
    assert T._canon_header("dH / J/cm3") == ("dH", "j/cm3")
    assert T._canon_header("δD, (cal/cm³)½") == ("dD", "(cal/cm³)½")
    assert T._canon_header("dd mpa") == ("dD", "mpa")
    assert T._canon_header("Solvent") == ("solvent", "")
    assert T._canon_header("(dD)")[0] is None
    assert T._trail("toluene 70") == {"name": "toluene", "num": "70", "pct": ""}
    assert T._trail("toluene 70 %") == {"name": "toluene", "num": "70", "pct": "%"}
    assert T._trail("1,4-dioxane 2,5")["num"] == "2,5"
    assert T._trail("toluene") is None and T._trail("70") is None
    assert T._lead("70% toluene") == {"name": "toluene", "num": "70", "pct": "%"}
    assert T._lead("70 toluene") == {"name": "toluene", "num": "70", "pct": ""}
    assert T._lead("70toluene") is None and T._lead("70") is None
    from solsphere.workflows import parse_fraction_limits
    got = parse_fraction_limits("toluene=30%, ethanol 0.5, acetone: 20", lib, ["toluene"])
    assert got == {"toluene": 0.3, "ethanol": 0.5, "acetone": 0.2}
    from solsphere.io.shelf import _key
    assert _key("price (EUR/l)") == "price" and _key("flash point [°C]") == "flash_point"
