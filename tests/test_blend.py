"""Tests for solsphere.blend: exact two-solvent blend screening.

The closed forms are checked against independent computations: a hand-worked example,
bounded Brent minimisation (scipy.optimize.minimize_scalar) of the Hansen distance of
``hsp.mix`` blends, and a dense scan of fractions. All solvents here are invented
points (not library data) unless a test says otherwise.
"""

from __future__ import annotations

import doctest
import json
import math
import re

import numpy as np
import pytest
from scipy.optimize import minimize_scalar

import solsphere.design.pairs as blend_mod
from solsphere.design.pairs import (CAUTION, Blend, BlendScreen, best_fraction, inside_window,
                             mass_fractions, pair_screen, screen_blends)
from solsphere.hansen import mix, ra
from solsphere.library.table import Solvent

# ---- the hand-worked example --------------------------------------------------------
# a = (18, 12, 6), b = (15, 0, 10), centre c = (16.75, 2, 9), R0 = 3 (all MPa½).
# a - b = (3, 12, -4); W(a - b) = (6, 12, -4); |W(a - b)|² = 36 + 144 + 16 = 196.
# c - b = (1.75, 2, -1); (c - b)·W²(a - b) = 4*1.75*3 + 2*12 + (-1)(-4) = 21 + 24 + 4 = 49.
# phi* = 49 / 196 = 0.25 (inside [0, 1], no clipping).
# (Without the factor 4 one would get 33.25 / 169 = 0.197 -- the test would catch that.)
# Blend point: b + 0.25 (a - b) = (15.75, 3, 9).
# Ra² = 4 (16.75 - 15.75)² + (2 - 3)² + (9 - 9)² = 4 + 1 = 5  ->  Ra = √5, RED = √5 / 3.
# The blend point is the closest point of the whole line, so the window is
# phi* -+ sqrt(R0² - Ra²) / |W(a - b)| = 0.25 -+ sqrt(9 - 5) / 14 = 0.25 -+ 1/7
#   -> [0.107142857..., 0.392857142...].
# a alone: Ra² = 4 (1.25)² + 10² + 3² = 115.25 (RED 3.58); b alone: 4 (1.75)² + 2² + 1² =
# 17.25 (RED 1.38): both outside, yet the blend is inside ("two non-solvents").
A = (18.0, 12.0, 6.0)
B = (15.0, 0.0, 10.0)
C = (16.75, 2.0, 9.0)
R0 = 3.0


def _solv(name, point, **kw):
    return Solvent(name=name, dD=point[0], dP=point[1], dH=point[2], **kw)


def test_hand_worked_example_scalar():
    assert best_fraction(A, B, C) == pytest.approx(0.25, abs=1e-14)
    lo, hi = inside_window(A, B, C, R0)
    assert lo == pytest.approx(0.25 - 1 / 7, abs=1e-13)
    assert hi == pytest.approx(0.25 + 1 / 7, abs=1e-13)
    # the order of the components mirrors the fraction and the window
    assert best_fraction(B, A, C) == pytest.approx(0.75, abs=1e-14)
    lo2, hi2 = inside_window(B, A, C, R0)
    assert (lo2, hi2) == pytest.approx((1 - hi, 1 - lo), abs=1e-13)


