r"""Fit a Hansen solubility sphere to bench results.

The objective is the desirability of Hansen's classic fit [1]_. For a centre c and a
radius R0 each trial i, at Hansen distance Ra_i from c, scores

.. math:: A_i = 1 \text{ if correct}, \quad e^{-(R_{a,i}-R_0)} \text{ (good outside)},
          \quad e^{-(R_0-R_{a,i})} \text{ (bad inside)}

with Ra == R0 counted as inside, and the desirability is the (weighted) geometric mean
:math:`D = \exp(\sum_i w_i \ln A_i / \sum_i w_i)`, so :math:`-\ln D` is the weighted mean
distance of the misfits from the surface. For a fixed centre :math:`-\ln D` is convex and
piecewise linear in R0 with breakpoints at the Ra values, so the best R0 is found exactly
(:func:`best_radius`). Among equal desirability the smallest R0 is preferred (for a fixed
centre and across centres).

The centre. When some sphere holds every good solvent and no bad one (a *perfectly
separable* panel, D = 1) the answer is found exactly (:func:`separable_fit`): in the
Hansen-scaled space y = (2δD, δP, δH) "good i is nearer than bad k",
``|y - g_i|^2 <= |y - b_k|^2``, is *linear* in y (the squares cancel), so the centres of
perfect spheres form a polyhedron; a linear programme [4]_ says whether it is empty, and
the smallest perfect sphere minimises max_i |y - g_i|^2 over it, a convex quadratic
programme (with s = t - |y|^2: minimise |y|^2 + s subject to linear constraints). It is
solved by SLSQP [5]_ and *certified*: the Karush-Kuhn-Tucker conditions are checked at
the answer (non-negative multipliers of the active constraints by NNLS, stationarity
residual below 1e-7), which for a convex programme proves the global optimum. Otherwise
the centre, which has no closed form, is searched globally with a Sobol sequence [2]_
(scrambled with a fixed seed) and polished by a pattern search [3]_; every random choice
of the search uses fixed seeds, so the same input gives the same output whatever
``seed`` the caller passes (``seed`` is kept for compatibility and ignored).
``tests/test_fit_reference.py`` checks both paths against an exhaustive grid of centres
on invented perfect and noisy panels.

References
----------
.. [1] C. M. Hansen, *Hansen Solubility Parameters: A User's Handbook*, 2nd ed., CRC Press,
   Boca Raton, 2007, ch. 1 (the desirability function of the sphere fit; chapter from
   memory).
.. [2] I. M. Sobol', "On the distribution of points in a cube and the approximate
   evaluation of integrals", USSR Comput. Math. Math. Phys. 7(4), 86-112, 1967.
.. [3] T. G. Kolda, R. M. Lewis, V. Torczon, "Optimization by direct search: new
   perspectives on some classical and modern methods", SIAM Review 45(3), 385-482, 2003.
.. [4] Q. Huangfu, J. A. J. Hall, "Parallelizing the dual revised simplex method",
   Mathematical Programming Computation 10(1), 119-142, 2018 (HiGHS, scipy's linprog).
.. [5] D. Kraft, "A software package for sequential quadratic programming", DFVLR-FB
   88-28, 1988 (SLSQP).
"""

from __future__ import annotations

from dataclasses import dataclass, fields
from itertools import product
from typing import Any, NamedTuple

import numpy as np
from scipy.optimize import linprog, minimize, nnls

from solsphere.errors import FitError
from solsphere.formatting import num, warning_lines
from solsphere.hansen import SCALE, as_points, ra
from solsphere.models.base import (AXES, SURFACE, WORDS, FitResultBase, ModelComparison,
                                   SphereEstimator,
                                   as_weights, estimator,
                                   counted_classes, default_bounds, edge_warnings,
                                   few_results_warnings, model_inputs, shape_warnings, search_box,
                                   unboundable_message)

__all__ = ["SphereModel", "SphereFitResult", "SphereOptimum", "best_sphere", "best_radius",
           "desirability", "grid_search", "default_bounds", "separable_fit"]

_R0_FLOOR = 1e-9  # R0 must be positive
POINT_R0 = 0.05  # MPa½: a fitted R0 below this is a point, not a sphere (a warning says so)
_CUBE = np.array([d for d in product((-1.0, 0.0, 1.0), repeat=3) if any(d)])


