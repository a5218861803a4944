"""Which model to trust on these results: classic, graded, and the 'partly' choices.

The boundary calls change with the model (a hard sphere or a graded boundary) and with
what a "partly" result is taken to mean (dissolves, does not, left out, or its own class
between the two). Which reading predicts *these* results best is measured on results
held back: stratified K-fold cross-validation [1]_ (leave-one-out when the panel has no
more than ``folds`` clear results). Every candidate is fitted to the same training
results and scored on the same held-back ones:

* only clear results ("dissolves" / "does not") are scored: a "partly" result has no
  common truth across the readings, so "partly" rows are always training rows (used as
  each reading says);
* accuracy: the share of held-back clear results on the right side of the boundary
  (a graded model predicts "dissolves" when P(at least partly) > 0.5);
* log score (graded readings only): the mean log probability the model gave to what was
  observed (a hard sphere gives no probability).

Nothing from a held-back result enters its fold's fits (no warm start from the full-data
fit; each fold's box is its training solvents'). The classic fit searches with a reduced
global stage (256 Sobol points, 2 starts, 1e-3 MPa½), exact as ever on perfectly
separable folds; the graded fits start from the same fold's classic fit.

"Clearly better" (the rule is our own, in the spirit of the two-sphere check): another
reading is recommended over the default classic fit (partly counted as dissolves) only
when it gets at least ``MIN_GAIN`` = 2 more held-back results right *and* the gain is at
least twice its standard error over the paired per-result differences (z >= 2). When
several qualify the one with the largest gain wins (ties: the better log score, then the
simpler model). Otherwise the classic fit stays the recommendation.

References
----------
.. [1] M. Stone, "Cross-validatory choice and assessment of statistical predictions",
   J. R. Stat. Soc. B 36(2), 111-147, 1974.
"""

from __future__ import annotations

import math
import numpy as np
from scipy.special import expit

from solsphere.errors import FitError
from solsphere.hansen import ra
from solsphere.models.base import (ModelComparison, counted_classes, default_bounds,
                                   model_inputs)
from solsphere.models.classic import best_sphere
from solsphere.models.graded import fit_theta

__all__ = ["ModelComparison", "compare_models", "compare_or_explain", "recommend", "MIN_GAIN",
           "CV_SEARCH"]

#: Held-back results a reading must get right beyond the classic fit (with z >= 2).
MIN_GAIN = 2
#: z of the gain over its standard error required as well.
MIN_Z = 2.0
#: Search settings of the classic refits inside the cross-validation.
CV_SEARCH = {"n_global": 256, "n_starts": 2, "xtol": 1e-3}
_CANDIDATES = (("classic", "good"), ("classic", "bad"), ("classic", "skip"),
               ("graded", "good"), ("graded", "ordinal"))
_LABEL = {("classic", "good"): "classic, partly = dissolves (default)",
          ("classic", "bad"): "classic, partly = does not",
          ("classic", "skip"): "classic, partly left out",
          ("graded", "good"): "graded, partly = dissolves",
          ("graded", "ordinal"): "graded, partly its own class"}


def _folds(y: np.ndarray, k: int) -> np.ndarray:
    """Stratified, deterministic fold index per scored result: the results sorted by
    class (good first) are dealt round-robin, so each fold gets its share of both; with
    k equal to the number of results every result is its own fold (leave-one-out)."""
    order = np.r_[np.flatnonzero(y), np.flatnonzero(~y)]
    f = np.empty(len(y), dtype=int)
    f[order] = np.arange(len(y)) % k
    return f


def _predict_classic(X, outcomes, partial, train, test):
    """Held-back predictions of the classic fit (and its centre and R0, or Nones)."""
    counted = [("skip" if partial == "skip" else partial) if o == "partial" else o
               for o in outcomes]
    use = train & np.array([c != "skip" for c in counted])
    g = np.array([c == "good" for c in counted])
    if not (np.any(use & g) and np.any(use & ~g)):
        return None, None, None
    c, R0, _ = best_sphere(X[use], g[use], bounds=default_bounds(X[train]), **CV_SEARCH)
    return ra(X[test], c) <= R0, None, (c, R0)


def _predict_graded(X, outcomes, partial, train, test, start):
    """Held-back predictions and P(at least partly) of the graded fit, started from the
    same fold's classic fit (partly = dissolves) with w = 0.3 and 1 MPa½."""
    use, y, ordinal, _ = counted_classes([outcomes[i] for i in np.flatnonzero(train)], partial)
    Xt = X[train][use]
    yt = y[use]
    if not (np.any(yt > 0) and np.any(yt == 0)):
        return None, None
    c, R0 = start
    starts = [np.array([*c, max(R0, 1e-2), np.log(wi)] + ([np.log(0.5)] if ordinal else []))
              for wi in (0.3, 1.0)]
    th, _, _, _ = fit_theta(Xt, yt, np.ones(len(Xt)), ordinal, default_bounds(X[train]),
                            starts)
    p = expit((th[3] - ra(X[test], th[:3])) / np.exp(th[4]))
    p = np.clip(p, 1e-12, 1 - 1e-12)
    return p > 0.5, p


