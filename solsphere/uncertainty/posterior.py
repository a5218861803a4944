r"""How sure is the sphere, the Bayesian way: samples of every sphere the results allow.

The bootstrap (:mod:`solsphere.confidence`) asks how much the fit moves when the panel is
resampled. On a small panel that is not the same as how little the results pin it
down: when 3 of 22 solvents dissolve the material and every other trial lies far from
the boundary, resampling hardly moves the fit although a wide range of spheres agree
with every result. Here the spheres themselves are sampled, in proportion to how well
they explain the results (the posterior of the graded model of
:mod:`solsphere.graded`):

.. math:: p(\theta \mid \text{results}) \propto
          \prod_i \sigma\!\left(\pm\frac{R_0 - R_{a,i}}{w}\right)
          \, e^{-\lambda (w_0 / w)^2}, \qquad \theta = (\delta_D, \delta_P, \delta_H,
          R_0, \ln w)

with + for a good result and − for a bad one, a flat prior on the centre inside the
search box (the same box as the fits), on R0 in (0, 2 × box diagonal + 10] and on ln w in
[ln ``min_width``, ln ``max_width``], and the graded fit's ridge on 1/w (λ = 1,
w0 = 1 MPa½) as the prior on the width. One constraint ties them: R0 >= ln 9 × w, so a
solvent at the centre itself dissolves the material with probability at least 0.9 (the
premise of the sphere; without it a small, very soft sphere, "a few dissolve anywhere",
explains panels with few good results and drags the R0 interval towards 0). The 95 % intervals are percentiles of the
samples (equal-tailed credible intervals [1]_), and a solvent's ``p_good`` is the share
of sampled spheres that contain it, as for the bootstrap. "Partly" results count as good
(or bad, or are left out) as the ``partial`` setting says.

Sampler: the affine-invariant ensemble sampler of Goodman and Weare [2]_ (the "stretch
move", a = 2), 64 walkers updated in two halves, all walkers' log posteriors evaluated
in one array operation. The walkers start in a small ball around the graded fit's
maximum, are run ``burn`` steps (discarded) and then ``thin`` steps between kept
states. The acceptance fraction is reported; below 0.1 a warning says the samples
may not have spread out.

How good are the intervals? On the random 22-trial panels of the invented campaigns of
``tests/perf/bench_next.py`` (20 campaigns, prior box of the candidate liquids) the
posterior intervals held the true dD, dP, dH and R0 in 72 of 80 cases (90 %), the graded
bootstrap's in 59 of 80 (74 %); on 20-trial invented panels ``tests/test_posterior.py``
measured 99 % against 74 % (40 panels). Samples are a description of the results, not a
guarantee: the model assumes the sphere shape and independent results.

References
----------
.. [1] A. Gelman, J. B. Carlin, H. S. Stern, D. B. Dunson, A. Vehtari, D. B. Rubin,
   *Bayesian Data Analysis*, 3rd ed., CRC Press, 2013 (sec. 2.3, posterior intervals;
   section from memory).
.. [2] J. Goodman, J. Weare, "Ensemble samplers with affine invariance", Communications
   in Applied Mathematics and Computational Science 5(1), 65-80, 2010.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np

from solsphere.formatting import warning_lines
from solsphere.limits import check_work
from solsphere.hansen import SCALE, ra
from solsphere.models.base import AXES, MIN_ADVISED, binary_data
from solsphere.models.classic import desirability
from solsphere.models.graded import GradedSphereModel, theta_bounds
from solsphere.results import Result
from solsphere.uncertainty.bootstrap import SampledSpheres, edge_notes, percentile_intervals

__all__ = ["Posterior", "sample_posterior", "log_posterior"]

_S2 = SCALE ** 2
_KEYS = (*AXES, "R0", "width")
#: Stretch-move scale (Goodman and Weare's a = 2).
STRETCH = 2.0
#: Prior support: P(good) at the centre itself is at least 0.9, i.e. R0 >= ln 9 * w. A
#: solvent matching the material exactly dissolves it (the premise of the sphere);
#: without this, a small sphere with a very soft boundary ("a few dissolve anywhere")
#: explains panels with few good results and drags the R0 interval to 0.
CENTRE_Z = float(np.log(9.0))
#: Acceptance fractions below this give a warning (common practice, no source).
MIN_ACCEPTANCE = 0.1


def log_posterior(thetas, X, good, lo, hi, prior=(1.0, 1.0)) -> np.ndarray:
    """Log posterior (up to a constant) of many graded spheres at once.

    Parameters
    ----------
    thetas : ndarray of shape (k, 5)
        dD, dP, dH, R0, ln w per row.
    X : ndarray of shape (n, 3)
    good : ndarray of bool, shape (n,)
    lo, hi : ndarray of shape (5,)
        Bounds of the flat prior (outside: -inf).
    prior : (strength, width_prior)
        The ridge ``strength * (width_prior / w)**2`` of :func:`solsphere.graded.graded_nll`.

    Returns
    -------
    ndarray of shape (k,): minus the binary graded fit's penalised negative
    log-likelihood (inside the bounds).
    """
    T = np.atleast_2d(np.asarray(thetas, dtype=float))
    inb = np.all((T >= lo) & (T <= hi), axis=1) & (T[:, 3] >= CENTRE_Z * np.exp(T[:, 4]))
    d = X[None, :, :] - T[:, None, :3]
    Ra = np.sqrt((d * d * _S2).sum(axis=-1) + 1e-12)
    w = np.exp(T[:, 4])
    z = (T[:, 3:4] - Ra) / w[:, None]
    ll = -np.logaddexp(0.0, np.where(good[None, :], -z, z)).sum(axis=1)
    lam, w0 = prior
    return np.where(inb, ll - lam * (w0 / w) ** 2, -np.inf)


def _stretch_sampler(logp, start, steps, keep_every, burn, rng):
    """Goodman-Weare stretch moves; returns the kept states (m, dim) and the acceptance
    fraction."""
    T = np.array(start, dtype=float)
    K, dim = T.shape
    L = logp(T)
    half = K // 2
    halves = (np.arange(half), np.arange(half, K))
    kept, accepted = [], 0
    for step in range(steps):
        for a, b in (halves, halves[::-1]):
            z = ((STRETCH - 1.0) * rng.random(len(a)) + 1.0) ** 2 / STRETCH
            partner = T[b[rng.integers(len(b), size=len(a))]]
            prop = partner + z[:, None] * (T[a] - partner)
            Lp = logp(prop)
            ok = np.log(rng.random(len(a))) < (dim - 1) * np.log(z) + Lp - L[a]
            T[a[ok]], L[a[ok]] = prop[ok], Lp[ok]
            accepted += int(ok.sum())
        if step >= burn and (step - burn) % keep_every == keep_every - 1:
            kept.append(T.copy())
    return np.concatenate(kept), accepted / (steps * K)


@dataclass
class Posterior(SampledSpheres):
    """Result of :func:`sample_posterior` (units MPa½).

    Attributes
    ----------
    intervals : dict
        ``{"dD": [lo, hi], "dP": [...], "dH": [...], "R0": [...], "width": [...]}``,
        equal-tailed credible intervals at ``level``.
    sd : dict
        Posterior standard deviations.
    centre, R0, width :
        The graded fit (posterior mode) the walkers start from.
    centres, radii, widths : ndarrays of shape (n_samples, 3), (n_samples,), (n_samples,)
        The sampled spheres.
    names, good, trial_p_good :
        The trials used, whether each counts as good, the share of samples containing it.
    acceptance : float
        Acceptance fraction of the sampler.
    """

    intervals: dict
    sd: dict
    level: float
    n_samples: int
    seed: int | None
    centre: np.ndarray
    R0: float
    width: float
    desirability: float
    centres: np.ndarray
    radii: np.ndarray
    widths: np.ndarray
    names: list
    good: list
    trial_p_good: list
    n_good: int
    n_bad: int
    partial: str
    bounds: list
    acceptance: float
    n_walkers: int
    n_steps: int
    warnings: list = field(default_factory=list)
    elapsed: float = 0.0
    fit_method: str = "posterior"

    def to_dict(self, samples: bool = False) -> dict:
        """JSON-safe plain types (``solsphere fit --posterior N --json``, key
        ``"posterior"``). ``samples=True`` adds ``centres``, ``radii`` and ``widths``."""
        d = {"intervals": {k: list(v) for k, v in self.intervals.items()},
             "sd": dict(self.sd), "level": self.level, "n_samples": self.n_samples,
             "seed": self.seed, "fit_method": self.fit_method,
             "dD": float(self.centre[0]), "dP": float(self.centre[1]),
             "dH": float(self.centre[2]), "R0": self.R0, "width": self.width,
             "desirability": self.desirability, "n_good": self.n_good,
             "n_bad": self.n_bad, "partial": self.partial, "bounds": self.bounds,
             "acceptance": self.acceptance, "n_walkers": self.n_walkers,
             "n_steps": self.n_steps,
             "trials": [{"name": n, "counted_as": "good" if g else "bad", "p_good": p}
                        for n, g, p in zip(self.names, self.good, self.trial_p_good)],
             "warnings": list(self.warnings)}
        if samples:
            d["centres"] = self.centres.tolist()
            d["radii"] = self.radii.tolist()
            d["widths"] = self.widths.tolist()
        return d

    @classmethod
    def from_dict(cls, d: dict) -> "Posterior":
        """Inverse of :meth:`to_dict` (p_good needs a dict saved with ``samples=True``)."""
        if not all(k in d for k in ("centres", "radii", "widths")):
            raise ValueError("this posterior was saved without its samples; sample again")
        trials = d.get("trials", [])
        return cls(intervals={k: [float(a), float(b)] for k, (a, b) in d["intervals"].items()},
                   sd={k: float(v) for k, v in d["sd"].items()}, level=float(d["level"]),
                   n_samples=int(d["n_samples"]), seed=d.get("seed"),
                   centre=np.array([d["dD"], d["dP"], d["dH"]], dtype=float),
                   R0=float(d["R0"]), width=float(d["width"]),
                   desirability=float(d["desirability"]),
                   centres=np.asarray(d["centres"], dtype=float).reshape(-1, 3),
                   radii=np.asarray(d["radii"], dtype=float).reshape(-1),
                   widths=np.asarray(d["widths"], dtype=float).reshape(-1),
                   names=[t["name"] for t in trials],
                   good=[t["counted_as"] == "good" for t in trials],
                   trial_p_good=[float(t["p_good"]) for t in trials],
                   n_good=int(d["n_good"]), n_bad=int(d["n_bad"]),
                   partial=str(d.get("partial", "good")),
                   bounds=[list(map(float, b)) for b in d["bounds"]],
                   acceptance=float(d["acceptance"]), n_walkers=int(d["n_walkers"]),
                   n_steps=int(d["n_steps"]), warnings=list(d.get("warnings", [])))

    def __str__(self) -> str:
        out = ["[[Posterior]]",
               f"    samples    = {self.n_samples} spheres ({self.n_walkers} walkers, "
               f"{self.n_steps} steps, acceptance {self.acceptance:.2f}, seed {self.seed})",
               f"    results    = {self.n_good} good, {self.n_bad} bad (partly: "
               f"{self.partial})",
               f"[[Intervals]] ({100 * self.level:g} %, credible, equal-tailed)"]
        out += self.interval_lines(_KEYS)
        out += warning_lines(self.warnings)
        return "\n".join(out)


def sample_posterior(data, good=None, n_samples: int = 1000, *, seed: int | None = 0,
                     partial: str = "good", names=None, bounds=None, level: float = 0.95,
                     n_walkers: int = 64, burn: int = 600, thin: int = 4,
                     min_width: float = 0.05, max_width: float = 20.0,
                     width_prior: float = 1.0, prior_strength: float = 1.0) -> Posterior:
    """Sample the spheres the bench results allow (graded model, flat priors).

    Parameters
    ----------
    data : Trials or array-like of shape (n, 3)
        Bench results (see :func:`solsphere.models.base.binary_data`).
    good : array-like of bool or outcome strings, default=None
        Required with arrays.
    n_samples : int, default=1000
        Sampled spheres to keep (rounded up to a whole number of walker sweeps).
    seed : int or None, default=0
        Seed of the sampler (reproducible).
    partial : {"good", "bad", "skip"}, default="good"
    names : list of str, default=None
    bounds : array-like of shape (3, 2), default=None
        Box of the flat prior on the centre (default: the box of all tested solvents, the
        fits' box).
    level : float, default=0.95
    n_walkers : int, default=64
        Walkers of the ensemble (even, >= 12).
    burn, thin : int, default=600, 4
        Steps discarded at the start; steps between kept states.
    min_width, max_width, width_prior, prior_strength :
        As for :class:`~solsphere.graded.GradedSphereModel`.

    Returns
    -------
    Posterior

    Examples
    --------
    >>> X = [[17, 10, 7], [19, 10, 7], [18, 9, 8], [10, 30, 30], [25, 0, 0], [14, 2, 20]]
    >>> p = sample_posterior(X, [1, 1, 1, 0, 0, 0], 256, burn=100)  # invented
    >>> p.centres.shape, sorted(p.intervals)
    ((256, 3), ['R0', 'dD', 'dH', 'dP', 'width'])
    """
    check_work(int(n_samples), len(data), "the posterior samples")

    if partial not in ("good", "bad", "skip"):
        raise ValueError(f"partial must be 'good', 'bad' or 'skip'; found {partial!r}")
    if not 0.0 < level < 1.0:
        raise ValueError(f"level must be between 0 and 1; found {level}")
    n_samples, n_walkers, burn, thin = int(n_samples), int(n_walkers), int(burn), int(thin)
    if n_samples < 2:
        raise ValueError(f"n_samples must be at least 2; found {n_samples}")
    if n_walkers < 12 or n_walkers % 2:
        raise ValueError(f"n_walkers must be even and at least 12; found {n_walkers}")
    if burn < 0 or thin < 1:
        raise ValueError(f"need burn >= 0 and thin >= 1; found {burn}, {thin}")
    t0 = time.perf_counter()
    X, g, names, box = binary_data(data, good, partial, names, bounds)
    model = GradedSphereModel(partial="good", bounds=box, min_width=min_width,
                        max_width=max_width, width_prior=width_prior,
                        prior_strength=prior_strength).fit(X, g)
    bnds = np.array(theta_bounds(box, False, min_width, max_width))
    lo, hi = bnds[:, 0], bnds[:, 1]
    prior = (prior_strength, width_prior)
    rng = np.random.default_rng(seed)
    start = model.theta_[:5] + rng.normal(0.0, [0.2, 0.3, 0.3, 0.3, 0.1], (n_walkers, 5))
    start = np.clip(start, lo, hi)
    start[:, 4] = np.minimum(start[:, 4], np.log(0.9 * start[:, 3] / CENTRE_Z))
    start = np.clip(start, lo, hi)
    sweeps = -(-n_samples // n_walkers)
    steps = burn + sweeps * thin
    S, acc = _stretch_sampler(lambda T: log_posterior(T, X, g, lo, hi, prior), start,
                              steps, thin, burn, rng)
    S = S[:n_samples]
    C, R, E = S[:, :3], S[:, 3], np.exp(S[:, 4])
    intervals, sd = percentile_intervals(np.column_stack([C, R, E]), _KEYS, level)
    notes = []
    if acc < MIN_ACCEPTANCE:
        notes.append(f"The sampler accepted only {100 * acc:.0f} % of its moves: the samples "
                     f"may not have spread over every plausible sphere; run it longer "
                     f"(more burn-in).")
    for k, m in (("good", int(g.sum())), ("bad", int((~g).sum()))):
        if m < MIN_ADVISED:
            out = f"Only {m} result{'s count' if m != 1 else ' counts'} as {k}"
            notes.append(f"{out}: many spheres agree with the results, and the intervals "
                         f"are wide for that reason.")
    notes += edge_notes(C, box, "sampled spheres")
    trial_p = np.mean(ra(X[None, :, :], C[:, None, :]) <= R[:, None], axis=0)
    return Posterior(intervals=intervals, sd=sd, level=level, n_samples=len(S), seed=seed,
                     centre=np.asarray(model.centre_, dtype=float), R0=float(model.R0_),
                     width=float(model.width_),
                     desirability=float(desirability(ra(X, model.centre_), g, model.R0_)),
                     centres=C, radii=R, widths=E, names=list(names), good=g.tolist(),
                     trial_p_good=trial_p.tolist(), n_good=int(g.sum()),
                     n_bad=int((~g).sum()), partial=partial, bounds=box.tolist(),
                     acceptance=float(acc), n_walkers=n_walkers, n_steps=steps,
                     warnings=notes, elapsed=time.perf_counter() - t0)
