r"""Does a blend stay one liquid phase? A liquid–liquid phase-stability test.

Pairs: the Gibbs energy of mixing :math:`g(x) = \sum_i x_i \ln(x_i\gamma_i)` (per RT) is
evaluated over the whole composition range (a fine grid, denser near the pure
components); the pair splits somewhere when :math:`g` is not convex, and the two liquid
phases in equilibrium are the ends of the common tangent (the lower convex hull of the
grid points). A blend whose own composition lies between them separates.

Triples: at the blend's own composition z, the tangent-plane test of Michelsen [1]_:
the blend is unstable when some trial composition y has
:math:`\sum_i y_i[\ln y_i + \ln\gamma_i(y) - \ln z_i - \ln\gamma_i(z)] < 0`
(trial compositions on a grid over the triangle).

Activity coefficients come from :mod:`solsphere.mixtures.activity` (Dortmund UNIFAC,
UNIFAC); where neither applies the regular-solution estimate from Hansen parameters
(Flory–Huggins combinatorial term) is used and the answer is labelled as that rough
fallback. For water with the solvents of :data:`WATER_SOLUBILITY` the published mutual
solubilities decide instead of the model.

References
----------
.. [1] M. L. Michelsen, "The isothermal flash problem. Part I. Stability", *Fluid Phase
   Equilib.* 9 (1982) 1–19 (details from memory).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache
from typing import Sequence

import numpy as np

from solsphere.mixtures.activity import METHODS, REGULAR, ActivityModel
from solsphere.results import Result

__all__ = ["WATER_SOLUBILITY", "PairSplit", "pair_splits", "pair_split", "blend_phases",
           "PhaseCheck", "check_phases", "volume_gap",
           "phase_compositions"]

WATER_CAS = "7732-18-5"

#: Mutual solubilities with water near 20–25 °C: CAS -> (mass % of the solvent in the
#: water-rich phase, mass % of water in the solvent-rich phase); None = miscible in all
#: proportions. Handbook values (CRC Handbook of Chemistry and Physics, "Aqueous
#: solubility and Henry's law constants of organic compounds" and "Mutual solubility of
#: hydrocarbons and water" tables, and the IUPAC-NIST Solubility Data Series), all from
#: memory, rounded.
WATER_SOLUBILITY: dict[str, tuple[float, float] | None] = {
    "141-78-6": (8.0, 3.0),     # ethyl acetate
    "71-36-3": (7.4, 20.0),     # 1-butanol
    "78-93-3": (24.0, 10.0),    # methyl ethyl ketone
    "60-29-7": (6.5, 1.3),      # diethyl ether
    "78-83-1": (8.5, 16.5),     # isobutanol
    "108-10-1": (1.9, 2.0),     # methyl isobutyl ketone
    "123-86-4": (0.7, 1.9),     # butyl acetate
    "1634-04-4": (4.8, 1.5),    # methyl tert-butyl ether
    "108-94-1": (8.7, 8.0),     # cyclohexanone
    "108-88-3": (0.052, 0.033),  # toluene
    "71-43-2": (0.18, 0.06),    # benzene
    "110-54-3": (0.001, 0.01),  # hexane
    "75-09-2": (1.3, 0.2),      # dichloromethane
    "67-66-3": (0.8, 0.1),      # chloroform
    "67-56-1": None, "64-17-5": None, "71-23-8": None, "67-63-0": None,  # C1-C3 alcohols
    "75-65-0": None,            # tert-butanol
    "67-64-1": None, "109-99-9": None, "123-91-1": None, "75-05-8": None,  # acetone, THF, dioxane, MeCN
    "68-12-2": None, "67-68-5": None, "872-50-4": None, "127-19-5": None,  # DMF, DMSO, NMP, DMAc
    "107-21-1": None, "57-55-6": None, "56-81-5": None, "64-19-7": None,  # glycols, glycerol, acetic acid
    "107-98-2": None, "111-76-2": None, "109-86-4": None, "96-48-0": None,  # PGME, 2-butoxyethanol, 2-methoxyethanol, GBL
}
WATER_SOURCE = "published mutual solubility with water (handbook values, from memory)"

#: Grid of the first component's mole fraction for the pair test: dense near both ends
#: (solubilities of 0.01 mass % are mole fractions of about 1e-5).
_GRID = np.unique(np.concatenate([np.geomspace(1e-6, 0.02, 25), np.linspace(0.02, 0.98, 73),
                                  1.0 - np.geomspace(1e-6, 0.02, 25)]))
#: Convexity tolerance on g per RT (numerical noise is far below it).
_TOL = 1e-9


@dataclass
class PairSplit:
    """Whether a pair splits somewhere over its composition range, and where.

    ``gap`` is (x_lo, x_hi) in mole fraction of the first component: compositions
    strictly between them separate into two liquids (None when the pair mixes).
    """

    splits: bool
    gap: tuple[float, float] | None
    method: str

    def to_dict(self) -> dict:
        return {"splits": self.splits, "gap_mole_fraction": None if self.gap is None
                else [float(v) for v in self.gap], "method": self.method}


def _lower_hull_gap(xg: np.ndarray, g: np.ndarray) -> tuple[float, float] | None:
    """The widest bridge of the lower convex hull that skips grid points lying above it."""
    hull: list[int] = []
    for i in range(len(xg)):
        while len(hull) >= 2:
            a, b = hull[-2], hull[-1]
            cross = (xg[b] - xg[a]) * (g[i] - g[a]) - (g[b] - g[a]) * (xg[i] - xg[a])
            if cross <= 0:
                hull.pop()
            else:
                break
        hull.append(i)
    best, span = None, 0
    for a, b in zip(hull[:-1], hull[1:]):
        if b - a > 1:
            line = g[a] + (g[b] - g[a]) * (xg[a + 1:b] - xg[a]) / (xg[b] - xg[a])
            if np.max(line - g[a + 1:b]) < -_TOL and xg[b] - xg[a] > span:
                best, span = (float(xg[a]), float(xg[b])), xg[b] - xg[a]
    return best


def _water_gap(other, water_first: bool) -> tuple[float, float] | None:
    """Published gap as mole fractions of the first component of the pair."""
    s_in_w, w_in_s = WATER_SOLUBILITY[other.cas]
    Mw, Mo = 18.015, other.mw or 100.0
    # solvent mole fraction in each phase
    xo_wrich = (s_in_w / Mo) / (s_in_w / Mo + (100.0 - s_in_w) / Mw)
    xo_srich = ((100.0 - w_in_s) / Mo) / ((100.0 - w_in_s) / Mo + w_in_s / Mw)
    if water_first:
        return (1.0 - xo_srich, 1.0 - xo_wrich)
    return (xo_wrich, xo_srich)


def pair_splits(model: ActivityModel, pairs, T_C: float = 25.0, *,
                use_published: bool = True) -> list[PairSplit]:
    """Phase-split test of many pairs over their whole composition range.

    Parameters
    ----------
    model : ActivityModel
    pairs : array-like of int, shape (n, 2)
        Component indices into ``model.solvents``.
    T_C : float, default=25.0
    use_published : bool, default=True
        Let :data:`WATER_SOLUBILITY` decide for water pairs (False: the model only).

    Returns
    -------
    list of PairSplit

    Examples
    --------
    >>> from solsphere.library.table import load_library
    >>> lib = load_library()
    >>> m = ActivityModel([lib.lookup(n) for n in ("methanol", "hexane", "toluene")])
    >>> [p.splits for p in pair_splits(m, [[0, 1], [0, 2]])]
    [True, False]
    """
    pairs = np.atleast_2d(np.asarray(pairs, dtype=int))
    n, m = pairs.shape[0], _GRID.size
    out: list[PairSplit | None] = [None] * n
    todo = []
    for r, (i, j) in enumerate(pairs):
        si, sj = model.solvents[i], model.solvents[j]
        if not use_published:
            todo.append(r)
        elif si.cas == WATER_CAS and sj.cas in WATER_SOLUBILITY:
            gap = None if WATER_SOLUBILITY[sj.cas] is None else _water_gap(sj, True)
            out[r] = PairSplit(gap is not None, gap, WATER_SOURCE)
        elif sj.cas == WATER_CAS and si.cas in WATER_SOLUBILITY:
            gap = None if WATER_SOLUBILITY[si.cas] is None else _water_gap(si, False)
            out[r] = PairSplit(gap is not None, gap, WATER_SOURCE)
        else:
            todo.append(r)
    if todo:
        P = pairs[todo]
        idx = np.repeat(P, m, axis=0)
        x1 = np.tile(_GRID, len(todo))
        x = np.column_stack([x1, 1.0 - x1])
        lg, meth = model.ln_gamma(idx, x, T_C)
        g = (x * (np.log(x) + lg)).sum(axis=1).reshape(len(todo), m)
        meth = meth.reshape(len(todo), m)[:, 0]
        d1 = np.diff(g, axis=1) / np.diff(_GRID)
        d2 = np.diff(d1, axis=1)
        maybe = (d2 < 0).any(axis=1)
        gaps = [_lower_hull_gap(_GRID, g[k]) if maybe[k] else None for k in range(len(todo))]
        # refine the ends of each gap on a fine grid between their neighbouring points
        split_rows = [k for k, gp in enumerate(gaps) if gp is not None]
        if split_rows:
            grids = [_refined_grid(gaps[k]) for k in split_rows]
            m2 = grids[0].size
            idx2 = np.repeat(P[split_rows], m2, axis=0)
            x1 = np.concatenate(grids)
            x2 = np.column_stack([x1, 1.0 - x1])
            lg2, _ = model.ln_gamma(idx2, x2, T_C)
            g2 = (x2 * (np.log(x2) + lg2)).sum(axis=1).reshape(len(split_rows), m2)
            for k, grid, gk in zip(split_rows, grids, g2):
                gaps[k] = _lower_hull_gap(grid, gk) or gaps[k]
        for k, r in enumerate(todo):
            label = METHODS[int(meth[k])]
            if int(meth[k]) == REGULAR:
                label = "Flory–Huggins / " + label
            out[r] = PairSplit(gaps[k] is not None, gaps[k], label)
    return out  # type: ignore[return-value]


def _refined_grid(gap: tuple[float, float], n: int = 60) -> np.ndarray:
    """The coarse grid plus ``n`` points across the grid cells on each side of both ends
    of a gap (the same size for every gap, so they batch)."""
    parts = [_GRID]
    for end in gap:
        j = int(np.searchsorted(_GRID, end))
        lo, hi = _GRID[max(j - 1, 0)], _GRID[min(j + 1, _GRID.size - 1)]
        parts.append(np.geomspace(lo, hi, n) if lo > 0 else np.linspace(lo, hi, n))
    return np.sort(np.concatenate(parts))


@lru_cache(maxsize=4096)
def pair_split(a, b, T_C: float = 25.0) -> PairSplit:
    """:func:`pair_splits` for one pair of solvents (cached: the blend screens ask often).

    ``method`` is "ideal solution ..." when no activity model applies to the pair.

    >>> from solsphere.library.table import load_library
    >>> lib = load_library()
    >>> s = pair_split(lib.lookup("water"), lib.lookup("ethyl acetate"))
    >>> s.splits, s.method.startswith("published")
    (True, True)
    """
    return pair_splits(ActivityModel([a, b]), [[0, 1]], T_C)[0]


def volume_gap(split: PairSplit, a, b) -> tuple[float, float] | None:
    """The gap of a pair split as volume fractions of ``a`` (None without molar volumes)."""
    if split.gap is None or not a.molar_volume or not b.molar_volume:
        return None
    lo, hi = split.gap
    return tuple(float(x * a.molar_volume / (x * a.molar_volume + (1 - x) * b.molar_volume))
                 for x in (lo, hi))  # type: ignore[return-value]


def blend_phases(model: ActivityModel, idx, x, T_C: float = 25.0, *, step: int = 30,
                 compositions: bool = False):
    """Number of liquid phases (1 or 2) of each blend at its own composition.

    Pairs by the gap of :func:`pair_splits`; three or more components by the
    tangent-plane test on a grid of trial compositions (``step`` divisions per side).

    Returns
    -------
    phases : ndarray of int, shape (n,)
    methods : list of str
    split : list, only with ``compositions=True``
        :func:`phase_compositions` of the same blends (computed once for both).
    """
    idx = np.atleast_2d(np.asarray(idx, dtype=int))
    x = np.atleast_2d(np.asarray(x, dtype=float))
    x = x / x.sum(axis=1, keepdims=True)
    n, K = idx.shape
    phases = np.ones(n, dtype=int)
    methods = [""] * n
    split: list = [None] * n
    present = x > 0
    npres = present.sum(axis=1)
    # pairs (and blends with only two components present)
    two = np.flatnonzero(npres == 2)
    if two.size:
        cols = np.array([np.flatnonzero(present[r])[:2] for r in two])
        pr = idx[two[:, None], cols]
        for r, c, s in zip(two, cols, pair_splits(model, pr, T_C)):
            methods[r] = s.method
            if s.gap is not None and s.gap[0] < x[r, c[0]] < s.gap[1]:
                phases[r] = 2
                ends = []
                for g in s.gap:
                    y = np.zeros(K)
                    y[c[0]], y[c[1]] = g, 1.0 - g
                    ends.append(y)
                split[r] = tuple(ends)
    for r in np.flatnonzero(npres == 1):
        methods[r] = "a single liquid"
    many = np.flatnonzero(npres >= 3)
    if many.size:
        grid = np.array([(a, b, step - a - b) for a in range(step + 1)
                         for b in range(step + 1 - a)], dtype=float) / step
        grid = np.clip(grid, 1e-7, None)
        grid = grid / grid.sum(axis=1, keepdims=True)
        G = grid.shape[0]
        for r in many:
            cols = np.flatnonzero(present[r])[:3]
            ids = idx[r, cols]
            z = x[r, cols] / x[r, cols].sum()
            lz, mz = model.ln_gamma(ids[None], z[None], T_C)
            ly, _ = model.ln_gamma(np.repeat(ids[None], G, axis=0), grid, T_C)
            tpd = (grid * (np.log(grid) + ly - np.log(z) - lz)).sum(axis=1)
            phases[r] = 2 if tpd.min() < -1e-7 else 1
            label = METHODS[int(mz[0])]
            methods[r] = ("Flory–Huggins / " + label) if int(mz[0]) == REGULAR else label
            # published water data override the model on the water-solvent edges only
            # when the third component is absent; with three present the model decides
    return (phases, methods, split) if compositions else (phases, methods)


def phase_compositions(model: ActivityModel, idx, x, T_C: float = 25.0) -> list:
    """For each two-component blend that separates: the mole fractions of its two
    liquid phases (rows of shape (K,)); None for every other blend."""
    return blend_phases(model, idx, x, T_C, compositions=True)[2]


@dataclass
class PhaseCheck(Result):
    """Phase behaviour of one blend: at its composition and over its pairs' ranges."""

    names: tuple[str, ...]
    phases: int
    method: str
    pairs: list[dict] = field(default_factory=list)

    rows_key = "pairs"  # to_frame(): one row per pair of components

    def to_dict(self) -> dict:
        return {"phases": int(self.phases), "method": self.method,
                "names": list(self.names), "pairs": list(self.pairs)}

    def __str__(self) -> str:
        head = ("one liquid phase" if self.phases == 1 else
                "TWO liquid phases: the blend separates")
        lines = [f"Phases at this composition: {head} ({self.method})"]
        for p in self.pairs:
            if p["splits"]:
                lo, hi = p["gap_mole_fraction"]
                lines.append(f"  {p['a']} + {p['b']}: splits between {100 * lo:.3g} and "
                             f"{100 * hi:.3g} mol % {p['a']} ({p['method']})")
            else:
                lines.append(f"  {p['a']} + {p['b']}: mix in all proportions ({p['method']})")
        return "\n".join(lines)


def check_phases(solvents: Sequence, mole_fractions, T_C: float = 25.0,
                 model: ActivityModel | None = None) -> PhaseCheck:
    """Phase check of one blend: at its composition, and each pair over its range.

    >>> from solsphere.library.table import load_library
    >>> lib = load_library()
    >>> check_phases([lib.lookup("ethyl acetate"), lib.lookup("water")], [0.5, 0.5]).phases
    2
    """
    solvents = list(solvents)
    k = len(solvents)
    model = model or ActivityModel(solvents)
    x = np.asarray(mole_fractions, dtype=float).reshape(1, -1)
    ph, meth = blend_phases(model, np.arange(k)[None], x, T_C)
    pairs = [(i, j) for i in range(k) for j in range(i + 1, k)]
    out = []
    if pairs:
        for (i, j), s in zip(pairs, pair_splits(model, pairs, T_C)):
            out.append(dict(s.to_dict(), a=solvents[i].name, b=solvents[j].name))
    return PhaseCheck(tuple(s.name for s in solvents), int(ph[0]),
                      meth[0] if meth[0] else "", out)

