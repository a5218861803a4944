r"""How sure is the sphere: bootstrap intervals and the influence of single results.

Bootstrap
---------
The trials are resampled with replacement [1]_, *stratified* by outcome [2]_: each
resample draws as many results counted as good from the good ones, and as many bad from
the bad ones, as the panel has, so every resample can be fitted. A resample is
represented exactly by integer weights (how often each trial was drawn): the weighted
desirability of :func:`solsphere.fit.desirability` with those weights is the
desirability of the resampled panel. Each resample is refitted with the same objective
and the same search box (the box of the full panel, or the caller's ``bounds``: the box
is a setting of the fit, not something estimated from the data). The 95 % intervals are
the 2.5 and 97.5 percentiles of the resampled dD, dP, dH and R0 (percentile method [1]_),
and a solvent's ``p_good`` is the share of resampled spheres that contain it
(Ra <= R0): a guide to how likely it is to dissolve the material, not a guarantee.

``method="graded"`` bootstraps the graded fit (:mod:`solsphere.graded`) instead, with
resamples stratified by the three classes when "partly" results count as their own
class; its intervals include the boundary width.

Refits are warm-started by default (``refit="warm"``). Classic: the full fit's centre
joins a reduced global stage (256 Sobol points instead of 2048, 3 polished starts
instead of 8, polished down to 1e-4 MPa½ instead of 1e-6) of the same search
(:func:`solsphere.models.classic.best_sphere`); ``tests/test_confidence.py`` checks a sample of
warm refits against full refits (desirability and spread of the centres). Graded: one
likelihood maximisation started from the full fit. ``refit="full"`` runs the full search
for every resample.

How good are the intervals? Not good enough to be called confidence intervals for the
classic fit, which is why its report calls them *stability ranges* (how far the fit
moves when the results are resampled) and points to the posterior
(:mod:`solsphere.uncertainty.posterior`) for intervals. On clean invented panels (40
trials spread around the sphere, a little noise; ``tests/test_confidence.py``, 36
panels, 100 resamples each) the centre coordinates were held in 85 % of cases, but the
R0 range in only 19 %: the classic R0 is the smallest radius consistent with the
results, and a resample that repeats some good solvents and drops others can mostly only
shrink it. On the harder panels of the calibration campaign
(``tests/perf/bench_calibration.py``: 100 invented panels of 15-30 common solvents,
centres near and beyond the tested region, 'partly' rows, flipped results, 200
resamples) the classic 95 % ranges held δD, δP, δH and R0 in 52, 62, 59 and 31 % of
panels: the fit cannot leave the tested region and takes the smallest sphere. Two
remedies were measured on the same resamples and rejected: the basic (reflected)
bootstrap interval [1]_ (41, 49, 66, 61 %) and the graded fit's bootstrap (73, 80, 83,
73 %); the posterior held 96-99 % of the centre coordinates.

The work is spread over worker processes (``n_jobs``, default 2) in chunks, with a
serial path for small jobs and a serial fallback when processes cannot be started.
Every refit has its own seed drawn from ``seed`` up front, so the result does not depend
on ``n_jobs`` or on the order in which chunks finish.

Influence
---------
:func:`influence` refits the sphere once without each trial (leave-one-out, as in the
jackknife [1]_) and once with that trial's result flipped, and lists the trials whose
removal moves the centre (Hansen distance between the centres) or R0 most: the vials to
re-check first.

References
----------
.. [1] B. Efron, R. J. Tibshirani, *An Introduction to the Bootstrap*, Chapman & Hall,
   New York, 1993 (ch. 13, percentile intervals; ch. 11, the jackknife; chapter numbers
   from memory).
.. [2] A. C. Davison, D. V. Hinkley, *Bootstrap Methods and their Application*,
   Cambridge University Press, 1997, sec. 3.2 (stratified resampling; section from
   memory).
"""

from __future__ import annotations

import math
import multiprocessing
import os
import threading
import time
from concurrent.futures import ProcessPoolExecutor, as_completed
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from solsphere.limits import check_work
from solsphere.errors import FitError
from solsphere.formatting import warning_lines
from solsphere.hansen import as_points, ra
from solsphere.models.base import (AXES, EDGE, MIN_ADVISED, binary_data, graded_data,
                                   search_box)
