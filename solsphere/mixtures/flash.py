r"""Flash point of a solvent blend: Liaw's model with activity coefficients.

:func:`liaw_flash_points` (many blends at once) and :func:`mixture_flash_point` (one
blend) solve Liaw's model for non-ideal solutions [2]_,

.. math:: \sum_{i\ \mathrm{flammable}} \frac{x_i\,\gamma_i(T)\,P_i(T)}{P_i(T_{fp,i})} = 1,

with activity coefficients from :mod:`solsphere.mixtures.activity` (Dortmund UNIFAC where
its groups exist) and vapour pressures from :mod:`solsphere.mixtures.vapour`. Water and
other components that do not flash enter through the mole fractions and the activity
coefficients of the others (they have no term of their own). Because the model is an
estimate and flash points are a safety number, the reported ``estimate`` is the model's
root minus :data:`SAFETY_MARGIN_C` (rounded towards the safe side); ``model`` keeps the
root itself. When the estimate lies below the lowest flash point of the blend's
components, the result says so (minimum-flash-point behaviour).

The older ideal-solution functions below (:func:`blend_flash_point`, with a two-point
Clausius–Clapeyron line) are kept for callers that have only 25 °C data.

Ideal-solution version (kept)
-----------------------------

Two numbers, both in °C:

- **conservative**: the lowest flash point among the blend's components (those with a
  non-zero fraction). Always available when every component's flash point is known.
- **estimate**: the temperature at which the blend's vapour reaches the lower
  flammability limit, by a Le Chatelier-type rule applied to the liquid (the model of
  Liaw et al. [1]_ for ideal solutions, activity coefficients = 1):

  .. math:: \sum_i \frac{x_i\,P_i(T)}{P_i(T_{fp,i})} = 1

  with :math:`x_i` the liquid mole fractions and :math:`T_{fp,i}` the pure
  components' flash points. Each :math:`P_i(T)` comes from a two-point
  Clausius–Clapeyron line, :math:`\ln P = A - B/T`, through the vapour pressure at
  25 °C and 101.325 kPa at the normal boiling point (an approximation: it ignores the
  temperature dependence of the heat of vaporisation and extrapolates outside
  25 °C … Tb). Only B enters the rule, since
  :math:`P_i(T)/P_i(T_{fp,i}) = \exp[B_i (1/T_{fp,i} - 1/T)]`. The left side rises
  with T, so the root is unique, and for blends of flammable components it lies between
  the lowest and the highest component flash point.

Limits: real blends deviate from Raoult's law. Mixtures with strong positive deviations
(for example alcohols with hydrocarbons) can show minimum-flash-point behaviour and
flash *below* the lowest component (reported by Liaw and co-workers; from memory), so
neither number is a guarantee. Use measured flash points of the actual blend for
safety decisions.

A component that does not flash (water, many chlorinated solvents) is given
``math.inf`` as its flash point: it dilutes the vapour and has no term of its own.
``None`` (or NaN) means "unknown".

References
----------
.. [1] H.-J. Liaw, Y.-H. Lee, C.-L. Tang, H.-H. Hsu, J.-H. Liu, "A mathematical model
   for predicting the flash point of binary solutions", *J. Loss Prev. Process Ind.*
   15 (2002) 429–438 (bibliographic details from memory).
.. [2] H.-J. Liaw, C.-C. Chen, C.-C. Chang, "Model for predicting the flash point of
   ternary flammable solutions of liquid", *Combust. Flame* 137 (2004) 175–187; and
   H.-J. Liaw, Y.-Y. Chiu, "The prediction of the flash point for binary aqueous-organic
   solutions", *J. Hazard. Mater.* 101 (2003) 83–106 (bibliographic details from memory).
"""

from __future__ import annotations

import math
from typing import Sequence

import numpy as np
from scipy.optimize import brentq

from solsphere.mixtures.activity import METHODS, ActivityModel
from solsphere.mixtures.vapour import VapourPressures

__all__ = ["blend_flash_point", "clausius_clapeyron_B", "vapour_pressure",
           "liaw_flash_points", "mixture_flash_point", "NON_FLASHING_CAS", "SAFETY_MARGIN_C",
           "component_flash_points", "blend_flash_results"]

