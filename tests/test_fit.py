"""Tests of solsphere.fit: exact radius, centre search, model, result object.

Independent checks: hand-worked numbers (worked in the comments), the direct desirability
formula against the sorted/cumulative-sum radius search, and an exhaustive grid of centres
against the quasi-random + pattern search. All data here are invented.
"""

import json
import math
from types import SimpleNamespace

import numpy as np
import pytest

from solsphere.errors import FitError, NotFittedError
from solsphere.models.classic import (SphereFitResult, SphereModel, best_radius, default_bounds,
                           desirability, best_sphere, grid_search)
from solsphere.hansen import ra


def invented_panel(seed, n=30, centre=(17.5, 8.0, 9.0), R0=6.5, flips=0, box=None):
    """Invented bench results: uniform solvents in a box, good iff inside, a few flipped."""
    rng = np.random.default_rng(seed)
    (a, b), (c, d), (e, f) = box or ((14.5, 20.0), (0.0, 18.0), (0.0, 20.0))
    X = np.column_stack([rng.uniform(a, b, n), rng.uniform(c, d, n), rng.uniform(e, f, n)])
    good = ra(X, centre) <= R0
    if flips:
        i = rng.choice(n, flips, replace=False)
        good[i] = ~good[i]
    return X, good


# A model fitted to two good solvents, (17, 10, 7) and (19, 10, 7), and three bad ones far
# away: every sphere holding both goods and no bads has D = 1; the smallest is centred at
# their midpoint (18, 10, 7) with R0 = half their Hansen distance = sqrt(4*2**2)/2 = 2.
TWO_GOOD = np.array([[17, 10, 7], [19, 10, 7], [10, 30, 30], [25, 0, 0], [14, 2, 20]], float)
TWO_GOOD_OK = np.array([True, True, False, False, False])


def test_ra_red_hand_worked():
    model = SphereModel().fit(TWO_GOOD, TWO_GOOD_OK)
    np.testing.assert_allclose(model.centre_, [18.0, 10.0, 7.0], atol=1e-5)
    assert model.R0_ == pytest.approx(2.0, abs=1e-5)
    # Solvent (16, 5, 10) from centre (18, 10, 7): Ra^2 = 4*(-2)^2 + (-5)^2 + 3^2
    # = 16 + 25 + 9 = 50, Ra = 7.0711; RED = 7.0711 / 2 = 3.5355 -> outside.
    assert model.red([[16.0, 5.0, 10.0]])[0] == pytest.approx(math.sqrt(50) / 2, abs=1e-4)
    # (18.5, 10.5, 6.5): Ra^2 = 4*0.25 + 0.25 + 0.25 = 1.5, Ra = 1.2247 < 2 -> inside.
    assert model.predict([[18.5, 10.5, 6.5], [16.0, 5.0, 10.0]]).tolist() == [True, False]
    assert model.result_.desirability == 1.0 and model.result_.misfits == []


def test_desirability_hand_example():
    r, good = [1.0, 3.0, 2.0, 5.0], [True, True, False, False]
    # R0 = 2.5: good at 3 outside (A = e^-0.5), bad at 2 inside (A = e^-0.5), others 1.
    # D = (e^-0.5 * e^-0.5)^(1/4) = e^-0.25 = 0.7788
    assert desirability(r, good, 2.5) == pytest.approx(math.exp(-0.25), rel=1e-15)
    # Weights 1, 2, 1, 0: ln D = -(2*0.5 + 1*0.5) / 4 = -0.375.
    assert desirability(r, good, 2.5, [1, 2, 1, 0]) == pytest.approx(math.exp(-0.375))
    # R0 = 2: the bad solvent on the surface counts inside but scores e^0 = 1; the good
    # one at 3 scores e^-1: D = e^-0.25.
    assert desirability(r, good, 2.0) == pytest.approx(math.exp(-0.25))
    assert desirability(r, good, 5.0) == pytest.approx(math.exp(-3 / 4))  # bad at 2 off by 3
    np.testing.assert_allclose(desirability(r, good, [2.5, 5.0]),
                               [math.exp(-0.25), math.exp(-0.75)])
    with pytest.raises(ValueError):
        desirability(r, good, 2.5, [1, -1, 1, 1])


