r"""Exact screening of three-component blends against a Hansen sphere.

A blend of three solvents with volume fractions :math:`w = (w_1, w_2, w_3)`,
:math:`w_i \ge 0`, :math:`\sum w_i = 1`, sits at the volume-fraction weighted mean of the
components' points [1]_: on the triangle spanned by the three points. In the scaled space
:math:`y = W (x - c)`, :math:`W = \mathrm{diag}(2, 1, 1)`, with the sphere centre ``c``
at the origin, Hansen distance is Euclidean [1]_, so the blend closest to the centre is
the Euclidean projection of the origin onto the (scaled) triangle, and everything below
is closed form -- no iterative optimiser per triple (the tests check the result against
``scipy.optimize.minimize(method="SLSQP")`` and against a dense lattice of fractions).

Best fractions
--------------
With scaled vertices :math:`P_1, P_2, P_3`, :math:`e_1 = P_1 - P_3`,
:math:`e_2 = P_2 - P_3`, the closest point of the whole plane is
:math:`P_3 + s e_1 + t e_2` with

.. math:: \begin{pmatrix} e_1\cdot e_1 & e_1\cdot e_2 \\ e_1\cdot e_2 & e_2\cdot e_2
          \end{pmatrix}\begin{pmatrix} s \\ t\end{pmatrix}
          = -\begin{pmatrix} P_3\cdot e_1 \\ P_3\cdot e_2\end{pmatrix},
          \qquad w = (s,\ t,\ 1 - s - t).

If these barycentric coordinates are feasible they are the answer. Otherwise the minimum
of the (convex) squared distance lies on the boundary of the feasible region. With
per-component limits :math:`l_i \le w_i \le u_i` (default 0 and 1) the feasible region
is a convex polygon whose edges lie on the six lines :math:`w_i = l_i` and
:math:`w_i = u_i`. On the line :math:`w_i = b` the blend is
:math:`b P_i + (1-b) P_k + w_j (P_j - P_k)` with

.. math:: \max(l_j,\ 1 - b - u_k) \;\le\; w_j \;\le\; \min(u_j,\ 1 - b - l_k),

a segment, whose closest point is the clipped one-dimensional projection used for pairs
in :mod:`solsphere.blend`. The minimum over the triangle (or polygon) is the smallest of
the feasible plane projection and the six edge projections: exact, and vectorised over
all triples at once. Without limits the lines :math:`w_i = 1` shrink to the vertices and
the three lines :math:`w_i = 0` are the triangle's edges.

Degenerate triangles (collinear or coincident points, detected as
:math:`\det \le 10^{-12}\, |e_1|^2 |e_2|^2`) skip the plane projection: every blend of
three collinear points is also a blend of two of them, so the edges give the exact
minimum, and the triple is reported as not genuinely three-component.

Ties: the plane projection is used only when it is closer than the best edge by more
than :math:`10^{-12}` (relative, in squared distance); otherwise the edge answer (fewer
components) is kept, so a rounding-level gain never turns a pair into a "triple".

Region inside the sphere
------------------------
The triangle's plane cuts the sphere (a ball in the scaled space) in a disc centred at
the projection of the centre, radius :math:`\sqrt{R_0^2 - h^2}` (``h`` the distance from
the centre to the plane). The inside region is disc :math:`\cap` triangle; its area is
computed exactly (to rounding) by splitting the polygon into triangles from the disc
centre, each of whose intersections with the disc is a sum of straight triangles and
circular sectors (elementary geometry, no sampling). It is reported as a fraction of the
triangle's area; because the map from volume fractions to the scaled plane is affine,
the same number is the fraction of the *composition* triangle whose blends lie inside
(RED <= 1). The tests check it against a dense Monte Carlo estimate.

Choices made here (documented so that a user can rely on them):

- A triple is *genuine* when all three best fractions exceed ``1e-9``; otherwise its best
  blend is really a pair or a single solvent, and :func:`screen_triples` leaves it out
  by default (``only_blends=False`` keeps it, marked ``best_is_single=True``).
- Fraction limits are per component: ``max_fraction={"toluene": 0.3}`` means "whenever
  toluene is in a blend, at most 30 % of it"; ``min_fraction={"ethanol": 0.2}`` means
  "whenever ethanol is in a blend, at least 20 %" (blends without it are unaffected).
  A triple whose limits cannot be met together (lower limits summing to more than 1,
  or upper limits to less than 1) is infeasible and left out (counted in
  ``filters["n_infeasible"]``).
- ``inside_area`` is the fraction of the whole triangle; with limits,
  ``inside_area_allowed`` is the fraction of the allowed polygon.
- Property filters (flash point, boiling point, exclusions) behave exactly as in
  :func:`solsphere.blend.screen_blends` (unknown values are removed, and listed).

References
----------
.. [1] C. M. Hansen, *Hansen Solubility Parameters: A User's Handbook*, 2nd ed.,
   CRC Press, Boca Raton, 2007, ch. 1 (distance Ra with the factor 4 on dD, RED,
   volume-fraction mixing of a blend's parameters).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Iterable, Mapping, Sequence

import numpy as np

from solsphere.limits import check as check_limit
from solsphere.design.pairs import (CAUTION, Blend, BlendScreen, as_xyz, blend_table, centred,
                                   check_radius, component_flags, pair_screen, screen_filters,
                                   top_order)
from solsphere.formatting import blend_label, float_or_none, num, pct, plain
from solsphere.hansen import mix, ra
from solsphere.library.table import Solvent

__all__ = ["triple_screen", "best_fractions3", "inside_area_fraction", "mass_fractions3",
           "Blend3", "TripleScreen", "screen_triples"]

#: A fraction at or below this counts as "component not used".
_USED_TOL = 1e-9
#: sin² of the smallest triangle angle-like ratio below which a triangle is degenerate.
_DEGENERATE = 1e-12
#: Relative gain in squared distance the plane projection needs over the best edge.
_TIE = 1e-12
#: Slack allowed when deciding that a polygon edge (or a set of limits) is non-empty.
_SLACK = 1e-12
#: Default number of triples handled at once by :func:`triple_screen` (bounds memory).
_CHUNK = 1 << 12

# the edge on the line w_i = b is parametrised by w_j, with w_k = 1 - b - w_j
_EDGE_JK = ((1, 2), (2, 0), (0, 1))


# --------------------------------------------------------------------------------------
# the arithmetic
# --------------------------------------------------------------------------------------

def _dot(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    return np.einsum("...k,...k->...", x, y)


def _best(P: np.ndarray, lo: np.ndarray, up: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Closest blend to the origin for many triangles at once.

    Parameters
    ----------
    P : ndarray of shape (m, 3, 3)
        ``P[:, v]`` is vertex ``v`` in scaled coordinates relative to the centre.
    lo, up : ndarray of shape (m, 3)
        Fraction limits per vertex; assumed feasible (``sum(lo) <= 1 <= sum(up)``).

    Returns
    -------
    w : ndarray of shape (m, 3)
        Best volume fractions.
    f : ndarray of shape (m,)
        Squared distance of that blend to the origin (the centre).
    """
    m = P.shape[0]
    # the minimisers come from the triples' 3x3 Gram matrices (six numbers per triple);
    # the distances that decide between candidates from the coordinates
    X = np.ascontiguousarray(P.transpose(1, 2, 0))  # (vertex, coordinate, m)
    G = np.empty((3, 3, m))                         # G[a, b] has shape (m,)
    for a in range(3):
        for b in range(a, 3):
            G[a, b] = G[b, a] = (X[a, 0] * X[b, 0] + X[a, 1] * X[b, 1]
                                 + X[a, 2] * X[b, 2])

    def dist2(w):                                   # |sum_v w_v P_v|², from coordinates
        w = w.T
        out = 0.0
        for c in range(3):
            qc = w[0] * X[0, c] + w[1] * X[1, c] + w[2] * X[2, c]
            out = out + qc * qc
        return out

    # --- the six edges: w_i = b, b in {lo_i, up_i} ---
    best_f = np.full(m, np.inf)
    bw = [np.full(m, np.nan) for _ in range(3)]     # best fractions, one array each
    for i, (j, k) in enumerate(_EDGE_JK):
        dd = G[j, j] - 2.0 * G[j, k] + G[k, k]      # |P_j - P_k|²
        safe = np.where(dd > 0, dd, 1.0)
        # the line w_i = 1 meets the polygon at most in the vertex w_i = 1, which then
        # also lies on the lines w_j = 0 and w_k = 0: skip it when no upper limit is set
        bounds = (lo[:, i],) if np.all(up[:, i] >= 1.0) else (lo[:, i], up[:, i])
        for b in bounds:
            a_lo = np.maximum(lo[:, j], 1.0 - b - up[:, k])
            a_hi = np.minimum(up[:, j], 1.0 - b - lo[:, k])
            ok = a_lo <= a_hi + _SLACK
            a_hi = np.maximum(a_hi, a_lo)
            nb = 1.0 - b
            # base = b P_i + (1 - b) P_k, d = P_j - P_k; minimise |base + t d|² over t
            bd = b * (G[i, j] - G[i, k]) + nb * (G[k, j] - G[k, k])
            t = np.where(dd > 0, -bd / safe, a_lo)
            t = np.minimum(np.maximum(t, a_lo), a_hi)
            # the distance from the coordinates: the Gram form bb + 2 t bd + t² dd
            # loses digits to cancellation when the blend is close to the centre
            fq = 0.0
            for c in range(3):
                qc = b * X[i, c] + nb * X[k, c] + t * (X[j, c] - X[k, c])
                fq = fq + qc * qc
            fq = np.where(ok, fq, np.inf)
            better = fq < best_f
            best_f = np.where(better, fq, best_f)
            bw[i] = np.where(better, b, bw[i])
            bw[j] = np.where(better, t, bw[j])
            bw[k] = np.where(better, nb - t, bw[k])
    best_w = np.stack(bw, axis=1)
    # --- the plane projection (e1 = P_0 - P_2, e2 = P_1 - P_2) ---
    g11 = G[0, 0] - 2.0 * G[0, 2] + G[2, 2]
    g22 = G[1, 1] - 2.0 * G[1, 2] + G[2, 2]
    g12 = G[0, 1] - G[0, 2] - G[1, 2] + G[2, 2]
    det = g11 * g22 - g12 * g12
    good = det > _DEGENERATE * g11 * g22
    if good.any():
        sdet = np.where(good, det, 1.0)
        r1 = G[2, 2] - G[0, 2]                      # -P_2 . e1
        r2 = G[2, 2] - G[1, 2]                      # -P_2 . e2
        s = (g22 * r1 - g12 * r2) / sdet
        t = (g11 * r2 - g12 * r1) / sdet
        w = np.stack([s, t, 1.0 - s - t], axis=1)
        feas = good & np.all((w >= lo) & (w <= up), axis=1)
        if feas.any():
            fq = dist2(w)
            take = feas & (fq < best_f - _TIE * (1.0 + best_f))
            best_f = np.where(take, fq, best_f)
            best_w[take] = w[take]
    return best_w, best_f


