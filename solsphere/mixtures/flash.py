r"""Flash point of a solvent blend: a conservative bound and an ideal-solution estimate.

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
"""

from __future__ import annotations

import math
from typing import Sequence

import numpy as np
from scipy.optimize import brentq

__all__ = ["blend_flash_point", "clausius_clapeyron_B", "vapour_pressure"]

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