def test_hand_worked_example_vectorised_and_blend_object():
    out = pair_screen([A, B], C, R0)
    assert out["i"].tolist() == [0] and out["j"].tolist() == [1]
    assert out["phi"][0] == pytest.approx(0.25, abs=1e-14)
    assert out["red"][0] == pytest.approx(math.sqrt(5) / 3, abs=1e-13)
    assert out["lo"][0] == pytest.approx(0.25 - 1 / 7, abs=1e-13)
    assert out["hi"][0] == pytest.approx(0.25 + 1 / 7, abs=1e-13)
    assert not out["single"][0]

    res = screen_blends([_solv("alpha", A, density=0.8), _solv("beta", B, density=1.2)],
                        C, R0)
    assert isinstance(res, BlendScreen) and len(res.blends) == 1
    b = res.blends[0]
    assert isinstance(b, Blend)
    # larger part first: 75 % beta + 25 % alpha; window is for beta: 1 - [hi, lo]
    assert b.solvents == ["beta", "alpha"]
    assert b.volume_fractions == pytest.approx([0.75, 0.25], abs=1e-14)
    assert (b.dD, b.dP, b.dH) == pytest.approx((15.75, 3.0, 9.0), abs=1e-12)
    assert b.ra == pytest.approx(math.sqrt(5), abs=1e-12)
    assert b.red == pytest.approx(math.sqrt(5) / 3, abs=1e-13)
    assert b.inside_window == pytest.approx([0.75 - 1 / 7, 0.75 + 1 / 7], abs=1e-13)
    assert b.window_width == pytest.approx(2 / 7, abs=1e-13)
    assert b.red_components == pytest.approx([math.sqrt(17.25) / 3, math.sqrt(115.25) / 3])
    # mass fractions by hand: beta 0.75*1.2 = 0.9 g, alpha 0.25*0.8 = 0.2 g -> 0.9/1.1
    assert b.mass_fractions == pytest.approx([0.9 / 1.1, 0.2 / 1.1], abs=1e-14)
    assert b.both_non_solvents is True
    assert res.n_candidates == 2 and res.n_pairs_screened == 1


def test_mass_fractions_hand_example_and_unknown_density():
    # 25 % by volume of a liquid of density 0.8 with 75 % of one of density 1.2:
    # 0.25*0.8 = 0.2 g and 0.75*1.2 = 0.9 g per cm³ of blend -> 0.2/1.1 = 0.1818...
    assert mass_fractions(0.25, 0.8, 1.2) == pytest.approx([2 / 11, 9 / 11], abs=1e-15)
    assert mass_fractions(0.5, 1.0, 1.0) == pytest.approx([0.5, 0.5])
    assert mass_fractions(0.25, None, 1.2) is None
    assert mass_fractions(0.25, 0.8, None) is None
    res = screen_blends([_solv("alpha", A, density=0.8), _solv("beta", B)], C, R0)
    assert res.blends[0].mass_fractions is None
    assert res.blends[0].to_dict()["mass_fractions"] is None


def _random_points(rng, n):
    return np.c_[rng.uniform(14, 21, n), rng.uniform(0, 18, n), rng.uniform(0, 25, n)]


def test_vectorised_agrees_with_scalar_helpers_and_chunking():
    rng = np.random.default_rng(11)
    pts = _random_points(rng, 14)
    c, r0 = np.array([17.5, 8.0, 9.0]), 6.0
    full = pair_screen(pts, c, r0)
    small = pair_screen(pts, c, r0, chunk=5)          # many chunks, same answers
    for key in ("i", "j", "phi", "red", "lo", "hi", "single"):
        np.testing.assert_array_equal(full[key], small[key])
    assert len(full["i"]) == 14 * 13 // 2
    assert np.all(full["i"] < full["j"])
    n_windows = 0
    for k in range(len(full["i"])):
        a, b = pts[full["i"][k]], pts[full["j"][k]]
        assert full["phi"][k] == pytest.approx(best_fraction(a, b, c), abs=1e-15)
        w = inside_window(a, b, c, r0)
        if w is None:
            assert np.isnan(full["lo"][k]) and np.isnan(full["hi"][k])
        else:
            n_windows += 1
            assert (full["lo"][k], full["hi"][k]) == pytest.approx(w, abs=1e-15)
        # RED from hsp.ra of the hsp.mix blend (independent of blend.py's algebra)
        x = mix([a, b], [full["phi"][k], 1 - full["phi"][k]])
        assert full["red"][k] == pytest.approx(ra(x, c)[0] / r0, rel=1e-12)
    assert 0 < n_windows < len(full["i"])               # both cases were exercised
    # an explicit subset of pairs gives the same numbers as the full screen
    pick = np.array([3, 0, 50, 90])
    sub = pair_screen(pts, c, r0, pairs=(full["i"][pick], full["j"][pick]))
    np.testing.assert_array_equal(sub["phi"], full["phi"][pick])
    np.testing.assert_array_equal(sub["red"], full["red"][pick])