def _frame(P: np.ndarray):
    """The triangles' planes: 2D vertex coordinates around the projected centre.

    Returns ``V`` (m, 3, 2), ``h2`` (m,) the squared distance of the centre to the plane,
    and ``good`` (m,) False for degenerate triangles.
    """
    e1 = P[:, 1] - P[:, 0]
    e2 = P[:, 2] - P[:, 0]
    nrm = np.cross(e1, e2)
    n2 = _dot(nrm, nrm)
    good = n2 > _DEGENERATE * _dot(e1, e1) * _dot(e2, e2)
    n = nrm / np.sqrt(np.where(good, n2, 1.0))[:, None]
    u = e1 / np.sqrt(np.where(good, _dot(e1, e1), 1.0))[:, None]
    v = np.cross(n, u)
    h = _dot(P[:, 0], n)
    # the origin projects to h n; (P - h n) . u = P . u since n is orthogonal to u, v
    V = np.stack([np.einsum("mvk,mk->mv", P, u), np.einsum("mvk,mk->mv", P, v)], axis=2)
    return V, h * h, good


def _disc_pieces(A: np.ndarray, B: np.ndarray, r: np.ndarray) -> np.ndarray:
    """Signed area of disc(0, r) ∩ triangle(0, A, B), for many edges at once.

    ``A``, ``B`` have shape (..., 2) and ``r`` broadcasts to (...). The edge is split at
    its crossings with the circle; the inside part contributes a straight triangle
    (half the cross product), the outside parts circular sectors (r²/2 times the signed
    angle). Summed over a polygon's edges this gives the area of disc ∩ polygon, with the
    sign of the polygon's orientation.
    """
    D = B - A
    a = _dot(D, D)
    bh = _dot(A, D)                       # half the linear coefficient
    c = _dot(A, A) - r * r
    disc = bh * bh - a * c
    safe_a = np.where(a > 0, a, 1.0)
    root = np.sqrt(np.maximum(disc, 0.0))
    t1 = np.clip((-bh - root) / safe_a, 0.0, 1.0)
    t2 = np.clip((-bh + root) / safe_a, 0.0, 1.0)
    crosses = (disc > 0) & (a > 0)
    t1 = np.where(crosses, t1, 0.0)
    t2 = np.where(crosses, t2, 0.0)
    P1 = A + t1[..., None] * D
    P2 = A + t2[..., None] * D

    def cross(X, Y):
        return X[..., 0] * Y[..., 1] - X[..., 1] * Y[..., 0]

    def sector(X, Y):
        return 0.5 * r * r * np.arctan2(cross(X, Y), _dot(X, Y))

    area = sector(A, P1) + 0.5 * cross(P1, P2) + sector(P2, B)
    return np.where(a > 0, area, 0.0)


