"""The order of recommended blends and replacements, and a diverse top ten.

With hundreds of candidates some blend always lands at RED 0.00, and RED differences of a
few hundredths are far inside a fitted sphere's own uncertainty: ranking by RED alone says
nothing. Blends and replacements are therefore ordered by this documented sequence (each
step breaks the ties of the one before):

1. **Feasibility**: inside the sphere (RED ≤ 1), one liquid phase (no "may not mix"
   caution: :func:`solsphere.design.pairs.miscibility_warning`, decided for every pair
   that would be listed by :func:`checked_pick`), every constraint met
   (the pool's filters are applied before; a blend whose estimated flash point is below a
   requested minimum fails here). Feasible first; pairs that may not mix come after all
   pairs that mix.
2. **Robustness**: ``p_good`` (the share of plausible spheres containing it) when
   intervals were computed; otherwise the width of the window of fractions that stays
   inside (pairs), or the margin 1 − RED at the best fraction (triples, single solvents).
   Robustness is compared in steps of :data:`ROBUSTNESS_STEP` (our choice, no source:
   finer differences are inside the fit's uncertainty), so that step 3 can act.
3. **The user's priority** (:data:`PRIORITIES`): ``hazard`` (default; the worst component's
   :func:`solsphere.library.hazards.hazard_score`), ``cost`` (price per litre),
   ``drying`` (the evaporated share at which the drying liquid leaves the sphere, later
   first) or ``evaporation`` (faster first: the volume-fraction weighted vapour pressure).
4. **RED**, smallest first, as the last tie-break.

:func:`diverse` then keeps a top ten in which no solvent appears in more than two blends
(unless the user asks for all).
"""

from __future__ import annotations

import math
from typing import Callable, Sequence

import numpy as np

from solsphere import hansen as hsp
from solsphere.design.pairs import miscibility_warning
from solsphere.library.hazards import hazard_score
from solsphere.library.table import Solvent

__all__ = ["PRIORITIES", "ROBUSTNESS_STEP", "MAX_USES", "ORDER_TEXT", "robustness_bin",
           "pair_arrays", "order_pairs", "diverse", "checked_pick", "sort_key", "order_rows"]

#: The user's priorities (step 3), the first is the default.
PRIORITIES = ("hazard", "cost", "drying", "evaporation")
#: Robustness is compared in steps of this (window width or margin, 0-1). Our choice.
ROBUSTNESS_STEP = 0.1
#: In the diverse top ten, a solvent appears in at most this many blends.
MAX_USES = 2
#: One line for reports.
ORDER_TEXT = ("Order: feasible (inside, one phase, constraints met) → robustness "
              "(p_good, or window width / margin 1−RED, in steps of 0.1) → {priority} → RED.")

#: Most rounds of :func:`checked_pick` (each checks the listed pairs not checked yet).
MAX_CHECK_ROUNDS = 25

_WATER_CAS = "7732-18-5"
_R = 8.314462618


def robustness_bin(value: float | None) -> int:
    """Robustness step index (higher is more robust); None counts as the lowest.

    >>> robustness_bin(0.37), robustness_bin(0.4), robustness_bin(None)
    (3, 4, -1)
    """
    if value is None or not math.isfinite(value):
        return -1
    return int(math.floor(value / ROBUSTNESS_STEP + 1e-9))


def _prop(pool: Sequence[Solvent], name: str) -> np.ndarray:
    return np.array([np.nan if getattr(s, name) is None else float(getattr(s, name))
                     for s in pool], dtype=float)