def desirability(ra, good, R0, weights=None):
    """Desirability D of a sphere of radius R0 (direct formula; vectorised).

    Parameters
    ----------
    ra : array-like of shape (n,) or (m, n)
        Hansen distances of the trials from the centre [MPa½].
    good : array-like of bool, shape (n,)
        True where the solvent dissolves the material.
    R0 : float or array-like of shape (m,)
        Radius [MPa½]; Ra == R0 counts as inside.
    weights : array-like of shape (n,), default=None
        Per-trial weights (default 1): D is the weighted geometric mean of the A_i.

    Returns
    -------
    D : float (or ndarray of shape (m,)) in (0, 1].

    Examples
    --------
    >>> round(desirability([1.0, 3.0, 2.0], [True, True, False], 2.5), 6)  # exp(-(0.5+0.5)/3)
    0.716531
    """
    r = np.asarray(ra, dtype=float)
    g = np.asarray(good, dtype=bool)
    w = as_weights(weights, r.shape[-1])
    R = np.asarray(R0, dtype=float)[..., None]
    inside = r <= R
    pen = np.where(g & ~inside, r - R, 0.0) + np.where(~g & inside, R - r, 0.0)
    D = np.exp(-(pen @ w) / w.sum())
    return float(D) if np.ndim(D) == 0 else D


def _profile(r: np.ndarray, g: np.ndarray, w: np.ndarray):
    """Best R0 and its -ln D (at the breakpoint) per row of distances ``r`` (m, n).

    All weights must be > 0. The rule is explained in :func:`best_radius`.
    """
    m = r.shape[0]
    order = np.argsort(r, axis=1)
    rs = np.take_along_axis(r, order, axis=1)
    gs = g[order]
    ws = w[order]
    wg = np.where(gs, ws, 0.0)
    wb = ws - wg
    cg, cgr = np.cumsum(wg, axis=1), np.cumsum(wg * rs, axis=1)
    cb, cbr = np.cumsum(wb, axis=1), np.cumsum(wb * rs, axis=1)
    loss = ((cgr[:, -1:] - cgr) - rs * (cg[:, -1:] - cg) + rs * cb - cbr) / w.sum()
    tol = 1e-12 * (1.0 + (cgr[:, -1] + cbr[:, -1]) / w.sum())
    k = np.argmax(loss <= (loss.min(axis=1) + tol)[:, None], axis=1)
    rows = np.arange(m)
    t = rs[rows, k]
    on_t = rs == t[:, None]
    has_good = np.any(gs & on_t, axis=1)
    prev = np.max(np.where(rs < t[:, None], rs, 0.0), axis=1)
    below = np.maximum(t - 1e-12 * np.maximum(t, 1.0), 0.5 * (prev + t))
    R0 = np.maximum(np.where(has_good, t, below), _R0_FLOOR)
    return R0, loss[rows, k]


def best_radius(ra, good, weights=None):
    r"""Exact best radius for a fixed centre (see :func:`_profile` for the boundary rule).

    Parameters
    ----------
    ra : array-like of shape (n,) or (m, n)
        Hansen distances of the trials from the centre(s) [MPa½].
    good : array-like of bool, shape (n,)
    weights : array-like of shape (n,), default=None

    Returns
    -------
    R0, D : floats (or ndarrays of shape (m,)): the smallest R0 > 0 of greatest
        desirability, and D computed directly at that R0.

    Notes
    -----
    :math:`L(t) = \sum_{good} w (R_a - t)_+ + \sum_{bad} w (t - R_a)_+ = -\ln D \sum w` is
    convex and piecewise linear in t, so its minimum lies at a breakpoint (an Ra value).
    All breakpoints are evaluated at once by sorting and cumulative sums, O(n log n) per
    centre, and the smallest one within rounding (1e-12) of the minimum is taken.
    D is continuous in R0 (a bad solvent on the surface scores e^0 = 1) but by the
    convention Ra == R0 such a solvent is *inside*. So when the chosen breakpoint is the
    Ra of bad solvents only, R0 is set just below it (by 1e-12 relative, never below the
    next smaller Ra): the bad solvent is then outside, and D is lower than the supremum
    by a factor of at most about 1e-12. When a good solvent shares that Ra, R0 = Ra
    exactly (it is inside; the bad one is a misfit whichever way).

    Examples
    --------
    >>> best_radius([1.0, 2.0, 4.0], [True, True, False])
    (2.0, 1.0)
    """
    r = np.asarray(ra, dtype=float)
    g = np.asarray(good, dtype=bool)
    w = as_weights(weights, r.shape[-1])
    keep = w > 0
    R0, _ = _profile(np.atleast_2d(r)[:, keep], g[keep], w[keep])
    D = desirability(np.atleast_2d(r), g, R0, w)
    return (float(R0[0]), float(D[0])) if r.ndim == 1 else (R0, D)