def _inside_area(P: np.ndarray, R0: float) -> np.ndarray:
    """Fraction of each triangle's area inside the sphere (NaN where degenerate)."""
    V, h2, good = _frame(P)
    r2 = np.maximum(R0 * R0 - h2, 0.0)
    r = np.sqrt(r2)
    A = V
    B = np.roll(V, -1, axis=1)
    total = _disc_pieces(A, B, r[:, None]).sum(axis=1)
    cr = (A[..., 0] * B[..., 1] - A[..., 1] * B[..., 0]).sum(axis=1)  # 2 x signed area
    frac = np.where(good, 2.0 * total / np.where(good, cr, 1.0), np.nan)
    frac = np.where(h2 >= R0 * R0, np.where(good, 0.0, np.nan), frac)
    return np.clip(frac, 0.0, 1.0)


def _polygon_inside_area(P3: np.ndarray, lo: np.ndarray, up: np.ndarray,
                         R0: float) -> float | None:
    """Fraction of the allowed polygon (limits ``lo <= w <= up``) inside the sphere.

    One triangle (``P3`` of shape (3, 3)); None if degenerate or the polygon is empty.
    The polygon is the triangle clipped by the six half-planes in barycentric
    coordinates (Sutherland-Hodgman clipping of a convex polygon).
    """
    V, h2, good = _frame(P3[None])
    if not good[0]:
        return None
    poly = [np.eye(3)[v] for v in range(3)]
    for i in range(3):
        for bound, sign in ((lo[i], 1.0), (up[i], -1.0)):
            def g(w, i=i, bound=bound, sign=sign):   # >= 0 inside the half-plane
                return sign * (w[i] - bound)
            out = []
            for p, q in zip(poly, poly[1:] + poly[:1]):
                gp, gq = g(p), g(q)
                if gp >= 0:
                    out.append(p)
                if (gp >= 0) != (gq >= 0):
                    out.append(p + (gp / (gp - gq)) * (q - p))
            poly = out
            if not poly:
                return None
    W = np.array(poly)                      # (k, 3) barycentric
    X = W @ V[0]                            # (k, 2) plane coordinates
    A, B = X, np.roll(X, -1, axis=0)
    cr = float((A[:, 0] * B[:, 1] - A[:, 1] * B[:, 0]).sum())
    if not abs(cr) > 0:
        return None
    if h2[0] >= R0 * R0:
        return 0.0
    r = np.sqrt(R0 * R0 - h2[0])
    total = float(_disc_pieces(A, B, np.full(len(A), r)).sum())
    return float(min(max(2.0 * total / cr, 0.0), 1.0))