def test_best_radius_hand_example_just_below_a_bad_solvent():
    # Same trials: -ln D * 4 = 2 at R0=1, 1 on the whole stretch [2, 3], 3 at R0=5.
    # The smallest best R0 is 2, the Ra of a bad solvent only: R0 goes just below it so
    # that solvent is outside, at a cost of ~1e-12 in D.
    R0, D = best_radius([1.0, 3.0, 2.0, 5.0], [True, True, False, False])
    assert 2.0 - 1e-9 < R0 < 2.0
    assert D == pytest.approx(math.exp(-0.25), rel=1e-10)
    # A good solvent at the same Ra (a tie) keeps R0 = 2 exactly (Ra == R0 is inside).
    R0, D = best_radius([1.0, 3.0, 2.0, 2.0, 5.0], [True, True, False, True, False])
    assert R0 == 2.0 and D == pytest.approx(math.exp(-1 / 5))


@pytest.mark.parametrize("seed", range(60))
def test_best_radius_against_dense_scan(seed):
    rng = np.random.default_rng(seed)
    n = int(rng.integers(2, 30))
    r = rng.uniform(0.0, 10.0, n)
    if seed % 3 == 0:
        r = np.round(r, 0)  # many ties, good and bad at the same Ra
    good = rng.random(n) < rng.uniform(0.2, 0.8)
    w = rng.integers(0, 4, n).astype(float) if seed % 2 else None
    if w is not None and w.sum() == 0:
        w[0] = 1.0
    R0, D = best_radius(r, good, w)
    assert R0 > 0 and D == desirability(r, good, R0, w)
    scan = np.unique(np.concatenate([np.linspace(1e-9, r.max() + 1.0, 20001),
                                     r, r + 1e-7, np.maximum(r - 1e-7, 1e-9)]))
    Ds = desirability(r, good, scan, w)
    assert D >= Ds.max() - 1e-9
    # Smallest R0 among the best: every clearly smaller radius is clearly worse.
    assert np.all(Ds[scan < R0 - 1e-6] < D - 1e-12)
    # Boundary rule: at R0 no bad solvent of positive weight sits on the surface unless a
    # good one shares that Ra.
    wpos = np.ones(n, bool) if w is None else w > 0
    on = wpos & (r == R0)
    assert not on.any() or (on & good).any()


def test_best_radius_vectorised_matches_rows():
    rng = np.random.default_rng(5)
    r = rng.uniform(0, 8, (50, 12))
    good = rng.random(12) < 0.5
    R0, D = best_radius(r, good)
    for i in (0, 17, 49):
        # equal to rounding: numpy's batched reductions may differ in the last bit
        # (numpy 1.26, the lowest allowed version, does)
        assert (R0[i], D[i]) == pytest.approx(best_radius(r[i], good), rel=1e-12, abs=1e-12)


def test_fit_recovers_invented_sphere_from_clean_data():
    centre, R0_true = np.array([17.5, 8.0, 9.0]), 6.5
    X, good = invented_panel(11, n=60, centre=centre, R0=R0_true)
    model = SphereModel().fit(X, good)
    res = model.result_
    assert res.desirability == 1.0 and res.misfits == []
    assert model.predict(X).tolist() == good.tolist()
    # The smallest perfect sphere is at most the true one and close to it.
    assert res.R0 <= R0_true + 1e-9 and res.R0 > R0_true - 1.5
    assert ra(model.centre_, centre)[0] < 1.5


@pytest.mark.parametrize("seed,flips", [(1, 3), (2, 4), (3, 2), (4, 5)])
def test_fit_at_least_as_good_as_exhaustive_grid(seed, flips):
    # Invented noisy panels in a small box; 0.2 MPa½ grid as the reference (the 0.1 grid
    # on a 40-trial panel is in tests/perf/bench_fit.py).
    X, good = invented_panel(seed, n=20, flips=flips,
                             box=((15.5, 19.5), (2.0, 12.0), (3.0, 15.0)), R0=5.0,
                             centre=(17.5, 7.0, 9.0))
    c, R0, D = best_sphere(X, good)
    gc, gR0, gD, n_grid = grid_search(X, good, step=0.2)
    assert n_grid > 10000
    assert D >= gD - 1e-12
    assert D == pytest.approx(desirability(ra(X, c), good, R0), rel=1e-15)
    box = default_bounds(X)
    assert np.all(c >= box[:, 0]) and np.all(c <= box[:, 1])


