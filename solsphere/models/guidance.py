"""Which solvents would pin down a coordinate the results cannot place.

Suggestions come from the common solvents only (the working pool), each with its flash
point and hazard flags; when none goes further, the advice says where to look
(``solsphere next --pool liquids`` lists every library liquid with its hazards).

When a fit's centre sits at the edge of the tested region, or the plausible centres run
beyond it, the results say only "further than this" on that coordinate. The advice is
then the same whichever fit noticed it: test solvents beyond the tested range on that
side, preferably ones close to the current centre in the other two coordinates (so the
new result speaks about this coordinate and not about the others). :func:`pinning_advice`
writes that advice with two or three solvents from the curated common pool, each with
its value of the coordinate and its family (the rule is our own; common practice, no
source).
"""

from __future__ import annotations

import numpy as np

from solsphere.hansen import as_points
from solsphere.library.pools import load_common
from solsphere.library.hazards import hazard_facts
from solsphere.library.table import load_library

__all__ = ["pinning_solvents", "pinning_advice", "GREEK"]

#: The coordinates as written in messages.
GREEK = {"dD": "δD", "dP": "δP", "dH": "δH"}
_AXES = ("dD", "dP", "dH")
_SCALE = np.array([2.0, 1.0, 1.0])  # the Hansen distance's weights (δD counts twice)


def pinning_solvents(axis: str, side: str, points, centre, n: int = 3, pool=None) -> list:
    """Up to ``n`` untested solvents beyond the tested range of ``axis`` on ``side``.

    Parameters
    ----------
    axis : {"dD", "dP", "dH"}
    side : {"upper", "lower"}
    points : array-like of shape (m, 3)
        The tested solvents [MPa½] (solvents at these points are never suggested).
    centre : array-like of shape (3,)
        The current centre; suggestions close to it in the other two coordinates come
        first.
    n : int, default=3
    pool : iterable of Solvent, default=None
        Candidates; default the library's common solvents.

    Returns
    -------
    list of Solvent (may be shorter than ``n``, or empty when no candidate lies beyond).

    Examples
    --------
    >>> tested = [[15.5, 16.0, 42.3], [15.8, 8.8, 19.4], [15.5, 10.4, 7.0]]
    >>> [s.dD > 15.8 for s in pinning_solvents("dD", "upper", tested, [15.6, 10, 10], 2)]
    [True, True]
    """
    if pool is None:  # the working pool: the curated common solvents
        pool = load_library().common()
    j = _AXES.index(axis)
    P = as_points(points)
    c = np.asarray(centre, dtype=float).reshape(3)
    cands = list(pool)
    if not cands:
        return []
    Q = np.array([s.point for s in cands], dtype=float)
    edge = P[:, j].max() if side == "upper" else P[:, j].min()
    beyond = Q[:, j] > edge + 0.2 if side == "upper" else Q[:, j] < edge - 0.2
    new = np.min(np.abs(Q[:, None, :] - P[None, :, :]).sum(axis=2), axis=1) > 1e-6
    keep = np.flatnonzero(beyond & new)
    if keep.size == 0:
        return []
    other = [k for k in range(3) if k != j]
    d_other = np.sqrt((((Q[keep][:, other] - c[other]) * _SCALE[other]) ** 2).sum(axis=1))
    step = np.abs(Q[keep, j] - edge)
    order = np.lexsort((-step, np.round(d_other, 1)))
    return [cands[keep[i]] for i in order[:n]]


def _hazard(s) -> str:
    """Hazard flags (they include the flash point when it matters), else the flash point:
    safety facts beside every name."""
    flags = hazard_facts(s)
    if flags:
        return ", ".join(flags)
    return "flash point unknown" if s.flash_point is None else f"flash point {s.flash_point:.0f} °C"


def _families() -> dict:
    return {c.cas: c.family for c in load_common()}


def pinning_advice(axis: str, side: str, points, centre, n: int = 3, pool=None) -> str:
    """One sentence: which kind of solvent to test, with up to ``n`` examples.

    Examples
    --------
    >>> text = pinning_advice("dD", "upper", [[15.5, 16.0, 42.3], [14.9, 0, 0]], [15, 8, 20])
    >>> text.startswith("To pin it down, test solvents of higher δD than any tested (above 15.5")
    True
    """
    j = _AXES.index(axis)
    P = as_points(points)
    edge = P[:, j].max() if side == "upper" else P[:, j].min()
    word = "higher" if side == "upper" else "lower"
    sym = GREEK[axis]
    picks = pinning_solvents(axis, side, P, centre, n, pool)
    head = (f"To pin it down, test solvents of {word} {sym} than any tested "
            f"({'above' if side == 'upper' else 'below'} {edge:.1f} MPa½)")
    if not picks:
        return (head + "; no common solvent goes further on this side: see "
                "'solsphere next --pool liquids' for every library liquid, with its "
                "hazards, or test a blend.")
    fam = _families()
    kinds = sorted({fam.get(s.cas, "") for s in picks} - {""})
    examples = ", ".join(f"{s.name} ({sym} {s.point[j]:.1f}; {_hazard(s)})" for s in picks)
    kind = f", such as {' or '.join(kinds)} solvents" if kinds else ""
    return f"{head}{kind}: e.g. {examples}."