def _limits_arrays(lower, upper, n: int) -> tuple[np.ndarray, np.ndarray]:
    lo = np.zeros(n) if lower is None else np.asarray(lower, dtype=float).reshape(-1)
    up = np.ones(n) if upper is None else np.asarray(upper, dtype=float).reshape(-1)
    if lo.shape != (n,) or up.shape != (n,):
        raise ValueError(f"lower and upper must have one fraction per point ({n}); found "
                         f"{lo.shape[0]} and {up.shape[0]}")
    if not (np.all(np.isfinite(lo)) and np.all(np.isfinite(up))):
        raise ValueError("fraction limits must be finite numbers between 0 and 1")
    if np.any(lo < 0) or np.any(lo > 1) or np.any(up < 0) or np.any(up > 1):
        raise ValueError("fraction limits must lie between 0 and 1 (e.g. 0.3 for 30 %)")
    if np.any(lo > up):
        k = int(np.flatnonzero(lo > up)[0])
        raise ValueError(f"minimum fraction {lo[k]:g} exceeds maximum fraction {up[k]:g} "
                         f"for point {k}; make the minimum at most the maximum")
    return lo, up


def _all_triples(n: int) -> np.ndarray:
    """All ``i < j < k`` of ``range(n)`` in lexicographic order, shape (m, 3)."""
    if n < 3:
        return np.empty((0, 3), dtype=np.int64)
    J, K = np.triu_indices(n, 1)                    # pairs j < k, ordered by j
    first = np.arange(n) * n - np.arange(n) * (np.arange(n) + 1) // 2  # row starts
    i = np.arange(n - 2)
    count = (n - 1 - i) * (n - 2 - i) // 2          # pairs with j > i
    I = np.repeat(i, count)
    pos = np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count) \
        + np.repeat(first[i + 1], count)
    return np.stack([I, J[pos], K[pos]], axis=1).astype(np.int64, copy=False)


def triple_screen(points, centre, R0: float, triples=None, *, lower=None, upper=None,
                  area: bool = False, chunk: int = _CHUNK) -> dict[str, np.ndarray]:
    """Best blend of every triple of points, vectorised (no Python loop over triples).

    Triple ``t`` blends ``points[i[t]]``, ``points[j[t]]``, ``points[k[t]]`` with volume
    fractions ``w[t]``; see the module docstring for the closed form.

    Parameters
    ----------
    points, centre, R0
        As for :func:`solsphere.design.pairs.pair_screen` [MPa½].
    triples : array-like of int of shape (m, 3), optional
        Screen only these triples of indices; default: all ``n(n-1)(n-2)/6`` triples
        ``i < j < k`` in lexicographic order.
    lower, upper : array-like of shape (n,), optional
        Per-point limits on the volume fraction (default 0 and 1), applied whenever the
        point is a component of a triple.
    area : bool, default=False
        Also return ``"inside_area"``, the fraction of each triangle inside the sphere.
    chunk : int, default=4096
        Triples handled at once; bounds the temporary memory.

    Returns
    -------
    dict of ndarray
        ``"i"``, ``"j"``, ``"k"`` (int64, shape (m,)), ``"w"`` (shape (m, 3): best
        volume fractions of the three, NaN where infeasible), ``"red"`` (RED of that
        blend, ``inf`` where infeasible), ``"genuine"`` (all three fractions > 1e-9),
        ``"feasible"`` (the limits can be met together) and, with ``area=True``,
        ``"inside_area"`` (NaN for degenerate triangles).

    Examples
    --------
    >>> out = triple_screen([[18, 2, 3], [18, 14, 3], [18, 8, 15]], [17, 8, 6], 8 ** 0.5)
    >>> out["w"].round(6).tolist(), round(float(out["red"][0]), 6)
    ([[0.375, 0.375, 0.25]], 0.707107)
    """
    R0 = check_radius(R0)
    e = centred(points, centre)
    if e.ndim != 2 or e.shape[1] != 3:
        raise ValueError(f"points must have shape (n, 3); found {np.shape(points)}")
    if not np.all(np.isfinite(e)):
        raise ValueError("points and centre must be finite numbers")
    n = len(e)
    lo_p, up_p = _limits_arrays(lower, upper, n)
    if triples is None:
        T = _all_triples(n)
    else:
        T = np.asarray(triples, dtype=np.int64)
        if T.size == 0:
            T = T.reshape(0, 3)
        if T.ndim != 2 or T.shape[1] != 3:
            raise ValueError(f"triples must have shape (m, 3); found {T.shape}")
        if T.size and (T.min() < 0 or T.max() >= n):
            raise ValueError(f"triple indices must lie in 0..{n - 1}")
    m = len(T)
    w = np.full((m, 3), np.nan)
    f = np.full(m, np.inf)
    feasible = np.zeros(m, dtype=bool)
    inside = np.full(m, np.nan) if area else None
    step = max(int(chunk), 1)
    for s in range(0, m, step):
        sl = slice(s, min(s + step, m))
        Tc = T[sl]
        P = e[Tc]                                   # (c, 3, 3)
        lo, up = lo_p[Tc], up_p[Tc]
        ok = (lo.sum(axis=1) <= 1.0 + _SLACK) & (up.sum(axis=1) >= 1.0 - _SLACK)
        feasible[sl] = ok
        if ok.all():
            wc, fc = _best(P, lo, up)
            w[sl], f[sl] = wc, fc
        elif ok.any():
            idx = np.flatnonzero(ok) + s
            wc, fc = _best(P[ok], lo[ok], up[ok])
            w[idx], f[idx] = wc, fc
        if area:
            inside[sl] = _inside_area(P, R0)
    red = np.sqrt(f) / R0
    genuine = feasible & np.all(w > _USED_TOL, axis=1)
    out = {"i": T[:, 0].copy(), "j": T[:, 1].copy(), "k": T[:, 2].copy(), "w": w,
           "red": red, "genuine": genuine, "feasible": feasible}
    if area:
        out["inside_area"] = inside
    return out