from solsphere.models.classic import best_sphere, desirability
from solsphere.models.graded import GradedSphereModel, fit_theta, start_thetas
from solsphere.results import Result

__all__ = ["Bootstrap", "SampledSpheres", "Influence", "bootstrap", "influence", "resample_counts",
           "WARM_SEARCH"]

#: Search settings of a warm-started refit (the full fit: n_global=2048, n_starts=8,
#: xtol=1e-6 MPa½).
WARM_SEARCH = {"n_global": 256, "n_starts": 3, "xtol": 1e-4}
#: With ``n_jobs=None``, jobs estimated to take less than this run in the calling
#: process: starting worker processes costs about 0.1-0.5 s here [s].
SERIAL_BELOW_S = 1.0
#: Rough cost of one refit on a 40-trial panel on this machine, for that estimate [s].
REFIT_COST_S = {"warm": 0.011, "full": 0.05, "graded": 0.004, "graded_full": 0.03}
#: What the classic bootstrap's ranges are and are not (numbers measured by
#: tests/perf/bench_calibration.py on 100 invented panels; see the module doc).
CLASSIC_CAVEAT = (
    "These ranges show how far the classic fit moves when the results are resampled; they "
    "are not confidence intervals: on 100 invented panels the 95 % ranges held the true "
    "centre coordinates in only 52-62 % of cases and the true R0 in 31 % (the fit takes "
    "the smallest sphere inside the tested region, and resamples mostly shrink it). For "
    "intervals, sample the posterior.")
#: Fewer resamples than this give a warning (common practice, no source).
MIN_RESAMPLES = 200
_INTERVAL_KEYS = (*AXES, "R0")

Progress = Callable[[int, int], None]


def resample_counts(labels, n_resamples: int, rng) -> np.ndarray:
    """Stratified bootstrap resamples as draw counts, shape (n_resamples, n) of int.

    Each row draws, for every distinct label (True/False, or the classes 2/1/0 of the
    graded fit), as many trials with replacement from the trials with that label as
    there are, with equal probabilities: every row keeps the panel's counts per label.

    Examples
    --------
    >>> W = resample_counts([True, True, False, False, False], 4, np.random.default_rng(0))
    >>> W.shape, W[:, :2].sum(axis=1).tolist(), W[:, 2:].sum(axis=1).tolist()
    ((4, 5), [2, 2, 2, 2], [3, 3, 3, 3])
    """
    lab = np.asarray(labels).reshape(-1)
    W = np.zeros((n_resamples, len(lab)), dtype=np.int64)
    for v in np.unique(lab):
        part = np.flatnonzero(lab == v)
        k = len(part)
        W[:, part] = rng.multinomial(k, np.full(k, 1.0 / k), size=n_resamples)
    return W


# ----------------------------------------------------------------------------- refits
def _refit_chunk(X, box, W, G, seeds, search):
    """Refit one chunk (runs in a worker process).

    Returns centres (k, 3), radii (k,), classic desirabilities (k,) and widths (k,)
    (NaN for the classic fit).
    """
    k = len(W)
    C, R, D, E = np.empty((k, 3)), np.empty(k), np.empty(k), np.full(k, np.nan)
    graded = search.get("graded")
    if graded is None:
        for i in range(k):
            C[i], R[i], D[i] = best_sphere(X, G[i], weights=W[i], bounds=box,
                                          seed=int(seeds[i]), **search)
        return C, R, D, E

    for i in range(k):
        y, w = G[i], W[i].astype(float)
        starts = (graded["starts"] if graded["starts"] is not None else
                  start_thetas(X, y, w, graded["ordinal"], box, int(seeds[i])))
        th, _, _, _ = fit_theta(X, y, w, graded["ordinal"], box, starts,
                                graded["min_width"], graded["max_width"], graded["prior"])
        C[i], R[i], E[i] = th[:3], th[3], np.exp(th[4])
        D[i] = desirability(ra(X, C[i]), y > 0, R[i], w)
    return C, R, D, E


