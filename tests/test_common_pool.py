"""The curated pool of common solvents: the list itself (data/common_solvents.csv), the
library and session API (``Library.common``, ``candidate_pool(pool=...)``), the CLI's
``--pool`` and the app's 'common solvents only' checkbox.

The list is our own selection (common practice, no source); these tests check that it
is consistent with the library, not that it is "right". Bench files here are invented
test data (the demo file is the invented demo scenario).
"""

from __future__ import annotations

import contextlib
import io
import json
import re
from pathlib import Path

import pytest

from solsphere import cli
from solsphere.library.pools import FAMILIES, POOLS, common_cas, load_common, read_common
from solsphere.library.table import Library, Solvent, load_library
from solsphere.workflows import candidate_pool

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "data" / "demo" / "varnish_binder.csv"

#: Words in a library name or synonym that mark a reagent, not a test solvent.
REAGENT_WORDS = ("hydrazin", "isocyanat", "isothiocyanat", "oyl chloride", "yl chloride",
                 "chloroformate", "anhydride", "aziridin", "oxiran", "epoxy", "acrylate",
                 "sulfonyl chloride", "thionyl", "phosphoryl")
#: Solvents restricted almost everywhere (or named in the problem report), left out.
LEFT_OUT = ("benzene", "carbon tetrachloride", "1,1,1-trichloroethane", "trichloroethylene",
            "1,2-dichloroethane", "hexamethylphosphoramide", "2-methoxyethanol",
            "2-ethoxyethanol", "1-methylnaphthalene", "phenylhydrazine", "benzoyl chloride")



@pytest.fixture(scope="module")
def entries():
    return load_common()


def run_json(argv) -> dict:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        rc = cli.main([str(a) for a in argv] + ["--json"])
    assert rc == 0, err.getvalue()
    return json.loads(out.getvalue())


# ----------------------------------------------------------------------------- the list

def test_every_row_is_a_library_liquid_with_a_unique_cas(lib, entries):
    assert 150 <= len(entries) <= 200
    cas = [e.cas for e in entries]
    assert len(set(cas)) == len(cas)
    for e in entries:
        s = lib.find(e.cas)
        assert s is not None, f"{e.cas} ({e.name}) is not in solvents.csv"
        assert s.cas == e.cas
        assert s.liquid is True, f"{e.name} ({e.cas}) is not a liquid in the library"


def test_each_name_resolves_to_its_own_cas(lib, entries):
    # the name is a second key: a CAS typed from memory that belongs to another
    # compound is caught here
    for e in entries:
        s = lib.find(e.name)
        assert s is not None and s.cas == e.cas, (e.name, e.cas, s and s.cas)


def test_families_are_from_the_allowed_set(entries):
    assert {e.family for e in entries} <= FAMILIES
    assert {"water", "alcohol", "ketone", "ester", "glycol ether", "hydrocarbon",
            "aromatic", "chlorinated", "dipolar aprotic", "ether"} <= {e.family for e in entries}


def test_no_reagents_and_none_of_the_left_out_solvents(lib, entries):
    for e in entries:
        # display names only: old synonyms can mislead (diethyl carbonate is also listed
        # as "ethoxyformic anhydride")
        words = f"{lib.lookup(e.cas).name} | {e.name}".casefold()
        assert not [w for w in REAGENT_WORDS if w in words], words
    listed = {e.cas for e in entries}
    for name in LEFT_OUT:
        assert lib.lookup(name).cas not in listed, name


def test_well_known_solvents_are_on_it(lib):
    keep = common_cas()
    for name in ("water", "ethanol", "isopropanol", "acetone", "MEK", "ethyl acetate",
                 "toluene", "n-hexane", "dichloromethane", "DMSO", "NMP", "DMF", "THF",
                 "2-MeTHF", "ethyl lactate", "dimethyl carbonate", "anisole",
                 "propylene carbonate", "2-butoxyethanol", "1-methoxy-2-propanol"):
        assert lib.lookup(name).cas in keep, name


def test_row_count_is_pinned(entries):
    # checksum: a silent edit of the list shows here (update with the list on purpose)
    assert len(entries) == 175
    assert sum(e.family == "ester" for e in entries) == 36  # 3 estimated from structure (ethyl levulinate, methyl lactate, PG diacetate)


@pytest.mark.parametrize("text, words", [
    ("cas,name\n67-64-1,acetone\n", ["line 1", "header"]),
    ("cas,name,family\n67-64-1,acetone,solvent\n", ["line 2", "family", "'solvent'"]),
    ("# c\ncas,name,family\n67-64-1,acetone,ketone\n67-64-1,propanone,ketone\n",
     ["line 4", "repeats line 3"]),
    ("cas,name,family\n67-64-1,,ketone\n", ["line 2", "3 filled cells"]),
])
def test_read_common_refuses_a_broken_list(text, words):
    with pytest.raises(ValueError) as exc:
        read_common(text, source="x.csv")
    msg = str(exc.value)
    assert msg.startswith("x.csv")
    for w in words:
        assert w in msg, msg


