"""Tests for solsphere.rank: untried solvents sorted by RED, with safety flags.

The solvents below are invented test records (coordinates near handbook values, from
memory, but only their arithmetic matters). RED is recomputed here from the Hansen
distance written out: Ra² = 4ΔδD² + ΔδP² + ΔδH², RED = Ra/R0 (Hansen, *Hansen
Solubility Parameters: A User's Handbook*, 2nd ed., CRC Press 2007, ch. 1; from memory).
"""

from __future__ import annotations

import json
import math

import pytest

from solsphere.library.hazards import hazard_facts
from solsphere.library.table import Solvent, hazard_flags
from solsphere.design.ranking import CAUTION, Ranking, format_table, rank_solvents

POOL = [
    Solvent("alpha", 18.0, 1.4, 2.0, cas="1-00-1", flash_point=4.0, boiling_point=111.0,
            twa_ppm=20.0),
    Solvent("beta", 15.5, 10.4, 7.0, cas="2-00-2", flash_point=-18.0, boiling_point=56.0),
    Solvent("gamma", 15.8, 8.8, 19.4, cas="3-00-3", flash_point=13.0, twa_ppm=1000.0),
    Solvent("delta", 17.0, 6.0, 8.0, cas=None, carcinogen="IARC group 2B", twa_ppm=5.0),
    Solvent("epsilon", 16.0, 5.0, 5.0, cas="5-00-5", flash_point=70.0, spread=1.8),
    Solvent("zeta", 19.0, 12.0, 4.0, cas="6-00-6", flash_point=120.0),
]
CENTRE = (17.0, 6.0, 6.0)
R0 = 5.0


def red(s, c=CENTRE, r0=R0):
    return math.sqrt(4 * (s.dD - c[0]) ** 2 + (s.dP - c[1]) ** 2 + (s.dH - c[2]) ** 2) / r0


def test_sorted_by_red_with_independent_values():
    r = rank_solvents(POOL, CENTRE, R0)
    assert isinstance(r, Ranking)
    expected = sorted(POOL, key=red)
    assert [x.solvent.name for x in r.solvents] == [s.name for s in expected]
    for x in r.solvents:
        assert x.red == pytest.approx(red(x.solvent), rel=1e-12)
        assert x.Ra == pytest.approx(red(x.solvent) * R0, rel=1e-12)
    assert r.n_candidates == len(POOL) and r.R0 == R0 and r.centre == CENTRE


def test_top_keeps_the_nearest():
    full = rank_solvents(POOL, CENTRE, R0)
    top = rank_solvents(POOL, CENTRE, R0, top=2)
    assert [x.solvent.name for x in top.solvents] == [x.solvent.name for x in full.solvents[:2]]
    assert top.n_candidates == len(POOL)  # counted before the cut
    assert rank_solvents(POOL, CENTRE, R0, top=0).solvents == []
    assert len(rank_solvents(POOL, CENTRE, R0, top=100).solvents) == len(POOL)


@pytest.mark.parametrize("top", [-1, 1.5, True])
def test_bad_top_is_refused(top):
    with pytest.raises(ValueError, match="top"):
        rank_solvents(POOL, CENTRE, R0, top=top)


def test_tested_left_out_by_name_or_cas():
    r = rank_solvents(POOL, CENTRE, R0, tested={"alpha", "3-00-3"})
    names = [x.solvent.name for x in r.solvents]
    assert "alpha" not in names and "gamma" not in names and len(names) == 4
    assert r.n_candidates == 4


def test_include_tested_marks_them():
    r = rank_solvents(POOL, CENTRE, R0, tested={"alpha", "3-00-3"}, include_tested=True)
    marks = {x.solvent.name: x.tested for x in r.solvents}
    assert marks == {"alpha": True, "beta": False, "gamma": True, "delta": False,
                     "epsilon": False, "zeta": False}


def test_flags_are_the_hazard_facts():
    r = rank_solvents(POOL, CENTRE, R0)
    for x in r.solvents:
        assert x.flags == hazard_facts(x.solvent)
        # invented solvents are outside the working pool: corrosivity not assessed, said
        assert x.flags[0].startswith("skin corrosion / acute toxicity not assessed")
        assert x.flags[1:] == hazard_flags(x.solvent)
    by = {x.solvent.name: x.flags for x in r.solvents}
    assert any("flash point 4 °C" in f for f in by["alpha"])
    assert any("carcinogen" in f for f in by["delta"]) and any("5 ppm" in f for f in by["delta"])
    assert any("no flash point data" in f for f in by["delta"])
    assert any("disagree" in f for f in by["epsilon"])


def test_to_dict_keys_and_json_safe():
    r = rank_solvents(POOL, CENTRE, R0, filters={"pool": "test"})
    d = r.to_dict()
    assert {"centre", "R0", "n_candidates", "filters", "solvents", "caution"} <= set(d)
    assert d["filters"] == {"pool": "test"} and d["caution"] == CAUTION
    row = d["solvents"][0]
    assert {"name", "cas", "dD", "dP", "dH", "Ra", "red", "inside", "boiling_point",
            "flash_point", "twa_ppm", "carcinogen", "flags", "tested"} <= set(row)
    assert [s["red"] for s in d["solvents"]] == sorted(s["red"] for s in d["solvents"])
    for s in d["solvents"]:
        assert s["inside"] == (s["red"] <= 1.0)
    json.dumps(d, allow_nan=False)  # plain types only


def test_str_is_a_table_with_caution():
    text = str(rank_solvents(POOL, CENTRE, R0, top=3))
    lines = text.splitlines()
    assert "3 of 6 candidates" in lines[0] and "R0 5.0" in lines[0]
    assert lines[1].split()[:5] == ["solvent", "dD", "dP", "dH", "RED"]
    assert set(lines[2].replace(" ", "")) == {"-"}
    first = sorted(POOL, key=red)[0]
    assert lines[3].startswith(first.name) and f"{red(first):.2f}" in lines[3]
    assert lines[-1] == CAUTION


def test_empty_pool_and_all_tested():
    r = rank_solvents([], CENTRE, R0)
    assert r.solvents == [] and r.n_candidates == 0
    r = rank_solvents(POOL, CENTRE, R0, tested={s.name for s in POOL})
    assert r.solvents == []
    text = str(r)
    assert "No untried candidate" in text and CAUTION in text
    assert r.to_dict()["solvents"] == []


def test_ties_keep_pool_order():
    twins = [Solvent("one", 17.0, 6.0, 7.0), Solvent("two", 17.0, 6.0, 5.0),
             Solvent("three", 17.0, 7.0, 6.0)]
    r = rank_solvents(twins, CENTRE, R0)
    assert [x.solvent.name for x in r.solvents] == ["one", "two", "three"]


def test_format_table_aligns_columns():
    out = format_table([("a", "bb"), ("ccc", "d")]).splitlines()
    assert out == ["a    bb", "---  --", "ccc  d"]