KELVIN = 273.15
ATMOSPHERE_KPA = 101.325
T25 = 25.0 + KELVIN

METHOD = ("conservative: lowest component flash point; estimate: ideal-solution "
          "Le Chatelier-type rule sum x_i P_i(T)/P_i(T_fp,i) = 1 (Liaw et al. 2002), "
          "P_i(T) from ln P linear in 1/T through P(25 °C) and 101.325 kPa at the "
          "normal boiling point")
CAVEAT = ("estimates for an ideal solution; blends with positive deviations from "
          "Raoult's law can flash below the lowest component: not a guarantee, use "
          "measured values for safety decisions")


def clausius_clapeyron_B(vp25_kPa: float, boiling_point_C: float) -> float:
    r"""Slope B [K] of :math:`\ln P = A - B/T` through P(25 °C) and (Tb, 101.325 kPa).

    .. math:: B = \frac{\ln(101.325 / P_{25})}{1/T_{25} - 1/T_b}

    >>> round(clausius_clapeyron_B(3.79, 110.6), 1)  # toluene-like, approximate data
    4392.1
    """
    p = float(vp25_kPa)
    tb = float(boiling_point_C) + KELVIN
    if not p > 0:
        raise ValueError(f"vapour pressure at 25 °C must be positive; found {vp25_kPa!r} kPa")
    if tb == T25:
        raise ValueError("boiling point of 25 °C gives no slope; the two points coincide")
    B = math.log(ATMOSPHERE_KPA / p) / (1.0 / T25 - 1.0 / tb)
    if not B > 0:
        raise ValueError(f"vapour pressure {p} kPa at 25 °C and boiling point "
                         f"{boiling_point_C} °C are inconsistent (P must rise with T)")
    return B


def vapour_pressure(T_C, vp25_kPa: float, boiling_point_C: float) -> np.ndarray:
    """Vapour pressure [kPa] at ``T_C`` [°C] from the two-point Clausius–Clapeyron line.

    >>> round(float(vapour_pressure(110.6, 3.79, 110.6)[0]), 3)
    101.325
    """
    B = clausius_clapeyron_B(vp25_kPa, boiling_point_C)
    T = np.atleast_1d(np.asarray(T_C, dtype=float)) + KELVIN
    return float(vp25_kPa) * np.exp(B * (1.0 / T25 - 1.0 / T))


def _as_list(values, k: int, what: str) -> list[float]:
    vals = list(values)
    if len(vals) != k:
        raise ValueError(f"{what}: expected {k} values (one per component); found {len(vals)}")
    return [math.nan if v is None else float(v) for v in vals]


