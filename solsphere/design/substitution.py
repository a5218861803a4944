"""Substitution: what can take the place of a solvent that is restricted or out of stock.

Two questions, two rankings:

- *Closest in Hansen space* (no material given): single solvents sorted by their Hansen
  distance Ra to the solvent being replaced, and pairs whose best blend (the exact
  closest point of each segment, :func:`solsphere.blend.pair_screen` with the old
  solvent as the "centre") lands nearest it.
- *Closest for this material* (a fitted sphere given): what matters is behaving the same
  way towards the material: the same side of the sphere boundary and a similar RED.
  Singles on the same side come first, each side sorted by Ra to the old solvent (a
  near neighbour also has a similar RED; the RED is shown beside each); pairs are
  sorted by Ra to the old solvent among blends on the same side.

Never worse by default: a candidate that is worse than the old solvent on carcinogen
class, reprotoxic listing, skin corrosion/acute toxicity or GHS flammability category,
that lacks the data to tell
(listed as left out for lack of data), or that is itself listed
(:func:`solsphere.library.hazards.never_worse`) is left out unless ``allow_worse``.
Each candidate shows better / same / worse per hazard.

Order (:mod:`solsphere.design.ordering`): feasibility (same side of the material's
boundary; for pairs, one liquid phase: pairs that may not mix come after those that mix)
→ robustness (closeness to the old solvent in steps of :data:`RA_STEP` MPa½, or, for a
material, the margin 1 − RED in steps of 0.1) → the user's priority (hazard by default)
→ the Hansen distance to the old solvent as the last tie-break. Pairs are diverse: no
solvent in more than two of them.

Filters for safety (flash point, boiling point, exclusions) are applied by the caller to
the candidate pool. A close substitute on paper is a prediction: confirm at the bench.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from solsphere import hansen as hsp
from solsphere.design.ordering import MAX_USES, checked_pick, pair_arrays, robustness_bin
from solsphere.design.pairs import make_blend, pair_screen
from solsphere.design.ranking import CAUTION
from solsphere.formatting import format_table, plain
from solsphere.library.hazards import (LISTING_CAUTION, compare, ghs_category,
                                       hazard_facts, hazard_score, listing_of, never_worse)
from solsphere.library.table import Solvent
from solsphere.limits import check as check_limit
from solsphere.results import Result

#: Closeness to the old solvent is compared in steps of this Hansen distance [MPa½]
#: (about the disagreement between compilations, SPREAD_FLAG_MPA; our choice, no source).
RA_STEP = 1.0

_WORD = {"better": "better", "same": "same", "worse": "WORSE", "unknown": "no data"}


@dataclass
class Substitute:
    """A single solvent as a replacement."""

    solvent: Solvent
    Ra: float                       # Hansen distance to the solvent replaced [MPa½]
    red: float | None = None        # RED to the material's sphere, when one is given
    same_side: bool | None = None   # same side of the sphere boundary as the old solvent
    flags: list[str] = field(default_factory=list)
    versus: dict = field(default_factory=dict)   # hazard -> better/same/worse/unknown
    hazard: float | None = None     # hazard score (lower is safer)

    def to_dict(self) -> dict:
        s = self.solvent
        lst = listing_of(s)
        return {"name": s.name, "cas": s.cas, "dD": s.dD, "dP": s.dP, "dH": s.dH,
                "Ra": self.Ra, "red": self.red, "same_side": self.same_side,
                "flash_point": s.flash_point,
                "flash_point_source": s.sources.get("flash_point"),
                "ghs_category": ghs_category(s), "boiling_point": s.boiling_point,
                "twa_ppm": s.twa_ppm, "twa_source": s.sources.get("twa_ppm"),
                "carcinogen": s.carcinogen, "listing": None if lst is None else lst.to_dict(),
                "versus_old": dict(self.versus), "hazard_score": self.hazard,
                "flags": list(self.flags)}


@dataclass
class Substitution(Result):
    """Ranked replacements for one solvent."""

    target: Solvent
    singles: list[Substitute]
    pairs: list                      # Blend objects; their ``ra`` is the distance to the target
    material: dict | None = None     # {"dD", "dP", "dH", "R0", "red_target"} when given
    n_candidates: int = 0
    refused: dict = field(default_factory=dict)       # reason -> names left out
    allow_worse: bool = False
    priority: str = "hazard"
    pair_criteria: list = field(default_factory=list)
    filters: dict = field(default_factory=dict)

    def records(self) -> list[dict]:
        """The single solvents, then the pairs, each row marked with its ``kind``."""
        d = self.to_dict()
        return ([dict(s, kind="single") for s in d["singles"]]
                + [dict(p, kind="pair") for p in d["pairs"]])

    def to_dict(self) -> dict:
        t = self.target
        lst = listing_of(t)
        return {"target": {"name": t.name, "cas": t.cas, "dD": t.dD, "dP": t.dP, "dH": t.dH,
                           "ghs_category": ghs_category(t), "carcinogen": t.carcinogen,
                           "listing": None if lst is None else lst.to_dict()},
                "material": self.material, "n_candidates": self.n_candidates,
                "allow_worse": self.allow_worse, "priority": self.priority,
                "left_out": {k: list(v) for k, v in self.refused.items()},
                "singles": [s.to_dict() for s in self.singles],
                "pairs": [dict(p.to_dict(), criteria=c)
                          for p, c in zip(self.pairs, self.pair_criteria)],
                "caution": CAUTION, "listing_caution": LISTING_CAUTION,
                "filters": plain(self.filters)}

    def __str__(self) -> str:
        t = self.target
        lst = listing_of(t)
        head = f"Replacements for {t.name} (dD {t.dD:.1f}, dP {t.dP:.1f}, dH {t.dH:.1f} MPa½"
        head += f"; GHS flammability {_cat(ghs_category(t))}"
        head += f"; {lst.text()})" if lst is not None else ")"
        if self.material:
            m = self.material
            head += (f" for the material at {m['dD']:.1f}, {m['dP']:.1f}, {m['dH']:.1f}, "
                     f"R0 {m['R0']:.1f} (old solvent's RED {m['red_target']:.2f})")
        rule = ("Never worse than the old solvent on carcinogen class, reprotoxic/regulatory "
                "listing, skin corrosion/acute toxicity and GHS flammability category; listed "
                "solvents left out"
                if not self.allow_worse else
                "--allow-worse: candidates may be worse than the old solvent (see the columns)")
        order = (f"Order: {'same side as the old solvent → margin 1−RED (steps of 0.1)' if self.material else f'closeness to the old solvent (Ra in steps of {RA_STEP:g} MPa½)'}"
                 f" → {self.priority} → Ra.")
        rows = [("#", "single solvent", "Ra to old") + (("RED",) if self.material else ())
                + ("flash °C", "GHS", "carcinogen", "reprotoxic", "corr./toxic", "flammability",
                   "listing")]
        for k, s in enumerate(self.singles, 1):
            v = s.versus
            lst_s = listing_of(s.solvent)
            rows.append((str(k), s.solvent.name[:40], f"{s.Ra:.1f}")
                        + ((("—" if s.red is None else f"{s.red:.2f}"),) if self.material else ())
                        + (_fp(s.solvent), _cat(ghs_category(s.solvent)),
                           _WORD[v.get("carcinogen", "unknown")],
                           _WORD[v.get("reprotoxic", "unknown")],
                           _WORD[v.get("corrosive_toxic", "unknown")],
                           _WORD[v.get("flammability", "unknown")],
                           "—" if lst_s is None else lst_s.text()))
        prow = [("#", "pair (volume %)", "feasible", "Ra to old", "hazard", "flash °C")]
        for k, (b, c) in enumerate(zip(self.pairs, self.pair_criteria), 1):
            prow.append((str(k), b.label()[:70], "yes" if c["one_phase"] else "may not mix",
                         f"{b.ra:.1f}", f"{c['hazard']:.0f}",
                         " / ".join("—" if x is None else f"{x:.0f}" for x in b.flash_points)))
        out = [head, rule + ".", order, format_table(rows)]
        if self.pairs:
            out += ["", f"Pairs (no solvent in more than {MAX_USES}):", format_table(prow)]
        for reason, names in self.refused.items():
            if names:
                shown = ", ".join(names[:12]) + (f" … ({len(names)} in all)" if len(names) > 12 else "")
                out.append(f"Left out ({reason}): {shown}")
        return "\n".join(out + [LISTING_CAUTION, CAUTION])


def _cat(c) -> str:
    return "?" if c is None else ("none" if c == 0 else f"cat. {c}")


def _fp(s: Solvent) -> str:
    if s.flash_point is None:
        return "none" if str(s.sources.get("flash_point", "")).startswith("none") else "?"
    est = str(s.sources.get("flash_point", "")).startswith("estimated")
    return f"{s.flash_point:.0f}" + (" (est.)" if est else "")


def find_substitutes(target: Solvent, candidates, top: int = 10, n_pairs: int = 5,
                     material=None, include_self: bool = False, allow_worse: bool = False,
                     priority: str = "hazard", diverse_pairs: bool = True) -> Substitution:
    """Rank replacements for ``target`` among ``candidates``.

    Parameters
    ----------
    target : Solvent
        The solvent to replace.
    candidates : sequence of Solvent
        The pool, already filtered for safety limits.
    top : int, default=10
        Single solvents to list.
    n_pairs : int, default=5
        Pairs to list (0 for none).
    material : tuple (centre, R0) or None, default=None
        The material's sphere; switches to "closest for this material".
    include_self : bool, default=False
        Keep the target itself in the pool (it then ranks first, at Ra = 0).
    allow_worse : bool, default=False
        Keep candidates that are worse than the target on a hazard, lack the data to
        tell, or are listed themselves (:func:`solsphere.library.hazards.never_worse`).
    priority : {"hazard", "cost", "evaporation"}, default="hazard"
        Step 3 of the order (hazard score, price, vapour pressure).
    diverse_pairs : bool, default=True
        No solvent in more than two of the listed pairs.

    Returns
    -------
    Substitution
    """
    check_limit("top", n_pairs, "the list of pairs")
    pool, refused = [], {}
    for s in candidates:
        if not include_self and (s.name == target.name or (s.cas and s.cas == target.cas)):
            continue
        if not allow_worse:
            ok, why = never_worse(s, target)
            if not ok:
                key = ("lack of data" if why.startswith("no data") else
                       "listed themselves" if why.startswith("listed") else
                       "worse than the old solvent")
                refused.setdefault(key, []).append(s.name)
                continue
        pool.append(s)
    tp = np.asarray(target.point, dtype=float)
    singles: list[Substitute] = []
    pairs, pair_crit = [], []
    mat = None
    if pool:
        pts = np.array([s.point for s in pool], dtype=float)
        dist = hsp.ra(pts, tp)
        pv = np.array([_priority_value(s, priority) for s in pool])
        if material is None:
            reds = side = None
            band = np.floor(dist / RA_STEP + 1e-9)
            order = np.lexsort((dist, pv, band))
        else:
            centre, R0 = material
            red_t = float(hsp.red(tp, centre, R0)[0])
            reds = hsp.red(pts, centre, R0)
            side = (reds <= 1.0) == (red_t <= 1.0)
            mat = {"dD": float(centre[0]), "dP": float(centre[1]), "dH": float(centre[2]),
                   "R0": float(R0), "red_target": red_t}
            margin = np.array([robustness_bin(1.0 - r) for r in reds])
            order = np.lexsort((dist, pv, -margin, ~side))
        for k in order[:top]:
            s = pool[k]
            singles.append(Substitute(s, float(dist[k]),
                                      None if reds is None else float(reds[k]),
                                      None if side is None else bool(side[k]),
                                      hazard_facts(s), compare(s, target), hazard_score(s)))
        if n_pairs and len(pool) > 1:
            pairs, pair_crit = _pairs(pool, pts, tp, n_pairs, material, mat, priority,
                                      diverse_pairs)
    return Substitution(target, singles, pairs, mat, len(pool), refused, allow_worse,
                        priority, pair_crit)


def _priority_value(s: Solvent, priority: str) -> float:
    if priority == "cost":
        return math.inf if s.price is None else s.price
    if priority == "evaporation":
        return math.inf if s.vapour_pressure is None else -s.vapour_pressure
    return hazard_score(s)


def _pairs(pool, pts, tp, n_pairs, material, mat, priority, diverse_pairs):
    """Best blends of each pair, nearest the target (1 MPa½ as unit radius: red = Ra)."""
    out = pair_screen(pts, tp, 1.0)
    arrays = pair_arrays(pool, out)
    keep = ~out["single"]
    ra_t = out["red"]
    if material is not None:
        centre, R0 = material
        x = pts[out["i"]] * out["phi"][:, None] + pts[out["j"]] * (1 - out["phi"][:, None])
        keep &= (hsp.red(x, centre, R0) <= 1.0) == (mat["red_target"] <= 1.0)
    idx = np.flatnonzero(keep)
    pv = (np.nan_to_num(arrays["price"][idx], nan=np.inf) if priority == "cost" else
          -np.nan_to_num(arrays["evaporation"][idx], nan=-np.inf) if priority == "evaporation"
          else arrays["hazard"][idx])
    band = np.floor(ra_t[idx] / RA_STEP + 1e-9)
    pick = checked_pick(pool, out, arrays["one_phase"],
                        lambda: idx[np.lexsort((ra_t[idx], pv, band,
                                                ~arrays["one_phase"][idx]))],
                        n_pairs, MAX_USES if diverse_pairs else None)
    blends, crit = [], []
    for k in pick:
        a, b = pool[out["i"][k]], pool[out["j"][k]]
        ra_a = float(hsp.ra(a.point, tp)[0])
        ra_b = float(hsp.ra(b.point, tp)[0])
        blends.append(make_blend(a, b, float(out["phi"][k]), float(ra_t[k]),
                                 float("nan"), float("nan"), ra_a, ra_b, False, 1.0))
        crit.append({"one_phase": bool(arrays["one_phase"][k]), "Ra_to_old": float(ra_t[k]),
                     "hazard": float(arrays["hazard"][k]), "priority": priority})
    return blends, crit