#: Two values of -ln D closer than this are a tie (rounding: a perfect fit can come out
#: as 1e-16 instead of 0), decided by the smaller R0.
_TIE = 1e-12


def _lexmin(l: np.ndarray, R0: np.ndarray):
    """Index per row of the smallest -ln D, ties (within _TIE) broken by the smallest R0."""
    best = np.where(l <= l.min(axis=-1, keepdims=True) + _TIE, R0, np.inf)
    return np.argmin(best, axis=-1)


#: Seed of every random choice of the centre search (fixed: the same input gives the same
#: fit whatever seed a caller passes).
SEARCH_SEED = 0
#: Largest stationarity residual (relative) of a certified exact fit.
KKT_TOL = 1e-7


def separable_fit(points, good, box, weights=None):
    """The smallest perfect sphere, exactly, when one exists (see the module doc).

    Parameters
    ----------
    points : array-like of shape (n, 3)
    good : array-like of bool, shape (n,)
    box : array-like of shape (3, 2)
        Bounds of the centre [MPa½].
    weights : array-like of shape (n,), default=None
        Trials of weight 0 are left out.

    Returns
    -------
    None when no sphere with its centre in the box holds every good solvent and no bad
    one; else ``(centre, certified)``: the centre of the smallest such sphere (its R0 is
    the largest Ra of the goods) and whether the optimality certificate (KKT
    conditions of the convex programme) holds.

    Examples
    --------
    >>> X = [[17, 10, 7], [19, 10, 7], [10, 30, 30], [25, 0, 0], [14, 2, 20]]  # invented
    >>> c, ok = separable_fit(X, [1, 1, 0, 0, 0], [[10, 25], [0, 30], [0, 30]])
    >>> c.round(6).tolist(), ok
    ([18.0, 10.0, 7.0], True)
    """
    X = as_points(points)
    g = np.asarray(good, dtype=bool).reshape(-1)
    w = as_weights(weights, len(X))
    X, g = X[w > 0], g[w > 0]
    G, B = X[g] * SCALE, X[~g] * SCALE
    if len(G) == 0 or len(B) == 0:
        return None
    b = np.asarray(box, dtype=float)
    ylo, yhi = b[:, 0] * SCALE, b[:, 1] * SCALE
    scale = float(max(1.0, np.abs(np.vstack([G, B])).max())) ** 2
    # Pairs (good i, bad k): -2 y.(g_i - b_k) + |g_i|^2 - |b_k|^2 <= -m; maximise m.
    D = (G[:, None, :] - B[None, :, :]).reshape(-1, 3)
    c0 = (np.sum(G * G, axis=1)[:, None] - np.sum(B * B, axis=1)[None, :]).reshape(-1)
    A_pair = -2.0 * D / scale
    b_pair = -c0 / scale
    lp = linprog(np.r_[0.0, 0.0, 0.0, -1.0], A_ub=np.column_stack([A_pair, np.ones(len(D))]),
                 b_ub=b_pair, bounds=[*zip(ylo, yhi), (None, 1.0)], method="highs")
    if lp.status != 0 or -lp.fun < -1e-12:
        return None
    # Convex QP in x = (y, s), R0^2 = s + |y|^2: minimise |y|^2 + s subject to
    #   goods: -2 y.g_i + |g_i|^2 - s <= 0;  bads: 2 y.b_k - |b_k|^2 + s <= 0;  box.
    # (The same feasible centres as the pairs above: some s lies between every good's
    # and every bad's |p|^2 - 2 y.p exactly when each pair is ordered; n_good + n_bad
    # rows instead of n_good * n_bad keep SLSQP fast.)
    gg, bb = np.sum(G * G, axis=1), np.sum(B * B, axis=1)
    A = np.vstack([np.column_stack([-2.0 * G / scale, -np.ones(len(G)) / scale]),
                   np.column_stack([2.0 * B / scale, np.ones(len(B)) / scale])])
    rhs = np.r_[-gg / scale, bb / scale]  # constraints: A x <= rhs

    def f(x):
        return (x[:3] @ x[:3] + x[3]) / scale, np.r_[2.0 * x[:3], 1.0] / scale

    y0 = np.asarray(lp.x[:3], dtype=float)
    x0 = np.r_[y0, np.max(-2.0 * G @ y0 + gg) - y0 @ y0]
    res = minimize(f, x0, jac=True, method="SLSQP",
                   bounds=[*zip(ylo, yhi), (None, None)],
                   constraints=[{"type": "ineq", "fun": lambda x: rhs - A @ x,
                                 "jac": lambda x: -A}],
                   options={"ftol": 1e-15, "maxiter": 500})
    x = res.x if np.all(A @ res.x <= rhs + 1e-9) else x0
    # Active-set refinement and certificate. With the box written as rows too, the
    # constraints active at x are taken as equalities and the KKT system of the QP
    # (H x + c + A_act' lambda = 0, A_act x = rhs_act) is solved exactly: the answer is
    # kept when it is feasible, and it is the global optimum when every multiplier is
    # >= 0 (convex programme). Otherwise the certificate falls back to non-negative
    # least squares for the multipliers at x.
    Ab = np.vstack([A, np.column_stack([np.eye(3), np.zeros(3)]),
                    np.column_stack([-np.eye(3), np.zeros(3)])])
    rb = np.r_[rhs, yhi, -ylo]
    H = np.diag([2.0, 2.0, 2.0, 0.0]) / scale
    cvec = np.r_[0.0, 0.0, 0.0, 1.0] / scale
    act = np.flatnonzero(Ab @ x >= rb - 1e-7 * np.maximum(1.0, np.abs(rb)))
    certified = False
    if act.size:
        Aa = Ab[act]
        K = np.block([[H, Aa.T], [Aa, np.zeros((len(act), len(act)))]])
        sol = np.linalg.lstsq(K, np.r_[-cvec, rb[act]], rcond=None)[0]
        xn, lam = sol[:4], sol[4:]
        stationary = np.linalg.norm(H @ xn + cvec + Aa.T @ lam) <= KKT_TOL * np.linalg.norm(cvec)
        if stationary and np.all(Ab @ xn <= rb + 1e-12 * np.maximum(1.0, np.abs(rb))):
            if np.all(lam >= -1e-12):
                x, certified = xn, True
            elif f(xn)[0] <= f(x)[0]:
                x = xn
    if not certified:
        rows = Ab[np.flatnonzero(Ab @ x >= rb - 1e-8 * np.maximum(1.0, np.abs(rb)))]
        grad = f(x)[1]
        resid = nnls(rows.T, -grad)[1] if len(rows) else float(np.linalg.norm(grad))
        certified = bool(resid <= KKT_TOL * max(1e-300, float(np.linalg.norm(grad))))
    return np.clip(x[:3] / SCALE, b[:, 0], b[:, 1]), certified


