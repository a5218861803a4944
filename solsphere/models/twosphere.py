r"""Two-sphere fit: materials with two solubility regions.

Block copolymers, polymer blends and solutes with two distinct groups can dissolve in
two separate regions of Hansen space. The model: a solvent dissolves the material when
it lies inside *either* sphere. The objective extends the classic desirability
(:mod:`solsphere.fit`) to the union:

.. math:: L = \sum_{good} w \min_k (R_{a,k} - R_{0,k})_+ \;+\; \sum_{bad} w \sum_k (R_{0,k} - R_{a,k})_+,
          \qquad D = e^{-L / \sum w}

A good solvent outside both spheres costs its distance to the nearer surface; a bad one
costs its depth inside each sphere that holds it. Given which sphere each good solvent
belongs to, L splits into two classic fits (each with its own goods and *all* the bad
solvents), so it is minimised by alternating the two steps of k-means-like clustering
[1]_: fit each sphere to its goods and all bads with the classic exact-R0 search, then
give each good solvent to the sphere whose surface is nearer (inside wins); repeat until
no good solvent changes sphere. Several starts: the goods the one-sphere fit leaves
outside, a split of the goods along their longest axis, and 2-means of the goods (Hansen
distance); the best L is kept. (Inside the alternation and the cross-validation the
classic search runs with a reduced global stage; the final two spheres get the full
search.)

Does the second sphere earn its keep? Two spheres always fit the tested results at
least as well as one, so the choice is made on results held back: stratified K-fold
cross-validation [2]_ (default 5 folds) counts the held-back results each model gets
wrong. Nothing from the held-back results enters a fold's fits: each fold's search box
is its training solvents' box (unless the caller gives ``bounds``) and its two-sphere
starts come from its training results alone. Two spheres are returned only when they
get at least ``min_gain`` more held-back results right than one sphere (default: 2, or 5 % of the trials if more); otherwise
the one-sphere fit is returned with the criterion values, so the user sees why.

References
----------
.. [1] S. P. Lloyd, "Least squares quantization in PCM", IEEE Trans. Inf. Theory 28(2),
   129-137, 1982.
.. [2] M. Stone, "Cross-validatory choice and assessment of statistical predictions",
   J. R. Stat. Soc. B 36(2), 111-147, 1974.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from solsphere.formatting import num, warning_lines
from solsphere.hansen import SCALE, as_points, ra
from solsphere.models.base import (MIN_ADVISED, SURFACE, WORDS, FitResultBase,
                                   SphereEstimator, binary_data, counted_classes,
                                   default_bounds, edge_warnings, estimator, model_inputs)
from solsphere.models.classic import best_sphere

__all__ = ["TwoSphereModel", "TwoSphereFitResult", "fit_two_spheres", "union_loss"]

#: Search settings inside the alternation and the cross-validation (the final spheres
#: use the full search of :func:`~solsphere.models.classic.best_sphere`).
QUICK_SEARCH = {"n_global": 256, "n_starts": 3, "xtol": 1e-4}
MAX_ROUNDS = 12


def union_loss(X, good, spheres, weights=None) -> float:
    """L / sum(w) of the union of ``spheres`` [(centre, R0), ...] (see the module doc)."""
    X = as_points(X)
    g = np.asarray(good, dtype=bool)
    w = np.ones(len(X)) if weights is None else np.asarray(weights, dtype=float)
    d = np.array([ra(X, c) - R for c, R in spheres])  # (k, n): > 0 outside
    pen = np.where(g, np.clip(d, 0, None).min(axis=0), np.clip(-d, 0, None).sum(axis=0))
    return float(pen @ w / w.sum())


def _fit_one(X, g, w, box, seed, quick):
    kw = QUICK_SEARCH if quick else {}
    c, R, _ = best_sphere(X, g, weights=w, bounds=box, seed=seed, **kw)
    return c, R


def _kmeans2(Z, rng, iters=20):
    """Two-means labels of the rows of Z (Euclidean; Z are Hansen-scaled points)."""
    i = rng.choice(len(Z), 2, replace=False)
    C = Z[i].copy()
    lab = np.zeros(len(Z), dtype=int)
    for it in range(iters):
        new = np.argmin(((Z[:, None, :] - C[None]) ** 2).sum(axis=2), axis=1)
        if it > 0 and np.array_equal(new, lab):
            break
        lab = new
        for k in (0, 1):
            if np.any(lab == k):
                C[k] = Z[lab == k].mean(axis=0)
    return lab


def _alternate(X, g, w, box, labels, seed, quick=True):
    """Alternating fit from a labelling of the good solvents (0/1 per good)."""
    gi = np.flatnonzero(g)
    lab = labels.copy()
    spheres = None
    for _ in range(MAX_ROUNDS):
        if lab.min() == lab.max():
            return None
        spheres = []
        for k in (0, 1):
            wk = w.copy()
            wk[gi[lab != k]] = 0.0
            spheres.append(_fit_one(X, g, wk, box, seed + k, quick))
        d = np.array([ra(X[gi], c) - R for c, R in spheres])  # (2, n_good)
        out = np.clip(d, 0, None)
        # nearer surface; among goods inside both (or equally far), the smaller RED
        red = np.array([ra(X[gi], c) / R for c, R in spheres])
        new = np.where(out[0] < out[1], 0, np.where(out[1] < out[0], 1,
                                                    np.argmin(red, axis=0)))
        if np.array_equal(new, lab):
            break
        lab = new
    return spheres, lab


def _two_sphere(X, g, w, box, seed=0, quick=True, one=None, starts=None):
    """Best two-sphere fit over several starts: (spheres, labels, loss) or None.

    ``one``: the one-sphere fit (centre, R0) if known; ``starts``: labellings of the
    goods to start from instead of the default ones (the goods ``one`` leaves outside, a
    split along the goods' longest axis, 2-means of the goods in Hansen distance).
    """
    gi = np.flatnonzero(g)
    if len(gi) < 2:
        return None
    c1, R1 = one if one is not None else _fit_one(X, g, w, box, seed, quick)
    outside = (ra(X[gi], c1) > R1).astype(int)
    if starts is None:
        Z = X[gi] * SCALE
        axis = np.linalg.svd(Z - Z.mean(axis=0), full_matrices=False)[2][0]
        proj = (Z - Z.mean(axis=0)) @ axis
        starts = [outside, (proj > np.median(proj)).astype(int),
                  _kmeans2(Z, np.random.default_rng(seed))]
    else:
        starts = [outside] + [np.asarray(s, dtype=int) for s in starts]
    best = None
    seen = set()
    for lab in starts:
        key = tuple(lab) if lab[0] == 0 else tuple(1 - lab)
        if key in seen or lab.min() == lab.max():
            continue
        seen.add(key)
        res = _alternate(X, g, w, box, lab, seed, quick)
        if res is None:
            continue
        spheres, lab2 = res
        L = union_loss(X, g, spheres, w)
        if best is None or L < best[2] - 1e-12 or (
                abs(L - best[2]) <= 1e-12 and sum(R for _, R in spheres)
                < sum(R for _, R in best[0])):
            best = (spheres, lab2, L)
    return best


def _predict(X, spheres) -> np.ndarray:
    return np.any([ra(X, c) <= R for c, R in spheres], axis=0)


def _folds(g, k, rng):
    """Stratified fold index per trial."""
    f = np.empty(len(g), dtype=int)
    for part in (np.flatnonzero(g), np.flatnonzero(~g)):
        p = rng.permutation(part)
        f[p] = np.arange(len(p)) % k
    return f


@dataclass
class TwoSphereFitResult(FitResultBase):
    """Result of :func:`fit_two_spheres` (units MPa½).

    ``spheres``: list of {"dD", "dP", "dH", "R0", "n_good"} (the goods it holds), the
    sphere with more goods first; ``n_spheres`` the chosen number (1 or 2). Top-level
    ``dD``, ``dP``, ``dH``, ``R0`` are those of the first sphere (the fit --json keys).
    ``desirability`` is D of the chosen model on all trials; ``desirability_1`` and
    ``desirability_2`` those of the one- and two-sphere fits. ``criterion``:
    ``{"method": "cross-validation", "folds", "held_back_errors": {"1", "2"},
    "held_back_accuracy": {"1", "2"}, "min_gain", "two_earns_keep"}``. ``table``: per
    trial name, dD, dP, dH, outcome, counted_as, Ra (list, one per sphere), red (the
    smallest Ra/R0), sphere (index of the sphere holding it, or None), agrees.
    """

    dD: float
    dP: float
    dH: float
    R0: float
    spheres: list
    n_spheres: int
    desirability: float
    desirability_1: float
    desirability_2: float | None
    criterion: dict
    n_good: int
    n_bad: int
    n_trials: int
    table: list
    misfits: list
    warnings: list
    bounds: list
    method: str = "two-sphere"



    def predict(self, points) -> np.ndarray:
        """True where a point lies inside any of the chosen spheres."""
        return _predict(as_points(points), [((s["dD"], s["dP"], s["dH"]), s["R0"])
                                            for s in self.spheres])

    def __str__(self) -> str:
        f = num
        cr = self.criterion
        e, a = cr["held_back_errors"], cr["held_back_accuracy"]
        out = ["[[Two-sphere fit]]",
               f"    chosen       = {self.n_spheres} sphere{'s' if self.n_spheres > 1 else ''}",
               f"    held back    = {cr['folds']}-fold cross-validation: one sphere "
               f"{e['1']} wrong ({100 * a['1']:.0f} % right), two spheres "
               + (f"{e['2']} wrong ({100 * a['2']:.0f} % right)" if e["2"] is not None
                  else "not fitted"),
               f"    rule         = two spheres only if they get at least {cr['min_gain']} "
               "more held-back results right",
               f"    desirability = {self.desirability:.4f} (one sphere "
               f"{self.desirability_1:.4f}"
               + (f", two {self.desirability_2:.4f})" if self.desirability_2 is not None
                  else ")"),
               "[[Spheres]]"]
        for i, s in enumerate(self.spheres, 1):
            out.append(f"    {i}: dD {f(s['dD'])}, dP {f(s['dP'])}, dH {f(s['dH'])}, "
                       f"R0 {f(s['R0'])} MPa½ ({s['n_good']} good inside)")
        out.append("[[Misfits]]")
        rows = [r for r in self.table if r["agrees"] is False]
        out += [f"    {r['name']}: {WORDS[r['outcome']]} but "
                f"{'inside' if r['sphere'] is not None else 'outside'} (RED {r['red']:.2f})"
                for r in rows] or ["    none"]
        out += warning_lines(self.warnings)
        return "\n".join(out)


def fit_two_spheres(data, good=None, *, partial: str = "good", names=None, bounds=None,
                    seed: int = 0, folds: int = 5, min_gain: int | None = None,
                    force: int | None = None) -> TwoSphereFitResult:
    """Fit one and two spheres; keep two only when they predict held-back results better.

    Parameters
    ----------
    data : Trials or array-like of shape (n, 3)
    good : array-like of bool or outcome strings, default=None
    partial : {"good", "bad", "skip"}, default="good"
    names : list of str, default=None
    bounds : array-like of shape (3, 2), default=None
        Box for the centres (default: the box of all tested solvents).
    seed : int, default=0
    folds : int, default=5
        Cross-validation folds (fewer when a class has fewer results; at least 2).
    min_gain : int, default=None
        Held-back results two spheres must get right beyond one sphere; default
        max(2, ceil(0.05 n)).
    force : {1, 2} or None, default=None
        Return that many spheres whatever the criterion says (the criterion is still
        computed and reported).

    Returns
    -------
    TwoSphereFitResult
    """
    X, g, names, box = binary_data(data, good, partial, names, bounds)
    n = len(X)
    w = np.ones(n)
    _, every, _, _, _ = model_inputs(data, good)
    use = counted_classes(every, partial)[0]
    outcomes = [o for o, u in zip(every, use) if u]
    min_gain = max(2, math.ceil(0.05 * n)) if min_gain is None else int(min_gain)
    # Full fits on all trials.
    c1, R1, D1 = best_sphere(X, g, bounds=box, seed=seed)
    two = _two_sphere(X, g, w, box, seed, quick=True, one=(c1, R1))
    spheres2, D2 = None, None
    if two is not None:
        labels = two[1]
        gi = np.flatnonzero(g)
        spheres2 = []
        for k in (0, 1):
            wk = w.copy()
            wk[gi[labels != k]] = 0.0
            spheres2.append(_fit_one(X, g, wk, box, seed + k, quick=False))
        D2 = math.exp(-union_loss(X, g, spheres2))
    # Cross-validation.
    k = max(2, min(folds, int(g.sum()), int((~g).sum())))
    fold = _folds(g, k, np.random.default_rng(seed))
    err1 = err2 = 0
    cv_two = spheres2 is not None
    for j in range(k):
        tr, te = fold != j, fold == j
        if not (g[tr].any() and (~g[tr]).any()):
            continue
        # Nothing from the held-back results enters the fold's fits: the box is the
        # training solvents' (unless the caller fixed one) and the two-sphere starts are
        # made from the training results alone (no warm start from the full-data split).
        box_tr = box if bounds is not None else default_bounds(X[tr])
        c, R = _fit_one(X[tr], g[tr], w[tr], box_tr, seed, quick=True)
        err1 += int(np.sum((ra(X[te], c) <= R) != g[te]))
        if cv_two:
            t2 = _two_sphere(X[tr], g[tr], w[tr], box_tr, seed, quick=True, one=(c, R))
            pred = (_predict(X[te], t2[0]) if t2 is not None else ra(X[te], c) <= R)
            err2 += int(np.sum(pred != g[te]))
    earns = cv_two and (err1 - err2) >= min_gain
    chosen = force if force in (1, 2) else (2 if earns else 1)
    if chosen == 2 and spheres2 is None:
        chosen = 1
    spheres = spheres2 if chosen == 2 else [(c1, R1)]
    inside = np.array([ra(X, c) <= R for c, R in spheres])  # (k, n)
    counts = [int(np.sum(inside[i] & g)) for i in range(len(spheres))]
    order = np.argsort(counts, kind="stable")[::-1]
    spheres = [spheres[i] for i in order]
    inside = inside[order]
    Ra = np.array([ra(X, c) for c, _ in spheres])
    red = np.min(Ra / np.array([R for _, R in spheres])[:, None], axis=0)
    table = []
    for i in range(n):
        held = [s for s in range(len(spheres)) if inside[s, i]]
        surf = any(abs(Ra[s, i] - spheres[s][1]) <= SURFACE for s in range(len(spheres)))
        table.append(dict(name=names[i], dD=float(X[i, 0]), dP=float(X[i, 1]),
                          dH=float(X[i, 2]), outcome=outcomes[i],
                          counted_as="good" if g[i] else "bad",
                          Ra=[float(v) for v in Ra[:, i]], red=float(red[i]),
                          sphere=held[0] if held else None,
                          agrees=bool((len(held) > 0) == g[i] or surf)))
    notes = []
    for kind, m in (("good", int(g.sum())), ("bad", int((~g).sum()))):
        if m < 2 * MIN_ADVISED:
            notes.append(f"Only {m} results count as {kind}: with two spheres each needs "
                         f"its own good results and bads around it; {2 * MIN_ADVISED} or more "
                         "are advised.")
    for c, _ in spheres:
        notes += edge_warnings(c, box, X)
    if force in (1, 2) and force != (2 if earns else 1):
        notes.append(f"{force} sphere{'s' if force > 1 else ''} returned as asked, although "
                     "the held-back results favour "
                     f"{2 if earns else 1}.")
    sph = [{"dD": float(c[0]), "dP": float(c[1]), "dH": float(c[2]), "R0": float(R),
            "n_good": int(np.sum(inside[i] & g))} for i, (c, R) in enumerate(spheres)]
    D = math.exp(-union_loss(X, g, spheres))
    crit = {"method": "cross-validation", "folds": k,
            "held_back_errors": {"1": err1, "2": err2 if cv_two else None},
            "held_back_accuracy": {"1": 1 - err1 / n, "2": (1 - err2 / n) if cv_two else None},
            "min_gain": min_gain, "two_earns_keep": bool(earns)}
    return TwoSphereFitResult(dD=sph[0]["dD"], dP=sph[0]["dP"], dH=sph[0]["dH"], R0=sph[0]["R0"],
                        spheres=sph, n_spheres=len(sph), desirability=D,
                        desirability_1=float(D1), desirability_2=D2, criterion=crit,
                        n_good=int(g.sum()), n_bad=int((~g).sum()), n_trials=n,
                        table=table, misfits=[r["name"] for r in table if not r["agrees"]],
                        warnings=notes, bounds=box.tolist())


@estimator
class TwoSphereModel(SphereEstimator):
    """One or two spheres (good if inside either), as an estimator: two only when they
    predict held-back results better (:func:`fit_two_spheres`).

    Parameters
    ----------
    partial : {"good", "bad", "skip"}, default="good"
    bounds : array-like of shape (3, 2), default=None
    seed : int, default=0
    folds : int, default=5
    min_gain : int or None, default=None
    force : {1, 2} or None, default=None

    Attributes
    ----------
    result_ : TwoSphereFitResult
    spheres_ : list of (centre ndarray (3,), R0)
    centre_, R0_ : the first sphere's centre and radius
    """

    partial: str = "good"
    bounds: Any = None
    seed: int = 0
    folds: int = 5
    min_gain: int | None = None
    force: int | None = None

    def fit(self, X, y=None, names=None) -> "TwoSphereModel":
        """Fit to a trials object or to arrays (labels in any bench-sheet word)."""
        self.result_ = fit_two_spheres(X, y, partial=self.partial, names=names,
                                       bounds=self.bounds, seed=self.seed, folds=self.folds,
                                       min_gain=self.min_gain, force=self.force)
        self.spheres_ = [(np.array([s["dD"], s["dP"], s["dH"]]), s["R0"])
                         for s in self.result_.spheres]
        self.centre_, self.R0_ = self.spheres_[0]
        return self

    def predict(self, points) -> np.ndarray:
        """True where a point lies inside any of the chosen spheres; shape (n,)."""
        self.check_fitted()
        return _predict(as_points(points), self.spheres_)

    def red(self, points) -> np.ndarray:
        """The smallest RED over the chosen spheres; shape (n,)."""
        self.check_fitted()
        P = as_points(points)
        return np.min([ra(P, c) / R for c, R in self.spheres_], axis=0)