# ----------------------------------------------------------------------------- library, session

def test_library_common_keeps_only_listed_cas_numbers_in_order():
    recs = [Solvent("reagent x", 17.0, 9.0, 9.0, cas="98-88-4", liquid=True),
            Solvent("acetone", 15.5, 10.4, 7.0, cas="67-64-1", liquid=True),
            Solvent("no cas", 16.0, 0.0, 0.0, liquid=True),
            Solvent("water", 15.5, 16.0, 42.3, cas="7732-18-5", liquid=True)]
    assert Library.from_records(recs).common().names == ("acetone", "water")


def test_packaged_common_subset_matches_the_list(lib, entries):
    sub = lib.common()
    assert len(sub) == len(entries)
    assert {s.cas for s in sub} == {e.cas for e in entries}
    assert len(sub) < len(lib.liquids())


def test_candidate_pool_common_and_its_record(lib):
    keep = common_cas()
    pool, f = candidate_pool(lib, pool="common", min_flash_point=40)  # the older name
    assert f["pool"] == "working solvents"
    assert pool and all(s.cas in keep for s in pool)
    assert all(s.flash_point is not None and s.flash_point >= 40 for s in pool)
    assert candidate_pool(lib, min_flash_point=40)[0] == pool  # working is the default
    liquids, g = candidate_pool(lib, min_flash_point=40, pool="all")
    assert g["pool"] == "library liquids" and len(liquids) > len(pool)
    assert candidate_pool(lib, min_flash_point=40, pool="liquids")[0] == liquids
    assert any(s.cas not in keep for s in liquids)
    with pytest.raises(ValueError, match="'working', 'all'"):
        candidate_pool(lib, pool="everything")
    assert POOLS == ("working", "all")


def test_a_shelf_overrides_the_pool(lib, tmp_path):
    shelf = tmp_path / "shelf.csv"
    shelf.write_text("solvent\n1-methylnaphthalene\nnitrobenzene\nacetone\n", encoding="utf-8")
    pool, f = candidate_pool(lib, shelf=str(shelf), pool="common")
    assert f["pool"] == str(shelf)
    assert {s.name for s in pool} == {"1-methylnaphthalene", "nitrobenzene", "acetone"}


# ----------------------------------------------------------------------------- command line

def test_rank_default_is_the_working_pool_and_pool_all_widens(lib):
    keep = common_cas()
    base = run_json(["rank", DEMO, "--top", "200", "--pool", "all"])
    assert base["filters"]["pool"] == "library liquids"
    assert any(s["cas"] not in keep for s in base["solvents"])
    com = run_json(["rank", DEMO, "--top", "200"])
    assert com["filters"]["pool"] == "working solvents"
    assert com["solvents"] and all(s["cas"] in keep for s in com["solvents"])
    assert com["n_candidates"] < base["n_candidates"]


def test_next_defaults_to_common_solvents(lib):
    keep = common_cas()
    d = run_json(["next", DEMO, "--n", "3", "--samples", "200", "--min-flash-point", "40"])
    assert d["filters"]["pool"] == "working solvents"
    names = [s["name"] for s in d["suggestions"]]
    assert len(names) == 3 and all(lib.lookup(n).cas in keep for n in names)
    assert not {"1-methylnaphthalene", "phenylhydrazine", "benzoyl chloride"} & set(names)
    wide = run_json(["next", DEMO, "--n", "3", "--samples", "200", "--pool", "liquids"])
    assert wide["filters"]["pool"] == "library liquids"
    assert wide["n_candidates"] > d["n_candidates"]


def test_next_candidates_shelf_overrides_the_default_pool(lib, tmp_path):
    shelf = tmp_path / "shelf.csv"
    shelf.write_text("solvent\n1-methylnaphthalene\nnitrobenzene\nquinoline\nstyrene\n",
                     encoding="utf-8")
    d = run_json(["next", DEMO, "--n", "2", "--samples", "200", "--candidates", shelf])
    assert d["filters"]["pool"] == str(shelf)
    names = {s["name"] for s in d["suggestions"]}
    assert names and names <= {"1-methylnaphthalene", "nitrobenzene", "quinoline", "styrene"}
    assert not {lib.lookup(n).cas for n in names} & common_cas()