def _context():
    """Start method: fork from a single-threaded process (instant), otherwise forkserver
    (safe in a threaded server such as Dash's; this module is preloaded into it), else
    spawn."""
    methods = multiprocessing.get_all_start_methods()
    if "fork" in methods and threading.active_count() == 1 and os.name == "posix":
        return multiprocessing.get_context("fork")
    if "forkserver" in methods:
        ctx = multiprocessing.get_context("forkserver")
        ctx.set_forkserver_preload([__name__])  # takes effect before it first starts
        return ctx
    return multiprocessing.get_context("spawn")


def default_jobs() -> int:
    """Worker processes to use: 2, or 1 on a one-core machine."""
    return max(1, min(2, os.cpu_count() or 1))


def _run_refits(X, box, W, G, seeds, search, n_jobs=None, progress: Progress | None = None,
                cost: float = 0.011):
    """All refits (rows of W and G), in chunks over ``n_jobs`` processes.

    ``n_jobs=None``: :func:`default_jobs` processes when the job is estimated (``cost``
    seconds per refit) to take at least ``SERIAL_BELOW_S``, else serial. An explicit
    ``n_jobs`` >= 2 always uses that many processes.

    Returns centres (m, 3), radii (m,), desirabilities (m,), widths (m,) and the
    number of processes used.
    """
    m = len(W)
    if n_jobs is None:
        n_jobs = default_jobs() if m * cost >= SERIAL_BELOW_S else 1
    n_jobs = max(1, int(n_jobs))
    per = int(np.clip(math.ceil(m / (10 * n_jobs)), 4, 50))
    chunks = [slice(a, min(a + per, m)) for a in range(0, m, per)]
    C, R, D, E = np.empty((m, 3)), np.empty(m), np.empty(m), np.empty(m)

    def serial():
        done = 0
        for s in chunks:
            C[s], R[s], D[s], E[s] = _refit_chunk(X, box, W[s], G[s], seeds[s], search)
            done += s.stop - s.start
            if progress is not None:
                progress(done, m)
        return C, R, D, E, 1

    if n_jobs == 1 or m < 2:
        return serial()
    try:
        with ProcessPoolExecutor(max_workers=n_jobs, mp_context=_context()) as ex:
            futures = {ex.submit(_refit_chunk, X, box, W[s], G[s], seeds[s], search): s
                       for s in chunks}
            done = 0
            for f in as_completed(futures):
                s = futures[f]
                C[s], R[s], D[s], E[s] = f.result()
                done += s.stop - s.start
                if progress is not None:
                    progress(done, m)
        return C, R, D, E, n_jobs
    except (OSError, BrokenProcessPool, NotImplementedError, PermissionError):
        # No worker processes here (sandbox, no semaphores, a killed worker): same
        # refits, same seeds, one process.
        return serial()


