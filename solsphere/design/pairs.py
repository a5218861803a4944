r"""Exact screening of two-solvent blends against a Hansen sphere.

A blend of solvent ``a`` (volume fraction :math:`\varphi`) and solvent ``b``
(:math:`1-\varphi`) sits at the volume-fraction weighted mean of the two points [1]_,
on the segment from ``b`` to ``a``:

.. math:: x(\varphi) = b + \varphi\,(a - b), \qquad 0 \le \varphi \le 1 .

In the scaled space :math:`y = W x`, :math:`W = \mathrm{diag}(2, 1, 1)`, Hansen distance
is Euclidean [1]_, so the distance from the blend to the sphere centre ``c`` is a convex
quadratic in :math:`\varphi` and everything has a closed form (no numerical
optimisation; the tests check the closed forms against bounded Brent minimisation and a
dense scan of fractions):

- best fraction (closest blend to the centre)

  .. math:: \varphi^* = \operatorname{clip}\!\left(
            \frac{(c-b)\cdot W^2 (a-b)}{\lVert W(a-b)\rVert^2},\ 0,\ 1\right)

- RED of that blend, :math:`\lVert W(x(\varphi^*) - c)\rVert / R_0`;
- the window of fractions inside the sphere: the roots of
  :math:`\lVert W(b + \varphi(a-b) - c)\rVert^2 = R_0^2`, i.e.
  :math:`\varphi = t \pm \sqrt{R_0^2 - \rho^2}/\lVert W(a-b)\rVert` with ``t`` the
  unclipped minimiser and :math:`\rho` the distance from the centre to the line,
  intersected with [0, 1] (``None`` when the segment misses the sphere);
- mass fractions from densities,
  :math:`m_a = \varphi\rho_a / (\varphi\rho_a + (1-\varphi)\rho_b)`.

Identical components (:math:`\lVert W(a-b)\rVert = 0`): every fraction gives the same
point; we report :math:`\varphi^* = 0.5`, the window ``[0, 1]`` when that point is inside
the sphere and ``None`` otherwise, and count the pair as *single* (blending changes
nothing).

Choices made here (documented so that a user can rely on them):

- A pair whose best fraction is 0 or 1 (one component alone is at least as close to the
  centre as any blend) or whose components coincide is *single*: ``best_is_single=True``.
  :func:`screen_blends` ranks only genuine blends (``0 < phi < 1``) by default, because a
  practitioner asking for pairs wants true pairs; ``only_blends=False`` keeps them.
- A filter on a property (``min_flash_point``, ``max_boiling_point``) keeps only the
  components *known* to pass it: a component whose flash point (boiling point) is unknown
  is removed, and listed as such in :attr:`BlendScreen.filters`.

References
----------
.. [1] C. M. Hansen, *Hansen Solubility Parameters: A User's Handbook*, 2nd ed.,
   CRC Press, Boca Raton, 2007, ch. 1 (distance Ra with the factor 4 on dD, RED,
   volume-fraction mixing of a blend's parameters).
.. [2] United Nations, *Globally Harmonized System of Classification and Labelling of
   Chemicals (GHS)*, Rev. 9, 2021, ch. 2.6, Table 2.6.1 (flammable liquids: category
   1-2 below a flash point of 23 °C, category 3 up to 60 °C) -- thresholds from memory.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Iterable, Sequence

import numpy as np

from solsphere.limits import check as check_limit
from solsphere.formatting import blend_label, float_or_none, format_table, num, pct, plain
from solsphere.hansen import SCALE, flory_huggins_chi, mix, ra
from solsphere.library.pools import apply_filters
from solsphere.library.hazards import hazard_facts
from solsphere.library.table import Solvent
from solsphere.mixtures.phases import pair_split, volume_gap
from solsphere.results import Result

__all__ = ["pair_screen", "best_fraction", "inside_window", "mass_fractions",
           "Blend", "BlendScreen", "screen_blends", "CAUTION"]

#: Shown under every table of recommendations.
CAUTION = ("Predictions are guides: confirm at the bench; check each solvent's safety "
           "data sheet and local regulations.")

#: |W(a - b)|² [MPa] at or below which two components count as the same point.
_SAME_POINT = 1e-18
#: A best fraction within this of 0 or 1 counts as "one component alone".
_SINGLE_TOL = 1e-9
#: Default number of pairs handled at once by :func:`pair_screen` (bounds memory).
_CHUNK = 1 << 16



# --------------------------------------------------------------------------------------
# the arithmetic (written once; every public function goes through _segment)
# --------------------------------------------------------------------------------------

def _segment(ea: np.ndarray, eb: np.ndarray, R0: float | None):
    """Closed-form blend arithmetic for many segments at once.

    Parameters
    ----------
    ea, eb : ndarray of shape (m, 3)
        Components ``a`` and ``b`` in scaled coordinates relative to the centre,
        ``W (x - c)``.
    R0 : float or None
        Sphere radius; ``None`` skips the window.

    Returns
    -------
    phi, ra, lo, hi, same : ndarrays of shape (m,)
        Best fraction of ``a``, Hansen distance there, window ends (NaN where the
        segment misses the sphere, or when ``R0`` is None) and the identical-points mask.
    """
    d = ea - eb                                   # W (a - b)
    dd = np.einsum("ij,ij->i", d, d)              # |W (a - b)|²
    same = dd <= _SAME_POINT
    safe = np.where(same, 1.0, dd)
    t = -np.einsum("ij,ij->i", d, eb) / safe      # unclipped minimiser on the line
    t[same] = 0.5
    phi = np.clip(t, 0.0, 1.0)
    p = eb + phi[:, None] * d                     # W (x(phi*) - c)
    dist = np.sqrt(np.einsum("ij,ij->i", p, p))
    m = len(dd)
    lo = np.full(m, np.nan)
    hi = np.full(m, np.nan)
    if R0 is not None:
        r2 = float(R0) ** 2
        q = eb + t[:, None] * d                   # closest point of the whole line
        rho2 = np.einsum("ij,ij->i", q, q)
        half = np.sqrt(np.maximum(r2 - rho2, 0.0) / safe)
        lo_ = np.maximum(t - half, 0.0)
        hi_ = np.minimum(t + half, 1.0)
        ok = (rho2 <= r2) & (lo_ <= hi_) & ~same
        lo[ok] = lo_[ok]
        hi[ok] = hi_[ok]
        inside_same = same & (dist <= float(R0))
        lo[inside_same] = 0.0
        hi[inside_same] = 1.0
    return phi, dist, lo, hi, same


def centred(points, centre) -> np.ndarray:
    p = np.asarray(points, dtype=float)
    c = np.asarray(centre, dtype=float)
    return (p - c) * SCALE


def check_radius(R0) -> float:
    R0 = float(R0)
    if not (np.isfinite(R0) and R0 > 0):
        raise ValueError(f"R0 must be a positive finite number; found {R0!r}")
    return R0


def as_xyz(x, what: str) -> np.ndarray:
    """A single point from an array-like of 3 numbers or anything with ``.point``."""
    x = getattr(x, "point", x)
    p = np.asarray(x, dtype=float).reshape(-1)
    if p.shape != (3,) or not np.all(np.isfinite(p)):
        raise ValueError(f"{what} must be 3 finite numbers (dD, dP, dH) in MPa½; found {x!r}")
    return p


def pair_screen(points, centre, R0: float, *, pairs=None,
                chunk: int = _CHUNK) -> dict[str, np.ndarray]:
    """Best blend of every pair of points, vectorised (no Python loop over pairs).

    Pair ``k`` blends ``a = points[i[k]]`` (volume fraction ``phi[k]``) with
    ``b = points[j[k]]`` (``1 - phi[k]``); see the module docstring for the formulas.

    Parameters
    ----------
    points : array-like of shape (n, 3)
        Candidate solvents' dD, dP, dH [MPa½].
    centre : array-like of shape (3,)
        Sphere centre dD, dP, dH [MPa½].
    R0 : float
        Sphere radius [MPa½].
    pairs : tuple of two int arrays of shape (m,), optional
        Screen only these pairs ``(i, j)``; default: all ``n(n-1)/2`` pairs ``i < j``
        (``np.triu_indices(n, 1)``).
    chunk : int, default=65536
        Pairs handled at once; bounds the temporary memory (about 30 doubles per pair).

    Returns
    -------
    dict of ndarray, each of shape (m,)
        ``"i"``, ``"j"`` (int64 indices into ``points``), ``"phi"`` (best volume
        fraction of ``points[i]``), ``"red"`` (RED of that blend), ``"lo"``, ``"hi"``
        (window of ``phi`` inside the sphere, NaN where there is none) and ``"single"``
        (True where the best "blend" is one component alone, or the two coincide).

    Examples
    --------
    >>> out = pair_screen([[18, 12, 6], [15, 0, 10], [20, 20, 20]], [16.75, 2, 9], 3.0)
    >>> out["i"].tolist(), out["j"].tolist()
    ([0, 0, 1], [1, 2, 2])
    >>> round(float(out["phi"][0]), 6), round(float(out["red"][0]), 6)
    (0.25, 0.745356)
    """
    R0 = check_radius(R0)
    e = centred(points, centre)
    if e.ndim != 2 or e.shape[1] != 3:
        raise ValueError(f"points must have shape (n, 3); found {np.shape(points)}")
    if not np.all(np.isfinite(e)):
        raise ValueError("points and centre must be finite numbers")
    n = len(e)
    if pairs is None:
        i, j = np.triu_indices(n, 1)
    else:
        i = np.asarray(pairs[0], dtype=np.int64).reshape(-1)
        j = np.asarray(pairs[1], dtype=np.int64).reshape(-1)
        if i.shape != j.shape:
            raise ValueError("pairs must be two index arrays of the same length")
    i = i.astype(np.int64, copy=False)
    j = j.astype(np.int64, copy=False)
    m = len(i)
    phi = np.empty(m)
    red = np.empty(m)
    lo = np.empty(m)
    hi = np.empty(m)
    same = np.empty(m, dtype=bool)
    step = max(int(chunk), 1)
    for s in range(0, m, step):
        sl = slice(s, min(s + step, m))
        ph, dist, l, h, sm = _segment(e[i[sl]], e[j[sl]], R0)
        phi[sl] = ph
        red[sl] = dist / R0
        lo[sl] = l
        hi[sl] = h
        same[sl] = sm
    single = same | (phi <= _SINGLE_TOL) | (phi >= 1.0 - _SINGLE_TOL)
    return {"i": i, "j": j, "phi": phi, "red": red, "lo": lo, "hi": hi, "single": single}


def best_fraction(a, b, centre) -> float:
    """Volume fraction of ``a`` whose blend with ``b`` is closest to ``centre``.

    Parameters
    ----------
    a, b : array-like of shape (3,) or Solvent
        The two components' dD, dP, dH [MPa½].
    centre : array-like of shape (3,)
        Sphere centre [MPa½].

    Returns
    -------
    float
        ``phi*`` in [0, 1]; 0.5 when ``a`` and ``b`` are the same point.

    Examples
    --------
    >>> best_fraction([18, 12, 6], [15, 0, 10], [16.75, 2, 9])
    0.25
    """
    c = as_xyz(centre, "centre")
    ea = centred(as_xyz(a, "a")[None, :], c)
    eb = centred(as_xyz(b, "b")[None, :], c)
    return float(_segment(ea, eb, None)[0][0])


def inside_window(a, b, centre, R0: float) -> tuple[float, float] | None:
    """Range of the volume fraction of ``a`` for which the blend is inside the sphere.

    Parameters
    ----------
    a, b, centre
        As for :func:`best_fraction` [MPa½].
    R0 : float
        Sphere radius [MPa½].

    Returns
    -------
    (lo, hi) or None
        ``0 <= lo <= hi <= 1``; None when no blend of the two lies inside (RED <= 1).

    Examples
    --------
    >>> lo, hi = inside_window([18, 12, 6], [15, 0, 10], [16.75, 2, 9], 3.0)
    >>> round(lo, 6), round(hi, 6)   # 1/4 -+ 1/7
    (0.107143, 0.392857)
    """
    R0 = check_radius(R0)
    c = as_xyz(centre, "centre")
    ea = centred(as_xyz(a, "a")[None, :], c)
    eb = centred(as_xyz(b, "b")[None, :], c)
    _, _, lo, hi, _ = _segment(ea, eb, R0)
    if np.isnan(lo[0]):
        return None
    return float(lo[0]), float(hi[0])


def mass_fractions(phi: float, density_a: float | None,
                   density_b: float | None) -> list[float] | None:
    r"""Mass fractions of a two-component blend from its volume fractions.

    .. math:: m_a = \frac{\varphi \rho_a}{\varphi \rho_a + (1-\varphi) \rho_b}

    Parameters
    ----------
    phi : float
        Volume fraction of ``a``.
    density_a, density_b : float or None
        Densities [g/cm³]; None when unknown.

    Returns
    -------
    [m_a, m_b] or None
        None when a density is unknown or not positive (volume change on mixing is
        neglected).

    Examples
    --------
    >>> [round(x, 6) for x in mass_fractions(0.25, 0.8, 1.2)]   # 0.2 / (0.2 + 0.9)
    [0.181818, 0.818182]
    """
    if density_a is None or density_b is None or not (density_a > 0 and density_b > 0):
        return None
    wa = phi * float(density_a)
    wb = (1.0 - phi) * float(density_b)
    ma = wa / (wa + wb)
    return [ma, 1.0 - ma]


# --------------------------------------------------------------------------------------
# safety flags
# --------------------------------------------------------------------------------------

#: Without molar volumes: two components further apart than this [MPa½] may not mix at
#: all (e.g. methanol and hexane, 25.5; ethylene glycol and hexane, 28); our rule of
#: thumb, no source.
MISCIBILITY_RA = 25.0
#: Water and a solvent with log P above this rarely mix in all proportions
#: (common practice, no source).
WATER_LOG_P = 1.0
_WATER_CAS = "7732-18-5"


def mixing_chi(a: Solvent, b: Solvent, T_C: float = 25.0):
    r"""Flory–Huggins estimate of whether two liquids mix in all proportions.

    .. math:: \chi_{12} = \frac{V_\mathrm{ref} R_a^2}{4 R T}, \qquad
              \chi_c = \tfrac12\left(\frac{1}{\sqrt{r_1}} + \frac{1}{\sqrt{r_2}}\right)^2,
              \quad r_i = V_i / V_\mathrm{ref}

    (:func:`solsphere.hsp.flory_huggins_chi` with the smaller molar volume as the
    reference; the critical χ of a binary Flory–Huggins mixture [1]_). Above
    :math:`\chi_c` the regular-solution estimate predicts two liquid phases in some
    range of compositions. It misses the hydrogen-bond association that lets alcohols mix
    with hydrocarbons (hexane-ethanol comes out "may split"), so it errs on the side of a
    caution; on 42 solvent pairs of common miscibility tables (``tests/test_blend.py``,
    from memory) it caught all 19 pairs that split and cautioned wrongly on 9 of 23 that
    mix (the distance rule alone caught 8 of the 19).

    Returns ``(chi, chi_c)``, or None without both molar volumes.

    References
    ----------
    .. [1] P. J. Flory, *Principles of Polymer Chemistry*, Cornell University Press,
       1953, ch. XIII (critical conditions for phase separation; chapter from memory).
    """
    Va, Vb = a.molar_volume, b.molar_volume
    if not Va or not Vb or Va <= 0 or Vb <= 0:
        return None
    d = float(ra(np.array([a.point]), b.point)[0])
    vref = min(Va, Vb)
    chi = float(np.ravel(flory_huggins_chi(d, vref, T_C))[0])
    chi_c = 0.5 * (np.sqrt(vref / Va) + np.sqrt(vref / Vb)) ** 2
    return chi, float(chi_c)


def miscibility_warning(a: Solvent, b: Solvent) -> str | None:
    """A caution when two components do not form one liquid phase at every ratio.

    The volume-fraction mixing rule assumes a single miscible phase; a blend of
    immiscible liquids separates, whatever its average parameters say. The pair is
    tested over its whole composition range at 25 °C by the liquid–liquid phase test of
    :func:`solsphere.mixtures.phases.pair_split` (UNIFAC activity coefficients; published
    mutual solubilities for water with common solvents; the Flory–Huggins /
    regular-solution estimate, labelled, where no UNIFAC groups exist). Only when no
    activity model applies at all (no groups and no molar volumes) the older rules of
    thumb remain: water with a solvent of log P > :data:`WATER_LOG_P`, or a distance
    over :data:`MISCIBILITY_RA` MPa½.
    """
    split = pair_split(a, b)
    if not split.method.startswith("ideal"):
        if not split.splits:
            return None
        gap = volume_gap(split, a, b)
        where = (f" between {_share(gap[0])} and {_share(gap[1])} vol % {a.name}"
                 if gap else "")
        return (f"{a.name} and {b.name} may not mix: two liquid phases{where} "
                f"({split.method}); check that the blend is one clear phase")
    for w, o in ((a, b), (b, a)):
        if w.cas == _WATER_CAS:  # water sits far from everything; only log P tells
            if o.log_p is not None and o.log_p > WATER_LOG_P:
                return (f"{o.name} and water may not mix (log P {o.log_p:.1f}, a rule of "
                        f"thumb: no activity model applies): check that the blend is one "
                        f"clear phase")
            return None
    d = float(ra(np.array([a.point]), b.point)[0])
    if d > MISCIBILITY_RA:
        return (f"{a.name} and {b.name} are {d:.0f} MPa½ apart and may not mix: check that "
                f"the blend is one clear phase")
    return None


def _share(f: float) -> str:
    """A volume fraction as a percentage that keeps small and near-100 % values apart."""
    p = 100.0 * f
    if p < 1.0:
        return f"{p:.2g}"
    if p > 99.0:
        return f"{p:.2f}".rstrip("0").rstrip(".")
    return f"{p:.0f}"


def may_not_mix(solvents: Sequence[Solvent]) -> bool:
    """True when any two of the components may not form one liquid phase."""
    return any(miscibility_warning(a, b) for k, a in enumerate(solvents)
               for b in solvents[k + 1:])


def component_flags(solvents: Sequence[Solvent]) -> list[str]:
    """Miscibility cautions for pairs of components first (a blend that separates is
    no blend; they must not hide at the end of a long line), then the library's hazard
    flags of each component, prefixed with its name."""
    out: list[str] = []
    for k, a in enumerate(solvents):
        for b in solvents[k + 1:]:
            warning = miscibility_warning(a, b)
            if warning:
                out.append(warning)
    for s in solvents:
        for text in hazard_facts(s) or ():
            text = str(text)
            line = text if text.casefold().startswith(s.name.casefold()) else f"{s.name}: {text}"
            if line not in out:
                out.append(line)
    return out


# --------------------------------------------------------------------------------------
# result objects
# --------------------------------------------------------------------------------------

@dataclass
class Blend:
    """One two-solvent blend at its best volume fractions.

    The first-listed solvent is the one with the larger volume fraction.

    Attributes
    ----------
    solvents : list of str
        ``[name_a, name_b]``.
    volume_fractions : list of float
        ``[phi, 1 - phi]``, best fractions (closest blend to the sphere centre).
    mass_fractions : list of float or None
        From the densities; None when a density is unknown.
    dD, dP, dH : float
        The blend point [MPa½].
    ra : float
        Hansen distance from the blend point to the centre [MPa½].
    red : float
        RED of the blend (< 1 inside the sphere).
    inside_window : list of float or None
        ``[lo, hi]``: range of the *first* solvent's volume fraction for which the blend
        is inside the sphere; None when no blend of the two is inside.
    window_width : float
        ``hi - lo`` (0.0 when there is no window).
    both_non_solvents : bool
        Both components alone lie outside the sphere (RED > 1) -- the classic case of
        two non-solvents whose blend dissolves.
    red_components : list of float
        RED of each component alone.
    flash_points, boiling_points, twa_ppm : list of float or None
        The components' flash points and boiling points [°C] and 8-h TWA limits [ppm].
    flags : list of str
        Hazard texts for the components (flash point, exposure limit, carcinogen).
    best_is_single : bool
        One component alone is at least as close to the centre as any blend (best
        fraction 0 or 1), or the two components are the same point.
    """

    solvents: list[str]
    volume_fractions: list[float]
    mass_fractions: list[float] | None
    dD: float
    dP: float
    dH: float
    ra: float
    red: float
    inside_window: list[float] | None
    window_width: float
    both_non_solvents: bool
    red_components: list[float]
    flash_points: list[float | None]
    boiling_points: list[float | None]
    twa_ppm: list[float | None]
    flags: list[str] = field(default_factory=list)
    best_is_single: bool = False
    component_points: list[tuple[float, float, float]] = field(default_factory=list)

    @property
    def lowest_flash_point(self) -> float | None:
        """The lowest known flash point of the components [°C] (None if none known)."""
        known = [x for x in self.flash_points if x is not None]
        return min(known) if known else None

    def label(self) -> str:
        """``"75% toluene + 25% ethanol"`` (volume %)."""
        return blend_label(self.solvents, self.volume_fractions)

    def window_text(self) -> str:
        if self.inside_window is None:
            return "none"
        lo, hi = self.inside_window
        return f"{pct(lo)}-{pct(hi)}"

    def to_dict(self) -> dict[str, Any]:
        """JSON-safe plain types (keys per the CLI contract, plus more)."""
        return {
            "solvents": list(self.solvents),
            "volume_fractions": [float(x) for x in self.volume_fractions],
            "mass_fractions": (None if self.mass_fractions is None
                               else [float(x) for x in self.mass_fractions]),
            "dD": float(self.dD), "dP": float(self.dP), "dH": float(self.dH),
            "ra": float(self.ra),
            "red": float(self.red),
            "inside_window": (None if self.inside_window is None
                              else [float(x) for x in self.inside_window]),
            "window_solvent": self.solvents[0],
            "window_width": float(self.window_width),
            "both_non_solvents": bool(self.both_non_solvents),
            "red_components": [float(x) for x in self.red_components],
            "flash_points": [float_or_none(x) for x in self.flash_points],
            "boiling_points": [float_or_none(x) for x in self.boiling_points],
            "twa_ppm": [float_or_none(x) for x in self.twa_ppm],
            "flags": list(self.flags),
            "best_is_single": bool(self.best_is_single),
            "component_points": [[float(v) for v in p] for p in self.component_points],
        }

    def __str__(self) -> str:
        fp = " / ".join(num(x, "{:.0f}", "?") for x in self.flash_points)
        text = (f"{self.label()}: dD {self.dD:.1f}, dP {self.dP:.1f}, dH {self.dH:.1f} "
                f"MPa½, RED {self.red:.2f}, inside for {self.solvents[0]} "
                f"{self.window_text()}, flash points {fp} °C")
        if self.flags:
            text += "; " + "; ".join(self.flags)
        return text


@dataclass
class BlendScreen(Result):
    """Ranked two-solvent blends for one sphere.

    Attributes
    ----------
    blends : list of Blend
        Sorted by RED ascending, then by wider inside window.
    n_candidates : int
        Solvents left after the filters.
    n_pairs_screened : int
        ``n_candidates * (n_candidates - 1) / 2``.
    n_single_best : int
        Screened pairs whose best "blend" is one component alone (left out of the
        ranking unless ``only_blends=False``).
    filters : dict
        The filters used and the names each one removed (``removed_unknown_flash_point``
        lists components dropped because their flash point is unknown, etc.).
    centre : tuple of float
        Sphere centre dD, dP, dH [MPa½].
    R0 : float
        Sphere radius [MPa½].
    """

    blends: list[Blend]
    n_candidates: int
    n_pairs_screened: int
    n_single_best: int
    filters: dict
    centre: tuple[float, float, float]
    R0: float

    rows_key = "blends"

    def to_dict(self) -> dict[str, Any]:
        """``{"blends": [...], ...}`` with JSON-safe plain types."""
        return {
            "blends": [b.to_dict() for b in self.blends],
            "centre": [float(x) for x in self.centre],
            "R0": float(self.R0),
            "n_candidates": int(self.n_candidates),
            "n_pairs_screened": int(self.n_pairs_screened),
            "n_single_best": int(self.n_single_best),
            "filters": plain(self.filters),
            "caution": CAUTION,
        }

    def _filter_lines(self) -> list[str]:
        f = self.filters
        out = []
        if f.get("exclude"):
            out.append("excluded by name: " + ", ".join(f["exclude"]))
        if f.get("min_flash_point") is not None:
            out.append(f"flash point at least {f['min_flash_point']:g} °C "
                       f"({len(f['removed_low_flash_point'])} removed below it, "
                       f"{len(f['removed_unknown_flash_point'])} with unknown flash point)")
        if f.get("max_boiling_point") is not None:
            out.append(f"boiling point at most {f['max_boiling_point']:g} °C "
                       f"({len(f['removed_high_boiling_point'])} removed above it, "
                       f"{len(f['removed_unknown_boiling_point'])} with unknown boiling point)")
        return out

    def __str__(self) -> str:
        c = self.centre
        lines = [f"Two-solvent blends for the sphere at dD {c[0]:.1f}, dP {c[1]:.1f}, "
                 f"dH {c[2]:.1f} MPa½, R0 {self.R0:.1f} MPa½",
                 f"{self.n_candidates} candidate solvents, {self.n_pairs_screened} pairs "
                 "screened" + ("" if not self.filters.get("only_blends", True) else
                              f", {self.n_single_best} left out (one solvent alone is as "
                              "good)")]
        fl = self._filter_lines()
        if fl:
            lines.append("Filters: " + "; ".join(fl))
        lines.append("")
        lines += blend_table(self.blends, "inside (1st %)", 11, lambda b: (
            (["two non-solvents"] if b.both_non_solvents else [])
            + (["one alone is as good"] if b.best_is_single else []) + b.flags))
        lines.append("")
        lines.append(CAUTION)
        return "\n".join(lines)


def blend_table(blends, window_header: str, fp_width: int, notes_of) -> list[str]:
    """The plain-text table of a blend screen (pairs or triples), one line per blend.

    ``window_header`` names the column filled by ``Blend.window_text()``; ``notes_of(b)``
    gives the notes and flags of a blend.
    """
    if not blends:
        return ["No blends to show."]
    labels = [b.label() for b in blends]
    wl = max(len("blend (volume %)"), *(len(x) for x in labels))
    ww = len(window_header)
    head = (f"{'#':>3}  {'blend (volume %)':<{wl}}  {'dD':>5} {'dP':>5} {'dH':>5} "
            f"{'RED':>5}  {window_header:<{ww}}  {'flash pt °C':<{fp_width}}  note / flags")
    lines = [head, "-" * len(head)]
    for k, (b, lab) in enumerate(zip(blends, labels), 1):
        fp = " / ".join(num(x, "{:.0f}", "?") for x in b.flash_points)
        lines.append(f"{k:>3}  {lab:<{wl}}  {b.dD:5.1f} {b.dP:5.1f} {b.dH:5.1f} "
                     f"{b.red:5.2f}  {b.window_text():<{ww}}  {fp:<{fp_width}}  "
                     + "; ".join(notes_of(b)))
    return lines


# --------------------------------------------------------------------------------------
# screening a list of solvents
# --------------------------------------------------------------------------------------

def screen_filters(candidates: Iterable[Solvent], exclude, min_flash_point,
                   max_boiling_point) -> tuple[list[Solvent], dict]:
    """The screens' candidate filter (:func:`solsphere.library.pools.apply_filters`, with
    repeated names dropped) and its record: what each limit removed, by name."""
    excl = [str(x) for x in (exclude or ())]
    candidates = list(candidates)
    f = apply_filters(candidates, exclude_names=excl, min_flash_point=min_flash_point,
                      max_boiling_point=max_boiling_point, drop_duplicates=True)
    summary: dict[str, Any] = {"exclude": excl, "min_flash_point": float_or_none(min_flash_point),
                               "max_boiling_point": float_or_none(max_boiling_point)}
    for k in ("excluded_by_name", "duplicates_dropped", "removed_low_flash_point",
              "removed_unknown_flash_point", "removed_high_boiling_point",
              "removed_unknown_boiling_point"):
        summary[k] = f.removed.get(k, [])
    seen = {s.name.casefold() for s in candidates}
    summary["exclude_not_found"] = [x for x in excl if x.casefold() not in seen]
    return f.kept, summary


def top_order(red: np.ndarray, width: np.ndarray, top: int | None) -> np.ndarray:
    """Indices of the ``top`` best by (red ascending, width descending), in order.

    ``np.argpartition`` picks the candidates before any sort; pairs tied with the
    cut-off RED are all kept for the tie-break on the window width.
    """
    m = len(red)
    if top is None or top >= m:
        cand = np.arange(m)
    elif top <= 0:
        return np.empty(0, dtype=np.int64)
    else:
        part = np.argpartition(red, top - 1)[:top]
        cut = red[part].max()
        cand = np.flatnonzero(red <= cut)
    order = np.lexsort((-width[cand], red[cand]))
    return cand[order][: (m if top is None else top)]


def screen_blends(candidates: Iterable[Solvent], centre, R0: float, top: int | None = 20,
                  exclude: Iterable[str] = (), min_flash_point: float | None = None,
                  max_boiling_point: float | None = None,
                  only_blends: bool = True) -> BlendScreen:
    """Rank all two-solvent blends of ``candidates`` by RED at their best fractions.

    Parameters
    ----------
    candidates : iterable of Solvent
        The solvents to pair (a user's shelf, or library records). Names are compared
        after ``casefold``; a repeated name is screened once.
    centre : array-like of shape (3,)
        Sphere centre dD, dP, dH [MPa½].
    R0 : float
        Sphere radius [MPa½].
    top : int or None, default=20
        How many blends to return (None: all).
    exclude : iterable of str, default=()
        Solvent names to leave out (exact ``Solvent.name`` after casefold; resolve aliases
        before calling).
    min_flash_point : float or None, default=None
        Keep only components whose flash point is known and at least this [°C]. A
        component with an unknown flash point is removed (conservative) and listed in
        ``filters["removed_unknown_flash_point"]``.
    max_boiling_point : float or None, default=None
        Keep only components whose boiling point is known and at most this [°C];
        unknown boiling points are removed likewise.
    only_blends : bool, default=True
        Rank only genuine blends (best fraction strictly between 0 and 1, distinct
        points). False keeps the pairs where one component alone is best, marked
        ``best_is_single=True``.

    Returns
    -------
    BlendScreen
        Blends sorted by RED, then by wider inside window.

    Notes
    -----
    All pairs are screened at once by :func:`pair_screen`; the ``top`` pairs are chosen
    on the arrays (``np.argpartition``) before any :class:`Blend` is built.
    """
    if top is not None:
        check_limit("top", top, "the blend list")
    R0 = check_radius(R0)
    c = as_xyz(centre, "centre")
    if top is not None and int(top) < 0:
        raise ValueError(f"top must be a non-negative integer or None; found {top!r}")
    kept, summary = screen_filters(candidates, exclude, min_flash_point, max_boiling_point)
    summary["only_blends"] = bool(only_blends)
    n = len(kept)
    points = np.array([s.point for s in kept], dtype=float).reshape(n, 3)
    res = pair_screen(points, c, R0)
    n_pairs = len(res["i"])
    single = res["single"]
    n_single = int(single.sum())
    keep = np.flatnonzero(~single) if only_blends else np.arange(n_pairs)
    width = np.nan_to_num(res["hi"][keep] - res["lo"][keep], nan=-1.0)  # no window < 0 width
    order = keep[top_order(res["red"][keep], width, None if top is None else int(top))]

    red_alone = ra(points, c) / R0 if n else np.empty(0)
    blends = [make_blend(kept[res["i"][k]], kept[res["j"][k]], float(res["phi"][k]),
                          float(res["red"][k]), float(res["lo"][k]), float(res["hi"][k]),
                          float(red_alone[res["i"][k]]), float(red_alone[res["j"][k]]),
                          bool(single[k]), R0)
              for k in order]
    return BlendScreen(blends=blends, n_candidates=n, n_pairs_screened=n_pairs,
                       n_single_best=n_single, filters=summary,
                       centre=(float(c[0]), float(c[1]), float(c[2])), R0=R0)


def make_blend(sa: Solvent, sb: Solvent, phi: float, red: float, lo: float, hi: float,
               red_a: float, red_b: float, single: bool, R0: float) -> Blend:
    """The :class:`Blend` of ``sa`` (volume fraction ``phi``) and ``sb`` from one row of
    :func:`pair_screen` (``red``, window ``lo``-``hi`` of ``phi``, NaN without one; the
    components' own RED ``red_a``, ``red_b``)."""
    window = None if np.isnan(lo) else [lo, hi]
    if phi < 0.5:  # list the larger part first; the window follows the first solvent
        sa, sb, red_a, red_b, phi = sb, sa, red_b, red_a, 1.0 - phi
        window = None if window is None else [1.0 - window[1], 1.0 - window[0]]
    x = mix([sa.point, sb.point], [phi, 1.0 - phi])
    return Blend(
        solvents=[sa.name, sb.name],
        volume_fractions=[phi, 1.0 - phi],
        mass_fractions=mass_fractions(phi, sa.density, sb.density),
        dD=float(x[0]), dP=float(x[1]), dH=float(x[2]),
        ra=red * R0, red=red,
        inside_window=window,
        window_width=0.0 if window is None else window[1] - window[0],
        both_non_solvents=bool(red_a > 1.0 and red_b > 1.0),
        red_components=[red_a, red_b],
        flash_points=[float_or_none(sa.flash_point), float_or_none(sb.flash_point)],
        boiling_points=[float_or_none(sa.boiling_point), float_or_none(sb.boiling_point)],
        twa_ppm=[float_or_none(sa.twa_ppm), float_or_none(sb.twa_ppm)],
        flags=component_flags([sa, sb]),
        best_is_single=single,
        component_points=[sa.point, sb.point],
    )