def _search(X, g, w, box, seed, n_global=2048, n_starts=8, xtol=1e-6, max_iter=400,
            start=None):
    """Global Sobol stage, then a batched pattern search from the best distinct starts.

    ``start`` (array of shape (k, 3), optional) adds centres to the global stage's
    candidates (clipped to the box), e.g. a previous fit's centre for a warm start.
    """
    from scipy.stats import qmc  # deferred: scipy.stats costs seconds to import (CLI start-up)

    del seed  # kept for compatibility: the search's random choices use SEARCH_SEED
    rng = np.random.default_rng(SEARCH_SEED)
    keep = w > 0
    X, g, w = X[keep], g[keep], w[keep]
    lo, hi = box[:, 0], box[:, 1]
    width = hi - lo
    count = 0

    def evaluate(C):
        nonlocal count
        count += len(C)
        return _profile(ra(X, C[:, None, :]), g, w)

    sob = qmc.Sobol(3, scramble=True, seed=rng).random(n_global)
    centroid = (w[g] @ X[g]) / w[g].sum()
    extra = np.empty((0, 3)) if start is None else as_points(start)
    C0 = np.clip(np.vstack([extra, centroid, X[g], lo + sob * width]), lo, hi)
    R0, l = evaluate(C0)
    order = np.lexsort((R0, np.where(l <= l.min() + _TIE, l.min(), l)))
    far = np.ones(len(C0), dtype=bool)  # far from every start taken so far
    sep = 0.05 * float(np.linalg.norm(width * (2.0, 1.0, 1.0)))
    starts = []
    while len(starts) < n_starts and far[order].any():
        i = order[np.argmax(far[order])]
        starts.append(i)
        far &= ra(C0, C0[i]) > sep
    C, R0, l = C0[starts].copy(), R0[starts].copy(), l[starts].copy()
    s = np.full(len(C), 0.25)
    s_min = xtol / max(float(width.max()), xtol)
    for _ in range(max_iter):
        act = np.flatnonzero(s > s_min)
        if act.size == 0:
            break
        rnd = rng.normal(size=(14, 3))
        dirs = np.vstack([_CUBE, rnd / np.linalg.norm(rnd, axis=1, keepdims=True)])
        cand = np.clip(C[act, None, :] + s[act, None, None] * dirs * width, lo, hi)
        Rc, lc = (a.reshape(len(act), -1) for a in evaluate(cand.reshape(-1, 3)))
        j = _lexmin(lc, Rc)
        rows = np.arange(len(act))
        lb, Rb = lc[rows, j], Rc[rows, j]
        better = (lb < l[act] - _TIE) | ((lb <= l[act] + _TIE) & (Rb < R0[act]))
        mv = act[better]
        C[mv], l[mv], R0[mv] = cand[rows[better], j[better]], lb[better], Rb[better]
        s[act[~better]] *= 0.5
    b = _lexmin(l, R0)
    return C[b], bool(np.all(s <= s_min)), count


