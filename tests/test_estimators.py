"""The sphere models follow scikit-learn's estimator contract (checked with scikit-learn
itself: ``clone``, ``cross_val_score``, ``get_params``) and accept the bench sheet's words.

Panels here are invented (points drawn around an invented centre).
"""

from __future__ import annotations

import numpy as np
import pytest
from sklearn.base import clone
from sklearn.model_selection import StratifiedKFold, cross_val_score

from solsphere import GradedSphereModel, SphereModel, TwoSphereModel, read_trials
from solsphere.errors import NotFittedError
from solsphere.hansen import ra

CENTRE, R0 = np.array([18.0, 8.0, 7.0]), 6.0


def panel(n=30, seed=1):
    rng = np.random.default_rng(seed)
    X = np.column_stack([rng.uniform(14, 22, n), rng.uniform(0, 18, n), rng.uniform(0, 20, n)])
    return X, ra(X, CENTRE) <= R0


MODELS = [SphereModel(), GradedSphereModel(), TwoSphereModel()]


@pytest.mark.parametrize("model", MODELS, ids=lambda m: type(m).__name__)
def test_clone_and_params_round_trip(model):
    params = model.get_params()
    twin = clone(model)
    assert type(twin) is type(model) and twin.get_params() == params
    twin.set_params(seed=7)
    assert twin.get_params()["seed"] == 7 and model.get_params()["seed"] == 0
    with pytest.raises(ValueError, match="invalid parameter"):
        twin.set_params(colour="red")
    with pytest.raises(NotFittedError, match="not fitted yet. Call 'fit' first"):
        twin.predict(np.zeros((1, 3)))


@pytest.mark.parametrize("model", [SphereModel(), GradedSphereModel()],
                         ids=lambda m: type(m).__name__)
def test_cross_val_score_runs_and_scores_a_clean_panel_well(model):
    X, good = panel(40)
    scores = cross_val_score(model, X, good, cv=StratifiedKFold(4, shuffle=True, random_state=0))
    assert scores.shape == (4,) and np.all((0 <= scores) & (scores <= 1))
    assert scores.mean() >= 0.8  # the generating sphere is recovered on held-out points


def test_fit_returns_self_and_score_is_share_right():
    X, good = panel(30)
    m = SphereModel()
    assert m.fit(X, good) is m
    assert m.score(X, good) == pytest.approx(np.mean(m.predict(X) == good))
    flipped = ~good
    assert m.score(X, flipped) == pytest.approx(1 - m.score(X, good))


def test_labels_in_any_bench_sheet_word_give_the_same_fit():
    X, good = panel(25, seed=3)
    words = np.where(good, "dissolves", "does not")
    ones = good.astype(int)
    yes = np.where(good, "yes", "no")
    fits = [SphereModel().fit(X, y).result_ for y in (good, words, ones, yes)]
    assert len({(f.dD, f.dP, f.dH, f.R0) for f in fits}) == 1
    with pytest.raises(ValueError, match="outcomes must be words"):
        SphereModel().fit(X, np.where(good, "dissolves", "maybe"))


def test_graded_predict_proba_has_two_columns_summing_to_one():
    X, good = panel(30, seed=4)
    m = GradedSphereModel().fit(X, good)
    p = m.predict_proba(X)
    assert p.shape == (len(X), 2) and np.allclose(p.sum(axis=1), 1.0)
    assert np.allclose(p[:, 1], m.p_good(X))


def test_trials_object_carries_the_clis_warnings():
    trials = read_trials("data/demo/varnish_binder.csv")
    res = SphereModel().fit(trials).result_
    # the compilations disagree for cyclohexanone: the model says so, as the CLI does
    assert any("compilations disagree" in w and "cyclohexanone" in w for w in res.warnings)


def test_results_convert_to_frames_and_html():
    X, good = panel(20, seed=5)
    res = SphereModel().fit(X, good).result_
    frame = res.to_frame()
    assert len(frame) == 20 and {"name", "red", "agrees"} <= set(frame.columns)
    html = res._repr_html_()
    assert html.startswith("<pre>") and "<table" in html


def test_every_public_name_resolves_and_none_is_missing():
    import solsphere
    where = {n for names in solsphere.API.values() for n in names}
    assert set(solsphere.__all__) - {"__version__"} == where
    for name in solsphere.__all__:
        assert getattr(solsphere, name) is not None
    with pytest.raises(AttributeError):
        solsphere.no_such_thing  # noqa: B018