def _limits3(lower, upper) -> tuple[np.ndarray, np.ndarray]:
    lo, up = _limits_arrays(lower, upper, 3)
    if lo.sum() > 1.0 + _SLACK or up.sum() < 1.0 - _SLACK:
        raise ValueError(f"the limits cannot be met together: minimum fractions sum to "
                         f"{lo.sum():g} and maximum fractions to {up.sum():g}; the "
                         "minimums must sum to at most 1 and the maximums to at least 1")
    return lo, up


def best_fractions3(a, b, c, centre, lower=None, upper=None) -> np.ndarray:
    """Volume fractions of ``a``, ``b``, ``c`` whose blend is closest to ``centre``.

    Parameters
    ----------
    a, b, c : array-like of shape (3,) or Solvent
        The three components' dD, dP, dH [MPa½].
    centre : array-like of shape (3,)
        Sphere centre [MPa½].
    lower, upper : array-like of shape (3,), optional
        Limits on each component's volume fraction (default 0 and 1).

    Returns
    -------
    ndarray of shape (3,)
        Best fractions (sum 1, within the limits). For a degenerate (collinear or
        coincident) triangle one of the exact minimisers with a component at a limit.

    Raises
    ------
    ValueError
        If the limits cannot be met together.

    Examples
    --------
    >>> best_fractions3([18, 2, 3], [18, 14, 3], [18, 8, 15], [17, 8, 6]).tolist()
    [0.375, 0.375, 0.25]
    >>> best_fractions3([18, 2, 3], [18, 14, 3], [18, 8, 15], [17, 8, 6],
    ...                 lower=[0.5, 0, 0]).round(12).tolist()
    [0.5, 0.3, 0.2]
    """
    cc = as_xyz(centre, "centre")
    P = np.stack([centred(as_xyz(x, name), cc) for x, name in
                  ((a, "a"), (b, "b"), (c, "c"))])[None]
    lo, up = _limits3(lower, upper)
    return _best(P, lo[None], up[None])[0][0]


def inside_area_fraction(a, b, c, centre, R0: float, lower=None,
                         upper=None) -> float | None:
    """Fraction of the triangle of blends of ``a``, ``b``, ``c`` inside the sphere.

    Exact (closed-form disc-polygon intersection in the triangle's plane; see the
    module docstring). The fraction is the same for the triangle of volume fractions and
    for its image in Hansen space.

    Parameters
    ----------
    a, b, c, centre, lower, upper
        As for :func:`best_fractions3`.
    R0 : float
        Sphere radius [MPa½]. With ``lower``/``upper``, the fraction of the *allowed* polygon (``lower <= w <= upper``)
        instead of the whole triangle.

    Returns
    -------
    float or None
        In [0, 1]; None for a degenerate (collinear or coincident) triangle, whose area
        is zero.

    Examples
    --------
    >>> import math
    >>> x = inside_area_fraction([18, 2, 3], [18, 14, 3], [18, 8, 15], [17, 8, 6], 8 ** 0.5)
    >>> round(x, 12) == round(math.pi / 18, 12)   # a disc of radius 2 in a triangle of area 72
    True
    """
    R0 = check_radius(R0)
    cc = as_xyz(centre, "centre")
    P = np.stack([centred(as_xyz(x, name), cc) for x, name in
                  ((a, "a"), (b, "b"), (c, "c"))])
    if lower is not None or upper is not None:
        lo, up = _limits3(lower, upper)
        return _polygon_inside_area(P, lo, up, R0)
    x = float(_inside_area(P[None], R0)[0])
    return None if np.isnan(x) else x


