r"""Which solvents to test next: the results that would pin the sphere down best.

The resampled spheres of a bootstrap (:mod:`solsphere.confidence`) stand for the spheres
the bench results cannot yet tell apart. An untried solvent that half of them contain
(``p_good`` near 0.5) splits them in two whatever its result; one that all of them
contain (or none) teaches nothing new. For a *set* of suggestions the question is how
finely their results, taken together, split the resampled spheres: two neighbouring
solvents split them the same way, so the second adds little.

The picks are made greedily [1]_. Each resampled sphere k predicts a yes/no pattern on
the solvents picked so far; the spheres fall into groups with equal patterns. A
candidate j is scored by the expected information its result adds to the picks above,
the conditional entropy

.. math:: \Delta H_j = H(\text{patterns of picks} + j) - H(\text{patterns of picks}),
          \qquad H = -\sum_g \frac{n_g}{N} \ln \frac{n_g}{N}

over the N resampled spheres (in nats; at most ln 2 = 0.693 for one yes/no result).
For the first pick this is the binary entropy of ``p_good``; later picks that split the
spheres the same way as an earlier pick score nearly 0, which is the spread term: the
suggestions are not all neighbours. Ties (within 1e-9) go to the candidate farther, in
Hansen distance, from the picks above. When the resampled spheres agree on every
remaining candidate, the rest are the candidates nearest the fitted surface
(``|RED - 1|`` smallest), each at least R0 / 2 from the picks above where possible.

By default the resampled spheres are those of the graded fit (``method="graded"``). The
classic fit's resampled spheres run small (its R0 is the smallest consistent radius and
resamples mostly shrink it), so suggestions made from them cluster inside the true
boundary: in ``tests/perf/bench_next.py`` (20 invented campaigns, 12 + 10 trials) the
classic engine left the final centre error unchanged against random trials (2.82 vs
2.68 MPa½) while the graded engine cut it from 2.59 to 0.81 MPa½ and raised the share
of all liquids classified right from 0.93 to 0.97.

Safety filters (flash point, exposure limit, carcinogens, liquids only ...) are the
caller's: pass an already filtered candidate list (:meth:`Library.select`). Every
suggestion carries its flash point and hazard flags. A ``p_good`` is a share of
resampled spheres, not a guarantee of the bench result.

References
----------
.. [1] D. J. C. MacKay, "Information-based objective functions for active data
   selection", Neural Computation 4(4), 590-604, 1992 (choosing the measurement of
   largest expected information gain).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from . import confidence
from .confidence import Bootstrap, binary_data
from .hsp import ra
from .library import hazard_flags, normalise

__all__ = ["Suggestion", "Suggestions", "suggest_next", "select_informative"]

CAUTION = ("Suggestions are for learning about the material, not predictions of success: "
           "a p_good is the share of plausible spheres that contain the solvent. Read each "
           "safety data sheet and work with ventilation and protection before testing.")
_TIE = 1e-9
_LN2 = float(np.log(2.0))


@dataclass
class Suggestion:
    """One solvent to test next."""

    name: str
    cas: str | None
    dD: float
    dP: float
    dH: float
    p_good: float
    red: float
    gain: float
    reason: str
    flash_point: float | None = None
    boiling_point: float | None = None
    twa_ppm: float | None = None
    flags: list = field(default_factory=list)

    def to_dict(self) -> dict:
        return {"name": self.name, "cas": self.cas, "dD": self.dD, "dP": self.dP,
                "dH": self.dH, "p_good": self.p_good, "red": self.red, "gain": self.gain,
                "reason": self.reason, "flash_point": self.flash_point,
                "boiling_point": self.boiling_point, "twa_ppm": self.twa_ppm,
                "flags": list(self.flags)}


@dataclass
class Suggestions:
    """Result of :func:`suggest_next`: the picks in order (the first is the best)."""

    suggestions: list
    n_candidates: int
    n_bootstrap: int
    seed: int | None
    centre: list
    R0: float
    warnings: list = field(default_factory=list)

    def to_dict(self) -> dict:
        """JSON-safe (the ``solsphere next --json`` object)."""
        return {"suggestions": [s.to_dict() for s in self.suggestions],
                "n_candidates": self.n_candidates, "n_bootstrap": self.n_bootstrap,
                "seed": self.seed, "centre": list(self.centre), "R0": self.R0,
                "warnings": list(self.warnings), "caution": CAUTION}

    @property
    def names(self) -> list[str]:
        return [s.name for s in self.suggestions]

    def __str__(self) -> str:
        out = [f"Next trials ({len(self.suggestions)} of {self.n_candidates} untried "
               f"candidates; from {self.n_bootstrap} resampled spheres)"]
        for i, s in enumerate(self.suggestions, 1):
            fp = "—" if s.flash_point is None else f"{s.flash_point:.0f} °C"
            out.append(f"{i}. {s.name} ({s.dD:.1f}, {s.dP:.1f}, {s.dH:.1f}); p_good "
                       f"{s.p_good:.2f}, RED {s.red:.2f}, flash point {fp}")
            out.append(f"   {s.reason}")
            if s.flags:
                out.append(f"   flags: {'; '.join(s.flags)}")
        out += [f"warning: {t}" for t in self.warnings]
        out.append(CAUTION)
        return "\n".join(out)


def _entropy_gain(groups: np.ndarray, n_groups: int, inside: np.ndarray) -> np.ndarray:
    """Conditional entropy (nats) of each column of ``inside`` (N, m) given the groups."""
    N = len(groups)
    onehot = np.zeros((n_groups, N))
    onehot[groups, np.arange(N)] = 1.0
    n1 = onehot @ inside  # (G, m): spheres of group g containing candidate j
    n0 = onehot.sum(axis=1, keepdims=True) - n1

    def xlogx(a):
        return np.where(a > 0, a * np.log(np.where(a > 0, a, 1.0)), 0.0)

    n = n0 + n1
    return (xlogx(n) - xlogx(n0) - xlogx(n1)).sum(axis=0) / N


def select_informative(inside, n: int, points=None, red=None, R0: float = 1.0):
    """Greedy picks of the columns of ``inside`` that split its rows most finely.

    Parameters
    ----------
    inside : array-like of bool, shape (N, m)
        Resampled sphere k contains candidate j.
    n : int
        Number of picks.
    points : array-like of shape (m, 3), default=None
        Candidate coordinates (tie-breaks and the fallback's spacing).
    red : array-like of shape (m,), default=None
        RED of each candidate to the fitted sphere (the fallback order).
    R0 : float, default=1.0
        Radius of the fitted sphere (the fallback's spacing is R0 / 2).

    Returns
    -------
    picks : list of int, gains : list of float (nats; None for fallback picks)

    Examples
    --------
    >>> inside = np.array([[1, 1, 0], [1, 1, 1], [0, 0, 0], [0, 0, 1]], bool)
    >>> select_informative(inside, 2)[0]  # column 1 repeats column 0; 2 splits anew
    [0, 2]
    """
    A = np.asarray(inside, dtype=float)
    N, m = A.shape
    n = min(int(n), m)
    P = None if points is None else np.asarray(points, dtype=float).reshape(m, 3)
    groups = np.zeros(N, dtype=np.int64)
    free = np.ones(m, dtype=bool)
    picks, gains = [], []
    while len(picks) < n:
        k = int(groups.max()) + 1
        gain = _entropy_gain(groups, k, A)
        gain[~free] = -np.inf
        best = gain.max()
        if not best > _TIE:
            break
        tied = np.flatnonzero(gain >= best - _TIE)
        j = int(tied[0])
        if P is not None and picks and len(tied) > 1:
            d = ra(P[tied][:, None, :], P[picks][None, :, :]).min(axis=1)
            j = int(tied[np.argmax(d)])
        picks.append(j)
        gains.append(float(gain[j]))
        free[j] = False
        _, groups = np.unique(groups * 2 + A[:, j].astype(np.int64), return_inverse=True)
        groups = groups.reshape(-1)
    if len(picks) < n:  # every sphere agrees on the rest: nearest the surface, spaced out
        rest = np.flatnonzero(free)
        order = rest[np.argsort(np.abs(np.asarray(red, dtype=float)[rest] - 1.0),
                                kind="stable")] if red is not None else rest
        spaced, close = [], []
        for j in order:
            near = (P is not None and (picks or spaced) and
                    ra(P[picks + spaced], P[j]).min() < 0.5 * R0)
            (close if near else spaced).append(int(j))
            if len(picks) + len(spaced) >= n:
                break
        extra = (spaced + close)[:n - len(picks)]
        picks += extra
        gains += [None] * len(extra)
    return picks, gains


def _reason(p: float, gain: float | None, k: int, red: float) -> str:
    if gain is None:
        return (f"the likely spheres all agree on the remaining candidates; this one is "
                f"among the nearest to the boundary (RED {red:.2f}), where a surprise "
                f"would show first")
    if 0.35 <= p <= 0.65:
        what = (f"about half of the likely spheres contain it (p = {p:.2f}): its result "
                f"will move the boundary either way")
    elif p < 0.35:
        what = (f"most likely spheres leave it out (p = {p:.2f}), but not all: a "
                f"'dissolves' would push the boundary out towards it")
    else:
        what = (f"most likely spheres contain it (p = {p:.2f}), but not all: a 'does not' "
                f"would pull the boundary in")
    if k > 0:
        own = -(p * np.log(p) + (1 - p) * np.log(1 - p)) if 0 < p < 1 else 0.0
        if own > 0 and gain < 0.75 * own:
            what += ("; part of what it would tell overlaps the picks above, but it is the "
                     "best of the rest")
        else:
            what += "; it tests a part of the boundary the picks above do not"
    return what


def suggest_next(data, good=None, candidates=(), n: int = 5, *,
                 bootstrap: Bootstrap | None = None, n_bootstrap: int = 200,
                 seed: int | None = 0, method: str = "graded", partial: str = "good",
                 names=None, bounds=None,
                 exclude_tested: bool = True, n_jobs: int | None = None,
                 progress=None) -> Suggestions:
    """Rank untried candidates by how much their result is expected to teach.

    Parameters
    ----------
    data : Trials or array-like of shape (n, 3)
        Bench results so far (see :func:`solsphere.confidence.binary_data`).
    good : array-like of bool or outcome strings, default=None
        Required with arrays.
    candidates : sequence of Solvent
        The pool, already filtered for safety by the caller (e.g.
        ``load_library().select(liquid_only=True, min_flash_point=23)``).
    n : int, default=5
        Number of suggestions.
    bootstrap : Bootstrap, default=None
        A bootstrap of the same results (with its resampled spheres); computed with
        ``n_bootstrap`` and ``seed`` when None.
    n_bootstrap : int, default=200
    seed : int or None, default=0
    method : {"graded", "classic"}, default="graded"
        Fit behind the bootstrap computed here (ignored when ``bootstrap`` is given).
    partial : {"good", "bad", "skip"}, default="good"
    names : list of str, default=None
        Trial names (with arrays): candidates with these names are "tested".
    bounds : array-like of shape (3, 2), default=None
    exclude_tested : bool, default=True
        Leave out candidates already tested (same name or CAS number, after
        normalisation, or the same coordinates within 1e-6 MPa½).
    n_jobs : int or None, default=None
    progress : callable(done, total) or None
        Passed to the bootstrap when it is computed here.

    Returns
    -------
    Suggestions
    """
    X, g, tnames, box = binary_data(data, good, partial, names, bounds)
    b = bootstrap
    if b is None:
        b = confidence.bootstrap(X, g, n_bootstrap, seed=seed, method=method, names=tnames,
                                 bounds=box, n_jobs=n_jobs, progress=progress)
    elif not b.has_samples:
        raise ValueError("bootstrap has no resampled spheres (saved without "
                         "samples); pass one computed in this session or leave it None")
    tested_keys = {normalise(s) for s in tnames}
    if hasattr(data, "trials"):
        tested_keys |= {normalise(t.cas) for t in data.trials if getattr(t, "cas", None)}
    pool = []
    for s in candidates:
        if exclude_tested:
            if normalise(s.name) in tested_keys or (s.cas and normalise(s.cas) in tested_keys):
                continue
            if len(X) and ra(X, s.point).min() <= 1e-6:
                continue
        pool.append(s)
    notes = list(b.warnings)
    if not pool:
        notes.append("No untried candidates are left (after the filters and the solvents "
                     "already tested).")
        return Suggestions([], 0, b.n_bootstrap, b.seed, b.centre.tolist(), b.R0, notes)
    P = np.array([s.point for s in pool], dtype=float)
    inside = b.inside(P)
    p = inside.mean(axis=0)
    red = ra(P, b.centre) / b.R0
    picks, gains = select_informative(inside, n, P, red, b.R0)
    out = []
    for k, (j, gain) in enumerate(zip(picks, gains)):
        s = pool[j]
        out.append(Suggestion(
            name=s.name, cas=s.cas, dD=float(s.dD), dP=float(s.dP), dH=float(s.dH),
            p_good=float(p[j]), red=float(red[j]), gain=0.0 if gain is None else gain,
            reason=_reason(float(p[j]), gain, k, float(red[j])),
            flash_point=s.flash_point, boiling_point=s.boiling_point, twa_ppm=s.twa_ppm,
            flags=hazard_flags(s)))
    if gains and all(x is None for x in gains):
        notes.append("The resampled spheres agree on every candidate: the sphere is as well "
                     "pinned down as these candidates can show; suggestions are the "
                     "nearest to the boundary.")
    return Suggestions(out, len(pool), b.n_bootstrap, b.seed, b.centre.tolist(), b.R0, notes)
