r"""How sure is the sphere, the Bayesian way: samples of every sphere the results allow.

The bootstrap (:mod:`solsphere.uncertainty.bootstrap`) asks how much the fit moves when
the panel is resampled. On a small panel that is not the same as how little the results
pin it down: when 3 of 22 solvents dissolve the material and every other trial lies far
from the boundary, resampling hardly moves the fit although a wide range of spheres agree
with every result. Here the spheres themselves are sampled, in proportion to how well
they explain the results (the posterior of the graded model of
:mod:`solsphere.models.graded`):

.. math:: p(\theta \mid \text{results}) \propto
          \prod_i \sigma\!\left(\pm\frac{R_0 - R_{a,i}}{w}\right) \, p(\theta),
          \qquad \theta = (\delta_D, \delta_P, \delta_H, R_0, \ln w)

with + for a good result and − for a bad one, each factor softened by a lapse rate
ε = 0.02 (ε + (1 − 2ε) σ: one result in 50 may be recorded the wrong way round whatever
the sphere, so a single wrong vial far from the boundary does not force a soft, large
sphere), and the sphere must hold at least one result counted as good (else every good
result could be a lapse and a tiny sphere anywhere in the wide box would fit).
``p_good`` below is the sphere's own probability, without ε.

Prior
-----
The centre is flat over a *physically wide* box, not over the box the tested solvents
span (that box cut the intervals off exactly where the truth often lies, e.g. for
polymers whose δD is above every common solvent's): δD 12–25, δP 0–30, δH 0–45 MPa½.
The packaged library's 1,225 compounds span δD 10.6–22.6, δP 0–27.6 and δH 0–42.7
(1st–99th percentiles 12.6–21.0, 0–19.4, 0–25.2); the box holds all but a handful of
fluorinated liquids on the low δD side and leaves room above for polymers (handbook
polystyrene δD 21.3, from memory). R0 lies in (0.001, 25] MPa½ (spheres of ordinary
materials are a few to about 15 MPa½, and 25 lets "almost everything dissolves" show as
mass at the limit rather than be hidden) with density flat below 2 MPa½ and ∝ R0^-3
above. Why the power 3 (our own argument, no source): where the results only show a
piece of the boundary, every sphere whose surface runs through that piece fits them,
and the centres of such spheres of radius R0 fill a cap of area ∝ R0² at distance R0;
with a prior flat or log-uniform in R0 that growing volume carried the mass to large,
far-away spheres, and in the calibration campaign the R0 interval missed the truth in
18 of 100 panels, every time from above. R0^-3 undoes the R0² of the cap and keeps the
log-uniform's 1/R0. The width w of the boundary is log-uniform on
[0.01, 10] MPa½ (scale-free: sharp boundaries, the usual case of a clean panel, are as
welcome as soft ones; the graded fit's ridge on 1/w forbade them). One constraint ties
R0 and w: R0 >= ln 9 × w, so a solvent at the centre itself dissolves the material
with probability at least 0.9 (the premise of the sphere; without it a small, very soft
sphere, "a few dissolve anywhere", explains panels with few good results). A caller's
``bounds`` replace the centre box. "Partly" results count as good (or bad, or are left
out) as the ``partial`` setting says.

When the results cannot place a coordinate (more than 5 % of the plausible centres at a
limit of the prior, or the 95 % interval reaching more than 1 MPa½ beyond the tested
solvents), a warning names the coordinate, the side and the kind of solvent that would
pin it down, with two or three untested common solvents
(:func:`solsphere.models.guidance.pinning_advice`).

Sampler and convergence
-----------------------
An ensemble of 32 walkers moved by differential evolution [5]_ (80 % of the sweeps;
20 % use the snooker update [4]_), the two halves of the ensemble updated in turn, all
walkers' log posteriors evaluated in one
array operation. The walkers start in a small ball around the graded fit's maximum and
run in chunks until the chain is long enough: after discarding a burn-in of 3 τ (τ
estimated on the second half of the chain), the rest must be at least 50 τ long (the
rule of thumb of emcee's documentation for a trustworthy τ) and hold at least
``n_effective`` effective samples, ESS = steps × walkers / τ, with τ the largest
integrated autocorrelation time over the five parameters (estimated with
``emcee.autocorr.integrated_time``, Sokal's automated window, c = 5 [3]_). When the
step limit (``max_steps``, 30,000) or the time limit (``max_seconds``, 60 s) comes
first a warning says so and gives the effective samples reached. The 95 % intervals are percentiles of the
whole kept chain (equal-tailed credible intervals [1]_); ``n_samples`` spheres evenly
spread over it are kept for plotting, ranking and next trials.

A solvent's ``p_good`` is the posterior predictive probability that it dissolves the
material: the mean over the sampled spheres of σ((R0 − Ra) / w), so the width's
uncertainty is integrated, not only the sphere's. A result whose leave-one-out
predictive probability (importance sampling over the samples [6]_) is below 5 % is named
in a warning: a wrong result pulls the sphere and its intervals with it.

How good are the intervals? ``tests/perf/bench_calibration.py`` runs 100 invented
panels of 15–30 common solvents (centres inside, near the edge of and beyond the tested
region; sharp to soft boundaries; "partly" rows and flipped results) and prints the
coverage of the 95 % intervals per parameter; the numbers are in the README. Samples are
a description of the results, not a guarantee: the model assumes the sphere shape and
independent results.

References
----------
.. [1] A. Gelman, J. B. Carlin, H. S. Stern, D. B. Dunson, A. Vehtari, D. B. Rubin,
   *Bayesian Data Analysis*, 3rd ed., CRC Press, 2013 (sec. 2.3, posterior intervals;
   section from memory).
.. [2] J. Goodman, J. Weare, "Ensemble samplers with affine invariance", Communications
   in Applied Mathematics and Computational Science 5(1), 65-80, 2010.
.. [3] A. D. Sokal, "Monte Carlo methods in statistical mechanics: foundations and new
   algorithms", in *Functional Integration*, Springer, 1997, pp. 131-192 (the automated
   windowing of the integrated autocorrelation time; reference from memory, as cited by
   emcee's documentation).
.. [4] C. J. F. ter Braak, J. A. Vrugt, "Differential evolution Markov chain with snooker
   updater and fewer chains", Statistics and Computing 18(4), 435-446, 2008.
.. [5] C. J. F. ter Braak, "A Markov chain Monte Carlo version of the genetic algorithm
   differential evolution: easy Bayesian computing for real parameter spaces",
   Statistics and Computing 16(3), 239-249, 2006.
.. [6] A. E. Gelfand, D. K. Dey, H. Chang, "Model determination using predictive
   distributions with implementation via sampling-based methods", in *Bayesian
   Statistics 4*, Oxford University Press, 1992, pp. 147-167 (reference from memory).

(The affine-invariant stretch move of Goodman and Weare [2]_, used before, gave τ of
about 100-160 steps on the demo panel; these moves 40-75, so the converged chain takes
half the time.)
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np
from emcee.autocorr import integrated_time
from scipy.special import expit

from solsphere.formatting import warning_lines
from solsphere.limits import check_work
from solsphere.hansen import SCALE, as_points, ra
from solsphere.models.base import AXES, MIN_ADVISED, binary_data
from solsphere.models.classic import desirability
from solsphere.models.graded import GradedSphereModel
from solsphere.models.guidance import GREEK, pinning_advice
from solsphere.uncertainty.bootstrap import SampledSpheres, percentile_intervals

__all__ = ["Posterior", "sample_posterior", "log_posterior", "PRIOR_BOX", "R0_MAX",
           "MAX_SECONDS", "autocorr_time"]

_S2 = SCALE ** 2
_KEYS = (*AXES, "R0", "width")
#: Prior support: P(good) at the centre itself is at least 0.9, i.e. R0 >= ln 9 * w. A
#: solvent matching the material exactly dissolves it (the premise of the sphere);
#: without this, a small sphere with a very soft boundary ("a few dissolve anywhere")
#: explains panels with few good results and drags the R0 interval to 0.
CENTRE_Z = float(np.log(9.0))
#: Acceptance fractions below this give a warning (common practice, no source).
MIN_ACCEPTANCE = 0.1
#: The physically wide flat prior on the centre [MPa½] (see the module doc).
PRIOR_BOX = np.array([[12.0, 25.0], [0.0, 30.0], [0.0, 45.0]])
#: Upper limit of the prior on R0 [MPa½].
R0_MAX = 25.0
#: Prior density of R0 ∝ max(R0, R0_KNEE)^-R0_POWER (see the module doc): flat below the
#: knee, falling as R0^-3 above it. With the log-uniform prior used before (power 1) the
#: R0 intervals of the calibration campaign missed the truth in 18 of 100 panels, every
#: time from above; with power 3, 15 of those 18 were held (tests/perf/bench_calibration.py).
R0_POWER = 3.0
#: Below this radius [MPa½] the prior on R0 is flat: the power law would otherwise put
#: nearly all its mass on spheres of a few hundredths of a MPa½.
R0_KNEE = 2.0
#: Probability that a bench result is recorded the wrong way round whatever the sphere
#: (a vial mixed up, a warm vial, a misread haze): 1 in 50 (common practice, no source).
#: Without it one wrong result far from the boundary can only be explained by a soft,
#: large sphere, and the R0 and width intervals missed the truth in the calibration
#: campaign's panels with a flipped result.
LAPSE = 0.02
#: Default time limit of the sampling [s]: on this two-core machine the demo converges in
#: about 2-3 s and the slowest invented calibration panel took minutes.
MAX_SECONDS = 60.0
#: Limits of the log-uniform prior on the width w [MPa½].
MIN_WIDTH, MAX_WIDTH = 0.01, 10.0
#: A chain shorter than this many autocorrelation times is not trusted (the rule of
#: thumb of emcee's documentation).
TAU_MULTIPLE = 50
#: More than this share of plausible centres at a prior limit: the coordinate is not
#: placed (the threshold the fits' edge warnings use too; common practice, no source).
EDGE_SHARE = 0.05
#: An interval end this far beyond the tested solvents [MPa½] gets a warning.
BEYOND = 1.0
#: An R0 interval whose upper end is more than this many times its lower end gets a
#: warning (common practice, no source).
WIDE_R0 = 2.0
#: A result whose observed outcome has a leave-one-out predictive probability below
#: this is named as unlikely (re-check it; common practice, no source).
SURPRISE = 0.05


def autocorr_time(chain) -> np.ndarray:
    """Integrated autocorrelation time [steps] per parameter of an ensemble chain.

    ``chain`` has shape (steps, walkers, dim); emcee's estimator (walkers averaged,
    Sokal's window with c = 5). A parameter that never moved gets the chain length (the
    pessimistic answer) instead of NaN.

    Examples
    --------
    >>> rng = np.random.default_rng(0)
    >>> tau = autocorr_time(rng.normal(size=(2000, 8, 2)))  # independent draws: tau ~ 1
    >>> bool(np.all(tau < 1.5))
    True
    """
    x = np.asarray(chain, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        tau = np.asarray(integrated_time(x, c=5, tol=0, quiet=True), dtype=float)
    return np.where(np.isfinite(tau) & (tau > 0), tau, float(len(x)))


def log_posterior(thetas, X, good, lo, hi, prior=(1.0, 1.0), lapse: float = 0.0,
                  r0_power: float = 0.0, r0_knee: float = R0_KNEE) -> np.ndarray:
    """Log posterior (up to a constant) of many graded spheres at once.

    Parameters
    ----------
    thetas : ndarray of shape (k, 5)
        dD, dP, dH, R0, ln w per row.
    X : ndarray of shape (n, 3)
    good : ndarray of bool, shape (n,)
    lo, hi : ndarray of shape (5,)
        Bounds of the flat prior (outside: -inf); flat in ln w is log-uniform in w.
    prior : (strength, width_prior)
        An optional ridge ``strength * (width_prior / w)**2`` (that of
        :func:`solsphere.models.graded.graded_nll`); strength 0 turns it off (the
        sampler's default).
    lapse : float, default=0.0
        Probability ε that a result is recorded the wrong way round whatever the
        sphere: P(good) = ε + (1 − 2ε) σ(z) (the sampler uses :data:`LAPSE`).
    r0_power : float, default=0.0
        Prior density of R0 ∝ max(R0, r0_knee)^-r0_power: 0 flat (the sampler uses
        :data:`R0_POWER`).
    r0_knee : float, default=R0_KNEE
        Radius below which the prior on R0 is flat [MPa½].

    Returns
    -------
    ndarray of shape (k,): the log-likelihood minus the ridge (inside the bounds).
    """
    T = np.atleast_2d(np.asarray(thetas, dtype=float))
    inb = np.all((T >= lo) & (T <= hi), axis=1) & (T[:, 3] >= CENTRE_Z * np.exp(T[:, 4]))
    d = X[None, :, :] - T[:, None, :3]
    Ra = np.sqrt((d * d * _S2).sum(axis=-1) + 1e-12)
    w = np.exp(T[:, 4])
    z = (T[:, 3:4] - Ra) / w[:, None]
    log_sig = -np.logaddexp(0.0, np.where(good[None, :], -z, z))
    if lapse:
        log_sig = np.logaddexp(np.log(lapse), np.log1p(-2.0 * lapse) + log_sig)
    ll = log_sig.sum(axis=1)
    if lapse:
        # support: the sphere holds at least one result counted as good (otherwise every
        # good result would be a lapse, and a tiny sphere anywhere in the wide box fits)
        inb &= np.any(good[None, :] & (Ra <= T[:, 3:4]), axis=1)
    if r0_power:
        ll = ll - r0_power * np.log(np.maximum(T[:, 3], r0_knee))
    lam, w0 = prior
    if lam:
        ll = ll - lam * (w0 / w) ** 2
    return np.where(inb, ll, -np.inf)


@dataclass
class Posterior(SampledSpheres):
    """Result of :func:`sample_posterior` (units MPa½).

    Attributes
    ----------
    intervals : dict
        ``{"dD": [lo, hi], "dP": [...], "dH": [...], "R0": [...], "width": [...]}``,
        equal-tailed credible intervals at ``level`` (from the whole kept chain).
    sd : dict
        Posterior standard deviations.
    centre, R0, width :
        The graded fit (posterior mode) the walkers start from.
    centres, radii, widths : ndarrays of shape (n_samples, 3), (n_samples,), (n_samples,)
        Sampled spheres, evenly spread over the kept chain.
    names, good, trial_p_good :
        The trials used, whether each counts as good, the posterior predictive
        probability that each dissolves the material.
    acceptance : float
        Acceptance fraction of the sampler.
    effective_samples : float
        Effective sample size of the kept chain (steps × walkers / the largest τ).
    autocorr_time : float
        The largest integrated autocorrelation time [steps]; ``autocorr_times`` per
        parameter.
    converged : bool
        The chain reached ``TAU_MULTIPLE`` τ and the requested effective samples.
    stopped_by : {"converged", "steps", "time"}
        What ended the sampling (the step limit or the time limit: not converged).
    bounds : list
        The flat prior's box for the centre; ``tested_box`` the tested solvents' box.
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
    effective_samples: float | None = None
    autocorr_time: float | None = None
    autocorr_times: dict = field(default_factory=dict)
    converged: bool | None = None
    stopped_by: str | None = None
    burn: int = 0
    n_effective: int | None = None
    tested_box: list | None = None
    prior: dict = field(default_factory=dict)

    def p_good(self, points) -> np.ndarray:
        """Posterior predictive probability that each point dissolves the material,
        shape (m,): the mean over the sampled spheres of σ((R0 − Ra) / w).

        Parameters
        ----------
        points : array-like of shape (m, 3)
            Solvent coordinates [MPa½].
        """
        if not self.has_samples:
            raise ValueError("this posterior was saved without its samples; sample again")
        P = as_points(points)
        if len(P) == 0:
            return np.zeros(0)
        out = np.empty(len(P))
        step = max(1, 2_000_000 // max(1, len(self.radii)))
        for a in range(0, len(P), step):
            d = ra(P[None, a:a + step, :], self.centres[:, None, :])
            out[a:a + step] = expit((self.radii[:, None] - d) / self.widths[:, None]).mean(axis=0)
        return out

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
             "tested_box": self.tested_box, "prior": dict(self.prior),
             "acceptance": self.acceptance, "n_walkers": self.n_walkers,
             "n_steps": self.n_steps, "burn": self.burn,
             "effective_samples": self.effective_samples,
             "n_effective": self.n_effective,
             "autocorr_time": self.autocorr_time,
             "autocorr_times": dict(self.autocorr_times), "converged": self.converged,
             "stopped_by": self.stopped_by, "elapsed": self.elapsed,
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
        num = lambda k: None if d.get(k) is None else float(d[k])  # noqa: E731
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
                   n_steps=int(d["n_steps"]), warnings=list(d.get("warnings", [])),
                   effective_samples=num("effective_samples"),
                   autocorr_time=num("autocorr_time"),
                   autocorr_times={k: float(v) for k, v in
                                   (d.get("autocorr_times") or {}).items()},
                   converged=d.get("converged"), stopped_by=d.get("stopped_by"), burn=int(d.get("burn", 0)),
                   n_effective=d.get("n_effective"), tested_box=d.get("tested_box"),
                   prior=dict(d.get("prior") or {}), elapsed=float(d.get("elapsed", 0.0)))

    def __str__(self) -> str:
        chain = "chain      = "
        if self.autocorr_time is not None:
            chain += (f"τ {self.autocorr_time:.0f} steps, {self.effective_samples:.0f} "
                      f"effective samples ({'converged' if self.converged else 'NOT converged'}"
                      f"{'' if self.converged or not self.stopped_by else ': ' + self.stopped_by + ' limit'}"
                      f"), {self.elapsed:.1f} s")
        out = ["[[Posterior]]",
               f"    samples    = {self.n_samples} spheres kept ({self.n_walkers} walkers, "
               f"{self.n_steps} steps, acceptance {self.acceptance:.2f}, seed {self.seed})",
               "    " + chain,
               f"    results    = {self.n_good} good, {self.n_bad} bad (partly: "
               f"{self.partial})",
               "    prior      = centre " + ", ".join(
                   f"{a} {lo:g} to {hi:g}" for a, (lo, hi) in zip(AXES, self.bounds))
               + (f"; R0 {self.prior.get('R0', 'flat')} up to "
                  f"{self.prior.get('R0_max', R0_MAX):g}; width log-uniform "
                  f"{self.prior.get('min_width', MIN_WIDTH):g} to "
                  f"{self.prior.get('max_width', MAX_WIDTH):g} MPa½"),
               f"[[Intervals]] ({100 * self.level:g} %, credible, equal-tailed)"]
        out += self.interval_lines(_KEYS)
        out += warning_lines(self.warnings)
        return "\n".join(out)


#: Share of sweeps that use the snooker update instead of the parallel-direction one.
P_SNOOKER = 0.2
#: Snooker step length (ter Braak and Vrugt's 1.7).
SNOOKER_GAMMA = 1.7


def _de_steps(logp, T, L, steps, rng):
    """``steps`` sweeps of differential-evolution moves from walkers ``T`` (K, dim) with
    log posteriors ``L`` (updated in place); returns the states (steps, K, dim) and the
    number of accepted moves.

    Each sweep updates the two halves of the ensemble in turn, every walker from walkers
    of the other half (which keeps the chain a valid Markov chain [5]_). With
    probability ``P_SNOOKER`` a sweep uses the snooker update [4]_ (along the line to a
    random other walker, step 1.7 × the projected difference of two more, with its
    (dim − 1) log-length Jacobian in the acceptance ratio), otherwise the
    parallel-direction update [5]_ x + γ (x_j − x_k), γ = 2.38 / sqrt(2 dim).
    """
    K, dim = T.shape
    half = K // 2
    halves = (np.arange(half), np.arange(half, K))
    g0 = 2.38 / np.sqrt(2 * dim)
    out = np.empty((steps, K, dim))
    accepted = 0
    for s in range(steps):
        snooker = rng.random() < P_SNOOKER
        for a, b in (halves, halves[::-1]):
            n, m = len(a), len(b)
            if snooker:
                idx = np.argsort(rng.random((n, m)), axis=1)[:, :3]
                z, z1, z2 = T[b[idx[:, 0]]], T[b[idx[:, 1]]], T[b[idx[:, 2]]]
                delta = T[a] - z
                norm = np.maximum(np.linalg.norm(delta, axis=1), 1e-300)
                u = delta / norm[:, None]
                prop = T[a] + SNOOKER_GAMMA * u * ((z1 - z2) * u).sum(axis=1)[:, None]
                with np.errstate(divide="ignore"):
                    extra = (dim - 1.0) * (np.log(np.linalg.norm(prop - z, axis=1))
                                           - np.log(norm))
            else:
                j = rng.integers(m, size=n)
                k = (j + 1 + rng.integers(m - 1, size=n)) % m
                gam = g0 * (1.0 + 1e-5 * rng.normal(size=n))
                prop = T[a] + gam[:, None] * (T[b[j]] - T[b[k]])
                extra = 0.0
            Lp = logp(prop)
            with np.errstate(invalid="ignore"):  # -inf - -inf: NaN, i.e. rejected
                ok = np.log(rng.random(n)) < Lp - L[a] + extra
            T[a[ok]], L[a[ok]] = prop[ok], Lp[ok]
            accepted += int(ok.sum())
        out[s] = T
    return out, accepted


def _run_until_converged(logp, start, rng, n_effective, n_samples, max_steps, chunk=400,
                         min_burn=100, max_seconds=None, t0=None):
    """Run the ensemble in chunks until converged (see the module doc), or until
    ``max_steps`` steps or ``max_seconds`` seconds (each chunk after the first is cut to
    the time left, at the speed measured so far).

    Returns the kept chain (steps, K, dim), the burn-in, τ per parameter, the ESS, the
    acceptance fraction, the total steps, whether it converged and what stopped it
    ("converged", "steps" or "time").
    """
    T = np.array(start, dtype=float)
    K, dim = T.shape
    t0 = time.perf_counter() if t0 is None else t0  # the caller's start: its set-up counts
    L = logp(T)
    parts, accepted, total, steps = [], 0, 0, chunk
    while True:
        S, acc = _de_steps(logp, T, L, steps, rng)
        parts = [S] if not parts else [np.concatenate([parts[0], S])]
        accepted += acc
        total += steps
        chain = parts[0]
        tau_half = autocorr_time(chain[total // 2:]).max()
        burn = int(min(total // 2, max(min_burn, np.ceil(3 * tau_half))))
        kept = chain[burn:]
        tau = autocorr_time(kept)
        tmax = float(tau.max())
        ess = len(kept) * K / tmax
        done = (len(kept) >= TAU_MULTIPLE * tmax and ess >= n_effective
                and len(kept) * K >= n_samples)
        spent = time.perf_counter() - t0
        left = np.inf if max_seconds is None else max_seconds - spent
        stop = ("converged" if done else "steps" if total >= max_steps else
                "time" if left < 100 * spent / total else None)
        if stop:
            return kept, burn, tau, ess, accepted / (total * K), total, done, stop
        need = max(TAU_MULTIPLE * tmax, n_effective * tmax / K, n_samples / K)
        more = int(np.ceil(1.2 * (need - len(kept)))) + 3 * int(np.ceil(tmax))
        by_time = max(1, int(left / (spent / total))) if np.isfinite(left) else max_steps
        steps = int(min(np.clip(more, 200, max_steps - total), max(100, by_time)))


def _cannot_place(Cflat, R, intervals, prior_lo, prior_hi, X, centre) -> list[str]:
    """Warnings for coordinates (and R0) the results cannot place (see the module doc)."""
    out = []
    for j, a in enumerate(AXES):
        lo, hi = prior_lo[j], prior_hi[j]
        tol = 0.02 * (hi - lo)
        sym = GREEK[a]
        t_lo, t_hi = float(X[:, j].min()), float(X[:, j].max())
        i_lo, i_hi = intervals[a]
        for side in ("upper", "lower"):
            up = side == "upper"
            at = float(np.mean(Cflat[:, j] >= hi - tol) if up else np.mean(Cflat[:, j] <= lo + tol))
            limit, edge = (hi, t_hi) if up else (lo, t_lo)
            beyond = (i_hi - t_hi) if up else (t_lo - i_lo)
            word = "higher" if up else "lower"
            if abs(limit - edge) <= BEYOND:
                continue  # the tested solvents reach the prior's (physical) limit here
            if at > EDGE_SHARE:
                head = (f"{sym} ({a}) cannot be placed: {100 * at:.0f} % of the plausible "
                        f"centres sit at the {side} limit of the prior ({limit:g} MPa½); "
                        f"the results only say it is {word}, and the {a} interval is cut "
                        f"off by the prior.")
            elif beyond > BEYOND:
                head = (f"{sym} ({a}) is not pinned down on the {side} side: its interval "
                        f"reaches {i_hi if up else i_lo:.1f}, {beyond:.1f} MPa½ beyond the "
                        f"{'highest' if up else 'lowest'} {sym} tested ({edge:.1f}); the "
                        f"true {a} may lie out there.")
            else:
                continue
            out.append(f"{head} {pinning_advice(a, side, X, centre)}")
    r_lo, r_hi = intervals["R0"]
    at = float(np.mean(R >= 0.98 * R0_MAX))
    if at <= EDGE_SHARE and r_hi > WIDE_R0 * r_lo:
        out.append(f"R0 is poorly determined: its interval runs from {r_lo:.1f} to "
                   f"{r_hi:.1f} MPa½ (a small sphere near the dissolving results and a "
                   "large one reaching beyond them both fit). Test solvents between the "
                   "dissolving results and the nearest non-dissolving ones.")
    if at > EDGE_SHARE:
        out.append(f"R0 cannot be placed: {100 * at:.0f} % of the plausible spheres have R0 "
                   f"at the prior's limit ({R0_MAX:g} MPa½): the results do not show where "
                   "the material stops dissolving. Test solvents far from the dissolving "
                   "ones (very different δD, δP or δH, e.g. water, n-hexane, glycerol).")
    return out


def sample_posterior(data, good=None, n_samples: int = 1000, *, seed: int | None = 0,
                     partial: str = "good", names=None, bounds=None, level: float = 0.95,
                     n_effective: int = 1000, n_walkers: int = 32, burn: int = 100,
                     max_steps: int = 30000, max_seconds: float | None = MAX_SECONDS,
                     min_width: float = MIN_WIDTH,
                     max_width: float = MAX_WIDTH, r0_max: float = R0_MAX,
                     width_prior: float = 1.0, prior_strength: float = 0.0,
                     lapse: float = LAPSE, r0_power: float = R0_POWER) -> Posterior:
    """Sample the spheres the bench results allow, until the chain has converged.

    Parameters
    ----------
    data : Trials or array-like of shape (n, 3)
        Bench results (see :func:`solsphere.models.base.binary_data`).
    good : array-like of bool or outcome strings, default=None
        Required with arrays.
    n_samples : int, default=1000
        Sampled spheres to keep (evenly spread over the converged chain).
    seed : int or None, default=0
        Seed of the sampler (reproducible).
    partial : {"good", "bad", "skip"}, default="good"
    names : list of str, default=None
    bounds : array-like of shape (3, 2), default=None
        Box of the flat prior on the centre (default :data:`PRIOR_BOX`, physically wide).
    level : float, default=0.95
    n_effective : int, default=1000
        Effective samples the kept chain must hold (see the module doc).
    n_walkers : int, default=32
        Walkers of the ensemble (even, >= 12).
    burn : int, default=100
        Least burn-in [steps] (the chain discards max(burn, 3 τ)).
    max_steps : int, default=30000
        Step limit; reaching it first gives a warning.
    max_seconds : float or None, default=60.0
        Time limit of the sampling [s] (None: no limit); reaching it first gives a
        warning with the effective samples reached. The chain stops between chunks, so
        the limit may be passed by the time of about 100 steps.
    min_width, max_width : float, default=0.01, 10.0
        Limits of the log-uniform prior on the width w [MPa½].
    r0_max : float, default=25.0
        Upper limit of the flat prior on R0 [MPa½].
    width_prior, prior_strength : float, default=1.0, 0.0
        An optional ridge on 1/w as in :class:`~solsphere.models.graded.GradedSphereModel`
        (off by default: it forbade sharp boundaries).
    lapse : float, default=0.02
        Probability that a result is recorded the wrong way round (see :data:`LAPSE`).
    r0_power : float, default=R0_POWER
        Prior density of R0 ∝ R0^-r0_power (see :data:`R0_POWER`).

    Returns
    -------
    Posterior

    Examples
    --------
    >>> X = [[17, 10, 7], [19, 10, 7], [18, 9, 8], [10, 30, 30], [25, 0, 0], [14, 2, 20]]
    >>> p = sample_posterior(X, [1, 1, 1, 0, 0, 0], 256, n_effective=200)  # invented
    >>> p.centres.shape, sorted(p.intervals), p.effective_samples >= 200
    ((256, 3), ['R0', 'dD', 'dH', 'dP', 'width'], True)
    """
    check_work(int(n_samples), len(data), "the posterior samples")

    if partial not in ("good", "bad", "skip"):
        raise ValueError(f"partial must be 'good', 'bad' or 'skip'; found {partial!r}")
    if not 0.0 < level < 1.0:
        raise ValueError(f"level must be between 0 and 1; found {level}")
    n_samples, n_walkers, burn = int(n_samples), int(n_walkers), int(burn)
    n_effective, max_steps = int(n_effective), int(max_steps)
    if n_samples < 2:
        raise ValueError(f"n_samples must be at least 2; found {n_samples}")
    if n_walkers < 12 or n_walkers % 2:
        raise ValueError(f"n_walkers must be even and at least 12; found {n_walkers}")
    if burn < 0 or n_effective < 1 or max_steps < 100:
        raise ValueError(f"need burn >= 0, n_effective >= 1 and max_steps >= 100; found "
                         f"{burn}, {n_effective}, {max_steps}")
    if not 0 < min_width < max_width:
        raise ValueError(f"need 0 < min_width < max_width; found {min_width}, {max_width}")
    if max_seconds is not None and not max_seconds > 0:
        raise ValueError(f"max_seconds must be positive (or None); found {max_seconds}")
    if not 0.0 <= lapse < 0.5:
        raise ValueError(f"lapse must be in [0, 0.5); found {lapse}")
    t0 = time.perf_counter()
    X, g, names, tested = binary_data(data, good, partial, names, None)
    box = PRIOR_BOX.copy() if bounds is None else np.asarray(bounds, dtype=float)
    if box.shape != (3, 2) or not np.all(np.isfinite(box)) or np.any(box[:, 0] >= box[:, 1]):
        raise ValueError("bounds must be [[dD_lo, dD_hi], [dP_lo, dP_hi], [dH_lo, dH_hi]] "
                         f"with lo < hi; found {np.asarray(bounds).tolist()}")
    # The start: the graded fit within the tested region (clipped into the prior box).
    start_box = np.column_stack([np.maximum(tested[:, 0], box[:, 0]),
                                 np.minimum(tested[:, 1], box[:, 1])])
    start_box[:, 1] = np.maximum(start_box[:, 0], start_box[:, 1])
    model = GradedSphereModel(partial="good", bounds=start_box, min_width=max(min_width, 0.05),
                        max_width=min(max_width, 20.0)).fit(X, g)
    lo = np.r_[box[:, 0], 1e-3, np.log(min_width)]
    hi = np.r_[box[:, 1], float(r0_max), np.log(max_width)]
    prior = (prior_strength, width_prior)
    rng = np.random.default_rng(seed)
    th = np.asarray(model.theta_[:5], dtype=float).copy()
    th[3] = min(th[3], 0.95 * r0_max)
    start = th + rng.normal(0.0, [0.2, 0.3, 0.3, 0.3, 0.1], (n_walkers, 5))
    start = np.clip(start, lo + 1e-9, hi - 1e-9)
    start[:, 4] = np.minimum(start[:, 4], np.log(0.9 * start[:, 3] / CENTRE_Z))
    start = np.clip(start, lo + 1e-9, hi - 1e-9)
    logp = lambda T: log_posterior(T, X, g, lo, hi, prior, lapse, r0_power)  # noqa: E731
    kept, burn_used, tau, ess, acc, total, done, stop = _run_until_converged(
        logp, start, rng, n_effective, n_samples, max(max_steps, burn + 200), min_burn=burn,
        max_seconds=max_seconds, t0=t0)
    flat = kept.reshape(-1, 5)
    pick = np.unique(np.linspace(0, len(flat) - 1, n_samples).round().astype(int))
    S = flat[pick]
    C, R, E = S[:, :3], S[:, 3], np.exp(S[:, 4])
    intervals, sd = percentile_intervals(
        np.column_stack([flat[:, :3], flat[:, 3], np.exp(flat[:, 4])]), _KEYS, level)
    notes = []
    if acc < MIN_ACCEPTANCE:
        notes.append(f"The sampler accepted only {100 * acc:.0f} % of its moves: the samples "
                     f"may not have spread over every plausible sphere.")
    tmax = float(tau.max())
    if not done:
        limit = (f"its limit of {total} steps" if stop == "steps" else
                 f"its time limit of {max_seconds:g} s ({total} steps)")
        notes.append(f"The chain stopped at {limit} before it converged "
                     f"(autocorrelation time {tmax:.0f} steps, {ess:.0f} effective samples "
                     f"of {n_effective} asked, {len(kept) / tmax:.0f} τ of {TAU_MULTIPLE} "
                     f"needed): treat the intervals (dD, dP, dH, R0, width) as rough, or "
                     f"sample longer.")
    for k, m in (("good", int(g.sum())), ("bad", int((~g).sum()))):
        if m < MIN_ADVISED:
            out = f"Only {m} result{'s count' if m != 1 else ' counts'} as {k}"
            notes.append(f"{out}: many spheres agree with the results, and the intervals "
                         f"are wide for that reason.")
    notes += _cannot_place(flat[:, :3], flat[:, 3], intervals, box[:, 0], box[:, 1], X,
                           np.median(flat[:, :3], axis=0))
    post = Posterior(intervals=intervals, sd=sd, level=level, n_samples=len(S), seed=seed,
                     centre=np.asarray(model.centre_, dtype=float), R0=float(model.R0_),
                     width=float(model.width_),
                     desirability=float(desirability(ra(X, model.centre_), g, model.R0_)),
                     centres=C, radii=R, widths=E, names=list(names), good=g.tolist(),
                     trial_p_good=[], n_good=int(g.sum()),
                     n_bad=int((~g).sum()), partial=partial, bounds=box.tolist(),
                     acceptance=float(acc), n_walkers=n_walkers, n_steps=int(total),
                     warnings=notes, effective_samples=float(ess), autocorr_time=tmax,
                     autocorr_times={k: float(t) for k, t in zip(("dD", "dP", "dH", "R0",
                                                                  "ln_width"), tau)},
                     converged=bool(done), stopped_by=stop, burn=int(burn_used), n_effective=n_effective,
                     tested_box=tested.tolist(),
                     prior={"R0_max": float(r0_max), "min_width": float(min_width),
                            "lapse": float(lapse),
                            "R0": (f"flat up to {R0_KNEE:g}, then ∝ R0^-{r0_power:g}"
                                   if r0_power else "flat"),
                            "max_width": float(max_width),
                            "width": "log-uniform" if not prior_strength else
                            f"log-uniform with a ridge {prior_strength:g} ({width_prior:g}/w)²"})
    post.trial_p_good = post.p_good(X).tolist()
    # Leave-one-out predictive probability of each observed outcome by importance
    # sampling (the harmonic mean of its likelihood over the samples, Gelfand's
    # estimator): how surprising the result would be had it not been tested.
    lik = expit((R[:, None] - ra(X[None, :, :], C[:, None, :])) / E[:, None])
    lik = np.maximum(lapse + (1.0 - 2.0 * lapse) * np.where(g, lik, 1.0 - lik), 1e-300)
    p_obs = 1.0 / np.mean(1.0 / lik, axis=0)
    odd = np.flatnonzero(p_obs < SURPRISE)
    if odd.size:
        listed = ", ".join(f"{names[i]} ({'dissolves' if g[i] else 'does not'}, "
                           f"P {p_obs[i]:.2f})" for i in odd[np.argsort(p_obs[odd])][:4])
        notes.append(f"{odd.size} result{'s are' if odd.size > 1 else ' is'} unlikely given "
                     f"the other results: {listed}. A wrong result pulls the sphere "
                     "and its intervals (dD, dP, dH, R0) with it: re-check "
                     f"{'them' if odd.size > 1 else 'it'} first.")
    post.warnings = notes
    post.elapsed = time.perf_counter() - t0
    return post