def mass_fractions3(volume_fractions: Sequence[float],
                    densities: Sequence[float | None]) -> list[float] | None:
    r"""Mass fractions of a blend from its volume fractions and the densities.

    .. math:: m_i = \frac{w_i \rho_i}{\sum_j w_j \rho_j}

    Parameters
    ----------
    volume_fractions : sequence of float
        Volume fractions (any number of components).
    densities : sequence of float or None
        Densities [g/cm³]; None when unknown.

    Returns
    -------
    list of float or None
        None when a density is unknown or not positive (volume change on mixing is
        neglected).

    Examples
    --------
    >>> [round(x, 6) for x in mass_fractions3([0.5, 0.3, 0.2], [0.8, 1.0, 1.5])]
    [0.4, 0.3, 0.3]
    """
    if any(d is None or not d > 0 for d in densities):
        return None
    parts = [float(w) * float(d) for w, d in zip(volume_fractions, densities)]
    total = sum(parts)
    return [p / total for p in parts]


# --------------------------------------------------------------------------------------
# result objects (subclasses of the pair screen's, so every consumer of those works)
# --------------------------------------------------------------------------------------

@dataclass
class Blend3(Blend):
    """One three-solvent blend at its best volume fractions.

    Every attribute of :class:`solsphere.blend.Blend` with three entries per list
    (components listed by volume fraction, largest first), plus the ones below.
    ``inside_window`` is None and ``window_width`` 0.0: a window of one fraction is not
    defined for three components; the robustness figure is ``inside_area``.
    ``both_non_solvents`` (kept for consumers of pair output) equals
    ``all_non_solvents``.

    Attributes
    ----------
    inside_area : float or None
        Fraction of the triangle of all blends of the three that lies inside the sphere
        (RED <= 1); None for a degenerate triangle.
    inside_area_allowed : float or None
        The same for the region allowed by the fraction limits; None when no limit
        applies to these components.
    all_non_solvents : bool
        All three components alone lie outside the sphere (RED > 1).
    lower_limits, upper_limits : list of float
        The fraction limits that applied to each component (0 and 1 when none).
    """

    inside_area: float | None = None
    inside_area_allowed: float | None = None
    all_non_solvents: bool = False
    lower_limits: list[float] = field(default_factory=lambda: [0.0, 0.0, 0.0])
    upper_limits: list[float] = field(default_factory=lambda: [1.0, 1.0, 1.0])

    def label(self) -> str:
        """``"50% toluene + 30% ethanol + 20% water"`` (volume %)."""
        return blend_label(self.solvents, self.volume_fractions)

    def window_text(self) -> str:
        """The inside area as a percentage of the triangle (``"none"`` if 0)."""
        if self.inside_area is None:
            return "n/a"
        if self.inside_area <= 0.0:
            return "none"
        return f"{100.0 * self.inside_area:.1f}%"

    def to_dict(self) -> dict[str, Any]:
        d = super().to_dict()
        d["window_solvent"] = None
        d.update({
            "n_components": len(self.solvents),
            "inside_area": float_or_none(self.inside_area),
            "inside_area_allowed": float_or_none(self.inside_area_allowed),
            "all_non_solvents": bool(self.all_non_solvents),
            "lower_limits": [float(x) for x in self.lower_limits],
            "upper_limits": [float(x) for x in self.upper_limits],
        })
        return d

    def __str__(self) -> str:
        fp = " / ".join(num(x, "{:.0f}", "?") for x in self.flash_points)
        text = (f"{self.label()}: dD {self.dD:.1f}, dP {self.dP:.1f}, dH {self.dH:.1f} "
                f"MPa½, RED {self.red:.2f}, inside area {self.window_text()} of the "
                f"triangle, flash points {fp} °C")
        if self.inside_area_allowed is not None:
            text += f", {100.0 * self.inside_area_allowed:.1f}% of the allowed region"
        if self.flags:
            text += "; " + "; ".join(self.flags)
        return text