class SphereOptimum(NamedTuple):
    """The sphere of greatest desirability: centre (3,), R0 and desirability D."""

    centre: np.ndarray
    R0: float
    desirability: float


def best_sphere(points, good, weights=None, bounds=None, seed=0, *, start=None,
                n_global=2048, n_starts=8, xtol=1e-6) -> SphereOptimum:
    """Centre and radius of greatest desirability (ties: the smallest R0).

    Global stage: the goods' weighted centroid, each good solvent and 2048 scrambled
    Sobol points over the box, all scored with their exact best R0 (vectorised); the 8
    best starts at least 5% of the box diagonal apart are polished together by a pattern
    search (26 cube directions plus 14 random ones per step, the step halved after each
    step without improvement, down to 1e-6 MPa½), clipped to the box. A perfectly
    separable panel is solved exactly instead (:func:`separable_fit`). Deterministic:
    ``seed`` is ignored (kept for compatibility). Checked against an exhaustive grid of
    centres in the tests.
    The optimum usually has several solvents exactly on the surface; the search leaves
    them up to ~1e-6 MPa½ on either side of it (see ``SphereFitResult.table``'s on_surface).

    Parameters
    ----------
    points : array-like of shape (n, 3)
        Solvent coordinates dD, dP, dH [MPa½].
    good : array-like of bool, shape (n,)
    weights : array-like of shape (n,), default=None
    bounds : array-like of shape (3, 2), default=None
        Search box [[lo, hi]] per coordinate; default :func:`default_bounds`.
    seed : int or numpy.random.Generator or None, default=0
    start : array-like of shape (k, 3), default=None
        Extra candidate centres for the global stage (a warm start, e.g. the centre of
        a fit to similar data); they compete with the others for the polished starts.
    n_global : int, default=2048
        Number of Sobol points of the global stage (a power of 2 keeps them balanced).
    n_starts : int, default=8
        Number of distinct starts polished by the pattern search.
    xtol : float, default=1e-6
        Final step of the pattern search [MPa½].

    Returns
    -------
    SphereOptimum
        ``(centre, R0, desirability)``; unpacks like a tuple.

    Examples
    --------
    >>> X = [[17, 10, 7], [19, 10, 7], [10, 30, 30], [25, 0, 0], [14, 2, 20]]
    >>> c, R0, D = best_sphere(X, [True, True, False, False, False])  # invented
    >>> c.round(4).tolist(), round(R0, 4), D
    ([18.0, 10.0, 7.0], 2.0, 1.0)
    """
    c, _, _, R0, D = _fit(points, good, weights, bounds, seed, start=start,
                          n_global=n_global, n_starts=n_starts, xtol=xtol)
    return SphereOptimum(c, R0, D)


