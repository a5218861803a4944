"""A first bench plan for a material known only by its structure.

Before any result there is no sphere to sample from, only what the structure suggests:
the centre is near the estimated δD, δP, δH (a normal distribution per parameter with the
standard deviation ``u95 / 1.96`` of the estimate), and R0 is anything from
:data:`R0_RANGE` (log-uniform; a broad prior of ours: most spheres reported for polymers
and actives have radii in that range, common practice, no source). Spheres drawn from
this prior play the part of the plausible spheres of :mod:`solsphere.uncertainty.nexttrials`,
and the same greedy choice of the most informative results
(:func:`~solsphere.uncertainty.nexttrials.select_informative`) picks the first panel:
solvents that the likely spheres disagree about, spread so that each tells something
the others do not.

``tests/perf/bench_plan.py`` measures, in invented campaigns like those of
``bench_next.py``, how much better the sphere is known after such a panel than after a
random one or a fixed standard panel of the same size.

Safety filters and the pool are the caller's (as for ``suggest_next``); each pick carries
its flash point and hazard flags. The estimate and the plan are guides, not predictions
of what will dissolve.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from solsphere.hansen import ra
from solsphere.library.hazards import hazard_facts
from solsphere.results import Result
from solsphere.uncertainty.nexttrials import Suggestion, select_informative, suggestion_lines

__all__ = ["StructurePlan", "plan_from_structure", "prior_spheres", "R0_RANGE"]

#: Prior range of R0 [MPa½] (log-uniform).
R0_RANGE = (3.0, 12.0)
CAUTION = ("A plan from an estimated centre: it chooses informative first trials, it does "
           "not predict what will dissolve. Read each safety data sheet and work with "
           "ventilation and protection before testing.")


@dataclass
class StructurePlan(Result):
    """Result of :func:`plan_from_structure`: the first trials in order."""

    rows_key = "suggestions"

    suggestions: list
    estimate: object
    n_candidates: int
    n_samples: int
    seed: int | None
    r0_range: tuple
    warnings: list = field(default_factory=list)

    @property
    def names(self) -> list[str]:
        return [s.name for s in self.suggestions]

    def to_dict(self) -> dict:
        """JSON-safe (the ``solsphere next --smiles --json`` object)."""
        return {"suggestions": [s.to_dict() for s in self.suggestions],
                "estimate": self.estimate.to_dict(), "n_candidates": self.n_candidates,
                "n_samples": self.n_samples, "seed": self.seed,
                "prior": {"centre": "estimate ± u95 (normal, sd u95/1.96)",
                          "R0_range": list(self.r0_range), "R0": "log-uniform"},
                "warnings": list(self.warnings), "caution": CAUTION}

    def __str__(self) -> str:
        e = self.estimate
        out = [f"First trials from the structure ({len(self.suggestions)} of "
               f"{self.n_candidates} candidates; {self.n_samples} spheres from the prior: "
               f"centre {e.dD:.1f} ± {e.dD_u95:.1f}, {e.dP:.1f} ± {e.dP_u95:.1f}, "
               f"{e.dH:.1f} ± {e.dH_u95:.1f} MPa½, R0 {self.r0_range[0]:g}–"
               f"{self.r0_range[1]:g} MPa½)"]
        out += suggestion_lines(self.suggestions, with_red=False)
        out += [f"note: {n}" for n in e.notes]
        out += [f"warning: {w}" for w in self.warnings]
        out.append(CAUTION)
        return "\n".join(out)


def prior_spheres(centre, u95, n: int, seed: int | None = 0, r0_range=R0_RANGE):
    """Centres (n, 3) and radii (n,) drawn from the structure prior.

    Examples
    --------
    >>> c, r = prior_spheres((17.0, 8.0, 9.0), (1.0, 4.0, 4.0), 500)
    >>> c.shape, bool((c >= 0).all()), bool((r >= 3).all() and (r <= 12).all())
    ((500, 3), True, True)
    """
    rng = np.random.default_rng(seed)
    sd = np.maximum(np.asarray(u95, dtype=float), 1e-6) / 1.96
    centres = np.maximum(rng.normal(np.asarray(centre, dtype=float), sd, size=(n, 3)), 0.0)
    lo, hi = np.log(r0_range[0]), np.log(r0_range[1])
    radii = np.exp(rng.uniform(lo, hi, size=n))
    return centres, radii


def _reason(p: float, k: int, gain: float | None) -> str:
    if gain is None:
        return "the likely spheres agree on the rest; one of the nearest to the boundary"
    if 0.35 <= p <= 0.65:
        what = f"about half of the likely spheres contain it (p = {p:.2f})"
    elif p < 0.35:
        what = f"most likely spheres leave it out (p = {p:.2f}); a 'dissolves' would say much"
    else:
        what = f"most likely spheres contain it (p = {p:.2f}); a 'does not' would say much"
    return what + ("" if k == 0 else "; it tests a region the picks above do not")


def plan_from_structure(est, candidates, n: int = 16, *, n_samples: int = 2000,
                        seed: int | None = 0, r0_range=R0_RANGE) -> StructurePlan:
    """The first ``n`` solvents to test for a material with an estimated centre.

    Parameters
    ----------
    est : Estimate
        From :func:`solsphere.estimate.estimate` (not refused).
    candidates : sequence of Solvent
        The pool, already filtered for safety by the caller.
    n : int, default=16
        Size of the first panel (12–20 is typical).
    n_samples : int, default=2000
        Spheres drawn from the prior.
    seed : int or None, default=0
    r0_range : (float, float), default=R0_RANGE

    Returns
    -------
    StructurePlan

    Raises
    ------
    ValueError
        A refused estimate (no centre).
    """
    if est.refused:
        raise ValueError(f"no estimate to plan from: {est.refused}")
    pool = list(candidates)
    warnings = []
    if not est.in_domain:
        warnings.append("the estimate is outside the model's well-covered domain (see its "
                        "notes): its intervals are widened and the plan leans on them")
    if not pool:
        return StructurePlan([], est, 0, n_samples, seed, tuple(r0_range),
                             warnings + ["No candidates are left after the filters."])
    P = np.array([s.point for s in pool], dtype=float).reshape(-1, 3)
    centres, radii = prior_spheres(est.point, est.u95, n_samples, seed, r0_range)
    inside = ra(P[None, :, :], centres[:, None, :]) <= radii[:, None]
    p = inside.mean(axis=0)
    R0 = float(np.exp(np.mean(np.log(r0_range))))
    red = ra(P, np.asarray(est.point, dtype=float)) / R0
    picks, gains, _ = select_informative(inside, n, P, red, R0)
    out = []
    for k, (j, gain) in enumerate(zip(picks, gains)):
        s = pool[j]
        out.append(Suggestion(
            name=s.name, cas=s.cas, dD=float(s.dD), dP=float(s.dP), dH=float(s.dH),
            p_good=float(p[j]), red=float(red[j]), gain=0.0 if gain is None else gain,
            reason=_reason(float(p[j]), k, gain), flash_point=s.flash_point,
            boiling_point=s.boiling_point, twa_ppm=s.twa_ppm, flags=hazard_facts(s)))
    if len(out) < n:
        warnings.append(f"only {len(out)} candidates were left to suggest")
    return StructurePlan(out, est, len(pool), n_samples, seed, tuple(r0_range), warnings)
