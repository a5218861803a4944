"""Recommended two-solvent blends: every pair screened, ordered by the documented sequence
of :mod:`solsphere.design.ordering` (feasibility → robustness → the user's priority →
RED), and a diverse top ten.

The screen is vectorised over all pairs (:func:`solsphere.design.pairs.pair_screen`); the
ordering keys are arrays too (:func:`solsphere.design.ordering.pair_arrays`), so only the
listed blends are built as :class:`~solsphere.design.pairs.Blend` objects.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Sequence

import numpy as np

from solsphere import hansen as hsp
from solsphere.design.ordering import (MAX_USES, ORDER_TEXT, checked_pick, order_pairs,
                                       pair_arrays, robustness_bin)
from solsphere.design.pairs import BlendScreen, make_blend, pair_screen
from solsphere.design.ranking import CAUTION
from solsphere.formatting import format_table
from solsphere.library.hazards import ghs_category, is_listed
from solsphere.library.table import Solvent

__all__ = ["RankedBlends", "rank_pair_blends"]


@dataclass
class RankedBlends:
    """Blends in the documented order, each with its criteria (``criteria[k]`` belongs to
    ``screen.blends[k]``)."""

    screen: BlendScreen
    criteria: list[dict] = field(default_factory=list)
    priority: str = "hazard"
    diverse: bool = True

    def to_dict(self) -> dict[str, Any]:
        d = self.screen.to_dict()
        for b, c in zip(d["blends"], self.criteria):
            b["criteria"] = dict(c)
        d.update(priority=self.priority, diverse=self.diverse,
                 order=ORDER_TEXT.format(priority=self.priority))
        return d

    def to_frame(self):
        import pandas as pd  # deferred: pandas is optional for the library
        return pd.DataFrame([dict(blend=b.label(), **c)
                             for b, c in zip(self.screen.blends, self.criteria)])

    def table(self) -> str:
        """The criteria as columns, one line per blend."""
        rows = [("#", "blend (volume %)", "feasible", "robustness", self.priority, "RED",
                 "flash pt °C", "notes")]
        for k, (b, c) in enumerate(zip(self.screen.blends, self.criteria), 1):
            feas = ("yes" if c["inside"] and c["one_phase"] else
                    "outside" if not c["inside"] else "may not mix")
            rob = (f"p_good {c['robustness']:.2f}" if c["robustness_kind"] == "p_good"
                   else f"window {100 * c['robustness']:.0f}%")
            pv = c.get("priority_value")
            pv = "—" if pv is None else (f"{pv:.0f}" if self.priority == "hazard" else f"{pv:.3g}")
            fp = " / ".join("—" if x is None else f"{x:.0f}" for x in b.flash_points)
            notes = "; ".join(c.get("notes", []))
            rows.append((str(k), b.label(), feas, rob, pv, f"{b.red:.2f}", fp, notes))
        return format_table(rows)

    def __str__(self) -> str:
        s = self.screen
        c = s.centre
        head = [f"Two-solvent blends for the sphere at dD {c[0]:.1f}, dP {c[1]:.1f}, "
                f"dH {c[2]:.1f} MPa½, R0 {s.R0:.1f} MPa½",
                f"{s.n_candidates} candidate solvents, {s.n_pairs_screened} pairs screened",
                ORDER_TEXT.format(priority=self.priority)
                + ("" if not self.diverse else
                   f" Diverse: no solvent in more than {MAX_USES} of the listed blends."),
                ("hazard = the worse component's score: 3 × carcinogen class + 3 × reprotoxic "
                 "class + 3 × corrosive/toxic class + GHS flammability (0 none … 4 category 1)." if self.priority == "hazard"
                 else ""), ""]
        f = s.filters
        lim = []
        if f.get("min_flash_point") is not None and "removed_low_flash_point" in f:
            lim.append(f"flash point at least {f['min_flash_point']:g} °C "
                       f"({len(f['removed_low_flash_point'])} removed below it, "
                       f"{len(f['removed_unknown_flash_point'])} with unknown flash point)")
        if f.get("max_boiling_point") is not None and "removed_high_boiling_point" in f:
            lim.append(f"boiling point at most {f['max_boiling_point']:g} °C "
                       f"({len(f['removed_high_boiling_point'])} removed above it, "
                       f"{len(f['removed_unknown_boiling_point'])} with unknown boiling point)")
        if lim:
            head.insert(2, "Filters: " + "; ".join(lim))
        body = self.table() if s.blends else "No blends to show."
        return "\n".join([h for h in head if h is not None] + [body, "", CAUTION])


def _notes(a: Solvent, b: Solvent) -> list[str]:
    out = []
    for s in (a, b):
        if is_listed(s):
            out.append(f"{s.name} is listed (reprotoxic/carcinogen/restricted)")
        if s.carcinogen:
            out.append(f"{s.name}: carcinogen {s.carcinogen}")
    return out


def rank_pair_blends(pool: Sequence[Solvent], centre, R0: float, top: int = 10,
                     priority: str = "hazard", p_good_of=None, diverse_top: bool = True,
                     only_blends: bool = True, filters: dict | None = None,
                     temperature_C: float = 25.0) -> RankedBlends:
    """Screen every pair of ``pool`` and list the ``top`` in the documented order.

    Parameters
    ----------
    pool : sequence of Solvent
        Candidates, already filtered (names must be unique).
    centre, R0 : the sphere [MPa½].
    top : int, default=10
    priority : {"hazard", "cost", "drying", "evaporation"}, default="hazard"
        Step 3 of the order ("drying" orders like "hazard" here; the caller re-orders the
        simulated top with :func:`solsphere.design.ordering.order_rows`).
    p_good_of : callable or None
        ``p_good_of(points)`` -> share of plausible spheres containing each point (e.g.
        ``Bootstrap.p_good``); when given, robustness is p_good of each pair's best blend.
    diverse_top : bool, default=True
        No solvent in more than two listed blends (False: the plain order).
    only_blends : bool, default=True
        Leave out pairs whose best mix is one solvent alone.

    Returns
    -------
    RankedBlends
    """
    pool = list(pool)
    n = len(pool)
    c = np.asarray(centre, dtype=float)
    pts = np.array([s.point for s in pool], dtype=float).reshape(n, 3)
    res = pair_screen(pts, c, R0)
    arrays = pair_arrays(pool, res, temperature_C)
    p_good = None
    if p_good_of is not None and len(res["i"]):
        x = pts[res["i"]] * res["phi"][:, None] + pts[res["j"]] * (1 - res["phi"][:, None])
        p_good = np.asarray(p_good_of(x), dtype=float)
    pick = checked_pick(pool, res, arrays["one_phase"],
                        lambda: order_pairs(res, arrays, priority, p_good=p_good,
                                            only_blends=only_blends),
                        top, MAX_USES if diverse_top else None)
    red_alone = hsp.ra(pts, c) / R0 if n else np.empty(0)
    blends, crit = [], []
    for k in pick:
        a, b = pool[res["i"][k]], pool[res["j"][k]]
        blend = make_blend(a, b, float(res["phi"][k]), float(res["red"][k]),
                           float(res["lo"][k]), float(res["hi"][k]),
                           float(red_alone[res["i"][k]]), float(red_alone[res["j"][k]]),
                           bool(res["single"][k]), R0)
        blends.append(blend)
        rob = float(p_good[k]) if p_good is not None else float(arrays["width"][k])
        pv = {"hazard": arrays["hazard"][k], "cost": arrays["price"][k],
              "evaporation": arrays["evaporation"][k], "drying": arrays["hazard"][k]}[priority]
        crit.append({"inside": bool(res["red"][k] <= 1.0),
                     "one_phase": bool(arrays["one_phase"][k]), "constraints_met": True,
                     "robustness": rob,
                     "robustness_kind": "p_good" if p_good is not None else "window",
                     "robustness_step": robustness_bin(rob),
                     "hazard": float(arrays["hazard"][k]),
                     "ghs_categories": [ghs_category(a), ghs_category(b)],
                     "priority": priority,
                     "priority_value": None if not np.isfinite(pv) else float(pv),
                     "red": float(res["red"][k]), "notes": _notes(a, b)})
    screen = BlendScreen(blends=blends, n_candidates=n, n_pairs_screened=len(res["i"]),
                         n_single_best=int(res["single"].sum()),
                         filters=dict(filters or {}, only_blends=only_blends),
                         centre=(float(c[0]), float(c[1]), float(c[2])), R0=float(R0))
    return RankedBlends(screen, crit, priority, diverse_top)