# ----------------------------------------------------------------------------- bootstrap
class SampledSpheres(Result):
    """Shared by results that carry a cloud of plausible spheres (``centres`` (k, 3),
    ``radii`` (k,)): the bootstrap's resampled spheres, the posterior's samples."""

    centres: np.ndarray | None
    radii: np.ndarray | None

    @property
    def has_samples(self) -> bool:
        return self.centres is not None and self.radii is not None

    def interval_lines(self, keys) -> list[str]:
        """One report line per parameter: the point value, its interval and sd [MPa½]."""
        full = dict(zip(("dD", "dP", "dH", "R0"), (*self.centre, self.R0)), width=self.width)
        out = []
        for k in keys:
            lo, hi = self.intervals[k]
            out.append(f"    {k:5s} = {full[k]:5.1f} MPa½   [{lo:.1f}, {hi:.1f}]   "
                       f"(sd {self.sd[k]:.2f})")
        return out

    def records(self) -> list[dict]:
        """One row per parameter: its interval ends and standard deviation [MPa½]."""
        return [{"parameter": k, "low": lo, "high": hi, "sd": self.sd.get(k)}
                for k, (lo, hi) in self.intervals.items()]

    def p_good(self, points) -> np.ndarray:
        """Share of sampled spheres containing each point (Ra <= R0), shape (m,).

        Parameters
        ----------
        points : array-like of shape (m, 3)
            Solvent coordinates [MPa½].
        """
        if not self.has_samples:
            raise ValueError("this bootstrap result was saved without its resampled "
                             "spheres; run the bootstrap again to get p_good")
        P = as_points(points)
        if len(P) == 0:
            return np.zeros(0)
        out = np.empty(len(P))
        step = max(1, 2_000_000 // max(1, len(self.radii)))
        for a in range(0, len(P), step):
            d = ra(P[None, a:a + step, :], self.centres[:, None, :])
            out[a:a + step] = np.mean(d <= self.radii[:, None], axis=0)
        return out

    def inside(self, points) -> np.ndarray:
        """Bool matrix (k, m): sampled sphere i contains point j."""
        if not self.has_samples:
            raise ValueError("no sampled spheres in this result")
        P = as_points(points)
        return ra(P[None, :, :], self.centres[:, None, :]) <= self.radii[:, None]


def percentile_intervals(samples, keys, level: float):
    """Percentile intervals at ``level`` and standard deviations of the columns of
    ``samples`` (k, len(keys)): two dicts keyed by ``keys``."""
    q = [100 * (1 - level) / 2, 100 * (1 + level) / 2]
    lo, hi = np.percentile(samples, q, axis=0)
    intervals = {k: [float(a), float(b)] for k, a, b in zip(keys, lo, hi)}
    sd = {k: float(x) for k, x in zip(keys, samples.std(axis=0, ddof=1))}
    return intervals, sd


@dataclass
class Bootstrap(SampledSpheres):
    """Result of :func:`bootstrap` (units MPa½).

    Attributes
    ----------
    intervals : dict
        ``{"dD": [lo, hi], "dP": [...], "dH": [...], "R0": [...]}`` at ``level`` (and
        ``"width"`` for the graded fit).
    sd : dict
        Standard deviation of each over the resamples.
    fit_method : {"classic", "graded"}
    centre, R0, desirability :
        The fit to the whole panel (same search box and settings as
        :class:`~solsphere.models.classic.SphereModel` / :class:`~solsphere.models.graded.GradedSphereModel`
        with seed 0); ``width`` is the graded fit's width (None for classic).
    centres : ndarray of shape (n_bootstrap, 3)
    radii : ndarray of shape (n_bootstrap,)
    desirabilities : ndarray of shape (n_bootstrap,)
        Classic desirability of each resampled sphere on its resample.
    widths : ndarray of shape (n_bootstrap,) or None
    names, good, trial_p_good : lists
        The trials used (after the partial setting), whether each counts as good
        (inside R0) and the share of resampled spheres containing it.
    """

    intervals: dict
    sd: dict
    level: float
    n_bootstrap: int
    seed: int | None
    refit: str
    fit_method: str
    centre: np.ndarray
    R0: float
    desirability: float
    width: float | None
    centres: np.ndarray | None
    radii: np.ndarray | None
    desirabilities: np.ndarray | None
    widths: np.ndarray | None
    names: list
    good: list
    trial_p_good: list
    n_good: int
    n_bad: int
    n_partial: int
    partial: str
    bounds: list
    warnings: list = field(default_factory=list)
    n_workers: int = 1
    elapsed: float = 0.0

    def to_dict(self, samples: bool = False) -> dict:
        """JSON-safe plain types. ``samples=True`` adds ``centres``, ``radii``,
        ``desirabilities`` (and ``widths``): one entry per resample, large."""
        d = {"intervals": {k: list(v) for k, v in self.intervals.items()},
             "sd": dict(self.sd), "level": self.level, "n_bootstrap": self.n_bootstrap,
             "seed": self.seed, "refit": self.refit, "fit_method": self.fit_method,
             "dD": float(self.centre[0]), "dP": float(self.centre[1]),
             "dH": float(self.centre[2]), "R0": self.R0, "desirability": self.desirability,
             "width": self.width, "n_good": self.n_good, "n_bad": self.n_bad,
             "n_partial": self.n_partial, "partial": self.partial, "bounds": self.bounds,
             "trials": [{"name": n, "counted_as": "good" if g else "bad", "p_good": p}
                        for n, g, p in zip(self.names, self.good, self.trial_p_good)],
             "warnings": list(self.warnings), "n_workers": self.n_workers,
             "intervals_are": self.intervals_are}
        if samples and self.has_samples:
            d["centres"] = self.centres.tolist()
            d["radii"] = self.radii.tolist()
            d["desirabilities"] = self.desirabilities.tolist()
            if self.widths is not None:
                d["widths"] = self.widths.tolist()
        return d

    @classmethod
    def from_dict(cls, d: dict) -> "Bootstrap":
        """Inverse of :meth:`to_dict` (p_good needs a dict saved with ``samples=True``)."""
        has = "centres" in d and "radii" in d

        def arr(key, shape=(-1,)):
            return np.asarray(d[key], dtype=float).reshape(shape) if key in d else None

        trials = d.get("trials", [])
        return cls(intervals={k: [float(a), float(b)] for k, (a, b) in d["intervals"].items()},
                   sd={k: float(v) for k, v in d["sd"].items()}, level=float(d["level"]),
                   n_bootstrap=int(d["n_bootstrap"]), seed=d.get("seed"),
                   refit=str(d.get("refit", "warm")),
                   fit_method=str(d.get("fit_method", "classic")),
                   centre=np.array([d["dD"], d["dP"], d["dH"]], dtype=float),
                   R0=float(d["R0"]), desirability=float(d["desirability"]),
                   width=None if d.get("width") is None else float(d["width"]),
                   centres=arr("centres", (-1, 3)) if has else None,
                   radii=arr("radii") if has else None,
                   desirabilities=arr("desirabilities") if has else None,
                   widths=arr("widths") if has else None,
                   names=[t["name"] for t in trials],
                   good=[t["counted_as"] == "good" for t in trials],
                   trial_p_good=[float(t["p_good"]) for t in trials],
                   n_good=int(d["n_good"]), n_bad=int(d["n_bad"]),
                   n_partial=int(d.get("n_partial", 0)), partial=str(d.get("partial", "good")),
                   bounds=[list(map(float, b)) for b in d["bounds"]],
                   warnings=list(d.get("warnings", [])), n_workers=int(d.get("n_workers", 1)))

    @property
    def intervals_are(self) -> str:
        """What the intervals are: "stability ranges" for the classic fit (how far the fit
        moves under resampling; measured coverage far below the level, see the module
        doc), "percentile intervals" for the graded fit."""
        return "stability ranges" if self.fit_method == "classic" else "percentile intervals"

    def __str__(self) -> str:
        pct = f"{100 * self.level:g} %"
        kept = f"{self.n_good} good and {self.n_bad} bad"
        if self.fit_method == "graded" and self.partial == "ordinal" and self.n_partial:
            kept = (f"{self.n_good - self.n_partial} dissolves, {self.n_partial} partly and "
                    f"{self.n_bad} does not")
        out = ["[[Bootstrap]]",
               f"    fit       = {self.fit_method}",
               f"    resamples = {self.n_bootstrap} (stratified: each keeps {kept})",
               f"    refits    = {'warm-started' if self.refit == 'warm' else 'full search'}"
               f", seed {self.seed}, {self.n_workers} process"
               f"{'es' if self.n_workers > 1 else ''}",
               (f"[[Intervals]] ({pct} of the resampled fits: a stability check, not a "
                "confidence interval)" if self.fit_method == "classic" else
                f"[[Intervals]] ({pct}, percentile)")]
        out += self.interval_lines(list(self.intervals))
        out += warning_lines(self.warnings)
        return "\n".join(out)


def bootstrap(data, good=None, n_bootstrap: int = 1000, *, seed: int | None = 0,
              method: str = "classic", partial: str | None = None, names=None,
              bounds=None, level: float = 0.95, refit: str = "warm",
              graded_options: dict | None = None, n_jobs: int | None = None,
              progress: Progress | None = None) -> Bootstrap:
    """Stratified bootstrap of a sphere fit.

    Parameters
    ----------
    data : Trials or array-like of shape (n, 3)
        Bench results (see :func:`binary_data`).
    good : array-like of bool or outcome strings, shape (n,), default=None
    n_bootstrap : int, default=1000
        Number of resamples (>= 2; >= 200 advised).
    seed : int or None, default=0
        Seed of the resampling and of every refit (reproducible).
    method : {"classic", "graded"}, default="classic"
        The fit refitted to every resample: :func:`~solsphere.models.classic.best_sphere` or the
        graded fit of :mod:`solsphere.graded`.
    partial : str, default=None
        How "partly" results count: "good", "bad" or "skip" (default "good" for classic),
        or "ordinal" for the graded fit (its default). Resamples are stratified by
        the counted outcome (three strata when ordinal).
    names : list of str, default=None
    bounds : array-like of shape (3, 2), default=None
        Search box (default: the box of all tested solvents), the same for every refit.
    level : float, default=0.95
        Coverage of the percentile intervals.
    refit : {"warm", "full"}, default="warm"
        Warm-started refits (classic: the full fit's centre plus a reduced global stage;
        graded: one likelihood maximisation from the full fit) or the full search for
        every resample.
    graded_options : dict, default=None
        ``min_width``, ``max_width``, ``width_prior``, ``prior_strength`` of
        :class:`~solsphere.models.graded.GradedSphereModel`.
    n_jobs : int or None, default=None
        Worker processes: None chooses (2 here, or 1 for jobs estimated under
        ``SERIAL_BELOW_S`` = 1 s); 1 runs serially; >= 2 always uses processes.
    progress : callable(done, total) or None, default=None
        Called in the calling thread after each chunk of refits.

    Returns
    -------
    Bootstrap

    Examples
    --------
    >>> X = [[17, 10, 7], [19, 10, 7], [18, 9, 8], [10, 30, 30], [25, 0, 0], [14, 2, 20]]
    >>> b = bootstrap(X, [1, 1, 1, 0, 0, 0], 30, n_jobs=1)  # invented
    >>> b.n_bootstrap, sorted(b.intervals)
    (30, ['R0', 'dD', 'dH', 'dP'])
    """
    if refit not in ("warm", "full"):
        raise ValueError(f"refit must be 'warm' or 'full'; found {refit!r}")
    if method not in ("classic", "graded"):
        raise ValueError(f"method must be 'classic' or 'graded'; found {method!r}")
    if not 0.0 < level < 1.0:
        raise ValueError(f"level must be between 0 and 1; found {level}")
    n_bootstrap = int(n_bootstrap)
    if n_bootstrap < 2:
        raise ValueError(f"n_bootstrap must be at least 2; found {n_bootstrap}")
    check_work(n_bootstrap, len(data), "the bootstrap")
    t0 = time.perf_counter()
    rng = np.random.default_rng(seed)
    width = None
    n_partial = 0
    if method == "classic":
        partial = "good" if partial is None else partial
        if partial == "ordinal":
            raise ValueError("partial='ordinal' needs method='graded'")
        X, g, names, box = binary_data(data, good, partial, names, bounds)
        if good is None and hasattr(data, "outcomes"):
            n_partial = list(data.outcomes).count("partial")
        c0, R00, D0 = best_sphere(X, g, bounds=box, seed=0)
        labels, G = g, np.broadcast_to(g, (n_bootstrap, len(g)))
        search = dict(WARM_SEARCH, start=c0[None, :]) if refit == "warm" else {}
    else:

        partial = "ordinal" if partial is None else partial
        X, y, names, box, ordinal = graded_data(data, good, partial, names, bounds)
        model = GradedSphereModel(partial=partial, bounds=box, **(graded_options or {}))
        opts = {"min_width": model.min_width, "max_width": model.max_width,
                "prior": (model.prior_strength, model.width_prior)}
        outcomes = np.array(["good", "partial", "bad"])[2 - y]
        model.fit(X, outcomes)
        if ordinal != (model.band_ is not None):
            raise RuntimeError("graded fit and bootstrap disagree on the ordinal setting")
        c0, R00, D0 = model.centre_, model.R0_, model.result_.desirability
        width, n_partial = model.width_, int((y == 1).sum())
        g = y > 0
        labels, G = y, np.broadcast_to(y, (n_bootstrap, len(y)))
        search = {"graded": dict(opts, ordinal=ordinal,
                                 starts=[model.theta_] if refit == "warm" else None)}
    W = resample_counts(labels, n_bootstrap, rng)
    seeds = rng.integers(0, 2**63 - 1, size=n_bootstrap)
    kind = {("classic", "warm"): "warm", ("classic", "full"): "full",
            ("graded", "warm"): "graded", ("graded", "full"): "graded_full"}[method, refit]
    cost = REFIT_COST_S[kind] * (len(X) / 40.0)
    C, R, D, E, used = _run_refits(X, box, W, G, seeds, search, n_jobs, progress, cost)
    keys = _INTERVAL_KEYS + (("width",) if method == "graded" else ())
    samples = np.column_stack([C, R] + ([E] if method == "graded" else []))
    intervals, sd = percentile_intervals(samples, keys, level)
    trial_p = np.mean(ra(X[None, :, :], C[:, None, :]) <= R[:, None], axis=0)
    notes = _warnings(C, g, box, n_bootstrap, method)
    return Bootstrap(intervals=intervals, sd=sd, level=level, n_bootstrap=n_bootstrap,
                     seed=seed, refit=refit, fit_method=method, centre=np.asarray(c0),
                     R0=float(R00), desirability=float(D0), width=width, centres=C,
                     radii=R, desirabilities=D, widths=E if method == "graded" else None,
                     names=names, good=g.tolist(), trial_p_good=trial_p.tolist(),
                     n_good=int(g.sum()), n_bad=int((~g).sum()), n_partial=n_partial,
                     partial=partial, bounds=box.tolist(), warnings=notes, n_workers=used,
                     elapsed=time.perf_counter() - t0)


def _warnings(C, g, box, n_bootstrap, method="classic") -> list[str]:
    out = []
    if method == "classic":
        out.append(CLASSIC_CAVEAT)
    for k, m in (("good", int(g.sum())), ("bad", int((~g).sum()))):
        if m < MIN_ADVISED:
            out.append(f"Only {m} result{'s count' if m != 1 else ' counts'} as {k}: the "
                       "resamples repeat the same few solvents, so the intervals understate "
                       "the uncertainty.")
    if n_bootstrap < MIN_RESAMPLES:
        out.append(f"Only {n_bootstrap} resamples: the interval ends are rough (at least "
                   f"{MIN_RESAMPLES} are advised).")
    return out + edge_notes(C, box, "resamples")


def edge_notes(C, box, what: str) -> list[str]:
    """Warnings for axes on which more than 5 % of the sampled centres ``C`` (k, 3) sit
    at the edge of the search ``box`` (the interval is cut off there)."""
    out = []
    for j, a in enumerate(AXES):
        lo, hi = box[j]
        at = np.mean((C[:, j] - lo <= EDGE) | (hi - C[:, j] <= EDGE))
        if hi - lo > 2 * EDGE and at > 0.05:
            out.append(f"In {100 * at:.0f} % of the {what} the centre's {a} sits at the "
                       f"edge of the tested region ({lo:.1f} to {hi:.1f}): the {a} interval "
                       f"is cut off there; test solvents beyond it.")
    return out


# ----------------------------------------------------------------------------- influence
@dataclass
class Influence(Result):
    """Result of :func:`influence`: one row per trial, the most influential first.

    Each row: ``name``, ``counted_as`` ("good"/"bad"), ``misfit`` (disagrees with the
    full fit), ``shift`` (Hansen distance the centre moves when the trial is left out
    [MPa½]), ``dR0`` (change of R0 when left out), ``centre_without`` and
    ``R0_without`` (that refit), ``flip_shift`` and ``flip_dR0`` (the same when its
    result is flipped instead), ``impact`` = max(shift, |dR0|), and ``note``. Values are
    None where no sphere can be fitted (the only good or bad result).
    """

    rows: list
    centre: list
    R0: float
    refit: str
    warnings: list = field(default_factory=list)

    rows_key = "influence"

    def to_dict(self) -> dict:
        return {"influence": [dict(r) for r in self.rows], "centre": list(self.centre),
                "R0": self.R0, "refit": self.refit, "warnings": list(self.warnings)}

    def top(self, n: int = 5) -> list:
        return self.rows[:n]

    def __str__(self) -> str:
        out = ["[[Influence]] (refit without each trial; the largest change first)"]
        for r in self.rows:
            if r["shift"] is None:
                out.append(f"    {r['name']}: {r['note']}")
                continue
            flip = ("" if r["flip_shift"] is None else
                    f"; flipped: centre moves {r['flip_shift']:.2f}, R0 {r['flip_dR0']:+.2f}")
            mis = " (misfit)" if r["misfit"] else ""
            out.append(f"    {r['name']}{mis}: without it the centre moves {r['shift']:.2f} "
                       f"MPa½, R0 {r['dR0']:+.2f}{flip}")
        out += warning_lines(self.warnings)
        return "\n".join(out)


#: Weights held at once by :func:`influence` (refits × trials): its memory stays linear
#: in the number of trials.
INFLUENCE_CELLS = 1_000_000


def influence_refits(n: int, flips: bool = True) -> int:
    """Refits :func:`influence` makes for ``n`` trials (at most; one per trial, two
    with ``flips``)."""
    return n * (2 if flips else 1)


def influence(data, good=None, *, partial: str = "good", names=None, bounds=None,
              flips: bool = True, refit: str = "warm", n_jobs: int | None = None,
              progress: Progress | None = None) -> Influence:
    """Leave-one-out (and flipped-result) refits: which results move the sphere most.

    Parameters
    ----------
    data, good, partial, names, bounds :
        As for :func:`bootstrap`.
    flips : bool, default=True
        Also refit with each result flipped (good <-> bad), one more refit per trial.
    refit : {"warm", "full"}, default="warm"
    n_jobs : int or None, default=None
    progress : callable(done, total) or None

    Returns
    -------
    Influence
    """
    if refit not in ("warm", "full"):
        raise ValueError(f"refit must be 'warm' or 'full'; found {refit!r}")
    X, g, names, box = binary_data(data, good, partial, names, bounds)
    n = len(X)
    check_work(influence_refits(n, flips), n, "the influence refits")
    c0, R00, _ = best_sphere(X, g, bounds=box, seed=0)
    misfit = (ra(X, c0) <= R00) != g
    jobs = []
    n_good = int(g.sum())
    for i in range(n):
        left = n_good - int(g[i])  # good results left without trial i
        if 0 < left < n - 1:
            jobs.append(("loo", i))
        if flips:
            flipped = n_good + (-1 if g[i] else 1)
            if 0 < flipped < n:
                jobs.append(("flip", i))
    search = dict(WARM_SEARCH, start=c0[None, :]) if refit == "warm" else {}
    res = {}
    cost = REFIT_COST_S["warm" if refit == "warm" else "full"] * (len(X) / 40.0)
    step = max(1, INFLUENCE_CELLS // max(n, 1))  # weights held at once: O(n) memory
    for a in range(0, len(jobs), step):
        part = jobs[a:a + step]
        W = np.ones((len(part), n))
        G = np.broadcast_to(g, (len(part), n)).copy()
        for k, (kind, i) in enumerate(part):
            if kind == "loo":
                W[k, i] = 0.0
            else:
                G[k, i] = ~G[k, i]
        done = a

        def shifted(d, total, _a=done):
            if progress is not None:
                progress(_a + d, len(jobs))

        C, R, _, _, _ = _run_refits(X, box, W, G, np.arange(a, a + len(part)), search,
                                    n_jobs, shifted, cost)
        res.update({job: (C[k], R[k]) for k, job in enumerate(part)})
    rows = []
    for i in range(n):
        row = {"name": names[i], "counted_as": "good" if g[i] else "bad",
               "misfit": bool(misfit[i]), "shift": None, "dR0": None, "flip_shift": None,
               "flip_dR0": None, "impact": None, "centre_without": None,
               "R0_without": None, "note": ""}
        for kind, key in (("loo", ""), ("flip", "flip_")):
            if (kind, i) in res:
                c, R = res[(kind, i)]
                row[key + "shift"] = float(ra(c, c0)[0])
                row[key + "dR0"] = float(R - R00)
                if kind == "loo":
                    row["centre_without"], row["R0_without"] = c.tolist(), float(R)
        if row["shift"] is not None:
            row["impact"] = max(row["shift"], abs(row["dR0"]))
        else:
            row["note"] = (f"the only result counted as {row['counted_as']}: without it no "
                           "sphere can be fitted; re-check it first")
        rows.append(row)
    rows.sort(key=lambda r: (-(math.inf if r["impact"] is None else r["impact"]),
                             r["name"]))
    notes = []
    if n < 2 * MIN_ADVISED:
        notes.append(f"Only {n} trials: every result matters; the list is a rough guide.")
    return Influence(rows=rows, centre=c0.tolist(), R0=float(R00),
                     refit=refit, warnings=notes)
