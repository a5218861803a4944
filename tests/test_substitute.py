"""Substitution: closest replacements in Hansen space and for a material."""

import pytest

from solsphere import hansen as hsp
from solsphere.library.table import Solvent
from solsphere.design.substitution import find_substitutes

# Invented points with round numbers (not real solvents). The geometry tests pass
# allow_worse=True: beta and gamma flash lower than alpha, delta and epsilon have no
# flash point data, so the default rule would leave them out (tested below).
POOL = [
    Solvent(name="alpha", dD=18.0, dP=12.0, dH=7.0, flash_point=90.0),
    Solvent(name="beta", dD=17.0, dP=12.0, dH=7.0, flash_point=40.0),   # Ra to alpha = 2
    Solvent(name="gamma", dD=18.0, dP=15.0, dH=9.0, flash_point=10.0),  # Ra to alpha = sqrt(13)
    Solvent(name="delta", dD=18.0, dP=2.0, dH=7.0),                     # Ra to alpha = 10
    Solvent(name="epsilon", dD=18.0, dP=22.0, dH=7.0),                  # Ra to alpha = 10
]


def test_itself_ranks_first_when_kept():
    r = find_substitutes(POOL[0], POOL, include_self=True, n_pairs=0, allow_worse=True)
    assert r.singles[0].solvent.name == "alpha" and r.singles[0].Ra == 0.0


def test_singles_sorted_by_hansen_distance_and_target_left_out():
    r = find_substitutes(POOL[0], POOL, n_pairs=0, allow_worse=True)
    names = [s.solvent.name for s in r.singles]
    assert "alpha" not in names
    assert names[:2] == ["beta", "gamma"]
    # hand: beta sqrt(4*1^2) = 2; gamma sqrt(3^2 + 2^2) = sqrt(13)
    assert [s.Ra for s in r.singles[:2]] == pytest.approx([2.0, 13 ** 0.5])


def test_pair_of_two_far_solvents_lands_on_target():
    # delta and epsilon straddle alpha on the dP axis: the 50/50 blend is exactly alpha.
    r = find_substitutes(POOL[0], POOL[1:], n_pairs=3, allow_worse=True)
    best = r.pairs[0]
    assert set(best.solvents) == {"delta", "epsilon"}
    assert best.ra == pytest.approx(0.0, abs=1e-9)
    assert best.volume_fractions[0] == pytest.approx(0.5)


def test_material_mode_prefers_same_side_of_boundary():
    centre, R0 = (18.0, 12.0, 7.0), 2.5        # alpha at the centre: inside
    r = find_substitutes(POOL[0], POOL, material=(centre, R0), n_pairs=0, allow_worse=True)
    first = r.singles[0]
    assert first.solvent.name == "beta" and first.same_side is True   # RED 0.8, inside
    sides = [s.same_side for s in r.singles]
    assert sides == sorted(sides, reverse=True)  # all same-side ones first
    d = r.to_dict()
    assert d["material"]["red_target"] == pytest.approx(0.0)
    assert d["singles"][0]["red"] == pytest.approx(float(hsp.red(POOL[1].point, centre, R0)[0]))


def test_report_has_caution():
    text = str(find_substitutes(POOL[0], POOL))
    assert "confirm at the bench" in text and "safety data sheet" in text


def test_default_never_worse_leaves_out_and_says_why():
    r = find_substitutes(POOL[0], POOL, n_pairs=0)
    assert r.singles == []  # beta, gamma flash lower; delta, epsilon have no data
    assert set(r.refused["worse than the old solvent"]) == {"beta", "gamma"}
    assert set(r.refused["lack of data"]) == {"delta", "epsilon"}
    text = str(r)
    assert "Left out (lack of data): delta, epsilon" in text or \
        "Left out (lack of data): epsilon, delta" in text


def test_each_candidate_shows_better_same_worse():
    safer = Solvent(name="safer", dD=17.5, dP=12.0, dH=7.0, flash_point=120.0,
                    boiling_point=250.0)
    r = find_substitutes(POOL[1], [safer, POOL[2]], n_pairs=0, allow_worse=True)
    by = {s.solvent.name: s.versus for s in r.singles}
    assert by["safer"]["flammability"] == "better"     # no GHS category vs category 3
    assert by["gamma"]["flammability"] == "worse"      # flash 10 °C: category 1 (no bp)
    assert by["safer"]["carcinogen"] == "same"
