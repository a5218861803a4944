r"""Pure-component vapour pressure as a function of temperature, for many solvents at once.

Sources, in order, per component:

1. the compound's correlation from ``chemicals``/``thermo`` (refitted at build time to
   :math:`\ln(P/\mathrm{Pa}) = A + B/T + C\ln T + DT^2`, see ``data/build_mixtures.py``),
   scaled so that it passes through the solvent's own value at 25 °C when there is one
   (a value given in a shelf file wins; the library's value comes from the same
   correlations, so for library solvents the scale is 1 to rounding);
2. without a correlation: the two-point Clausius–Clapeyron line through the 25 °C value
   and 101.325 kPa at the normal boiling point;
3. otherwise unknown (NaN).

Outside the correlation's fitted range the formula is extrapolated (said in ``notes``).
"""

from __future__ import annotations

import math
from typing import Sequence

import numpy as np

from solsphere.mixtures.data import load_mixture_data

__all__ = ["VapourPressures", "vapour_pressure_kpa"]

KELVIN = 273.15
T25 = 298.15
ATMOSPHERE_KPA = 101.325


def _ln_pa(coef: np.ndarray, T: np.ndarray) -> np.ndarray:
    A, B, C, D = (coef[..., i] for i in range(4))
    return A + B / T + C * np.log(T) + D * T ** 2


class VapourPressures:
    """Vapour pressures of a list of solvents at any temperature.

    Parameters
    ----------
    solvents : sequence of Solvent

    Attributes
    ----------
    methods : list of str or None
        Where each component's curve comes from (None: unknown).
    known : ndarray of bool, shape (k,)

    Examples
    --------
    >>> from solsphere.library.table import load_library
    >>> lib = load_library()
    >>> vp = VapourPressures([lib.lookup("water"), lib.lookup("ethanol")])
    >>> [round(float(p), 2) for p in vp.kpa(25.0)]
    [3.18, 7.88]
    """

    def __init__(self, solvents: Sequence):
        data = load_mixture_data()
        k = len(solvents)
        self.names = [s.name for s in solvents]
        self.coef = np.zeros((k, 4))
        self.kind = np.zeros(k, dtype=int)  # 0 unknown, 1 correlation, 2 two-point line
        self.scale = np.ones(k)
        self.ranges = [None] * k
        self.methods: list[str | None] = [None] * k
        for i, s in enumerate(solvents):
            rec = data.get(s.cas) if getattr(s, "cas", None) else None
            own = s.vapour_pressure if s.vapour_pressure and s.vapour_pressure > 0 else None
            if rec is not None and rec.vp_coefficients is not None:
                self.coef[i] = rec.vp_coefficients
                self.kind[i] = 1
                self.ranges[i] = rec.vp_range
                p25 = math.exp(float(_ln_pa(self.coef[i], np.array(T25)))) / 1000.0
                label = f"chemicals correlation ({rec.vp_method})"
                if own is not None and abs(own / p25 - 1.0) > 0.02:
                    self.scale[i] = own / p25
                    label += f", scaled to the given {own:g} kPa at 25 °C"
                self.methods[i] = label
            elif own is not None and s.boiling_point is not None and s.boiling_point > 25.0:
                tb = s.boiling_point + KELVIN
                B = math.log(ATMOSPHERE_KPA / own) / (1.0 / T25 - 1.0 / tb)
                # ln P[Pa] = ln(1000 own) + B/T25 - B/T
                self.coef[i] = (math.log(1000.0 * own) + B / T25, -B, 0.0, 0.0)
                self.kind[i] = 2
                self.methods[i] = ("two-point Clausius–Clapeyron line (25 °C value and "
                                   "normal boiling point)")
        self.known = self.kind > 0

    def kpa(self, T_C) -> np.ndarray:
        """Vapour pressures [kPa]; ``T_C`` scalar -> shape (k,), shape (n,) -> (n, k),
        shape (n, k) -> (n, k). Unknown components give NaN."""
        T = np.asarray(T_C, dtype=float) + KELVIN
        if T.ndim == 1:
            T = T[:, None]
        with np.errstate(over="ignore", invalid="ignore"):
            p = np.exp(_ln_pa(self.coef, T)) / 1000.0 * self.scale
        return np.where(self.known, p, np.nan)

    def kpa_of(self, idx, T_C) -> np.ndarray:
        """Vapour pressures [kPa] of components ``idx`` (n, K) at per-row temperatures
        ``T_C`` (n,) [°C]: shape (n, K), NaN where unknown."""
        idx = np.asarray(idx, dtype=int)
        T = (np.asarray(T_C, dtype=float) + KELVIN).reshape(-1, *([1] * (idx.ndim - 1)))
        with np.errstate(over="ignore", invalid="ignore"):
            p = np.exp(_ln_pa(self.coef[idx], T)) / 1000.0 * self.scale[idx]
        return np.where(self.known[idx], p, np.nan)

    def out_of_range(self, T_C: float) -> list[str]:
        """Names of components whose correlation is extrapolated at ``T_C``."""
        T = T_C + KELVIN
        return [n for n, r in zip(self.names, self.ranges)
                if r is not None and not (r[0] - 1e-9 <= T <= r[1] + 1e-9)]


def vapour_pressure_kpa(solvent, T_C: float = 25.0) -> float | None:
    """One solvent's vapour pressure [kPa] at ``T_C`` [°C] (None when unknown).

    >>> from solsphere.library.table import load_library
    >>> round(vapour_pressure_kpa(load_library().lookup("water"), 100.0), 1)
    101.3
    """
    p = float(VapourPressures([solvent]).kpa(T_C)[0])
    return p if math.isfinite(p) else None