def test_best_fraction_matches_bounded_minimisation_on_random_pairs():
    rng = np.random.default_rng(2024)
    n_interior = 0
    for _ in range(400):
        a, b = _random_points(rng, 2)
        c = _random_points(rng, 1)[0]

        def dist(phi, a=a, b=b, c=c):
            return ra(mix([a, b], [phi, 1 - phi]), c)[0]

        ref = minimize_scalar(dist, bounds=(0.0, 1.0), method="bounded",
                              options={"xatol": 1e-12})
        phi = best_fraction(a, b, c)
        # ours is exact: never worse than the numerical minimum
        assert dist(phi) <= ref.fun + 1e-9
        if 1e-4 < phi < 1 - 1e-4:
            n_interior += 1
            assert phi == pytest.approx(ref.x, abs=1e-5)
            assert dist(phi) == pytest.approx(ref.fun, abs=1e-9)
        else:  # clipped: the numerical minimum is at the same end (Brent stays a hair
            # inside the bounds, so its distance is slightly larger than ours)
            assert abs(ref.x - phi) < 1e-4
            assert dist(phi) == pytest.approx(ref.fun, abs=1e-5)
    assert n_interior > 50


def test_window_endpoints_match_dense_scan():
    rng = np.random.default_rng(7)
    grid = np.linspace(0.0, 1.0, 200_001)
    step = grid[1] - grid[0]
    seen = {"none": 0, "partial": 0, "whole": 0}
    for _ in range(60):
        a, b = _random_points(rng, 2)
        # put the centre near the segment so that all three cases occur
        c = b + rng.uniform(-0.2, 1.2) * (a - b) + rng.normal(0, 2.0, 3)
        r0 = rng.uniform(2.0, 9.0)
        inside = ra(grid[:, None] * a + (1 - grid[:, None]) * b, c) <= r0
        w = inside_window(a, b, c, r0)
        if not inside.any():
            assert w is None
            seen["none"] += 1
            continue
        assert w is not None
        lo, hi = w
        first, last = grid[inside][0], grid[inside][-1]
        assert abs(lo - first) <= step and abs(hi - last) <= step
        assert inside[(grid >= lo + step) & (grid <= hi - step)].all()  # one interval
        seen["whole" if (lo == 0.0 and hi == 1.0) else "partial"] += 1
        # unclipped ends lie on the sphere surface
        for end in (lo, hi):
            if 0.0 < end < 1.0:
                x = end * a + (1 - end) * b
                assert ra(x, c)[0] == pytest.approx(r0, rel=1e-9)
    assert all(v > 0 for v in seen.values()), seen


def test_both_non_solvents_flag():
    # the hand example: both alone outside (RED 3.58 and 1.38), the 25/75 blend inside
    shelf = [_solv("alpha", A), _solv("beta", B)]
    b = screen_blends(shelf, C, R0).blends[0]
    assert b.red < 1 and min(b.red_components) > 1 and b.both_non_solvents
    # a third solvent sitting inside the sphere: its pairs are not "two non-solvents"
    gamma = _solv("gamma", (16.5, 3.0, 8.0))   # Ra² = 4*0.0625 + 1 + 1 = 2.25 < 9
    res = screen_blends(shelf + [gamma], C, R0, only_blends=False)
    by_pair = {frozenset(x.solvents): x for x in res.blends}
    assert by_pair[frozenset({"alpha", "beta"})].both_non_solvents
    assert not by_pair[frozenset({"alpha", "gamma"})].both_non_solvents
    assert not by_pair[frozenset({"beta", "gamma"})].both_non_solvents


def test_identical_components():
    p = (17.0, 4.0, 8.0)
    assert best_fraction(p, p, C) == 0.5
    inside_c = (17.0, 5.0, 8.0)                       # Ra = 1 from p
    assert inside_window(p, p, inside_c, R0) == (0.0, 1.0)
    assert inside_window(p, p, (30.0, 20.0, 20.0), R0) is None
    out = pair_screen([p, p], inside_c, R0)
    assert out["single"][0] and out["phi"][0] == 0.5
    assert out["red"][0] == pytest.approx(1 / 3)
    two = [_solv("one", p), _solv("two", p)]
    assert screen_blends(two, inside_c, R0).blends == []           # not a true pair
    kept = screen_blends(two, inside_c, R0, only_blends=False).blends
    assert len(kept) == 1 and kept[0].best_is_single
    assert kept[0].inside_window == [0.0, 1.0]