def recommend(rows: list) -> tuple[dict, str]:
    """The recommended row (the first row is the default) and the reason, by the rule of
    the module doc: another reading only when ``gain >= MIN_GAIN`` and ``z >= MIN_Z``.

    Examples
    --------
    >>> rows = [dict(label="default", gain=0, z=None, log_score=None, model="classic"),
    ...         dict(label="other", gain=3, z=2.5, log_score=-0.3, model="graded")]
    >>> recommend(rows)[0]["label"], recommend([rows[0], dict(rows[1], z=1.2)])[0]["label"]
    ('other', 'default')
    """
    clearly = [r for r in rows[1:] if r["gain"] >= MIN_GAIN and r["z"] is not None
               and r["z"] >= MIN_Z]
    if clearly:
        best = max(clearly, key=lambda r: (r["gain"], r["log_score"] if r["log_score"]
                                           is not None else -np.inf, r["model"] == "classic"))
        return best, (f"Recommended: {best['label']}: {best['gain']} more held-back results "
                      f"right than the default classic fit (z = {best['z']:.1f}; 'clearly' "
                      f"means at least {MIN_GAIN} more and z >= {MIN_Z:g}).")
    return rows[0], (f"Recommended: the default classic fit; no other reading gets clearly "
                     f"more held-back results right (at least {MIN_GAIN} more with z >= "
                     f"{MIN_Z:g}).")


def compare_models(X, good=None, names=None, *, folds: int = 10) -> ModelComparison:
    """Cross-validated comparison of the classic and graded fits and the 'partly' readings.

    Parameters
    ----------
    X : Trials or array-like of shape (n, 3)
        Bench results (a trials object with ``.points``, ``.outcomes``, ``.names``), or
        solvent coordinates with ``good``.
    good : array-like of bool or outcome strings, default=None
    names : list of str, default=None
    folds : int, default=10
        Folds (leave-one-out when there are no more clear results than this).

    Returns
    -------
    ModelComparison

    Examples
    --------
    >>> rng = np.random.default_rng(1)  # invented panel: a sphere, two results flipped
    >>> P = rng.uniform([14, 0, 0], [21, 18, 22], (24, 3))
    >>> y = ra(P, [17.5, 8, 9]) <= 6.5
    >>> y[:2] = ~y[:2]
    >>> cmp = compare_models(P, y, folds=6)
    >>> [r["label"] for r in cmp.rows], cmp.n_scored
    (['classic, partly = dissolves (default)', 'graded, partly = dissolves'], 24)
    """
    P, outcomes, names, _, _ = model_inputs(X, good, names)
    clear = np.array([o != "partial" for o in outcomes])
    y = np.array([o == "good" for o in outcomes])
    n_clear = int(clear.sum())
    if min(int(np.sum(clear & y)), int(np.sum(clear & ~y))) < 2:
        raise FitError("comparing models needs at least 2 clear 'dissolves' and 2 clear "
                       "'does not' results (one of each is held back in turn); found "
                       f"{int(np.sum(clear & y))} and {int(np.sum(clear & ~y))}")
    has_partial = not bool(clear.all())
    cands = [c for c in _CANDIDATES if has_partial or c[1] in ("good",)]
    k = int(min(max(2, folds), n_clear))
    scored = np.flatnonzero(clear)
    fold = _folds(y[scored], k)
    right = {c: np.zeros(len(scored)) for c in cands}
    logp = {c: np.zeros(len(scored)) for c in cands}
    done = np.zeros(len(scored), dtype=bool)
    for j in range(k):
        te_idx = scored[fold == j]
        train = np.ones(len(P), dtype=bool)
        train[te_idx] = False
        test = np.zeros(len(P), dtype=bool)
        test[te_idx] = True
        preds, start = {}, None
        for c in cands:
            if c[0] == "classic":
                pred, p, fitted = _predict_classic(P, outcomes, c[1], train, test)
                start = fitted if c[1] == "good" else start
            elif start is None:
                pred, p = None, None
            else:
                pred, p = _predict_graded(P, outcomes, c[1], train, test, start)
            preds[c] = (pred, p)
        if any(v[0] is None for v in preds.values()):
            continue  # a training set without both outcomes: not scored for anyone
        where = fold == j
        done[where] = True
        for c, (pred, p) in preds.items():
            right[c][where] = pred == y[te_idx]
            if p is not None:
                logp[c][where] = np.where(y[te_idx], np.log(p), np.log1p(-p))
    m = int(done.sum())
    notes = []
    if m < n_clear:
        notes.append(f"{n_clear - m} held-back results could not be scored (their "
                     "training folds lacked an outcome).")
    base = right[("classic", "good")][done]
    rows = []
    for c in cands:
        r = right[c][done]
        d = r - base
        gain = int(d.sum())
        sd = float(np.std(d, ddof=1)) if m > 1 else 0.0
        z = None if sd == 0.0 else gain / (sd * math.sqrt(m))
        rows.append(dict(model=c[0], partial=c[1], label=_LABEL[c], n_scored=m,
                         n_right=int(r.sum()), accuracy=float(r.mean()) if m else 0.0,
                         log_score=(float(logp[c][done].mean()) if c[0] == "graded" and m
                                    else None),
                         gain=gain, z=z, recommended=False))
    best, reason = recommend(rows)
    best["recommended"] = True
    return ModelComparison(rows=rows, folds=k, n_scored=m, recommendation=best["label"],
                           reason=reason, warnings=notes)


def compare_or_explain(X, good=None, names=None, *, folds: int = 10) -> ModelComparison:
    """:func:`compare_models`, or, when the results are too few to hold any back, a
    comparison without rows whose ``reason`` says why (the fit report shows it; the
    default classic fit stays the recommendation).

    Examples
    --------
    >>> cmp = compare_or_explain([[17, 5, 5], [18, 16, 17]], ["good", "bad"])  # invented
    >>> cmp.rows, cmp.reason.startswith("Not compared")
    ([], True)
    """
    try:
        return compare_models(X, good, names, folds=folds)
    except FitError as exc:
        return ModelComparison(rows=[], folds=0, n_scored=0,
                               recommendation=_LABEL[("classic", "good")],
                               reason=f"Not compared: {exc}.")