@dataclass
class TripleScreen(BlendScreen):
    """Ranked three-solvent blends for one sphere.

    Attributes as :class:`solsphere.blend.BlendScreen`, with ``blends`` a list of
    :class:`Blend3` sorted by RED ascending, then by larger ``inside_area``. For this
    class ``n_pairs_screened`` holds the number of *triples* screened (also available as
    ``n_triples_screened``) and ``n_single_best`` the number of feasible triples whose
    best blend uses fewer than three components. ``filters`` adds ``max_fraction``,
    ``min_fraction`` (by name), ``limits_not_found`` and ``n_infeasible``.
    """

    @property
    def n_triples_screened(self) -> int:
        return self.n_pairs_screened

    def to_dict(self) -> dict[str, Any]:
        """``{"blends": [...], ...}`` with JSON-safe plain types."""
        return {
            "blends": [b.to_dict() for b in self.blends],
            "n_components": 3,
            "centre": [float(x) for x in self.centre],
            "R0": float(self.R0),
            "n_candidates": int(self.n_candidates),
            "n_triples_screened": int(self.n_pairs_screened),
            "n_fewer_components_best": int(self.n_single_best),
            "filters": plain(self.filters),
            "caution": CAUTION,
        }

    def __str__(self) -> str:
        c = self.centre
        f = self.filters
        lines = [f"Three-solvent blends for the sphere at dD {c[0]:.1f}, dP {c[1]:.1f}, "
                 f"dH {c[2]:.1f} MPa½, R0 {self.R0:.1f} MPa½",
                 f"{self.n_candidates} candidate solvents, {self.n_pairs_screened} triples "
                 "screened" + ("" if not f.get("only_blends", True) else
                              f", {self.n_single_best} left out (fewer components are as "
                              "good)")
                 + (f", {f['n_infeasible']} infeasible under the fraction limits"
                    if f.get("n_infeasible") else "")]
        fl = self._filter_lines()
        for key, word in (("max_fraction", "at most"), ("min_fraction", "at least")):
            if f.get(key):
                fl.append(f"{word} " + ", ".join(f"{pct(v)} {k}"
                                                 for k, v in f[key].items()))
        if f.get("limits_not_found"):
            fl.append("limits for solvents not among the candidates: "
                      + ", ".join(f["limits_not_found"]))
        if fl:
            lines.append("Filters: " + "; ".join(fl))
        lines.append("")
        lines += blend_table(self.blends, "inside area", 15, lambda b: (
            (["all three non-solvents alone"] if b.all_non_solvents else [])
            + (["fewer components are as good"] if b.best_is_single else []) + b.flags))
        if self.blends:
            lines.append("inside area: share of all blends of the three (the whole "
                         "triangle of volume fractions) with RED <= 1")
        lines.append("")
        lines.append(CAUTION)
        return "\n".join(lines)


# --------------------------------------------------------------------------------------
# screening a list of solvents
# --------------------------------------------------------------------------------------

def _limit_map(limits: Mapping[str, float] | None, what: str) -> dict[str, float]:
    out: dict[str, float] = {}
    for name, value in (limits or {}).items():
        try:
            v = float(value)
        except (TypeError, ValueError):
            raise ValueError(f"{what} for {name!r} must be a number between 0 and 1; "
                             f"found {value!r}") from None
        if not (np.isfinite(v) and 0.0 <= v <= 1.0):
            raise ValueError(f"{what} for {name!r} must be between 0 and 1 (e.g. 0.3 for "
                             f"30 %); found {value!r}")
        out[str(name)] = v
    return out


def screen_triples(candidates: Iterable[Solvent], centre, R0: float, top: int | None = 20,
                   max_fraction: Mapping[str, float] | None = None,
                   min_fraction: Mapping[str, float] | None = None,
                   exclude: Iterable[str] = (), min_flash_point: float | None = None,
                   max_boiling_point: float | None = None,
                   only_blends: bool = True) -> TripleScreen:
    """Rank all three-solvent blends of ``candidates`` by RED at their best fractions.

    Parameters
    ----------
    candidates, centre, R0, top
        As for :func:`solsphere.design.pairs.screen_blends` (the solvents to combine).
    max_fraction, min_fraction : mapping of str to float, optional
        Per-solvent limits on the volume fraction (0 to 1), applied whenever that
        solvent is a component (``{"toluene": 0.3}``). Names as ``Solvent.name``
        (casefold); names not among the candidates are listed in
        ``filters["limits_not_found"]``.
    exclude, min_flash_point, max_boiling_point
        Filters of the components, as for :func:`solsphere.design.pairs.screen_blends`.
    only_blends : bool, default=True
        Rank only genuine three-component blends (all three fractions > 1e-9). False
        also keeps triples whose best blend is a pair or a single solvent, marked
        ``best_is_single=True``.

    Returns
    -------
    TripleScreen
        Blends sorted by RED, then by larger inside area.

    Raises
    ------
    ValueError
        For a limit outside [0, 1], a minimum above the maximum of the same solvent, a
        negative ``top`` or a bad centre / radius.

    Notes
    -----
    All triples are screened at once by :func:`triple_screen`; the inside area is
    computed (vectorised) for the genuine feasible triples and breaks ties in RED; the
    ``top`` triples are chosen on the arrays before any :class:`Blend3` is built.
    """
    if top is not None:
        check_limit("top", top, "the blend list")
    R0 = check_radius(R0)
    c = as_xyz(centre, "centre")
    if top is not None and int(top) < 0:
        raise ValueError(f"top must be a non-negative integer or None; found {top!r}")
    umap = _limit_map(max_fraction, "max_fraction")
    lmap = _limit_map(min_fraction, "min_fraction")
    kept, summary = screen_filters(candidates, exclude, min_flash_point, max_boiling_point)
    summary["only_blends"] = bool(only_blends)
    summary["max_fraction"] = dict(umap)
    summary["min_fraction"] = dict(lmap)
    n = len(kept)
    keys = [s.name.casefold() for s in kept]
    pos = {k: q for q, k in enumerate(keys)}
    lo_p, up_p = np.zeros(n), np.ones(n)
    for mp, arr in ((lmap, lo_p), (umap, up_p)):
        for name, v in mp.items():
            q = pos.get(name.casefold())
            if q is not None:
                arr[q] = v
    summary["limits_not_found"] = list(dict.fromkeys(
        name for name in list(lmap) + list(umap) if name.casefold() not in pos))
    bad = np.flatnonzero(lo_p > up_p)
    if bad.size:
        s = kept[int(bad[0])]
        raise ValueError(f"min_fraction {lo_p[bad[0]]:g} exceeds max_fraction "
                         f"{up_p[bad[0]]:g} for {s.name!r}; make the minimum at most the "
                         "maximum")
    points = np.array([s.point for s in kept], dtype=float).reshape(n, 3)
    res = triple_screen(points, c, R0, lower=lo_p, upper=up_p)
    m = len(res["i"])
    feas = res["feasible"]
    summary["n_infeasible"] = int((~feas).sum())
    n_fewer = int((feas & ~res["genuine"]).sum())
    keep = np.flatnonzero(res["genuine"] if only_blends else feas)

    T = np.stack([res["i"], res["j"], res["k"]], axis=1)
    e = centred(points, c) if n else np.empty((0, 3))
    area = _inside_area(e[T[keep]], R0) if keep.size else np.empty(0)
    order = top_order(res["red"][keep], np.nan_to_num(area, nan=-1.0),
                       None if top is None else int(top))

    red_alone = ra(points, c) / R0 if n else np.empty(0)
    limited = (lo_p > 0) | (up_p < 1)
    blends = []
    for q in order:
        t = int(keep[q])
        idx = [int(x) for x in T[t]]
        blends.append(_make_blend3([kept[x] for x in idx], res["w"][t],
                                   float(res["red"][t]), area[q],
                                   [float(red_alone[x]) for x in idx],
                                   [float(lo_p[x]) for x in idx],
                                   [float(up_p[x]) for x in idx],
                                   bool(limited[idx].any()), e[idx],
                                   not bool(res["genuine"][t]), R0))
    return TripleScreen(blends=blends, n_candidates=n, n_pairs_screened=m,
                        n_single_best=n_fewer, filters=summary,
                        centre=(float(c[0]), float(c[1]), float(c[2])), R0=R0)