def _fit(points, good, weights, bounds, seed, **search):
    X = as_points(points)
    g = np.asarray(good, dtype=bool).reshape(-1)
    w = as_weights(weights, len(X))
    if g.shape != (len(X),):
        raise ValueError(f"good must have {len(X)} entries; found {g.shape[0]}")
    if not (np.any(g & (w > 0)) and np.any(~g & (w > 0))):
        raise FitError("a sphere needs at least one good and one bad result (with weight > 0)")
    box = search_box(bounds, X)
    exact = separable_fit(X, g, box, w)
    if exact is not None and exact[1]:
        # the smallest perfect sphere runs through its farthest good solvent(s): R0 is
        # that Ra exactly (best_radius could pick a good 1e-14 closer, within rounding)
        c = exact[0]
        R0 = max(float(ra(X[g & (w > 0)], c).max()), _R0_FLOOR)
        return c, True, 1, R0, desirability(ra(X, c), g, R0, w)
    start = search.pop("start", None)
    if exact is not None:  # perfect but not certified (rare): the search competes
        start = exact[0][None, :] if start is None else np.vstack([as_points(start), exact[0]])
    c, ok, count = _search(X, g, w, box, seed, start=start, **search)
    R0, D = best_radius(ra(X, c), g, w)
    if exact is not None:
        R1, D1 = best_radius(ra(X, exact[0]), g, w)
        if (-np.log(D1), R1) < (-np.log(D) - _TIE, R0):
            c, R0, D = exact[0], R1, D1
    return c, ok, count, R0, D


def grid_search(points, good, weights=None, bounds=None, step=0.1, chunk=20000):
    """Exhaustive reference: every centre of a ``step`` grid over the box (slow; for checks).

    Each grid centre gets its exact best R0; returns (centre, R0, D, n_centres).
    """
    X = as_points(points)
    g = np.asarray(good, dtype=bool)
    w = as_weights(weights, len(X))
    keep = w > 0
    box = search_box(bounds, X)
    axes = [lo + step * np.arange(int(np.floor((hi - lo) / step + 1e-9)) + 1) for lo, hi in box]
    shape = tuple(len(a) for a in axes)
    total = int(np.prod(shape))
    best = (np.inf, np.inf, None)
    for start in range(0, total, chunk):
        idx = np.unravel_index(np.arange(start, min(start + chunk, total)), shape)
        C = np.column_stack([a[i] for a, i in zip(axes, idx)])
        R0, l = _profile(ra(X[keep], C[:, None, :]), g[keep], w[keep])
        j = _lexmin(l, R0)
        if (l[j], R0[j]) < best[:2]:
            best = (l[j], R0[j], C[j])
    c = best[2]
    R0, D = best_radius(ra(X, c), g, w)
    return c, R0, D, total