def pair_arrays(pool: Sequence[Solvent], res: dict, T_C: float = 25.0) -> dict[str, np.ndarray]:
    """Per-pair arrays for the ordering of a :func:`solsphere.design.pairs.pair_screen`
    result ``res`` over ``pool``: ``one_phase``, ``hazard`` (the worse component's score),
    ``price`` and ``evaporation`` (NaN where unknown), ``width`` (window width, 0 without).

    The one-phase test is the vectorised form of
    :func:`solsphere.design.pairs.miscibility_warning`: water with a component of
    log P > 1 may not mix; other pairs by the Flory–Huggins critical χ from the Hansen
    distance and the molar volumes, or, without molar volumes, a distance over 25 MPa½.
    """
    i, j, phi = res["i"], res["j"], res["phi"]
    pts = np.array([s.point for s in pool], dtype=float).reshape(-1, 3)
    d = hsp.ra(pts[i], pts[j]) if len(i) else np.empty(0)
    vm = _prop(pool, "molar_volume")
    va, vb = vm[i], vm[j]
    vref = np.fmin(va, vb)
    with np.errstate(invalid="ignore", divide="ignore"):
        chi = vref * d ** 2 / (4.0 * _R * (T_C + 273.15))
        chi_c = 0.5 * (np.sqrt(vref / va) + np.sqrt(vref / vb)) ** 2
    has_v = np.isfinite(va) & np.isfinite(vb) & (va > 0) & (vb > 0)
    split = np.where(has_v, chi > chi_c, d > 25.0)
    water = np.array([s.cas == _WATER_CAS for s in pool], dtype=bool)
    logp = _prop(pool, "log_p")
    wi, wj = water[i], water[j]
    other_logp = np.where(wi, logp[j], logp[i])
    water_pair = wi | wj
    split = np.where(water_pair, np.nan_to_num(other_logp, nan=-np.inf) > 1.0, split)
    score = np.array([hazard_score(s) for s in pool], dtype=float)
    price = _prop(pool, "price")
    vp = _prop(pool, "vapour_pressure")
    width = np.nan_to_num(res["hi"] - res["lo"], nan=0.0)
    return {"one_phase": ~split, "hazard": np.fmax(score[i], score[j]),
            "price": phi * price[i] + (1 - phi) * price[j],
            "evaporation": phi * vp[i] + (1 - phi) * vp[j],
            "width": width}


def order_pairs(res: dict, arrays: dict, priority: str = "hazard",
                p_good: np.ndarray | None = None, only_blends: bool = True) -> np.ndarray:
    """Indices into the pair arrays, in the documented order (module docstring).

    ``priority`` "drying" needs drying simulations; here (before them) it orders like
    "hazard", and :func:`order_rows` re-orders the simulated top.
    """
    if priority not in PRIORITIES:
        raise ValueError(f"priority must be one of {', '.join(PRIORITIES)}; found {priority!r}")
    red = res["red"]
    keep = ~res["single"] if only_blends else np.ones(len(red), dtype=bool)
    idx = np.flatnonzero(keep)
    inside = red[idx] <= 1.0
    one = arrays["one_phase"][idx]
    rob = p_good[idx] if p_good is not None else arrays["width"][idx]
    rbin = np.floor(np.nan_to_num(rob, nan=-1.0) / ROBUSTNESS_STEP + 1e-9)
    if priority == "cost":
        pv = np.nan_to_num(arrays["price"][idx], nan=np.inf)
    elif priority == "evaporation":
        pv = -np.nan_to_num(arrays["evaporation"][idx], nan=-np.inf)
    else:
        pv = arrays["hazard"][idx]
    order = np.lexsort((red[idx], pv, -rbin, ~one, ~inside))
    return idx[order]


def checked_pick(pool: Sequence[Solvent], res: dict, one_phase: np.ndarray,
                 order_of: Callable[[], np.ndarray], n: int,
                 max_uses: int | None = MAX_USES) -> list[int]:
    """The ``n`` pairs to list, with the one-phase step decided by the full phase test.

    The one-phase step is first the vectorised Flory–Huggins estimate over every pair
    (:func:`pair_arrays`); each pair that would be listed is then tested over its whole
    composition range by :func:`solsphere.design.pairs.miscibility_warning` (UNIFAC
    where groups exist: the test behind the "may not mix" caution), ``one_phase`` is
    updated in place, and ``order_of()`` (the caller's order over the updated arrays) is
    taken again, until every listed pair has been tested. So a pair the caution flags
    (one that may split as the blend dries) never ranks above pairs that mix.
    """
    names = [s.name for s in pool]
    checked: set[int] = set()
    pick: list[int] = []
    for _ in range(MAX_CHECK_ROUNDS):
        pick = diverse(order_of(), lambda k: (names[res["i"][k]], names[res["j"][k]]), n,
                       max_uses)
        todo = [k for k in pick if k not in checked]
        if not todo:
            break
        for k in todo:
            checked.add(k)
            one_phase[k] = miscibility_warning(pool[res["i"][k]], pool[res["j"][k]]) is None
    else:  # the rounds ran out: list by the arrays as last updated
        pick = diverse(order_of(), lambda k: (names[res["i"][k]], names[res["j"][k]]), n,
                       max_uses)
    return pick


