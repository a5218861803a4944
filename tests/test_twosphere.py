"""Tests of solsphere.twosphere: a two-region material is split, a one-region one is not.

Independent checks: the union objective against a hand-worked case, and invented panels
whose true regions are known. All data here are invented.
"""

import json
import math

import numpy as np
import pytest

from solsphere.hansen import ra
from solsphere.models.twosphere import fit_two_spheres, union_loss

A, B, R = (16.5, 4.5, 5.0), (18.5, 16.0, 17.0), 6.0


def panel(seed, n=60, two=True):
    """Invented: uniform solvents; good inside sphere A (or B, when ``two``)."""
    rng = np.random.default_rng(seed)
    X = np.column_stack([rng.uniform(14, 21, n), rng.uniform(0, 22, n),
                         rng.uniform(0, 24, n)])
    good = (ra(X, A) <= R) | ((ra(X, B) <= R) if two else False)
    return X, good


def test_union_loss_hand_worked():
    # Spheres at (0,0,0) R0 2 and (0,10,0) R0 2 (Hansen distance along dP is plain).
    sph = [((0, 0, 0), 2.0), ((0, 10, 0), 2.0)]
    X = [[0, 3, 0], [0, 6, 0], [0, 1, 0], [0, 11.5, 0]]
    good = [True, True, False, False]
    # good at dP 3: 1 outside the first, 5 outside the second -> min 1
    # good at dP 6: 4 and 2 -> 2; bad at dP 1: 1 deep in the first; bad at 11.5: 0.5 deep
    # L / sum w = (1 + 2 + 1 + 0.5) / 4 = 1.125
    assert union_loss(X, good, sph) == pytest.approx(1.125)
    assert union_loss(X, good, sph, [1, 0, 0, 0]) == pytest.approx(1.0)


def test_two_regions_are_found():
    X, g = panel(2)
    res = fit_two_spheres(X, g, seed=0)
    assert res.n_spheres == 2 and res.criterion["two_earns_keep"]
    e = res.criterion["held_back_errors"]
    assert e["2"] + res.criterion["min_gain"] <= e["1"]
    # Each true centre has a fitted centre near it (within 2 MPa½, Hansen distance).
    C = np.array([[s["dD"], s["dP"], s["dH"]] for s in res.spheres])
    for true in (A, B):
        assert ra(C, true).min() < 2.0
    # The union classifies the tested solvents (nearly) all right; held-back points too.
    assert np.mean(res.predict(X) == g) >= 0.95
    rng = np.random.default_rng(99)
    H = np.column_stack([rng.uniform(14, 21, 2000), rng.uniform(0, 22, 2000),
                         rng.uniform(0, 24, 2000)])
    truth = (ra(H, A) <= R) | (ra(H, B) <= R)
    assert np.mean(res.predict(H) == truth) >= 0.9
    assert res.desirability == pytest.approx(math.exp(-union_loss(
        X, g, [((s["dD"], s["dP"], s["dH"]), s["R0"]) for s in res.spheres])))
    d = res.to_dict()
    json.dumps(d)
    assert {"dD", "dP", "dH", "R0", "spheres", "n_spheres", "criterion", "misfits",
            "warnings"} <= set(d)
    assert "[[Spheres]]" in str(res)


def test_one_region_is_not_split():
    X, g = panel(3, two=False)
    res = fit_two_spheres(X, g, seed=0)
    assert res.n_spheres == 1 and not res.criterion["two_earns_keep"]
    assert res.criterion["held_back_errors"]["2"] is not None  # two spheres were tried
    assert ra([res.dD, res.dP, res.dH], A)[0] < 2.0
    forced = fit_two_spheres(X, g, seed=0, force=2)
    assert forced.n_spheres == 2 and any("as asked" in w for w in forced.warnings)


def test_cross_validation_folds_see_no_held_back_result(monkeypatch):
    # Every fit inside a fold gets the training rows only, the training box, and no start
    # from the full-data split (which was fitted with the held-back results).
    from solsphere.models import twosphere

    X, g = panel(2)
    calls = []
    real = twosphere._two_sphere

    def spy(Xf, gf, wf, box, seed=0, quick=True, one=None, starts=None):
        calls.append((len(Xf), np.array(box), starts))
        return real(Xf, gf, wf, box, seed, quick, one, starts)

    monkeypatch.setattr(twosphere, "_two_sphere", spy)
    fit_two_spheres(X, g, seed=0)
    full, folds = calls[0], calls[1:]
    assert full[0] == len(X) and len(folds) == 5
    for n, box, starts in folds:
        assert n < len(X)
        assert starts is None
    # the boxes differ from the full panel's (they span the training solvents only)
    assert any(not np.allclose(box, full[1]) for _, box, _ in folds)
