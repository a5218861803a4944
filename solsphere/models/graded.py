r"""Graded sphere: a probabilistic boundary instead of a hard one.

The classic fit (:mod:`solsphere.fit`) says inside or outside. Bench results near the
surface are a matter of degree (a slow dissolution, a borderline swelling), so here the
probability that a solvent at Hansen distance Ra from the centre dissolves the material
falls smoothly around R0 with a fitted width w [MPa½]:

.. math:: P(\text{good} \mid R_a) = \sigma\!\left(\frac{R_0 - R_a}{w}\right),
          \qquad \sigma(z) = \frac{1}{1 + e^{-z}}

(a logistic model in Ra − R0 [1]_). P is 0.5 on the surface, about 0.73 / 0.27 at
Ra = R0 ∓ w and 0.9 / 0.1 at Ra = R0 ∓ 2.2 w: a small w is a sharp boundary.

Three classes (``partial="ordinal"``, the default when "partly" results exist) use the
cumulative logit model [2]_ with two nested spheres of the same centre: an outer one of
radius R0 (dissolves *or* partly vs does not, the same meaning as the classic fit's R0
with partly counted as good) and an inner one of radius R0 − b (dissolves vs the rest):

.. math:: P(\text{at least partly}) = \sigma\!\left(\frac{R_0 - R_a}{w}\right), \quad
          P(\text{dissolves}) = \sigma\!\left(\frac{R_0 - b - R_a}{w}\right), \quad b > 0.

``p_good`` is P(at least partly) (inside R0, as in the bootstrap), ``p_dissolves`` the
inner probability. With no "partly" results the binary model is used (b has no data).

Fitting: maximum likelihood with bounds (a bounded truncated Newton method [3]_ with the
exact gradient; centre in
the classic fit's search box, w in [``min_width``, ``max_width``]), started from the
classic fit and a few widths. When the results separate perfectly the likelihood keeps
growing as w -> 0 (no maximum exists [4]_); a weak ridge on 1/w,
``prior_strength * (width_prior / w)**2`` added to the negative log-likelihood (default
1 * (1 MPa½ / w)²: worth one badly predicted trial at w = 1 MPa½), keeps w finite and
makes the centre the one with the widest margin on both sides; the hard lower bound
``min_width`` = 0.05 MPa½ is a second guard. The ridge is our choice, not a published
method. The classic desirability is reported at the graded sphere too.

References
----------
.. [1] D. R. Cox, "The regression analysis of binary sequences", J. R. Stat. Soc. B
   20(2), 215-242, 1958.
.. [2] P. McCullagh, "Regression models for ordinal data", J. R. Stat. Soc. B 42(2),
   109-142, 1980.
.. [3] S. G. Nash, "Newton-type minimization via the Lanczos method", SIAM J. Numer.
   Anal. 21(4), 770-788, 1984 (the truncated Newton method behind scipy's "TNC").
.. [4] A. Albert, J. A. Anderson, "On the existence of maximum likelihood estimates in
   logistic regression models", Biometrika 71(1), 1-10, 1984.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy.optimize import minimize
from scipy.special import expit

from solsphere.errors import FitError
from solsphere.formatting import num, warning_lines
from solsphere.models.base import (AXES, SURFACE, WORDS, FitResultBase, ModelComparison,
                                   SphereEstimator,
                                   counted_classes, estimator,
                                   edge_warnings, few_results_warnings, model_inputs,
                                   shape_warnings,
                                   search_box, unboundable_message)
from solsphere.models.classic import best_sphere, desirability
from solsphere.hansen import SCALE, ra

__all__ = ["GradedSphereModel", "GradedFitResult", "graded_nll", "fit_theta", "start_thetas",
           "theta_bounds"]

_S2 = SCALE ** 2


def _softplus(z):
    return np.logaddexp(0.0, z)


def graded_nll(theta, X, y, wts, ordinal: bool, prior=(1.0, 1.0), grad: bool = True):
    """Penalised negative log-likelihood of the graded sphere (and its gradient).

    Parameters
    ----------
    theta : array-like of shape (5,) or (6,)
        dD, dP, dH, R0, ln w (and ln b when ``ordinal``).
    X : ndarray of shape (n, 3)
    y : ndarray of int, shape (n,)
        2 good, 1 partial (ordinal only), 0 bad.
    wts : ndarray of shape (n,)
        Per-trial weights.
    ordinal : bool
    prior : (strength, width_prior)
        Ridge ``strength * (width_prior / w)**2``.
    grad : bool, default=True

    Returns
    -------
    f : float, and g : ndarray like ``theta`` when ``grad``.
    """
    th = np.asarray(theta, dtype=float)
    c, R0, u = th[:3], th[3], th[4]
    w = np.exp(u)
    diff = X - c
    Ra = np.sqrt((diff * diff * _S2).sum(axis=1) + 1e-12)
    zo = (R0 - Ra) / w
    good, part, bad = y == 2, y == 1, y == 0
    lam, w0 = prior
    f = lam * (w0 / w) ** 2
    do = np.zeros_like(Ra)  # d loss / d z_outer per trial
    di = np.zeros_like(Ra)  # d loss / d z_inner
    if ordinal:
        b = np.exp(th[5])
        zi = zo - b / w
        d = b / w
        f += np.sum(wts[good] * _softplus(-zi[good]))
        f += np.sum(wts[bad] * _softplus(zo[bad]))
        f += np.sum(wts[part] * (_softplus(-zo[part]) + _softplus(zi[part])
                                 - np.log(-np.expm1(-d))))
        di[good] = -expit(-zi[good])
        do[bad] = expit(zo[bad])
        inv = np.exp(-d) / -np.expm1(-d)  # 1 / (e^d - 1), without overflow
        do[part] = -expit(-zo[part]) - inv
        di[part] = expit(zi[part]) + inv
    else:
        zi = zo
        f += np.sum(wts[good] * _softplus(-zo[good])) + np.sum(wts[bad] * _softplus(zo[bad]))
        do[good] = -expit(-zo[good])
        do[bad] = expit(zo[bad])
    if not grad:
        return float(f)
    a, bi = wts * do, wts * di
    s = a + bi  # both z's share R0 and the centre
    g = np.empty_like(th)
    g[:3] = ((s / (Ra * w))[:, None] * diff * _S2).sum(axis=0)
    g[3] = s.sum() / w
    g[4] = -(a @ zo) - (bi @ zi) - 2.0 * lam * (w0 / w) ** 2
    if ordinal:
        g[5] = -(bi.sum()) * b / w
    return float(f), g


#: Search settings of the classic fit that gives the graded fit its first start (the
#: likelihood is smooth; a cheaper classic search is enough to start from).
START_SEARCH = {"n_global": 512, "n_starts": 3, "xtol": 1e-4}


def theta_bounds(box, ordinal, min_width, max_width):
    diag = float(ra(box[:, 0], box[:, 1])[0])
    Rmax = 2.0 * diag + 10.0
    bnds = [tuple(map(float, b)) for b in box] + [(1e-3, Rmax),
                                                    (np.log(min_width), np.log(max_width))]
    if ordinal:
        bnds.append((np.log(1e-3), np.log(Rmax)))
    return bnds


def fit_theta(X, y, wts, ordinal, box, starts, min_width=0.05, max_width=20.0,
              prior=(1.0, 1.0)):
    """Penalised maximum likelihood from each start (bounded truncated Newton); the best.

    (scipy's TNC [3]_; L-BFGS-B gives the same optima here but its LAPACK calls are
    slowed down 10-25x by BLAS threads on a busy two-core machine.)

    Returns ``theta`` (dD, dP, dH, R0, ln w[, ln b]), the penalised negative
    log-likelihood, the optimiser's success flag and the number of evaluations.
    """
    bnds = theta_bounds(box, ordinal, min_width, max_width)
    lo = np.array([b[0] for b in bnds])
    hi = np.array([b[1] for b in bnds])
    best, nev = None, 0
    for th0 in starts:
        r = minimize(graded_nll, np.clip(th0, lo, hi), args=(X, y, wts, ordinal, prior),
                     jac=True, method="TNC", bounds=bnds,
                     options={"maxfun": 2000, "ftol": 1e-12, "xtol": 1e-9, "gtol": 1e-8})
        nev += r.nfev
        if best is None or r.fun < best.fun - 1e-12:
            best = r
    return best.x, float(best.fun), bool(best.success), nev


def start_thetas(X, y, wts, ordinal, box, seed=0):
    """Starts: a classic fit (partly counted as good) and the goods' centroid, each with
    w = 0.3, 1 and 3 MPa½ (and b = 0.5 MPa½ when ordinal)."""
    goods = y > 0
    c0, R00, _ = best_sphere(X, goods, weights=wts, bounds=box, seed=seed, **START_SEARCH)
    wg = wts[goods]
    centroid = np.clip((wg @ X[goods]) / wg.sum(), box[:, 0], box[:, 1])
    out = []
    for c, R in ((c0, R00), (centroid, float(np.median(ra(X[goods], centroid))) + 0.5)):
        for wi in (0.3, 1.0, 3.0):
            th = [*c, max(R, 1e-2), np.log(wi)] + ([np.log(0.5)] if ordinal else [])
            out.append(np.array(th, dtype=float))
    return out


@dataclass
class GradedFitResult(FitResultBase):
    """Result of :meth:`GradedSphereModel.fit` (flat attributes; units MPa½).

    Keys shared with :class:`~solsphere.models.classic.SphereFitResult`: dD, dP, dH, R0, desirability
    (the classic desirability at this sphere, partly counted as good in ordinal mode),
    n_good, n_bad, n_partial, partial, n_trials, n_counted_good, n_counted_bad, table,
    misfits, warnings, bounds, success, n_evaluations. Graded extras: ``width`` (w),
    ``R0_inner`` and ``band`` (= R0 − R0_inner; None unless ordinal), ``log_likelihood``
    (without the ridge), ``penalty`` (the ridge), ``method`` = "graded".
    Each ``table`` row also has ``p_good`` (P(at least partly)) and ``p_dissolves``.
    """

    dD: float
    dP: float
    dH: float
    R0: float
    width: float
    desirability: float
    n_good: int
    n_bad: int
    n_partial: int
    partial: str
    n_trials: int
    n_counted_good: int
    n_counted_bad: int
    R0_inner: float | None
    band: float | None
    log_likelihood: float
    penalty: float
    table: list
    misfits: list
    warnings: list
    bounds: list
    success: bool
    n_evaluations: int
    method: str = "graded"
    model_comparison: ModelComparison | None = None




    def __str__(self) -> str:
        f = num
        w = self.width
        out = ["[[Graded fit]]",
               f"    log-likelihood = {self.log_likelihood:.3f} (ridge on 1/w {self.penalty:.3f})",
               f"    desirability   = {self.desirability:.4f} (classic, at this sphere)",
               f"    success        = {self.success}",
               "[[Parameters]]"]
        out += [f"    {a} = {f(getattr(self, a))} MPa½" for a in (*AXES, "R0")]
        what = "P(at least partly)" if self.R0_inner is not None else "P(dissolves)"
        out.append(f"    width w = {w:.2f} MPa½: how sharp the boundary is; {what} "
                   f"falls from 90 % to 10 % between Ra = {self.R0 - 2.197 * w:.1f} and "
                   f"{self.R0 + 2.197 * w:.1f}")
        if self.R0_inner is not None:
            out.append(f"    inner radius (dissolves fully) = {f(self.R0_inner)} MPa½; partly "
                       f"band {self.band:.2f} MPa½ wide")
        out += ["[[Counts]]",
                f"    trials = {self.n_trials} ({self.n_good} dissolves, {self.n_partial} "
                f"partly, {self.n_bad} does not); partly: {self.partial}",
                "[[Misfits]]"]
        rows = [r for r in self.table if r["agrees"] is False]
        def p_text(r):
            if self.R0_inner is None:
                return f"P(dissolves) = {r['p_good']:.2f}"
            return (f"P(dissolves) = {r['p_dissolves']:.2f}, P(at least partly) = "
                    f"{r['p_good']:.2f}")

        out += [f"    {r['name']}: {WORDS[r['outcome']]} but {p_text(r)} (Ra {f(r['Ra'])}, "
                f"RED {r['red']:.2f})" for r in rows] or ["    none"]
        out += warning_lines(self.warnings)
        if self.model_comparison is not None:
            out.append(str(self.model_comparison))
        return "\n".join(out)


@estimator
class GradedSphereModel(SphereEstimator):
    """Graded (probabilistic) Hansen sphere estimator, scikit-learn style.

    Parameters
    ----------
    partial : {"ordinal", "good", "bad", "skip"}, default="ordinal"
        "ordinal": three classes (binary when no result is "partly"); otherwise partly
        results count as good, as bad, or are left out, and the model is binary.
    bounds : array-like of shape (3, 2), default=None
        As for :class:`~solsphere.models.classic.SphereModel`.
    seed : int, default=0
        Seed of the classic fit used as the start.
    min_width, max_width : float, default=0.05, 20.0
        Bounds on w [MPa½].
    width_prior : float, default=1.0
        Scale of the ridge on 1/w [MPa½].
    prior_strength : float, default=1.0
        Weight of the ridge (0 turns it off: then perfectly separated results drive w to
        ``min_width``).
    """

    partial: str = "ordinal"
    bounds: Any = None
    seed: int = 0
    min_width: float = 0.05
    max_width: float = 20.0
    width_prior: float = 1.0
    prior_strength: float = 1.0

    def fit(self, X, y=None, names=None, weights=None, *, warnings=None) -> "GradedSphereModel":
        """Fit to a trials object or to arrays (X of shape (n, 3), labels ``y`` in any
        bench-sheet word, as :meth:`SphereModel.fit <solsphere.models.classic.SphereModel.fit>`);
        returns ``self``."""
        if self.partial not in ("ordinal", "good", "bad", "skip"):
            raise ValueError("partial must be 'ordinal', 'good', 'bad' or 'skip'; found "
                             f"{self.partial!r}")
        if not 0 < self.min_width < self.max_width:
            raise ValueError(f"need 0 < min_width < max_width; found {self.min_width}, "
                             f"{self.max_width}")
        P, outcomes, names, w, notes_in = model_inputs(X, y, names, weights)
        n = len(outcomes)
        n_partial = outcomes.count("partial")
        use, y, ordinal, counted = counted_classes(outcomes, self.partial)
        g_outer = y > 0
        n_cg = int(np.sum(use & g_outer & (w > 0)))
        n_cb = int(np.sum(use & ~g_outer & (w > 0)))
        if n_cg == 0 or n_cb == 0:
            raise FitError(unboundable_message(n_cg, n_cb, n_partial,
                                        "good" if self.partial == "ordinal" else self.partial))
        box = search_box(self.bounds, P)
        Xu, yu, wu, gu = P[use], y[use], w[use], g_outer[use]
        theta, nll, ok, nev = fit_theta(
            Xu, yu, wu, ordinal, box, start_thetas(Xu, yu, wu, ordinal, box, self.seed),
            self.min_width, self.max_width, (self.prior_strength, self.width_prior))
        c, R0, width = theta[:3], float(theta[3]), float(np.exp(theta[4]))
        b = float(np.exp(theta[5])) if ordinal else None
        penalty = self.prior_strength * (self.width_prior / width) ** 2
        Ra = ra(P, c)
        p_out = expit((R0 - Ra) / width)
        p_in = expit((R0 - b - Ra) / width) if ordinal else p_out
        D = desirability(Ra[use], gu, R0, wu)
        surf = np.abs(Ra - R0) <= SURFACE
        table = []
        for i in range(n):
            if ordinal:
                pred = "good" if Ra[i] <= R0 - b else ("partial" if Ra[i] <= R0 else "bad")
                agrees = pred == counted[i] or bool(surf[i])
            else:
                agrees = bool((Ra[i] <= R0) == g_outer[i] or surf[i])
            table.append(dict(
                name=names[i], dD=float(P[i, 0]), dP=float(P[i, 1]), dH=float(P[i, 2]),
                outcome=outcomes[i], counted_as=counted[i], Ra=float(Ra[i]),
                red=float(Ra[i] / R0), predicted="inside" if Ra[i] <= R0 else "outside",
                on_surface=bool(surf[i]), p_good=float(p_out[i]), p_dissolves=float(p_in[i]),
                agrees=agrees if use[i] else None))
        notes = notes_in + few_results_warnings(n_cg, n_cb) + edge_warnings(c, box, P[use])
        notes += shape_warnings(P[use], box)
        if width <= self.min_width * 1.001:
            notes.append(f"The boundary width is at its lower bound ({self.min_width:g} "
                         "MPa½): the results are perfectly separated and the width only says "
                         "'sharp'.")
        if width >= self.max_width * 0.999:
            notes.append(f"The boundary width is at its upper bound ({self.max_width:g} MPa½):"
                         " the results show almost no dependence on Hansen distance.")
        if not ok:
            notes.append("The likelihood maximisation did not report convergence: a better "
                         "fit may exist.")
        notes += [str(t) for t in (warnings or []) if str(t) not in notes]
        self.centre_, self.R0_, self.width_ = c, R0, width
        self.band_ = b
        self.theta_ = np.asarray(theta, dtype=float)
        self.result_ = GradedFitResult(
            dD=float(c[0]), dP=float(c[1]), dH=float(c[2]), R0=R0, width=width,
            desirability=float(D), n_good=outcomes.count("good"),
            n_bad=outcomes.count("bad"), n_partial=n_partial,
            partial=self.partial,
            n_trials=n, n_counted_good=n_cg, n_counted_bad=n_cb,
            R0_inner=None if b is None else R0 - b, band=b,
            log_likelihood=float(-(nll - penalty)), penalty=float(penalty), table=table,
            misfits=[r["name"] for r in table if r["agrees"] is False], warnings=notes,
            bounds=box.tolist(), success=bool(ok), n_evaluations=int(nev))
        return self


    def p_good(self, points) -> np.ndarray:
        """P(at least partly) of each point, shape (n,)."""
        self.check_fitted()
        return expit((self.R0_ - ra(points, self.centre_)) / self.width_)

    def p_dissolves(self, points) -> np.ndarray:
        """P(dissolves) of each point (equals :meth:`p_good` unless ordinal), shape (n,)."""
        self.check_fitted()
        b = self.band_ or 0.0
        return expit((self.R0_ - b - ra(points, self.centre_)) / self.width_)

    def predict_proba(self, points) -> np.ndarray:
        """Probabilities of (does not, at least partly) per point: shape (n, 2), rows sum
        to 1 (scikit-learn's convention for two classes)."""
        p = self.p_good(points)
        return np.column_stack([1.0 - p, p])