def blend_flash_point(mole_fractions, flash_points_C, vp25_kPa, boiling_points_C,
                      *, names: Sequence[str] | None = None) -> dict:
    """Flash point of a blend: conservative bound and ideal-solution estimate.

    Parameters
    ----------
    mole_fractions : array-like of shape (k,)
        Liquid mole fractions (normalised to sum to 1). From volume fractions use
        :func:`solsphere.drying.volume_to_mole_fractions`.
    flash_points_C : sequence of float or None, length k
        Pure-component flash points [°C]; ``None``/NaN unknown, ``math.inf`` for a
        component that does not flash.
    vp25_kPa : sequence of float or None, length k
        Vapour pressures at 25 °C [kPa].
    boiling_points_C : sequence of float or None, length k
        Normal boiling points [°C].
    names : sequence of str, optional
        Component names for the notes.

    Returns
    -------
    dict
        ``conservative`` (°C or None), ``conservative_component`` (index or None),
        ``estimate`` (°C or None), ``method`` (text), ``caveat`` (text), ``notes``
        (list of text: why a part is None, extrapolations). JSON-safe.

    Examples
    --------
    >>> r = blend_flash_point([1.0], [4.0], [3.79], [110.6])  # pure toluene-like
    >>> r["conservative"], round(r["estimate"], 6)
    (4.0, 4.0)
    """
    x = np.asarray(mole_fractions, dtype=float).reshape(-1)
    k = x.shape[0]
    names = list(names) if names is not None else [f"component {i + 1}" for i in range(k)]
    if len(names) != k:
        raise ValueError(f"names: expected {k}; found {len(names)}")
    if not np.all(np.isfinite(x)) or np.any(x < 0) or not x.sum() > 0:
        raise ValueError("mole fractions must be non-negative and sum to a positive number")
    x = x / x.sum()
    fp = _as_list(flash_points_C, k, "flash points")
    pv = _as_list(vp25_kPa, k, "vapour pressures")
    tb = _as_list(boiling_points_C, k, "boiling points")
    present = [i for i in range(k) if x[i] > 0]
    notes: list[str] = []
    out = {"conservative": None, "conservative_component": None, "estimate": None,
           "method": METHOD, "caveat": CAVEAT, "notes": notes}

    unknown = [i for i in present if math.isnan(fp[i])]
    flammable = [i for i in present if math.isfinite(fp[i])]
    if unknown:
        notes.append("flash point unknown for " + ", ".join(names[i] for i in unknown))
        return out
    if not flammable:
        notes.append("no component of the blend has a flash point (all marked as not flashing)")
        return out
    low = min(flammable, key=lambda i: fp[i])
    out["conservative"] = float(fp[low])
    out["conservative_component"] = int(low)

    B = {}
    for i in flammable:
        if math.isnan(pv[i]) or math.isnan(tb[i]):
            missing = "vapour pressure at 25 °C" if math.isnan(pv[i]) else "boiling point"
            notes.append(f"no estimate: {missing} unknown for {names[i]}")
            return out
        try:
            B[i] = clausius_clapeyron_B(pv[i], tb[i])
        except ValueError as exc:
            notes.append(f"no estimate: {names[i]}: {exc}")
            return out

    Tfp = {i: fp[i] + KELVIN for i in flammable}

    def h(T):
        return sum(x[i] * math.exp(B[i] * (1.0 / Tfp[i] - 1.0 / T)) for i in flammable) - 1.0

    lo = min(Tfp.values())
    hi = max(Tfp.values())
    if len(flammable) == 1 and abs(x[flammable[0]] - 1.0) < 1e-15:
        out["estimate"] = float(fp[flammable[0]])
        return out
    if h(hi) < 0.0:  # non-flashing components dilute the vapour: the root lies higher
        step = 10.0
        while h(hi + step) < 0.0:
            step *= 2.0
            if hi + step > 2000.0:
                notes.append("no estimate: the flammable part is too dilute to flash")
                return out
        lo, hi = hi, hi + step
        notes.append("estimate lies above every component's flash point (components that "
                     "do not flash dilute the vapour): an extrapolation")
    T_star = brentq(h, lo, hi, xtol=1e-12, rtol=4 * np.finfo(float).eps) if h(lo) < 0 else lo
    out["estimate"] = float(T_star - KELVIN)
    if any(T_star > tb[i] + KELVIN for i in present if math.isfinite(tb[i])):
        notes.append("estimate lies above a component's boiling point: treat with caution")
    return out


# ------------------------------------------------------------------ non-ideal (Liaw)

#: Components that do not flash in a closed-cup test although the library has no flash
#: point for them: water and fully chlorinated or heavily chlorinated solvents
#: (dichloromethane, chloroform, carbon tetrachloride, trichloroethylene,
#: tetrachloroethylene, 1,1,1-trichloroethane: "no flash point" in safety data sheets,
#: from memory).
NON_FLASHING_CAS = frozenset({"7732-18-5", "75-09-2", "67-66-3", "56-23-5", "79-01-6",
                              "127-18-4", "71-55-6"})
#: Subtracted from the model's root so the reported estimate errs on the safe side [°C].
#: Liaw's model with UNIFAC typically reproduces measured closed-cup flash points of
#: binary solutions within 1-3 °C (from memory); checked here against ethanol-water
#: (tests/test_reference_mixtures.py). Our choice of margin.
SAFETY_MARGIN_C = 2.0
LIAW_CAVEAT = ("an estimate by Liaw's model with activity coefficients (minus a safety "
               "margin), not a measurement: use measured flash points of the actual blend "
               "for safety decisions")


def component_flash_points(solvents) -> np.ndarray:
    """Flash points [°C] for the model: the library's, ``inf`` for a component that does
    not flash (:data:`NON_FLASHING_CAS`), NaN when unknown."""
    out = []
    for s in solvents:
        if s.flash_point is not None:
            out.append(float(s.flash_point))
        elif getattr(s, "cas", None) in NON_FLASHING_CAS:
            out.append(math.inf)
        else:
            out.append(math.nan)
    return np.array(out, dtype=float)