def diverse(order: Sequence[int], members: Callable[[int], Sequence[str]], n: int,
            max_uses: int | None = MAX_USES) -> list[int]:
    """The first ``n`` of ``order`` such that no solvent appears in more than ``max_uses``
    of them (None: no limit).

    >>> pairs = {0: ("a", "b"), 1: ("a", "c"), 2: ("a", "d"), 3: ("b", "c")}
    >>> diverse([0, 1, 2, 3], pairs.get, 3)
    [0, 1, 3]
    """
    out: list[int] = []
    used: dict[str, int] = {}
    for k in order:
        names = members(k)
        if max_uses is not None and any(used.get(x, 0) >= max_uses for x in names):
            continue
        out.append(k)
        for x in names:
            used[x] = used.get(x, 0) + 1
        if len(out) >= n:
            break
    return out


def sort_key(row: dict, priority: str = "hazard") -> tuple:
    """The ordering key of one blend or replacement given as a dict with ``inside``,
    ``one_phase``, ``constraints_met``, ``robustness``, ``hazard``, ``price``,
    ``drying_inside_until``, ``evaporation`` and ``red`` (missing ones count as unknown)."""
    if priority not in PRIORITIES:
        raise ValueError(f"priority must be one of {', '.join(PRIORITIES)}; found {priority!r}")
    feasible = (not row.get("inside", False), not row.get("one_phase", True),
                not row.get("constraints_met", True))
    rob = -robustness_bin(row.get("robustness"))
    if priority == "cost":
        pv = row.get("price")
        pv = math.inf if pv is None else pv
    elif priority == "drying":
        pv = row.get("drying_inside_until")
        pv = math.inf if pv is None else -pv
    elif priority == "evaporation":
        pv = row.get("evaporation")
        pv = math.inf if pv is None else -pv
    else:
        pv = row.get("hazard")
        pv = math.inf if pv is None else pv
    return feasible + (rob, pv, row.get("red", math.inf))


def order_rows(rows: list[dict], priority: str = "hazard") -> list[dict]:
    """``rows`` sorted by :func:`sort_key` (stable)."""
    return sorted(rows, key=lambda r: sort_key(r, priority))


def blend_rows(blends: Sequence[dict], by_name: dict, priority: str = "hazard") -> list[dict]:
    """The ordering criteria of blends given as dicts (``Blend.to_dict()`` plus the
    ``may_not_mix``, ``price_per_litre`` and ``drying_inside_until`` keys that
    :func:`solsphere.workflows.add_safety_and_drying` adds); ``by_name`` maps a component
    name to its Solvent. Robustness is the window width for pairs, the margin 1 − RED
    for blends of three."""
    rows = []
    for d in blends:
        comps = [by_name[n] for n in d["solvents"]]
        phis = d["volume_fractions"]
        vps = [s.vapour_pressure for s in comps]
        rob = (d.get("window_width") if len(comps) == 2 and d.get("inside_window") is not None
               else max(0.0, 1.0 - d["red"]))
        rows.append({"inside": d["red"] <= 1.0, "one_phase": not d.get("may_not_mix", False),
                     "constraints_met": True, "robustness": rob,
                     "robustness_kind": "window" if len(comps) == 2 else "margin",
                     "hazard": max(hazard_score(s) for s in comps),
                     "price": d.get("price_per_litre"),
                     "drying_inside_until": d.get("drying_inside_until"),
                     "evaporation": (None if any(v is None for v in vps) else
                                     float(sum(f * v for f, v in zip(phis, vps)))),
                     "red": d["red"], "priority": priority})
    return rows


def order_blends(blends: Sequence[dict], by_name: dict, priority: str = "hazard",
                 top: int | None = 10, max_uses: int | None = MAX_USES) -> list[int]:
    """Indices of ``blends`` (dicts) in the documented order, diverse, cut to ``top``."""
    rows = blend_rows(blends, by_name, priority)
    order = sorted(range(len(rows)), key=lambda k: sort_key(rows[k], priority))
    return diverse(order, lambda k: blends[k]["solvents"], len(order) if top is None else top,
                   max_uses)
