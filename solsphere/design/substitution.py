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

Filters for safety (flash point, boiling point, carcinogens, exclusions) are applied by
the caller to the candidate pool. A close substitute on paper is a prediction: confirm
at the bench.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from solsphere.limits import check as check_limit
from solsphere import hansen as hsp
from solsphere.design.pairs import make_blend, pair_screen
from solsphere.library.table import Solvent, hazard_flags
from solsphere.results import Result
from solsphere.design.ranking import CAUTION
from solsphere.formatting import format_table, plain


@dataclass
class Substitute:
    """A single solvent as a replacement."""

    solvent: Solvent
    Ra: float                       # Hansen distance to the solvent replaced [MPa½]
    red: float | None = None        # RED to the material's sphere, when one is given
    same_side: bool | None = None   # same side of the sphere boundary as the old solvent
    flags: list[str] = field(default_factory=list)

    def to_dict(self) -> dict:
        s = self.solvent
        return {"name": s.name, "cas": s.cas, "dD": s.dD, "dP": s.dP, "dH": s.dH,
                "Ra": self.Ra, "red": self.red, "same_side": self.same_side,
                "flash_point": s.flash_point, "boiling_point": s.boiling_point,
                "twa_ppm": s.twa_ppm, "carcinogen": s.carcinogen, "flags": list(self.flags)}


@dataclass
class Substitution(Result):
    """Ranked replacements for one solvent."""

    target: Solvent
    singles: list[Substitute]
    pairs: list                      # Blend objects; their ``ra`` is the distance to the target
    material: dict | None = None     # {"dD", "dP", "dH", "R0", "red_target"} when given
    n_candidates: int = 0
    filters: dict = field(default_factory=dict)

    def records(self) -> list[dict]:
        """The single solvents, then the pairs, each row marked with its ``kind``."""
        d = self.to_dict()
        return ([dict(s, kind="single") for s in d["singles"]]
                + [dict(p, kind="pair") for p in d["pairs"]])

    def to_dict(self) -> dict:
        t = self.target
        return {"target": {"name": t.name, "cas": t.cas, "dD": t.dD, "dP": t.dP, "dH": t.dH},
                "material": self.material, "n_candidates": self.n_candidates,
                "singles": [s.to_dict() for s in self.singles],
                "pairs": [p.to_dict() for p in self.pairs], "caution": CAUTION,
                "filters": plain(self.filters)}

    def __str__(self) -> str:
        t = self.target
        head = f"Replacements for {t.name} (dD {t.dD:.1f}, dP {t.dP:.1f}, dH {t.dH:.1f} MPa½)"
        if self.material:
            m = self.material
            head += (f" for the material at {m['dD']:.1f}, {m['dP']:.1f}, {m['dH']:.1f}, "
                     f"R0 {m['R0']:.1f} (old solvent's RED {m['red_target']:.2f})")
        rows = [("single solvent", "Ra to old", "RED", "flash °C", "flags")]
        for s in self.singles:
            rows.append((s.solvent.name[:32], f"{s.Ra:.1f}",
                         "—" if s.red is None else f"{s.red:.2f}",
                         "—" if s.solvent.flash_point is None else f"{s.solvent.flash_point:.0f}",
                         "; ".join(s.flags)))
        prow = [("pair (volume %)", "Ra to old", "flags")]
        for b in self.pairs:
            prow.append((b.label()[:60], f"{b.ra:.1f}", "; ".join(b.flags)))
        return "\n".join([head, format_table(rows), "", format_table(prow), CAUTION])


def find_substitutes(target: Solvent, candidates, top: int = 10, n_pairs: int = 5,
                     material=None, include_self: bool = False) -> Substitution:
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

    Returns
    -------
    Substitution
    """
    check_limit("top", n_pairs, "the list of pairs")
    pool = [s for s in candidates
            if include_self or not (s.name == target.name or (s.cas and s.cas == target.cas))]
    tp = np.asarray(target.point, dtype=float)
    singles: list[Substitute] = []
    pairs: list = []
    mat = None
    if pool:
        pts = np.array([s.point for s in pool], dtype=float)
        dist = hsp.ra(pts, tp)
        if material is None:
            order = np.lexsort((np.arange(len(pool)), dist))
            reds = side = None
        else:
            centre, R0 = material
            red_t = float(hsp.red(tp, centre, R0)[0])
            reds = hsp.red(pts, centre, R0)
            side = (reds <= 1.0) == (red_t <= 1.0)
            mat = {"dD": float(centre[0]), "dP": float(centre[1]), "dH": float(centre[2]),
                   "R0": float(R0), "red_target": red_t}
            order = np.lexsort((np.abs(reds - red_t), dist, ~side))
        for k in order[:top]:
            singles.append(Substitute(pool[k], float(dist[k]),
                                      None if reds is None else float(reds[k]),
                                      None if side is None else bool(side[k]),
                                      hazard_flags(pool[k])))
        if n_pairs and len(pool) > 1:
            pairs = _pairs(pool, pts, tp, n_pairs, material, mat)
    return Substitution(target, singles, pairs, mat, len(pool))


def _pairs(pool, pts, tp, n_pairs, material, mat):
    """Best blends of each pair, nearest the target (1 MPa½ as unit radius: red = Ra)."""
    out = pair_screen(pts, tp, 1.0)
    keep = ~out["single"]
    ra_t = out["red"]
    if material is not None:
        centre, R0 = material
        x = pts[out["i"]] * out["phi"][:, None] + pts[out["j"]] * (1 - out["phi"][:, None])
        keep &= (hsp.red(x, centre, R0) <= 1.0) == (mat["red_target"] <= 1.0)
    idx = np.flatnonzero(keep)
    idx = idx[np.argsort(ra_t[idx], kind="stable")[:n_pairs]]
    blends = []
    for k in idx:
        a, b = pool[out["i"][k]], pool[out["j"][k]]
        ra_a = float(hsp.ra(a.point, tp)[0])
        ra_b = float(hsp.ra(b.point, tp)[0])
        blends.append(make_blend(a, b, float(out["phi"][k]), float(ra_t[k]),
                                  float("nan"), float("nan"), ra_a, ra_b, False, 1.0))
    return blends