def test_unboundable_fits_raise_helpful_errors():
    X, _ = invented_panel(0, n=12)
    with pytest.raises(FitError, match=r"All 12 results .* no outer boundary .* not dissolve"):
        SphereModel().fit(X, np.ones(12, bool))
    with pytest.raises(FitError, match=r"None of the 12 results .* dissolves"):
        SphereModel().fit(X, np.zeros(12, bool))
    with pytest.raises(FitError, match="partial"):
        SphereModel(partial="skip").fit(X, ["good"] * 6 + ["partial"] * 6)
    with pytest.raises(FitError, match="No results"):
        SphereModel().fit(np.empty((0, 3)), np.empty(0, bool))
    with pytest.raises(FitError):  # the only bad result has weight 0
        SphereModel().fit(X, [True] * 11 + [False], weights=[1] * 11 + [0])


def test_partial_modes():
    X, good = invented_panel(7, n=30, flips=2)
    out = np.where(good, "good", "bad").astype(object)
    out[[0, 5, 9]] = "partial"
    box = default_bounds(X)
    for mode, as_good in (("good", True), ("bad", False)):
        res = SphereModel(partial=mode).fit(X, list(out)).result_
        g = good.copy()
        g[[0, 5, 9]] = as_good
        c, R0, D = best_sphere(X, g, bounds=box)
        assert res.desirability == D and res.R0 == R0
        assert [res.table[i]["counted_as"] for i in (0, 5, 9)] == [mode] * 3
        assert res.n_partial == 3 and res.n_counted_good == int(g.sum())
    res = SphereModel(partial="skip").fit(X, list(out)).result_
    keep = np.ones(30, bool)
    keep[[0, 5, 9]] = False
    c, R0, D = best_sphere(X[keep], good[keep], bounds=box)
    assert res.desirability == D and res.n_counted_good + res.n_counted_bad == 27
    assert all(res.table[i]["counted_as"] == "skipped" and res.table[i]["agrees"] is None
               for i in (0, 5, 9))
    assert res.n_good + res.n_bad + res.n_partial == res.n_trials == 30
    with pytest.raises(ValueError, match="partial must be"):
        SphereModel(partial="maybe").fit(X, good)


def test_weights_equal_duplicates_and_zero_equals_removal():
    X, good = invented_panel(3, n=15, flips=2)
    c = X[good].mean(axis=0)
    r = ra(X, c)
    w = np.ones(15)
    w[[2, 4]] = [2, 3]
    dup = np.concatenate([np.arange(15), [2, 4, 4]])
    assert best_radius(r, good, w) == pytest.approx(best_radius(r[dup], good[dup]), rel=1e-12)
    w0 = np.ones(15)
    w0[6] = 0
    keep = np.arange(15) != 6
    assert best_radius(r, good, w0) == pytest.approx(best_radius(r[keep], good[keep]), rel=1e-12)
    res = SphereModel().fit(X, good, weights=w).result_
    assert res.desirability == pytest.approx(
        desirability(ra(X, [res.dD, res.dP, res.dH]), good, res.R0, w), rel=1e-15)


def test_not_fitted():
    model = SphereModel()
    msg = r"^SphereModel is not fitted yet\. Call 'fit' first\.$"
    for call in (lambda: model.predict([[17, 5, 5]]), lambda: model.red([[17, 5, 5]]),
                 lambda: model.center_):
        with pytest.raises(NotFittedError, match=msg):
            call()
    assert not hasattr(model, "centre_")
    model.fit(TWO_GOOD, TWO_GOOD_OK)
    assert model.center_ is model.centre_
    with pytest.raises(ValueError, match="outcomes must be"):
        SphereModel().fit(TWO_GOOD, ["good", "good", "bad", "bad", "maybe"])