def test_single_best_pairs_are_ranked_only_on_request():
    # gamma is at the centre itself: any pair with gamma is best as gamma alone
    shelf = [_solv("alpha", A), _solv("beta", B), _solv("gamma", C)]
    res = screen_blends(shelf, C, R0)
    assert [x.solvents for x in res.blends] == [["beta", "alpha"]]
    assert res.n_single_best == 2 and res.n_pairs_screened == 3
    allp = screen_blends(shelf, C, R0, only_blends=False)
    assert len(allp.blends) == 3
    assert allp.blends[0].red == pytest.approx(0.0, abs=1e-12)
    assert allp.blends[0].best_is_single
    assert allp.blends[0].volume_fractions == [1.0, 0.0]
    assert allp.blends[0].solvents[0] == "gamma"


def test_filters():
    shelf = [
        _solv("Alpha", A, flash_point=40.0, boiling_point=120.0),
        _solv("beta", B, flash_point=-10.0, boiling_point=56.0),
        _solv("gamma", (16.0, 4.0, 9.0), flash_point=None, boiling_point=150.0),
        _solv("delta", (17.5, 1.0, 7.0), flash_point=70.0, boiling_point=None),
        _solv("eps", (15.5, 6.0, 12.0), flash_point=30.0, boiling_point=250.0),
        _solv("ALPHA", (20.0, 20.0, 20.0)),            # duplicate name: screened once
    ]
    res = screen_blends(shelf, C, R0, only_blends=False)
    assert res.n_candidates == 5 and res.filters["duplicates_dropped"] == ["ALPHA"]

    res = screen_blends(shelf, C, R0, exclude=["alpha", "nonesuch"], only_blends=False)
    assert res.filters["excluded_by_name"] == ["Alpha"]
    assert res.filters["exclude_not_found"] == ["nonesuch"]
    assert all("Alpha" not in x.solvents for x in res.blends)
    assert res.n_candidates == 4 and res.n_pairs_screened == 6

    res = screen_blends(shelf, C, R0, min_flash_point=23, only_blends=False)
    f = res.filters
    assert f["removed_low_flash_point"] == ["beta"]
    assert f["removed_unknown_flash_point"] == ["gamma"]       # conservative
    names = {n for x in res.blends for n in x.solvents}
    assert names == {"Alpha", "delta", "eps"}
    assert "unknown flash point" in str(res)

    res = screen_blends(shelf, C, R0, max_boiling_point=200, only_blends=False)
    assert res.filters["removed_high_boiling_point"] == ["eps"]
    assert res.filters["removed_unknown_boiling_point"] == ["delta"]
    assert {n for x in res.blends for n in x.solvents} == {"Alpha", "beta", "gamma"}

    res = screen_blends(shelf, C, R0, min_flash_point=35, max_boiling_point=200)
    assert res.n_candidates == 1 and res.n_pairs_screened == 0 and res.blends == []
    assert "No blends" in str(res)


def test_top_selection_matches_full_sort_and_order():
    rng = np.random.default_rng(5)
    pts = _random_points(rng, 40)
    shelf = [_solv(f"s{k}", p) for k, p in enumerate(pts)]
    c, r0 = (17.5, 8.0, 9.0), 5.0
    everything = screen_blends(shelf, c, r0, top=None)
    assert len(everything.blends) == 780 - everything.n_single_best
    keys = [(x.red, -x.window_width if x.inside_window else 1.0) for x in everything.blends]
    assert keys == sorted(keys)
    for k in (1, 7, 20):
        part = screen_blends(shelf, c, r0, top=k)
        assert [x.solvents for x in part.blends] == \
            [x.solvents for x in everything.blends[:k]]
    assert screen_blends(shelf, c, r0, top=0).blends == []


