"""Untried solvents ranked by how close they sit to the fitted sphere.

Every candidate (the library's liquids, or a user's shelf) gets its Hansen distance Ra
and RED to the sphere; the table is sorted by RED with the safety facts a formulator
checks before trying one (boiling point, flash point, exposure limit, hazard flags).
A RED below 1 is a prediction, not a guarantee: confirm at the bench.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from solsphere import hansen as hsp
from solsphere.formatting import format_table, num
from solsphere.library.hazards import hazard_facts
from solsphere.library.table import Solvent, is_tested, tested_keys
from solsphere.results import Result

CAUTION = ("Predictions are guides: confirm at the bench. Solvents are flammable and toxic: "
           "read each safety data sheet, work with ventilation and protection; local "
           "regulations and licensed practice take precedence.")


@dataclass
class RankedSolvent:
    """One candidate with its distance to the sphere and its safety facts."""

    solvent: Solvent
    Ra: float
    red: float
    flags: list[str] = field(default_factory=list)
    tested: bool = False
    chi: float | None = None
    p_good: float | None = None

    def to_dict(self) -> dict:
        s = self.solvent
        return {"name": s.name, "cas": s.cas, "dD": s.dD, "dP": s.dP, "dH": s.dH,
                "Ra": self.Ra, "red": self.red, "inside": self.red <= 1.0,
                "boiling_point": s.boiling_point, "flash_point": s.flash_point,
                "twa_ppm": s.twa_ppm, "twa_mg_m3": s.twa_mg_m3, "carcinogen": s.carcinogen,
                "spread": s.spread, "chi": self.chi, "p_good": self.p_good,
                "flags": list(self.flags),
                "tested": self.tested}


@dataclass
class Ranking(Result):
    """Candidates sorted by RED (smallest first)."""

    solvents: list[RankedSolvent]
    centre: tuple[float, float, float]
    R0: float
    n_candidates: int
    filters: dict = field(default_factory=dict)

    rows_key = "solvents"

    def to_dict(self) -> dict:
        return {"centre": list(self.centre), "R0": self.R0, "n_candidates": self.n_candidates,
                "filters": dict(self.filters),
                "solvents": [r.to_dict() for r in self.solvents], "caution": CAUTION}

    def __str__(self) -> str:
        head = (f"Untried solvents nearest the sphere (centre {self.centre[0]:.1f}, "
                f"{self.centre[1]:.1f}, {self.centre[2]:.1f}; R0 {self.R0:.1f} MPa½), "
                f"{len(self.solvents)} of {self.n_candidates} candidates")
        with_p = any(r.p_good is not None for r in self.solvents)
        rows = [("solvent", "dD", "dP", "dH", "RED") + (("p_good",) if with_p else ())
                + ("χ", "bp °C", "flash °C", "TWA ppm", "flags")]
        for r in self.solvents:
            s = r.solvent
            rows.append((s.name[:32], f"{s.dD:.1f}", f"{s.dP:.1f}", f"{s.dH:.1f}",
                         f"{r.red:.2f}") + ((num(r.p_good, "{:.2f}"),) if with_p else ())
                        + (num(r.chi, "{:.2f}"), num(s.boiling_point, "{:.0f}"),
                           num(s.flash_point, "{:.0f}"), num(s.twa_ppm, "{:.3g}"),
                           "; ".join(r.flags)))
        out = [head, format_table(rows)]
        if not self.solvents:
            out.append("No untried candidate to list: every candidate was tested (keep them "
                       "with --include-tested) or none is left after the filters."
                       if self.n_candidates == 0 else "No candidate to list (top is 0).")
        return "\n".join(out + [CAUTION])


def rank_solvents(candidates, centre, R0: float, top: int | None = None,
                  tested=(), include_tested: bool = False,
                  filters: dict | None = None, temperature_C: float = 25.0,
                  bootstrap=None) -> Ranking:
    """Rank candidate solvents by RED to a sphere.

    Parameters
    ----------
    candidates : sequence of Solvent
        The pool (library liquids or a shelf), already filtered for safety limits.
    centre : array-like of shape (3,)
        Sphere centre (dD, dP, dH) [MPa½].
    R0 : float
        Sphere radius [MPa½].
    top : int or None, default=None
        Keep only the ``top`` nearest; None keeps all.
    tested : iterable of str, default=()
        Names, abbreviations or CAS numbers already tested (matched by
        :func:`solsphere.library.table.tested_keys`: ``"MEK"`` marks 2-butanone); left out
        unless ``include_tested``.
    include_tested : bool, default=False
        Keep tested solvents in the table (marked ``tested``).
    filters : dict or None, default=None
        The filters the caller applied, recorded in the result.
    bootstrap : Bootstrap or None, default=None
        Resampled spheres (:func:`solsphere.confidence.bootstrap`): each solvent then gets
        ``p_good``, the share of resampled spheres that contain it.
    temperature_C : float, default=25.0
        Temperature of the Flory–Huggins χ estimate (:func:`solsphere.hsp.flory_huggins_chi`,
        from Ra and the solvent's molar volume).

    Returns
    -------
    Ranking
    """
    if top is not None and (isinstance(top, bool) or int(top) != top or top < 0):
        raise ValueError(f"top must be a non-negative whole number or None; found {top!r}")
    keys = tested if isinstance(tested, frozenset) else tested_keys(tested)
    pool = []
    for s in candidates:
        was_tested = is_tested(s, keys)
        if was_tested and not include_tested:
            continue
        pool.append((s, was_tested))
    centre = tuple(float(c) for c in centre)
    if not pool:
        return Ranking([], centre, float(R0), 0, dict(filters or {}))
    pts = np.array([s.point for s, _ in pool], dtype=float)
    dist = hsp.ra(pts, centre)
    order = np.argsort(dist, kind="stable")
    if top is not None:
        order = order[:top]
    p_good = bootstrap.p_good(pts[order]) if bootstrap is not None else None
    rows = []
    for n, i in enumerate(order):
        s = pool[i][0]
        chi = (float(np.ravel(hsp.flory_huggins_chi(dist[i], s.molar_volume, temperature_C))[0])
               if s.molar_volume else None)
        rows.append(RankedSolvent(s, float(dist[i]), float(dist[i] / R0), hazard_facts(s),
                                  pool[i][1], chi,
                                  None if p_good is None else float(p_good[n])))
    return Ranking(rows, centre, float(R0), len(pool), dict(filters or {}))
