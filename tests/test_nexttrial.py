"""Tests of solsphere.nexttrial: informative, spread-out next trials.

Independent checks: the conditional-entropy gain against a direct count of the yes/no
patterns, hand-made sphere ensembles whose best picks are known, and the filters on the
candidate list. All data here are invented.
"""

import json
from collections import Counter

import numpy as np
import pytest

from solsphere.uncertainty.bootstrap import Bootstrap, bootstrap
from solsphere.hansen import ra
from solsphere.library.table import Library, Solvent
from solsphere.uncertainty.nexttrials import CAUTION, select_informative, suggest_next


def entropy_of_patterns(rows) -> float:
    """Direct entropy (nats) of the distinct rows of a 0/1 matrix."""
    counts = np.array(list(Counter(map(tuple, rows)).values()), dtype=float)
    p = counts / counts.sum()
    return float(-(p * np.log(p)).sum())


def test_gains_are_conditional_entropies():
    rng = np.random.default_rng(0)
    A = rng.random((200, 12)) < rng.uniform(0.1, 0.9, 12)
    picks, gains, alone = select_informative(A, 4)
    assert alone[0] == gains[0]
    for k in range(len(picks)):
        before = entropy_of_patterns(A[:, picks[:k]]) if k else 0.0
        after = entropy_of_patterns(A[:, picks[:k + 1]])
        assert gains[k] == pytest.approx(after - before, abs=1e-9)  # p clipped at 1e-12
        # and it is the best available at that step
        for j in set(range(12)) - set(picks[:k + 1]):
            assert entropy_of_patterns(A[:, picks[:k] + [j]]) - before <= gains[k] + 1e-9


def test_neighbours_are_not_picked_twice():
    # 100 invented spheres; candidates 0-3 are near-copies (the same split, p = 0.5),
    # candidate 4 splits the spheres independently of them (p = 0.5), 5 is p = 0.3.
    rng = np.random.default_rng(1)
    base = rng.random(100) < 0.5
    other = rng.permutation(base)
    A = np.column_stack([base, base, base, base, other, rng.random(100) < 0.3])
    # Naive ranking by p(1 - p) would take three copies first; ours takes one copy and
    # then the independent split.
    picks, _, alone = select_informative(A, 2)
    assert picks[0] in (0, 1, 2, 3) and picks[1] == 4


def test_disagreement_beats_a_coin_toss():
    # Soft spheres: on candidate 0 every sphere says P(good) = 0.5 (a coin toss whichever
    # sphere is right: nothing to learn); on candidate 1 half the spheres say 0.95 and
    # half 0.05 (they disagree). Its expected information, by hand: H(0.5) - H(0.05)
    # = 0.6931 - 0.1985 = 0.4946 nats; candidate 0's is 0.
    L = np.column_stack([np.full(100, 0.5), np.repeat([0.95, 0.05], 50)])
    picks, gains, _ = select_informative(L, 1)
    assert picks == [1]
    h = lambda p: -(p * np.log(p) + (1 - p) * np.log(1 - p))  # noqa: E731
    assert gains[0] == pytest.approx(h(0.5) - h(0.05), abs=1e-9)
    # Given candidate 1's result, a second copy of it tells less than the first did.
    L2 = np.column_stack([L[:, 1], L[:, 1]])
    _, g2, alone = select_informative(L2, 2)
    assert g2[1] < 0.5 * alone[1]


def test_all_agree_falls_back_to_the_boundary():
    A = np.zeros((50, 4), dtype=bool)
    P = np.array([[18, 5, 5], [18, 5.2, 5], [10, 30, 30], [18, 12, 5]], float)
    red = np.array([1.05, 1.06, 3.0, 1.2])
    picks, gains, _ = select_informative(A, 3, P, red, R0=4.0)
    # Nearest the surface first; the near-copy of it (0.2 MPa½ away) is held back
    # behind candidates at least R0/2 away.
    assert picks == [0, 3, 2] and gains == [None] * 3


def _lib():
    rng = np.random.default_rng(3)
    recs = []
    for i in range(60):
        p = (rng.uniform(14, 21), rng.uniform(0, 20), rng.uniform(0, 22))
        recs.append(Solvent(f"solvent {i}", *p, cas=f"{100 + i}-00-{i % 10}",
                            flash_point=float(rng.uniform(-20, 120)), boiling_point=100.0))
    return Library.from_records(recs)


def test_suggest_next_end_to_end():
    lib = _lib()
    sols = list(lib)
    centre, R0 = (17.5, 9.0, 9.0), 6.0
    tested = sols[:15]
    X = np.array([s.point for s in tested])
    good = ra(X, centre) <= R0
    assert 2 <= good.sum() <= 13
    b = bootstrap(X, good, 80, seed=4, names=[s.name for s in tested], n_jobs=1)
    res = suggest_next(X, good, sols, n=5, bootstrap=b, names=[s.name for s in tested])
    names = res.names
    assert len(names) == 5 and len(set(names)) == 5
    assert not set(names) & {s.name for s in tested}  # tested ones left out
    assert res.n_candidates == 45
    p_all = b.p_good([s.point for s in sols[15:]])
    # The first pick is the candidate of greatest disagreement p(1 - p).
    first = res.suggestions[0]
    assert first.p_good * (1 - first.p_good) == pytest.approx(np.max(p_all * (1 - p_all)))
    assert 0 < first.p_good < 1 and first.gain > 0
    for s in res.suggestions:
        sol = lib.lookup(s.name)
        assert s.flash_point == sol.flash_point and isinstance(s.flags, list)
        assert (s.dD, s.dP, s.dH) == sol.point and 0 <= s.p_good <= 1 and s.reason
        assert s.p_good == pytest.approx(b.p_good([sol.point])[0])
    d = res.to_dict()
    json.dumps(d)
    assert {"name", "p_good", "dD", "dP", "dH", "reason", "flash_point", "flags"} <= set(
        d["suggestions"][0])
    assert d["caution"] == CAUTION and "Next trials" in str(res)
    # Computed here when no bootstrap is given: reproducible with the seed.
    r1 = suggest_next(X, good, sols, n=3, n_bootstrap=40, seed=9, n_jobs=1)
    r2 = suggest_next(X, good, sols, n=3, n_bootstrap=40, seed=9, n_jobs=1)
    assert r1.to_dict() == r2.to_dict()
    # Caller-side safety filter: only what is passed is suggested.
    safe = [s for s in sols if s.flash_point is not None and s.flash_point >= 60]
    r3 = suggest_next(X, good, safe, n=5, bootstrap=b, names=[s.name for s in tested])
    assert all(s.flash_point >= 60 for s in r3.suggestions)
    # Saved without samples: refused with a clear message.
    with pytest.raises(ValueError, match="samples"):
        suggest_next(X, good, sols, bootstrap=Bootstrap.from_dict(b.to_dict()))


def test_no_candidates_left():
    lib = _lib()
    sols = list(lib)[:10]
    X = np.array([s.point for s in sols])
    good = ra(X, (17.5, 9.0, 9.0)) <= 7.0
    if good.all() or not good.any():
        good[0] = not good[0]
    res = suggest_next(X, good, sols, n_bootstrap=10, n_jobs=1)  # all tested (by coords)
    assert res.suggestions == [] and res.n_candidates == 0
    assert any("No untried" in w for w in res.warnings)
