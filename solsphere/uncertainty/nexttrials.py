r"""Which solvents to test next: the results that would pin the sphere down best.

The plausible spheres, those the bench results cannot yet tell apart, come from the
posterior of the graded model (:mod:`solsphere.posterior`, the default) or from a
bootstrap (:mod:`solsphere.confidence`). Sphere k gives candidate j a probability
:math:`L_{kj}` = P(good | sphere k) (the graded sigmoid; 0 or 1 for the hard spheres of a
bootstrap). A candidate is worth testing when the spheres *disagree* about it, not when
each of them is unsure: the score is the expected information its result gives about
which sphere is right, the mutual information [1]_ [2]_

.. math:: I_j = H\!\left(\bar L_j\right) - \overline{H(L_{kj})}, \qquad
          H(p) = -p \ln p - (1 - p) \ln (1 - p)

(means over the spheres; in nats, at most ln 2 = 0.693 for one yes/no result). A
candidate on every sphere's soft boundary (all :math:`L_{kj}` near 0.5) scores little: a
result there is a coin toss whichever sphere is right. With hard spheres the second
term is 0 and :math:`I_j` is the entropy of ``p_good``.

Several suggestions are picked greedily, each *given the results of the picks above*:
the spheres are reweighted by the likelihood of every combination of those results
(branches), and :math:`I_j` is averaged over the branches, weighted by their
probability (the conditional mutual information). A neighbour of an earlier pick tells
little once that pick's result is known: this is the spread term, so the suggestions are
not all neighbours. With hard spheres this is exactly the conditional entropy of the
patterns of results. Up to ``MAX_BRANCHES`` = 64 branches are followed (the heaviest),
enough for 7 picks exactly. Ties (within 1e-9) go to the candidate farther, in Hansen
distance, from the picks above. When the spheres agree on every remaining candidate,
the rest are the candidates nearest the fitted surface (``|RED - 1|`` smallest), each at
least R0 / 2 from the picks above where possible.

Does it help? ``tests/perf/bench_next.py`` simulates 20 invented bench campaigns (12
random trials, then 10 more by these suggestions or at random) and compares the final
95 % intervals and centre errors; its numbers are in the closing notes. The box matters:
by default the posterior's spheres may lie anywhere in its physically wide prior
(:data:`solsphere.uncertainty.posterior.PRIOR_BOX`, which holds every candidate), and a
bootstrap's centres anywhere in the box spanned by the tested solvents and the
candidates (not only the tested ones), so that the suggestions can look beyond what has
been tested.

Safety filters (flash point, exposure limit, carcinogens, liquids only ...) are the
caller's: pass an already filtered candidate list (:meth:`Library.select`). Every
suggestion carries its flash point and hazard flags. A ``p_good`` is the posterior
predictive probability of dissolving (or, from a bootstrap, the share of resampled spheres
that contain the solvent), not a guarantee of the bench result.

References
----------
.. [1] D. J. C. MacKay, "Information-based objective functions for active data
   selection", Neural Computation 4(4), 590-604, 1992 (choosing the measurement of
   largest expected information gain).
.. [2] N. Houlsby, F. Huszár, Z. Ghahramani, M. Lengyel, "Bayesian active learning for
   classification and preference learning", arXiv:1112.5745, 2011 (the disagreement
   form of the information gain for a classifier).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.special import expit

from solsphere.limits import check as check_limit
from solsphere.hansen import ra
from solsphere.library.hazards import hazard_facts
from solsphere.library.table import is_tested, tested_keys
from solsphere.models.base import binary_data, search_box
from solsphere.results import Result
from solsphere.uncertainty import bootstrap as confidence
from solsphere.uncertainty.posterior import Posterior, sample_posterior

__all__ = ["Suggestion", "Suggestions", "suggest_next", "select_informative"]

CAUTION = ("Suggestions are for learning about the material, not predictions of success: "
           "a p_good is how likely the solvent is to dissolve the material under the "
           "plausible spheres. Read each "
           "safety data sheet and work with ventilation and protection before testing.")
_TIE = 1e-9
_SOURCE = {"posterior": "sampled spheres (posterior)", "bootstrap": "resampled spheres"}


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


def suggestion_lines(suggestions, with_red: bool = True) -> list[str]:
    """The report lines of picked solvents: name and point, p_good (and RED), flash point,
    the reason, the hazard flags."""
    out = []
    for i, s in enumerate(suggestions, 1):
        fp = "—" if s.flash_point is None else f"{s.flash_point:.0f} °C"
        red = f", RED {s.red:.2f}" if with_red else ""
        out.append(f"{i}. {s.name} ({s.dD:.1f}, {s.dP:.1f}, {s.dH:.1f}); p_good "
                   f"{s.p_good:.2f}{red}, flash point {fp}")
        out.append(f"   {s.reason}")
        if s.flags:
            out.append(f"   flags: {'; '.join(s.flags)}")
    return out


@dataclass
class Suggestions(Result):
    """Result of :func:`suggest_next`: the picks in order (the first is the best)."""

    suggestions: list
    n_candidates: int
    n_samples: int
    seed: int | None
    centre: list
    R0: float
    warnings: list = field(default_factory=list)
    uncertainty: str = "posterior"
    intervals: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        """JSON-safe (the ``solsphere next --json`` object)."""
        return {"suggestions": [s.to_dict() for s in self.suggestions],
                "n_candidates": self.n_candidates, "n_samples": self.n_samples,
                "uncertainty": self.uncertainty, "intervals": dict(self.intervals),
                "seed": self.seed, "centre": list(self.centre), "R0": self.R0,
                "warnings": list(self.warnings), "caution": CAUTION}

    rows_key = "suggestions"

    @property
    def names(self) -> list[str]:
        return [s.name for s in self.suggestions]

    def __str__(self) -> str:
        out = [f"Next trials ({len(self.suggestions)} of {self.n_candidates} untried "
               f"candidates; from {self.n_samples} {_SOURCE[self.uncertainty]})"]
        out += suggestion_lines(self.suggestions)
        out += [f"warning: {t}" for t in self.warnings]
        out.append(CAUTION)
        return "\n".join(out)


def _h(p):
    """Binary entropy in nats (0 at p = 0 and 1)."""
    p = np.clip(p, 1e-12, 1.0 - 1e-12)
    return -(p * np.log(p) + (1.0 - p) * np.log1p(-p))


#: Result branches followed when later picks are scored (the heaviest; with more the
#: expectation over the results of the earlier picks is approximate).
MAX_BRANCHES = 64


def select_informative(likelihood, n: int, points=None, red=None, R0: float = 1.0):
    r"""Greedy picks of the candidates whose results tell most about the sphere.

    Parameters
    ----------
    likelihood : array-like of shape (N, m), bool or float
        P(good at candidate j | sampled sphere k): 0/1 for hard spheres (``inside``),
        a probability for graded ones.
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
    picks : list of int
    gains : list of float
        Expected information of each pick given the results of the picks above [nats;
        at most ln 2]; None for fallback picks.
    alone : list of float
        The same for each pick as if it were the first (compare with ``gains``: the part
        of what a pick tells that the picks above already tell).

    Examples
    --------
    >>> inside = np.array([[1, 1, 0], [1, 1, 1], [0, 0, 0], [0, 0, 1]], bool)
    >>> select_informative(inside, 2)[0]  # column 1 repeats column 0; 2 splits anew
    [0, 2]
    """
    L = np.asarray(likelihood, dtype=float)
    N, m = L.shape
    n = min(int(n), m)
    P = None if points is None else np.asarray(points, dtype=float).reshape(m, 3)
    hL = _h(L)
    free = np.ones(m, dtype=bool)
    picks, gains = [], []
    branches = [np.ones(N)]
    first = None
    while len(picks) < n:
        gain = np.zeros(m)
        for b in branches:
            W = b.sum()
            gain += (W / N) * (_h((b @ L) / W) - (b @ hL) / W)
        if first is None:
            first = gain.copy()
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
        branches = [b * x for b in branches for x in (L[:, j], 1.0 - L[:, j])]
        branches = [b for b in branches if b.sum() > 1e-9 * N]
        if len(branches) > MAX_BRANCHES:
            branches = sorted(branches, key=lambda b: -b.sum())[:MAX_BRANCHES]
    alone = [float(first[j]) for j in picks]
    if len(picks) < n:  # every sphere agrees on the rest: nearest the surface, spaced out
        extra = _near_surface(free, n - len(picks), picks, P, red, R0)
        picks += extra
        gains += [None] * len(extra)
        alone += [None] * len(extra)
    return picks, gains, alone


def _near_surface(free, k: int, picks: list, P, red, R0: float) -> list:
    """``k`` of the ``free`` candidates nearest the fitted surface (``|RED - 1|``
    smallest), each at least R0 / 2 from the ``picks`` and from each other where
    possible."""
    rest = np.flatnonzero(free)
    order = rest[np.argsort(np.abs(np.asarray(red, dtype=float)[rest] - 1.0),
                            kind="stable")] if red is not None else rest
    spaced, close = [], []
    for j in order:
        near = (P is not None and (picks or spaced) and
                ra(P[picks + spaced], P[j]).min() < 0.5 * R0)
        (close if near else spaced).append(int(j))
        if len(spaced) >= k:
            break
    return (spaced + close)[:k]


def _reason(p: float, gain: float | None, alone: float | None, k: int, red: float) -> str:
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
        if alone and gain < 0.75 * alone:
            what += ("; part of what it would tell overlaps the picks above, but it is the "
                     "best of the rest")
        else:
            what += "; it tests a part of the boundary the picks above do not"
    return what


def suggest_next(data, good=None, candidates=(), n: int = 5, *,
                 uncertainty: str = "posterior", bootstrap=None,
                 n_samples: int = 1000, n_bootstrap: int = 200,
                 seed: int | None = 0, method: str = "graded", partial: str = "good",
                 names=None, bounds=None,
                 exclude_tested: bool = True, n_jobs: int | None = None,
                 progress=None) -> Suggestions:
    """Rank untried candidates by how much their result is expected to teach.

    Parameters
    ----------
    data : Trials or array-like of shape (n, 3)
        Bench results so far (see :func:`solsphere.models.base.binary_data`).
    good : array-like of bool or outcome strings, default=None
        Required with arrays.
    candidates : sequence of Solvent
        The pool, already filtered for safety by the caller (e.g.
        ``load_library().select(liquid_only=True, min_flash_point=23)``).
    n : int, default=5
        Number of suggestions.
    uncertainty : {"posterior", "bootstrap"}, default="posterior"
        Where the plausible spheres come from: the graded model's posterior
        (:func:`solsphere.posterior.sample_posterior`; each sphere's graded P(good) is
        its likelihood) or a bootstrap (:func:`solsphere.confidence.bootstrap` of fit
        ``method``; hard spheres). Ignored when ``bootstrap`` is given: its kind decides.
    bootstrap : Bootstrap or Posterior, default=None
        Sampled spheres of the same results, already computed (with their samples).
    n_samples : int, default=1000
        Posterior samples computed here.
    n_bootstrap : int, default=200
        Resamples of a bootstrap computed here.
    seed : int or None, default=0
    method : {"graded", "classic"}, default="graded"
        Fit behind a bootstrap computed here.
    partial : {"good", "bad", "skip"}, default="good"
    names : list of str, default=None
        Trial names (with arrays): candidates with these names are "tested".
    bounds : array-like of shape (3, 2), default=None
        Box for the centre. Default: the posterior's physically wide prior, or for a
        bootstrap the box spanned by the tested solvents *and the candidates*, so that
        the plausible spheres may lie wherever a candidate could test them (the fits'
        own default, the tested solvents' box, would hide the uncertainty beyond what
        has been tested).
    exclude_tested : bool, default=True
        Leave out candidates already tested (same name or CAS number, after
        normalisation, or the same coordinates within 1e-6 MPa½).
    n_jobs : int or None, default=None
        Worker processes of a bootstrap computed here.
    progress : callable(done, total) or None
        Passed to a bootstrap computed here.

    Returns
    -------
    Suggestions
    """
    check_limit("samples", n_samples, "the sampled spheres")
    if uncertainty not in ("posterior", "bootstrap"):
        raise ValueError(f"uncertainty must be 'posterior' or 'bootstrap'; found "
                         f"{uncertainty!r}")
    X, g, tnames, _ = binary_data(data, good, partial, names, bounds)
    every = list(data.names) if hasattr(data, "names") else list(tnames)
    if hasattr(data, "trials"):
        every += [t.cas for t in data.trials if getattr(t, "cas", None)]
    keys = tested_keys(every)
    pool = []
    for s in candidates:
        if exclude_tested:
            if is_tested(s, keys):
                continue
            if len(X) and ra(X, s.point).min() <= 1e-6:
                continue
        pool.append(s)
    P = np.array([s.point for s in pool], dtype=float).reshape(-1, 3)
    all_points = data.points if hasattr(data, "points") else X
    box = search_box(bounds, np.vstack([all_points, P]))
    b = bootstrap
    if b is None and uncertainty == "posterior":
        b = sample_posterior(X, g, n_samples, seed=seed, names=tnames, bounds=bounds)
    elif b is None:
        b = confidence.bootstrap(X, g, n_bootstrap, seed=seed, method=method, names=tnames,
                                 bounds=box, n_jobs=n_jobs, progress=progress)
    elif not b.has_samples:
        raise ValueError("bootstrap has no resampled spheres (saved without "
                         "samples); pass one computed in this session or leave it None")
    kind = "posterior" if isinstance(b, Posterior) else "bootstrap"
    notes = list(b.warnings)
    meta = dict(uncertainty=kind, intervals={k: list(v) for k, v in b.intervals.items()})
    if not pool:
        notes.append("No untried candidates are left (after the filters and the solvents "
                     "already tested).")
        return Suggestions([], 0, len(b.radii), b.seed, b.centre.tolist(), b.R0, notes,
                           **meta)
    d = ra(P[None, :, :], b.centres[:, None, :])  # (spheres, candidates)
    inside = d <= b.radii[:, None]
    red = ra(P, b.centre) / b.R0
    lik = (expit((b.radii[:, None] - d) / b.widths[:, None]) if kind == "posterior"
           else inside)
    # posterior: the predictive probability of dissolving (the width integrated);
    # bootstrap: the share of resampled spheres that contain the solvent
    p = lik.mean(axis=0)
    picks, gains, alone = select_informative(lik, n, P, red, b.R0)
    out = []
    for k, (j, gain, a) in enumerate(zip(picks, gains, alone)):
        s = pool[j]
        out.append(Suggestion(
            name=s.name, cas=s.cas, dD=float(s.dD), dP=float(s.dP), dH=float(s.dH),
            p_good=float(p[j]), red=float(red[j]), gain=0.0 if gain is None else gain,
            reason=_reason(float(p[j]), gain, a, k, float(red[j])),
            flash_point=s.flash_point, boiling_point=s.boiling_point, twa_ppm=s.twa_ppm,
            flags=hazard_facts(s)))
    if gains and all(x is None for x in gains):
        notes.append("The sampled spheres agree on every candidate: the sphere is as well "
                     "pinned down as these candidates can show; suggestions are the "
                     "nearest to the boundary.")
    return Suggestions(out, len(pool), len(b.radii), b.seed, b.centre.tolist(), b.R0, notes,
                       **meta)