def liaw_flash_points(model, vapour, flash_C, idx, x, *, T_min: float = -60.0,
                      T_max: float = 350.0, iterations: int = 48):
    """Liaw's flash point of many blends at once.

    All rows together: bisection in temperature on the vapour pressures with the
    activity coefficients held, then γ updated at the new roots, until the roots move
    by less than 1e-5 K (γ depends only weakly on temperature).

    Parameters
    ----------
    model : ActivityModel
        Activity model over the pool of components.
    vapour : VapourPressures
        Vapour pressures of the same pool.
    flash_C : array-like of shape (C,)
        Pool flash points [°C] (:func:`component_flash_points`).
    idx : array-like of int, shape (n, K)
        Each blend's components (indices into the pool).
    x : array-like of shape (n, K)
        Liquid mole fractions.

    Returns
    -------
    T : ndarray of shape (n,)
        The model's root [°C] (no margin); NaN where it cannot be estimated.
    method : ndarray of int, shape (n,)
        Activity-model code of each row.
    why : list of str or None
        Why a row has no estimate.
    """
    idx = np.atleast_2d(np.asarray(idx, dtype=int))
    x = np.atleast_2d(np.asarray(x, dtype=float))
    x = x / x.sum(axis=1, keepdims=True)
    n = idx.shape[0]
    fp = np.asarray(flash_C, dtype=float)[idx]  # (n, K)
    present = x > 0
    flam = present & np.isfinite(fp)
    why: list[str | None] = [None] * n
    unknown_fp = (present & np.isnan(fp)).any(axis=1)
    p_fp = vapour.kpa_of(idx.reshape(-1, 1),
                         np.where(np.isfinite(fp), fp, 25.0).ravel()).reshape(idx.shape)
    no_vp = (flam & ~np.isfinite(p_fp)).any(axis=1)
    nothing = ~flam.any(axis=1)
    bad = unknown_fp | no_vp | nothing
    for r in np.flatnonzero(bad):
        why[r] = ("a component's flash point is unknown" if unknown_fp[r] else
                  "no component of the blend flashes" if nothing[r] else
                  "a flammable component has no vapour-pressure data")
    p_fp = np.where(flam, p_fp, 1.0)

    def h(T, lg):
        p = vapour.kpa_of(idx, T)
        terms = np.where(flam, x * np.exp(lg) * np.nan_to_num(p) / p_fp, 0.0)
        return terms.sum(axis=1) - 1.0

    # γ depends only weakly on T: solve with γ held at the last estimate (bisection on
    # the vapour pressures alone), update γ at the new root, repeat until it settles
    T = np.full(n, 25.0)
    lg, method = model.ln_gamma(idx, x, T)
    for _outer in range(8):
        lo = np.full(n, T_min)
        hi = np.full(n, T_max)
        below = h(lo, lg) > 0
        above = h(hi, lg) < 0
        for _ in range(iterations):
            mid = 0.5 * (lo + hi)
            up = h(mid, lg) < 0
            lo = np.where(up, mid, lo)
            hi = np.where(up, hi, mid)
        T_new = 0.5 * (lo + hi)
        settled = np.nanmax(np.abs(T_new - T)) < 1e-5
        T = T_new
        if settled:
            break
        lg, _ = model.ln_gamma(idx, x, T, method=method)
    for r in np.flatnonzero(~bad & above):
        why[r] = f"the flammable part is too dilute to flash below {T_max:g} °C"
    for r in np.flatnonzero(~bad & below):
        why[r] = f"below {T_min:g} °C"
    T = np.where(bad | above | below, np.nan, T)
    return T, method, why