def test_equal_red_ties_broken_by_wider_window():
    # centre at the origin of a symmetric set-up: pairs (p, -p) pass through the centre
    # (RED 0 for both); the one whose ends are nearer the centre has the wider window.
    c = np.array([17.0, 10.0, 10.0])
    near = [_solv("n1", c + [0, 3, 0]), _solv("n2", c - [0, 3, 0])]
    far = [_solv("f1", c + [0, 0, 5]), _solv("f2", c - [0, 0, 5])]
    res = screen_blends(far + near, c, 4.0, top=1)
    assert sorted(res.blends[0].solvents) == ["n1", "n2"]
    assert res.blends[0].red == pytest.approx(0.0, abs=1e-12)
    assert res.blends[0].inside_window == pytest.approx([0.0, 1.0])


def test_to_dict_contract_and_json():
    shelf = [_solv("alpha", A, flash_point=4.0, twa_ppm=5.0, density=0.8),
             _solv("beta", B, flash_point=None, carcinogen="IARC 2B", density=1.2),
             _solv("gamma", (16.0, 5.0, 12.0), flash_point=61.0)]
    res = screen_blends(shelf, C, R0, only_blends=False)
    d = json.loads(json.dumps(res.to_dict()))   # JSON-safe
    assert set(d) >= {"blends", "centre", "R0", "n_candidates", "n_pairs_screened",
                      "filters", "caution"}
    assert d["centre"] == list(C) and d["R0"] == R0
    reds = [x["red"] for x in d["blends"]]
    assert reds == sorted(reds)
    for x in d["blends"]:
        assert {"solvents", "volume_fractions", "red", "inside_window"} <= set(x)
        assert len(x["solvents"]) == 2 and sum(x["volume_fractions"]) == pytest.approx(1)
        assert x["inside_window"] is None or (len(x["inside_window"]) == 2
                                              and 0 <= x["inside_window"][0]
                                              <= x["inside_window"][1] <= 1)
    ab = next(x for x in d["blends"] if set(x["solvents"]) == {"alpha", "beta"})
    assert ab["flash_points"] == [None, 4.0]                # beta first (75 %)
    assert any(f.startswith("alpha") for f in ab["flags"])  # low flash point / TWA
    text = str(res)
    assert CAUTION in text and "75% beta + 25% alpha" in text
    row = next(line for line in text.splitlines() if "75% beta + 25% alpha" in line)
    assert re.search(r"\s\d+\.\d\s+\d+\.\d\s+\d+\.\d\s+\d\.\d\d\s", row)  # one decimal
    assert "flash pt" in text and "two non-solvents" in text


def testcomponent_flags_are_the_librarys_with_names():
    from solsphere.library.hazards import hazard_facts
    hot = _solv("hot", A, flash_point=-18.0)
    safe = _solv("safe", B, flash_point=95.0, twa_ppm=100.0)
    flags = blend_mod.component_flags([hot, safe])
    assert flags == [f"hot: {t}" for t in hazard_facts(hot)] + [f"safe: {t}" for t in hazard_facts(safe)]
    assert any("highly flammable" in t for t in flags)


def test_bad_arguments():
    with pytest.raises(ValueError, match="R0"):
        pair_screen([A, B], C, 0.0)
    with pytest.raises(ValueError, match="shape"):
        pair_screen([[1.0, 2.0]], C, 1.0)
    with pytest.raises(ValueError, match="finite"):
        pair_screen([A, (np.nan, 1.0, 1.0)], C, 1.0)
    with pytest.raises(ValueError, match="top"):
        screen_blends([], C, R0, top=-1)
    empty = screen_blends([], C, R0)
    assert empty.blends == [] and empty.n_pairs_screened == 0


def test_doctests():
    failures, _ = doctest.testmod(blend_mod)
    assert failures == 0


def test_packaged_library_smoke():
    """Optional: screen a few packaged liquids if the library loads (else skip)."""
    try:
        from solsphere.library.table import load_library
        lib = load_library()
        records = list(lib)[:60]
    except Exception as exc:  # library still being written
        pytest.skip(f"packaged library not available: {exc}")
    if len(records) < 2:
        pytest.skip("packaged library has fewer than two solvents")
    res = screen_blends(records, (17.0, 8.0, 8.0), 6.0, top=5)
    json.dumps(res.to_dict())
    assert res.n_pairs_screened == res.n_candidates * (res.n_candidates - 1) // 2
    assert [x.red for x in res.blends] == sorted(x.red for x in res.blends)