def _make_blend3(solvents: list[Solvent], w: np.ndarray, red: float, area: float,
                 red_alone: list[float], lower: list[float], upper: list[float],
                 limited: bool, P: np.ndarray, single: bool, R0: float) -> Blend3:
    allowed = (_polygon_inside_area(P, np.array(lower), np.array(upper), R0)
               if limited else None)
    order = sorted(range(3), key=lambda q: -float(w[q]))   # largest part first
    ss = [solvents[q] for q in order]
    ww = [float(w[q]) for q in order]
    x = mix([s.point for s in ss], ww)
    all_non = all(r > 1.0 for r in red_alone)
    return Blend3(
        solvents=[s.name for s in ss],
        volume_fractions=ww,
        mass_fractions=mass_fractions3(ww, [s.density for s in ss]),
        dD=float(x[0]), dP=float(x[1]), dH=float(x[2]),
        ra=red * R0, red=red,
        inside_window=None,
        window_width=0.0,
        both_non_solvents=all_non,
        red_components=[red_alone[q] for q in order],
        flash_points=[float_or_none(s.flash_point) for s in ss],
        boiling_points=[float_or_none(s.boiling_point) for s in ss],
        twa_ppm=[float_or_none(s.twa_ppm) for s in ss],
        flags=component_flags(ss),
        best_is_single=single,
        component_points=[s.point for s in ss],
        inside_area=None if np.isnan(area) else float(area),
        inside_area_allowed=allowed,
        all_non_solvents=all_non,
        lower_limits=[lower[q] for q in order],
        upper_limits=[upper[q] for q in order],
    )


#: Candidates kept for a three-solvent screen of a large pool (C(60, 3) = 34,220 triples).
SHORTLIST_SIZE = 60


def triple_shortlist(candidates: Sequence[Solvent], centre, R0: float,
                     size: int = SHORTLIST_SIZE, keep: Iterable[str] = ()) -> list[Solvent]:
    """A shortlist of a large pool for the three-solvent screen.

    All triples of the whole library liquids (~700) would be about 5×10⁷; the
    shortlist takes half its places from the solvents nearest the centre and the rest
    from the components of the best two-solvent blends (exact pair screen), which brings
    in the far-apart partners (often non-solvents alone) that good blends are made of.
    Solvents named in ``keep`` (e.g. those with a fraction limit) are always included.

    Returns
    -------
    list of Solvent
        ``candidates`` itself when it has at most ``size`` solvents.
    """
    pool = list(candidates)
    if len(pool) <= size:
        return pool
    keep = set(keep)
    pts = np.array([s.point for s in pool], dtype=float)
    chosen: list[int] = [k for k, s in enumerate(pool) if s.name in keep]
    seen = set(chosen)
    for k in np.argsort(ra(pts, centre), kind="stable"):
        if len(chosen) >= size // 2 + len(keep):
            break
        if int(k) not in seen:
            chosen.append(int(k))
            seen.add(int(k))
    out = pair_screen(pts, centre, R0)
    order = np.argsort(np.where(out["single"], np.inf, out["red"]), kind="stable")
    for k in order:
        if len(chosen) >= size + len(keep):
            break
        for idx in (int(out["i"][k]), int(out["j"][k])):
            if idx not in seen and len(chosen) < size + len(keep):
                chosen.append(idx)
                seen.add(idx)
    return [pool[k] for k in chosen]