def test_duck_typed_trials_and_extra_warnings():
    X, good = invented_panel(9, n=25, flips=2)
    trials = SimpleNamespace(points=X, outcomes=["good" if g else "bad" for g in good],
                             names=[f"solvent {i}" for i in range(25)], trials=[None] * 25)
    res = SphereModel().fit(trials, warnings=["compilations disagree for solvent 3"]).result_
    assert res.table[3]["name"] == "solvent 3"
    assert res.warnings[-1] == "compilations disagree for solvent 3"
    assert res.desirability == SphereModel().fit(X, good).result_.desirability
    with pytest.raises(TypeError):
        SphereModel().fit(X)


def test_warnings_few_results_and_edge():
    res = SphereModel().fit(TWO_GOOD, TWO_GOOD_OK).result_
    assert any("Only 2 results count as good" in t for t in res.warnings)
    assert any("Only 3 results count as bad" in t for t in res.warnings)
    # Goods crowd the high-dD side of the tested region: the centre is pushed to its edge.
    X, _ = invented_panel(2, n=30)
    good = X[:, 0] > 19.0
    res = SphereModel().fit(X, good).result_
    assert res.dD >= res.bounds[0][1] - 0.05
    assert any("Centre dD" in t and "upper edge" in t for t in res.warnings)


def test_to_dict_from_dict_round_trip_and_report():
    X, good = invented_panel(4, n=20, flips=2)
    out = list(np.where(good, "good", "bad"))
    out[1] = "partial"
    res = SphereModel().fit(X, out, names=[f"s{i}" for i in range(20)]).result_
    d = json.loads(json.dumps(res.to_dict()))
    for key in ("dD", "dP", "dH", "R0", "desirability", "n_good", "n_bad", "misfits",
                "warnings", "table"):
        assert key in d
    assert SphereFitResult.from_dict(d) == res
    assert set(d["table"][0]) == {"name", "dD", "dP", "dH", "outcome", "counted_as", "Ra",
                                  "red", "predicted", "on_surface", "agrees"}
    with pytest.raises(ValueError, match="missing"):
        SphereFitResult.from_dict({k: v for k, v in d.items() if k != "R0"})
    text = str(res)
    for section in ("[[Fit]]", "[[Parameters]]", "[[Counts]]", "[[Misfits]]", "[[Warnings]]"):
        assert section in text
    assert f"R0 = {res.R0:.1f} MPa½" in text
    for name in res.misfits:
        assert f"    {name}: " in text


@pytest.mark.parametrize("seed", range(6))
def test_table_agrees_with_desirability(seed):
    # A trial disagrees exactly when it pays a penalty beyond the surface tolerance, and
    # the table's penalties reproduce D = exp(-mean penalty).
    X, good = invented_panel(100 + seed, n=35, flips=4)
    res = SphereModel().fit(X, good).result_
    pen = []
    for row, g in zip(res.table, good):
        inside = row["predicted"] == "inside"
        p = max(row["Ra"] - res.R0, 0.0) if g else max(res.R0 - row["Ra"], 0.0)
        pen.append(p)
        assert inside == (row["Ra"] <= res.R0)
        assert row["on_surface"] == (abs(row["Ra"] - res.R0) <= 1e-5)
        assert row["agrees"] == (inside == g or row["on_surface"])
        assert row["agrees"] == (p <= 1e-5)
    assert res.desirability == pytest.approx(math.exp(-np.mean(pen)), rel=1e-12)
    assert res.misfits == [r["name"] for r in res.table if not r["agrees"]]


def test_perfect_fit_plateau_keeps_the_smallest_sphere():
    # A perfect fit can score -ln D = 1e-16 instead of 0 by rounding; that must still tie
    # with an exact 0 so the smallest R0 wins. Invented points: the three goods lie on a
    # sphere of Ra = 2 around (18, 10, 7), the bads far outside.
    from solsphere.models.classic import best_sphere
    goods = [(17, 10, 7), (19, 10, 7), (18, 10, 9)]
    bads = [(10, 30, 30), (25, 0, 0), (14, 2, 20), (12, 25, 2)]
    X = np.array(goods + bads, dtype=float)
    g = np.array([True] * 3 + [False] * 4)
    centre, R0, D = best_sphere(X, g)
    assert D == pytest.approx(1.0)
    assert R0 <= 2.0 + 1e-6          # the sphere through the three goods, not a bigger one