@dataclass
class SphereFitResult(FitResultBase):
    """Result of :meth:`SphereModel.fit` (flat attributes; units MPa½).

    ``n_good``, ``n_bad``, ``n_partial`` count the outcomes as tested; ``n_counted_good``
    and ``n_counted_bad`` count what the fit used after the ``partial`` setting. ``table``
    has one dict per trial: name, dD, dP, dH, outcome, counted_as ("good", "bad" or
    "skipped"), Ra, red, predicted ("inside" when Ra <= R0, else "outside"), on_surface
    (|Ra - R0| <= ``SURFACE`` = 1e-5 MPa½) and agrees (None when skipped). A solvent on
    the surface agrees with either outcome: it costs the desirability nothing (A_i > 0.99999)
    and the search puts the best surface through such solvents only to within ~1e-6 MPa½.
    ``misfits`` names the trials that do not agree.
    ``success`` is False when the centre search hit its iteration limit.
    """

    dD: float
    dP: float
    dH: float
    R0: float
    desirability: float
    n_good: int
    n_bad: int
    n_partial: int
    partial: str
    n_trials: int
    n_counted_good: int
    n_counted_bad: int
    table: list
    misfits: list
    warnings: list
    bounds: list
    success: bool
    n_evaluations: int
    model_comparison: ModelComparison | None = None

    @classmethod
    def from_dict(cls, data: dict) -> "SphereFitResult":
        names = [f.name for f in fields(cls) if f.name != "model_comparison"]
        missing = [k for k in names if k not in data]
        if missing:
            raise ValueError(f"fit result is missing {', '.join(missing)}")
        d = {k: data[k] for k in names}
        if data.get("model_comparison"):
            d["model_comparison"] = ModelComparison.from_dict(data["model_comparison"])
        d["table"] = [dict(row) for row in d["table"]]
        for k in ("misfits", "warnings"):
            d[k] = list(d[k])
        d["bounds"] = [list(map(float, b)) for b in d["bounds"]]
        return cls(**d)

    def __str__(self) -> str:
        f = num
        out = ["[[Fit]]", f"    desirability = {self.desirability:.4f}",
               f"    success      = {self.success}",
               f"    evaluations  = {self.n_evaluations}",
               "    search box   = " + ", ".join(f"{a} {f(lo)} to {f(hi)}" for a, (lo, hi)
                                                 in zip(AXES, self.bounds)) + " MPa½",
               "[[Parameters]]"]
        out += [f"    {a} = {f(getattr(self, a))} MPa½" for a in (*AXES, "R0")]
        out += ["[[Counts]]",
                f"    trials = {self.n_trials} ({self.n_good} dissolves, "
                f"{self.n_partial} partly, {self.n_bad} does not)",
                f"    partly counted as = {self.partial}",
                f"    used = {self.n_counted_good} as good, {self.n_counted_bad} as bad",
                "[[Misfits]]"]
        rows = [r for r in self.table if r["agrees"] is False]
        out += [f"    {r['name']}: {WORDS[r['outcome']]} but {r['predicted']} "
                f"(Ra {f(r['Ra'])}, RED {r['red']:.2f})" for r in rows] or ["    none"]
        on = [r["name"] for r in self.table if r.get("on_surface")]
        if on:
            out.append(f"    on the surface (RED 1.00, either outcome fits): {', '.join(on)}")
        out += warning_lines(self.warnings)
        if self.model_comparison is not None:
            out.append(str(self.model_comparison))
        return "\n".join(out)


#: Smallest radius reported as a sphere [MPa½]. A smaller fitted R0 means the results
#: give the sphere no size (one point dissolves, or results that disagree share a
#: point), and a RED against it would be meaningless (common practice, no source).
MIN_R0 = 0.5


def _degenerate(X: np.ndarray, good: np.ndarray, bad: np.ndarray, names, R0: float) -> str:
    """Why the fit shrank to a point, for a FitError (one line)."""
    G = np.unique(np.round(X[good], 6), axis=0)
    for i in np.flatnonzero(bad):
        same = np.flatnonzero(good & (np.abs(X - X[i]).max(axis=1) < 1e-6))
        if len(same):
            p = ", ".join(f"{v:.1f}" for v in X[i])
            return (f"results at the same point ({p} MPa½) disagree: {names[same[0]]} "
                    f"dissolves, {names[i]} does not, so no sphere separates them. Check "
                    f"both results and their coordinates (a copied row?), and test more "
                    f"solvents around that point.")
    if len(G) == 1:
        which = names[int(np.flatnonzero(good)[0])]
        more = "" if good.sum() == 1 else " (all the results that dissolve sit at one point)"
        return (f"only one point dissolves the material ({which}){more}: one point gives "
                f"the sphere no size (the best fit shrinks to radius {R0:.2g} MPa½). Test "
                f"solvents a few MPa½ from {which} to find how far solubility reaches.")
    return (f"the results leave room only for a sphere of radius {R0:.2g} MPa½ (below "
            f"{MIN_R0} MPa½): good and bad results lie almost on top of each other. Check "
            f"the results and their coordinates.")