def mixture_flash_point(solvents, mole_fractions, *, model=None, vapour=None) -> dict:
    """Flash point of one blend by Liaw's model with activity coefficients.

    Parameters
    ----------
    solvents : sequence of Solvent, length k
    mole_fractions : array-like of shape (k,)
    model, vapour : ActivityModel, VapourPressures, optional
        Built from ``solvents`` when not given.

    Returns
    -------
    dict
        ``estimate`` (°C, the model's root minus :data:`SAFETY_MARGIN_C`, or None),
        ``model`` (the root itself), ``conservative`` (lowest component flash point),
        ``conservative_component``, ``minimum_flash_point`` (True when the estimate is
        below every component's flash point), ``activity_model``, ``method``,
        ``caveat``, ``notes``. JSON-safe.

    Examples
    --------
    >>> from solsphere.library.table import load_library
    >>> lib = load_library()
    >>> r = mixture_flash_point([lib.lookup("toluene"), lib.lookup("ethanol")], [0.385, 0.615])
    >>> r["minimum_flash_point"], r["estimate"] < min(4.0, 13.0)
    (True, True)
    """
    solvents = list(solvents)
    k = len(solvents)
    x = np.asarray(mole_fractions, dtype=float).reshape(-1)
    if x.shape[0] != k or not np.all(np.isfinite(x)) or np.any(x < 0) or not x.sum() > 0:
        raise ValueError("mole fractions: one non-negative value per component, sum > 0")
    model = model or ActivityModel(solvents)
    vapour = vapour or VapourPressures(solvents)
    return blend_flash_results(model, vapour, np.arange(k)[None], x[None])[0]


def blend_flash_results(model, vapour, idx, x, *, split=None) -> list[dict]:
    """:func:`mixture_flash_point`'s dict for many blends at once (one Liaw solve).

    ``idx`` (n, K) indexes ``model.solvents`` (the same pool as ``vapour``); ``x`` (n, K)
    are liquid mole fractions. ``split`` (optional, one entry per row): None, or the
    mole fractions of the two liquid phases of a blend that separates
    (:func:`solsphere.mixtures.phases.phase_compositions`); such a blend gets the lower
    of its two phases' flash points (the safe side).
    """
    idx = np.atleast_2d(np.asarray(idx, dtype=int))
    x = np.atleast_2d(np.asarray(x, dtype=float))
    x = x / x.sum(axis=1, keepdims=True)
    fp_pool = component_flash_points(model.solvents)
    T, method, why = liaw_flash_points(model, vapour, fp_pool, idx, x)
    two = [r for r in range(idx.shape[0]) if split is not None and split[r] is not None]
    if two:
        ph = np.array([y for r in two for y in split[r]])
        T2, _, _ = liaw_flash_points(model, vapour, fp_pool, np.repeat(idx[two], 2, axis=0), ph)
        for k, r in enumerate(two):
            lowest = np.nanmin(T2[2 * k:2 * k + 2]) if np.isfinite(T2[2 * k:2 * k + 2]).any() else np.nan
            if np.isfinite(lowest):
                T[r] = lowest if not np.isfinite(T[r]) else min(T[r], lowest)
    out = []
    for r in range(idx.shape[0]):
        fp = fp_pool[idx[r]]
        label = METHODS[int(method[r])]
        notes: list[str] = []
        d = {"estimate": None, "model": None, "conservative": None,
             "conservative_component": None, "minimum_flash_point": False,
             "activity_model": label,
             "method": (f"Liaw's model with activity coefficients ({label}), vapour "
                        f"pressures from chemicals correlations; estimate = model - "
                        f"{SAFETY_MARGIN_C:g} °C, rounded down"),
             "caveat": LIAW_CAVEAT, "safety_margin": SAFETY_MARGIN_C, "notes": notes}
        flam = [i for i in range(idx.shape[1]) if x[r, i] > 0 and math.isfinite(fp[i])]
        if flam:
            low = min(flam, key=lambda i: fp[i])
            d["conservative"] = float(fp[low])
            d["conservative_component"] = int(low)
        if why[r] is not None:
            notes.append(f"no estimate: {why[r]}")
        else:
            root = float(T[r])
            d["model"] = root
            d["estimate"] = float(math.floor(root - SAFETY_MARGIN_C))
            if d["conservative"] is not None and root < d["conservative"] - 0.5:
                d["minimum_flash_point"] = True
                notes.append("minimum-flash-point behaviour: the blend is estimated to "
                             "flash below its lowest-flashing component")
            if r in two:
                notes.append("two liquid phases: the lower of the phases' flash points")
            if int(method[r]) >= 2:
                notes.append("no UNIFAC groups for every component: activity coefficients "
                             "from the rough fallback; treat the estimate with extra caution")
        out.append(d)
    return out