def test_miscibility_warning():
    from solsphere.design.pairs import may_not_mix, miscibility_warning
    # Library-like points (Hansen handbook values, from memory); log P from common practice.
    water = _solv("water", (15.5, 16.0, 42.3), cas="7732-18-5")
    heptane = _solv("heptane", (15.3, 0.0, 0.0), log_p=4.66)
    acetone = _solv("acetone", (15.5, 10.4, 7.0), log_p=-0.24)
    methanol = _solv("methanol", (15.1, 12.3, 22.3))
    hexane = _solv("hexane", (14.9, 0.0, 0.0))
    assert "may not mix" in miscibility_warning(water, heptane)
    assert miscibility_warning(water, acetone) is None            # miscible in practice
    assert "may not mix" in miscibility_warning(methanol, hexane)  # Ra 25.5 > 25
    assert miscibility_warning(acetone, hexane) is None
    assert may_not_mix([acetone, water, heptane]) and not may_not_mix([acetone, hexane])


# Solvent pairs at about 25 °C and whether they mix in all proportions (common solvent
# miscibility tables, from memory). True = one phase.
MISCIBILITY_TABLE = [
    ("hexane", "methanol", False), ("hexane", "dimethyl sulfoxide", False),
    ("hexane", "acetonitrile", False), ("hexane", "N,N-dimethylformamide", False),
    ("hexane", "ethylene glycol", False), ("hexane", "formamide", False),
    ("hexane", "acetone", True), ("hexane", "ethanol", True),
    ("hexane", "tetrahydrofuran", True), ("hexane", "ethyl acetate", True),
    ("hexane", "toluene", True), ("hexane", "dichloromethane", True),
    ("hexane", "diethyl ether", True), ("hexane", "2-propanol", True),
    ("hexane", "1-butanol", True), ("dimethyl sulfoxide", "toluene", True),
    ("dimethyl sulfoxide", "acetone", True), ("dimethyl sulfoxide", "ethanol", True),
    ("dimethyl sulfoxide", "dichloromethane", True),
    ("dimethyl sulfoxide", "ethyl acetate", True),
    ("dimethyl sulfoxide", "tetrahydrofuran", True),
    ("dimethyl sulfoxide", "cyclohexane", False), ("dimethyl sulfoxide", "decalin", False),
    ("dimethyl sulfoxide", "heptane", False), ("methanol", "cyclohexane", False),
    ("methanol", "toluene", True), ("acetonitrile", "cyclohexane", False),
    ("acetonitrile", "toluene", True), ("ethylene glycol", "toluene", False),
    ("ethylene glycol", "acetone", True), ("ethylene glycol", "ethanol", True),
    ("ethylene glycol", "dichloromethane", False),
    ("N,N-dimethylformamide", "cyclohexane", False), ("N,N-dimethylformamide", "toluene", True),
    ("1-methyl-2-pyrrolidinone", "hexane", False), ("1-methyl-2-pyrrolidinone", "toluene", True),
    ("propylene carbonate", "toluene", True), ("propylene carbonate", "hexane", False),
    ("glycerol", "acetone", False), ("glycerol", "ethanol", True),
    ("formamide", "ethanol", True), ("formamide", "toluene", False),
]


def test_miscibility_caution_against_a_miscibility_table():
    # The caution comes from the liquid-liquid phase test (UNIFAC activity coefficients).
    # Measured: 41 of 42 right; the one miss is propylene carbonate with hexane (split in
    # practice; UNIFAC, original parameters, finds them miscible). The earlier
    # Flory-Huggins caution got 33 of 42 (9 false alarms on alcohols with hydrocarbons).
    from solsphere.design.pairs import miscibility_warning
    from solsphere.library.table import load_library
    lib = load_library()
    right, wrong = 0, []
    for a, b, mixes in MISCIBILITY_TABLE:
        cautioned = miscibility_warning(lib.lookup(a), lib.lookup(b)) is not None
        right += cautioned != mixes
        if cautioned == mixes:
            wrong.append((a, b))
    assert right / len(MISCIBILITY_TABLE) >= 0.95, wrong
    assert set(wrong) <= {("propylene carbonate", "hexane")}
    assert miscibility_warning(lib.lookup("hexane"), lib.lookup("toluene")) is None