def test_blend_and_replace_take_the_pool_option(lib):
    keep = common_cas()
    b = run_json(["blend", DEMO, "--top", "5", "--pool", "common"])
    assert b["filters"]["pool"] == "working solvents"
    assert b["blends"] and all(lib.lookup(n).cas in keep for x in b["blends"]
                               for n in x["solvents"])
    r = run_json(["replace", "toluene", "--pool", "common", "--top", "5"])
    assert r["filters"]["pool"] == "working solvents"
    assert r["singles"] and all(lib.lookup(s["name"]).cas in keep for s in r["singles"])
    assert run_json(["replace", "toluene", "--top", "5", "--pool", "all"]
                    )["filters"]["pool"] == "library liquids"


def test_human_output_says_which_pool(capsys):
    assert cli.main(["next", str(DEMO), "--n", "1", "--samples", "200"]) == 0
    assert "Candidates: working solvents" in capsys.readouterr().out
    assert cli.main(["rank", str(DEMO), "--top", "1", "--pool", "all"]) == 0
    out = capsys.readouterr().out
    assert "Candidates: library liquids: reagents, monomers and intermediates are included" in out


def test_pool_help_text_names_both_choices(capsys):
    with pytest.raises(SystemExit):
        cli.main(["next", "--help"])
    text = " ".join(capsys.readouterr().out.split())
    assert "--pool {working,all,common,liquids}" in text and "Default: working" in text
    assert "overrides --pool" in text


# ----------------------------------------------------------------------------- app

@pytest.fixture(scope="module")
def demo_result(lib):
    from solsphere.app import logic
    st = logic.demo_state(lib)
    return logic.compute_fit(st["rows"], "good", lib)


def _find(component, cid):
    """The layout component with id ``cid`` (depth-first), or None."""
    if getattr(component, "id", None) == cid:
        return component
    kids = getattr(component, "children", None)
    for k in kids if isinstance(kids, (list, tuple)) else [kids]:
        if k is not None and not isinstance(k, (str, int, float)):
            hit = _find(k, cid)
            if hit is not None:
                return hit
    return None


def test_pool_selector_defaults_per_screen(lib):
    # every recommendation screen has the pool selector, working solvents by default
    from solsphere.app import blends, nexttrials, replace, trynext
    assert _find(nexttrials.panel(), "nt-pool").value == "working"
    assert _find(trynext.panel(), "next-pool").value == "working"
    assert _find(blends.panel(lib), "blend-pool").value == "working"
    assert _find(replace.panel(), "replace-pool").value == "working"
    # only where it is wired: not by default
    assert _find(trynext.filters("x"), "x-pool") is None


def test_shortlist_honours_the_checkbox(demo_result, lib):
    from solsphere.app import logic
    keep = common_cas()
    on = logic.shortlist(demo_result, lib, top=200)
    off = logic.shortlist(demo_result, lib, top=200, common_only=False)
    assert on["rows"] and all(r["cas"] in keep for r in on["rows"])
    assert "working solvents" in on["message"]
    assert any(r["cas"] not in keep for r in off["rows"])


def test_blend_designer_honours_the_checkbox(demo_result, lib):
    from solsphere.app import blendlogic
    keep = common_cas()
    on = blendlogic.blend_designer(demo_result, lib, top=10)
    assert on["blends"] and "working solvents" in on["message"]
    assert all(lib.lookup(n).cas in keep for b in on["blends"] for n in b["solvents"])
    off = blendlogic.blend_designer(demo_result, lib, top=10, common_only=False)
    assert "library liquids" in off["message"]
    # ticked solvents are the user's choice: the checkbox does not remove them
    t = blendlogic.blend_designer(demo_result, lib, pool_choice="ticked", common_only=True,
                                  ticked=["1-methylnaphthalene", "nitrobenzene", "ethanol"])
    assert {n for b in t["blends"] for n in b["solvents"]} & {"1-methylnaphthalene",
                                                              "nitrobenzene"}


def test_next_trials_pool_follows_the_checkbox(demo_result, lib):
    from solsphere.app import uncertainty
    keep = common_cas()
    on = uncertainty.next_trials(demo_result, lib, n=3, n_samples=200)
    assert on["suggestions"] and all(lib.lookup(s["name"]).cas in keep
                                     for s in on["suggestions"])
    off = uncertainty.next_trials(demo_result, lib, n=3, n_samples=200, pool="liquids")
    assert off["suggestions"]

    def n_candidates(out):  # "3 of 114 untried ..."
        return int(re.search(r"of (\d+) untried", out["message"]).group(1))
    assert n_candidates(on) < n_candidates(off)


def test_doctests():
    import doctest

    from solsphere.library import pools as common
    failures, tried = doctest.testmod(common)
    assert tried >= 1 and failures == 0