@estimator
class SphereModel(SphereEstimator):
    """Hansen sphere estimator (scikit-learn style).

    Parameters
    ----------
    partial : {"good", "bad", "skip"}, default="good"
        How "partly" results count; "skip" leaves them out of the fit.
    bounds : array-like of shape (3, 2), default=None
        Search box for the centre; default: the box spanned by the tested solvents, δ >= 0.
    seed : int, default=0
        Seed of the quasi-random global stage and search directions (reproducible fits).

    Examples
    --------
    >>> X = [[17, 10, 7], [19, 10, 7], [10, 30, 30], [25, 0, 0], [14, 2, 20]]  # invented
    >>> m = SphereModel().fit(X, ["dissolves", "dissolves", "does not", "does not", "does not"])
    >>> m.centre_.round(1).tolist(), round(m.R0_, 1), m.score(X, [1, 1, 0, 0, 0])
    ([18.0, 10.0, 7.0], 2.0, 1.0)
    """

    partial: str = "good"
    bounds: Any = None
    seed: int = 0

    def fit(self, X, y=None, names=None, weights=None, *, warnings=None) -> "SphereModel":
        """Fit the sphere.

        Parameters
        ----------
        X : Trials or array-like of shape (n, 3)
            Bench results (a :class:`~solsphere.io.trials.Trials` object, whose reading
            warnings come along), or the solvents' δD, δP, δH [MPa½].
        y : array-like of shape (n,), default=None
            With an array ``X``: each result in any bench-sheet word ("dissolves" /
            "partly" / "does not", 1 / 0, True / False, "good" / "partial" / "bad").
        names : list of str, default=None
        weights : array-like of shape (n,), default=None
            Per-result weights (default 1).
        warnings : list of str, default=None
            More warnings to carry in the result.

        Returns
        -------
        self
            With ``centre_``, ``R0_`` and ``result_`` (a :class:`SphereFitResult`).
        """
        if self.partial not in ("good", "bad", "skip"):
            raise ValueError(f"partial must be 'good', 'bad' or 'skip'; found {self.partial!r}")
        P, outcomes, names, w, notes_in = model_inputs(X, y, names, weights)
        n = len(outcomes)
        use, codes, _, counted = counted_classes(outcomes, self.partial)
        g = codes == 2
        n_cg, n_cb = int(np.sum(use & g & (w > 0))), int(np.sum(use & ~g & (w > 0)))
        n_partial = outcomes.count("partial")
        if n_cg == 0 or n_cb == 0:
            raise FitError(unboundable_message(n_cg, n_cb, n_partial, self.partial))
        box = search_box(self.bounds, P)
        c, ok, count, R0, D = _fit(P[use], g[use], w[use], box, self.seed)
        if R0 < MIN_R0:
            raise FitError(_degenerate(P[use], g[use] & (w[use] > 0), ~g[use] & (w[use] > 0),
                                       [nm for nm, u in zip(names, use) if u], R0))
        Ra = ra(P, c)
        surf = np.abs(Ra - R0) <= SURFACE
        table = [dict(name=names[i], dD=float(P[i, 0]), dP=float(P[i, 1]), dH=float(P[i, 2]),
                      outcome=outcomes[i], counted_as=counted[i], Ra=float(Ra[i]),
                      red=float(Ra[i] / R0), predicted="inside" if Ra[i] <= R0 else "outside",
                      on_surface=bool(surf[i]),
                      agrees=bool((Ra[i] <= R0) == g[i] or surf[i]) if use[i] else None)
                 for i in range(n)]
        notes = notes_in + few_results_warnings(n_cg, n_cb) + edge_warnings(c, box, P[use])
        notes += shape_warnings(P[use], box)
        if R0 < POINT_R0:
            notes.append(f"R0 = {R0:.2g} MPa½: the results counted as good sit at one point "
                         "(or nearly), so the smallest sphere that fits is that point and the "
                         "results say nothing yet about how far the dissolving region "
                         "reaches; test solvents around them.")
        if not ok:
            notes.append("The centre search stopped at its iteration limit: a better fit may "
                         "exist.")
        notes += [str(t) for t in (warnings or []) if str(t) not in notes]
        self.centre_, self.R0_ = c, R0
        self.result_ = SphereFitResult(
            dD=float(c[0]), dP=float(c[1]), dH=float(c[2]), R0=float(R0), desirability=float(D),
            n_good=outcomes.count("good"), n_bad=outcomes.count("bad"), n_partial=n_partial,
            partial=self.partial, n_trials=n, n_counted_good=n_cg, n_counted_bad=n_cb,
            table=table, misfits=[r["name"] for r in table if r["agrees"] is False],
            warnings=notes, bounds=box.tolist(), success=ok, n_evaluations=count)
        return self


