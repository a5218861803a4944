r"""Drying path of a solvent blend: how the remaining liquid moves in Hansen space.

As a blend evaporates, the more volatile components leave first and the remaining
liquid's composition, and with it its δD, δP, δH, drifts. If it drifts out of the
material's sphere before the film is dry, the material can come out of solution.

Model (standard ideal-solution model)
-------------------------------------
Each component leaves at a rate proportional to its partial pressure over the liquid,
which for an ideal solution is given by Raoult's law [1]_, :math:`p_i = x_i P_i`:

.. math:: \frac{dn_i}{dt} = -K\,x_i\,P_i, \qquad x_i = n_i / \textstyle\sum_j n_j

with one common mass-transfer constant K. Dividing two of these equations removes
time and the total amount: :math:`dn_i/dn_r = (n_i P_i)/(n_r P_r)`, so, with a
reference component r and its remaining fraction :math:`s = n_r/n_{r,0} \in (0, 1]`,

.. math:: n_i(s) = n_{i,0}\, s^{P_i/P_r}

exactly, for any number of components (the same form as Rayleigh's differential
distillation with constant relative volatility [2]_). The reference is the least
volatile component, so every exponent is ≥ 1 (or 0 for a component given zero vapour
pressure, which never leaves). Since :math:`n_i V_i = \phi_{i,0} s^{P_i/P_r}`, the
path in volume fractions does not depend on the molar volumes; they only set the time
scale (:attr:`DryingPath.relative_time`, also in closed form) and the mole fractions.

Assumptions and limits: ideal solution (no activity coefficients, so no azeotropes and
no positive or negative deviations from Raoult's law); isothermal (give the vapour
pressures at the process temperature; the library's values are at 25 °C); a well-mixed
liquid film (no composition gradients, no skin formation); the same mass-transfer
coefficient for every component (real evaporation also depends on diffusivity and air
flow); volumes additive (no excess volume of mixing); the dissolved material does not
change the solvents' vapour pressures; and the material's sphere is taken as fixed
while its concentration rises. Treat the result as a guide for comparing blends, not
as a prediction of when a real film fails.

References
----------
.. [1] F.-M. Raoult, "Loi générale des tensions de vapeur des dissolvants",
   *Comptes rendus* 104 (1887) 1430–1433 (bibliographic details from memory).
.. [2] Lord Rayleigh, "On the distillation of binary mixtures", *Philosophical
   Magazine*, Series 6, 4 (1902) 521–537 (bibliographic details from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Sequence

import numpy as np
from scipy.optimize import brentq

from solsphere.hansen import as_points, mix, red
from solsphere.results import Result

__all__ = ["DryingPath", "drying_path", "volume_to_mole_fractions",
           "mole_to_volume_fractions"]

#: Number of evenly spaced evaporated fractions scanned for the first exit (plus a
#: logarithmic grid close to dryness). An excursion out of the sphere and back that is
#: shorter than about 1/SCAN_POINTS of the evaporated fraction could be missed.
SCAN_POINTS = 4001


def volume_to_mole_fractions(volume_fractions, molar_volumes) -> np.ndarray:
    """Mole fractions of a blend from its volume fractions: x_i ∝ φ_i / V_i.

    >>> volume_to_mole_fractions([0.5, 0.5], [100.0, 50.0]).round(4).tolist()
    [0.3333, 0.6667]
    """
    phi = np.asarray(volume_fractions, dtype=float)
    v = np.asarray(molar_volumes, dtype=float)
    n = phi / v
    return n / n.sum()


def mole_to_volume_fractions(mole_fractions, molar_volumes) -> np.ndarray:
    """Volume fractions of a blend from its mole fractions: φ_i ∝ x_i V_i.

    >>> mole_to_volume_fractions([1/3, 2/3], [100.0, 50.0]).round(4).tolist()
    [0.5, 0.5]
    """
    x = np.asarray(mole_fractions, dtype=float)
    v = np.asarray(molar_volumes, dtype=float)
    w = x * v
    return w / w.sum()


@dataclass
class DryingPath(Result):
    """The path of the remaining liquid while a blend evaporates.

    Attributes
    ----------
    fractions_evaporated : ndarray of shape (m,)
        Fraction of the initial liquid volume evaporated, evenly spaced from 0 to
        ``max_fraction_evaporated``.
    compositions : ndarray of shape (m, k)
        Volume fractions of the remaining liquid.
    mole_fractions : ndarray of shape (m, k)
        Mole fractions of the remaining liquid.
    points : ndarray of shape (m, 3)
        dD, dP, dH of the remaining liquid [MPa½].
    red : ndarray of shape (m,)
        RED of the remaining liquid against the sphere.
    relative_time : ndarray of shape (m,)
        Time to reach each point, in units of N0 / (K P_r): the time the initial amount
        would take to evaporate at the pure least-volatile component's rate. ``inf``
        at the end when a component has zero vapour pressure.
    leaves_at : float or None
        Fraction evaporated at which RED first exceeds 1; 0.0 when the blend starts
        outside; None when the liquid stays inside to dryness.
    starts_inside : bool
        RED ≤ 1 before any evaporation.
    last_component : int or None
        Index of the component that remains at dryness (the least volatile); None when
        several share the lowest vapour pressure (the residue is then their mixture).
    residue : ndarray of shape (k,)
        Volume fractions of the liquid in the limit of dryness.
    red_at_end : float
        RED of that residue.
    exit_composition : ndarray of shape (k,) or None
        Volume fractions of the remaining liquid where it leaves the sphere.
    max_fraction_evaporated : float
        1.0, or less when some components were given zero vapour pressure.
    names : tuple of str
        Component names (``component 1`` … when none were given).
    centre : ndarray of shape (3,)
        Sphere centre [MPa½].
    R0 : float
        Sphere radius [MPa½].
    notes : list of str
        Caveats for this path.
    """

    fractions_evaporated: np.ndarray
    compositions: np.ndarray
    mole_fractions: np.ndarray
    points: np.ndarray
    red: np.ndarray
    relative_time: np.ndarray
    leaves_at: float | None
    starts_inside: bool
    last_component: int | None
    residue: np.ndarray
    red_at_end: float
    exit_composition: np.ndarray | None
    max_fraction_evaporated: float
    names: tuple[str, ...]
    centre: np.ndarray
    R0: float
    notes: list[str] = field(default_factory=list)

    method = ("isothermal evaporation of an ideal solution (Raoult's law), "
              "closed form n_i = n_i0 s^(P_i/P_r)")

    @property
    def stays_inside(self) -> bool:
        """True when the remaining liquid never leaves the sphere."""
        return self.leaves_at is None

    @property
    def inside_until(self) -> float:
        """Fraction evaporated up to which the liquid stays inside (for ranking blends).

        ``leaves_at``, or ``max_fraction_evaporated`` when it never leaves.
        """
        return self.max_fraction_evaporated if self.leaves_at is None else self.leaves_at

    def records(self) -> list[dict]:
        """One row per point of the path: fraction evaporated, composition, δ's, RED."""
        return [dict({"evaporated": float(u)},
                     **{f"phi_{n}": float(x) for n, x in zip(self.names, comp)},
                     dD=float(p[0]), dP=float(p[1]), dH=float(p[2]), red=float(r))
                for u, comp, p, r in zip(self.fractions_evaporated, self.compositions,
                                         self.points, self.red)]

    def to_dict(self) -> dict:
        """Plain JSON-safe types (lists, floats, None)."""
        def floats(a):
            return [None if not math.isfinite(v) else float(v) for v in np.ravel(a)]

        return {
            "method": self.method,
            "names": list(self.names),
            "centre": floats(self.centre),
            "R0": float(self.R0),
            "fractions_evaporated": floats(self.fractions_evaporated),
            "compositions": [floats(row) for row in self.compositions],
            "mole_fractions": [floats(row) for row in self.mole_fractions],
            "points": [floats(row) for row in self.points],
            "red": floats(self.red),
            "relative_time": floats(self.relative_time),
            "leaves_at": None if self.leaves_at is None else float(self.leaves_at),
            "stays_inside": self.stays_inside,
            "starts_inside": bool(self.starts_inside),
            "inside_until": float(self.inside_until),
            "last_component": (None if self.last_component is None
                               else self.names[self.last_component]),
            "last_component_index": self.last_component,
            "residue": floats(self.residue),
            "red_at_end": float(self.red_at_end),
            "exit_composition": (None if self.exit_composition is None
                                 else floats(self.exit_composition)),
            "max_fraction_evaporated": float(self.max_fraction_evaporated),
            "notes": list(self.notes),
        }

    def _describe(self, phi) -> str:
        parts = [f"{100 * f:.1f} % {n}" for f, n in zip(phi, self.names) if f > 5e-4]
        return ", ".join(parts) if parts else "(nothing)"

    def __str__(self) -> str:
        lines = ["Drying path (ideal solution, Raoult's law, isothermal)"]
        state = "inside" if self.starts_inside else "OUTSIDE"
        lines.append(f"  start:  RED {self.red[0]:.2f} ({state}); "
                     f"{self._describe(self.compositions[0])}")
        if not self.starts_inside:
            lines.append("  the blend starts outside the sphere (leaves at 0 % evaporated)")
        elif self.leaves_at is None:
            end = "dryness" if self.max_fraction_evaporated == 1.0 else (
                f"the end of evaporation ({100 * self.max_fraction_evaporated:.1f} %)")
            lines.append(f"  stays inside to {end}")
        else:
            lines.append(f"  leaves the sphere after {100 * self.leaves_at:.1f} % evaporated; "
                         f"liquid then {self._describe(self.exit_composition)}")
        lines.append(f"  end:    RED {self.red_at_end:.2f}; residue "
                     f"{self._describe(self.residue)}")
        if self.last_component is not None:
            lines.append(f"  last to evaporate: {self.names[self.last_component]}")
        for note in self.notes:
            lines.append(f"  note: {note}")
        lines.append("  A model for comparing blends, not a guarantee: confirm at the bench.")
        return "\n".join(lines)


def _component_array(values, k: int, what: str, unit: str, names, present) -> np.ndarray:
    """Float array of shape (k,); None/NaN for a present component -> ValueError."""
    if values is None:
        raise ValueError(f"{what} missing for every component; give them in {unit}")
    vals = list(values) if not np.isscalar(values) else [values]
    if len(vals) != k:
        raise ValueError(f"{what}: expected {k} values (one per component); found {len(vals)}")
    out = np.array([np.nan if v is None else float(v) for v in vals], dtype=float)
    missing = [i for i in range(k) if present[i] and not math.isfinite(out[i])]
    if missing:
        which = ", ".join(f"{i + 1} ({names[i]})" for i in missing)
        raise ValueError(f"{what} missing for component(s) {which}; give it in {unit}")
    return out


def drying_path(points, volume_fractions, molar_volumes, vapour_pressures, centre,
                R0: float, n_points: int = 101, *,
                names: Sequence[str] | None = None) -> DryingPath:
    """Follow the remaining liquid of an evaporating blend through the sphere.

    Parameters
    ----------
    points : array-like of shape (k, 3)
        Components' dD, dP, dH [MPa½].
    volume_fractions : array-like of shape (k,)
        Initial volume parts (normalised to sum to 1); zero parts are allowed.
    molar_volumes : array-like of shape (k,)
        Molar volumes [cm³/mol]; they set the time scale and mole fractions only.
    vapour_pressures : array-like of shape (k,)
        Pure-component vapour pressures at the process temperature [kPa] (the
        library's values are at 25 °C). Zero means the component never evaporates.
    centre : array-like of shape (3,)
        Sphere centre [MPa½].
    R0 : float
        Sphere radius [MPa½].
    n_points : int, default=101
        Number of points on the returned path (evenly spaced in fraction evaporated).
    names : sequence of str, optional
        Component names for reports and messages.

    Returns
    -------
    DryingPath

    Raises
    ------
    ValueError
        Shapes do not match, a vapour pressure or molar volume is missing (the message
        lists which components), or values are out of range.

    Examples
    --------
    >>> path = drying_path([[18.0, 1.4, 2.0], [15.8, 8.8, 19.4]], [0.7, 0.3],
    ...                    [106.8, 58.5], [3.8, 7.9], [17.5, 4.0, 6.0], 4.0,
    ...                    names=["toluene", "ethanol"])  # invented sphere, approximate data
    >>> path.starts_inside, path.names[path.last_component], round(path.leaves_at, 3)
    (True, 'toluene', 0.903)
    """
    P = as_points(points)
    k = P.shape[0]
    names = tuple(names) if names is not None else tuple(f"component {i + 1}" for i in range(k))
    if len(names) != k:
        raise ValueError(f"names: expected {k}; found {len(names)}")
    phi0 = np.asarray(volume_fractions, dtype=float).reshape(-1)
    if phi0.shape[0] != k:
        raise ValueError(f"volume_fractions: expected {k} values; found {phi0.shape[0]}")
    if not np.all(np.isfinite(phi0)) or np.any(phi0 < 0) or not phi0.sum() > 0:
        raise ValueError("volume fractions must be non-negative and sum to a positive number")
    phi0 = phi0 / phi0.sum()
    present = phi0 > 0
    Vm = _component_array(molar_volumes, k, "molar volume", "cm³/mol", names, present)
    Pv = _component_array(vapour_pressures, k, "vapour pressure",
                          "kPa at the process temperature", names, present)
    if np.any(Vm[present] <= 0):
        raise ValueError("molar volumes must be positive (cm³/mol)")
    if np.any(Pv[present] < 0):
        raise ValueError("vapour pressures must be non-negative (kPa)")
    volatile = present & (Pv > 0)
    if not volatile.any():
        raise ValueError("no component of the blend has a positive vapour pressure; "
                         "nothing evaporates")
    if not (isinstance(n_points, (int, np.integer)) and n_points >= 2):
        raise ValueError(f"n_points must be an integer ≥ 2; found {n_points!r}")
    centre = np.asarray(centre, dtype=float).reshape(3)
    R0 = float(R0)
    if not R0 > 0:
        raise ValueError(f"R0 must be positive; found {R0!r}")

    P_ref = float(Pv[volatile].min())
    rate = np.where(present, np.where(np.isfinite(Pv), Pv, 0.0) / P_ref, 0.0)  # r_i
    logphi = np.where(present, np.log(np.where(present, phi0, 1.0)), -np.inf)
    x0 = np.where(present, phi0 / np.where(present, Vm, 1.0), 0.0)
    x0 = x0 / x0.sum()
    nonvol = present & ~volatile
    f_max = 1.0 - float(phi0[nonvol].sum())
    # residue in the limit u -> inf: components with the smallest exponent
    if nonvol.any():
        keep = nonvol
    else:
        keep = present & np.isclose(rate, 1.0, rtol=0, atol=1e-12)
    residue = np.where(keep, phi0, 0.0)
    residue = residue / residue.sum()
    last = int(np.flatnonzero(keep)[0]) if keep.sum() == 1 else None

    # u = -ln s >= 0; volume of component i left (per unit initial volume) = phi_i e^{-r_i u}
    def composition(u):
        u = np.atleast_1d(np.asarray(u, dtype=float))
        with np.errstate(invalid="ignore"):
            lw = logphi[None, :] - rate[None, :] * u[:, None]
        fin = np.isinf(u)
        lw[fin] = np.where(residue > 0, np.log(np.where(residue > 0, residue, 1.0)), -np.inf)
        m = lw.max(axis=1, keepdims=True)
        w = np.exp(lw - m)
        return w / w.sum(axis=1, keepdims=True)

    def remaining(u):  # 1 - fraction evaporated
        u = np.atleast_1d(np.asarray(u, dtype=float))
        with np.errstate(invalid="ignore"):
            lw = logphi[None, :] - rate[None, :] * u[:, None]
        out = np.exp(lw).sum(axis=1)
        return np.where(np.isinf(u), 1.0 - f_max, out)

    def u_of_remaining(v):
        """Vectorised bisection: u with remaining(u) = v, for 1-f_max < v <= 1."""
        v = np.atleast_1d(np.asarray(v, dtype=float))
        lo = np.zeros_like(v)
        hi = np.ones_like(v)
        for _ in range(200):
            too_low = remaining(hi) > v
            if not too_low.any():
                break
            hi = np.where(too_low, 2.0 * hi, hi)
        for _ in range(200):
            mid = 0.5 * (lo + hi)
            big = remaining(mid) > v
            lo = np.where(big, mid, lo)
            hi = np.where(big, hi, mid)
            if np.all(hi - lo <= 1e-13 * np.maximum(1.0, hi)):
                break
        return 0.5 * (lo + hi)

    def red_of_phi(phi):
        phi = np.atleast_2d(phi)
        pts = phi @ P
        return red(pts, centre, R0), pts

    def time_of_u(u):
        u = np.atleast_1d(np.asarray(u, dtype=float))
        out = np.zeros_like(u)
        for i in np.flatnonzero(present):
            if rate[i] > 0:
                out += x0[i] * (-np.expm1(-rate[i] * u)) / rate[i]
            else:
                out += x0[i] * u
        return out

    # the reported path: evenly spaced in fraction evaporated
    f_grid = np.linspace(0.0, f_max, n_points)
    u_grid = np.empty(n_points)
    u_grid[0] = 0.0
    u_grid[-1] = np.inf
    if n_points > 2:
        u_grid[1:-1] = u_of_remaining(1.0 - f_grid[1:-1])
    phi_grid = composition(u_grid)
    red_grid, pts_grid = red_of_phi(phi_grid)
    t_grid = time_of_u(u_grid)
    if nonvol.any():
        t_grid[-1] = np.inf
    mole_grid = phi_grid / np.where(present, Vm, 1.0)[None, :]
    mole_grid = mole_grid / mole_grid.sum(axis=1, keepdims=True)

    red0 = float(red_grid[0])
    red_end = float(red_grid[-1])
    starts_inside = red0 <= 1.0
    notes: list[str] = []
    leaves_at: float | None
    exit_phi = None
    if not starts_inside:
        leaves_at = 0.0
        exit_phi = phi0.copy()
        notes.append("the blend starts outside the sphere")
    else:
        # scan: fine even grid in f plus a logarithmic grid in remaining volume near dryness
        f_scan = np.linspace(0.0, f_max, SCAN_POINTS)[1:-1]
        left = 1.0 - f_max
        v_log = left + np.geomspace(1e-12, 1.0, 400) * (1.0 - left)
        v_scan = np.unique(np.concatenate([1.0 - f_scan, v_log[v_log < 1.0]]))[::-1]
        u_scan = np.concatenate([[0.0], u_of_remaining(v_scan), [np.inf]])
        r_scan, _ = red_of_phi(composition(u_scan))
        out = np.flatnonzero(r_scan > 1.0)
        if out.size == 0:
            leaves_at = None
        else:
            j = int(out[0])
            a, b = u_scan[j - 1], u_scan[j]

            def g(u):
                return float(red(mix(P, composition(u)[0]), centre, R0)[0]) - 1.0

            if np.isinf(b):  # leaves only in the dryness limit
                b = max(2.0 * a, 1.0)
                while g(b) <= 0.0:
                    a, b = b, 2.0 * b
                    if b > 1e6:
                        break
            if g(b) > 0.0:
                u_star = brentq(g, a, b, xtol=1e-14, rtol=4 * np.finfo(float).eps, maxiter=500)
                leaves_at = float(1.0 - remaining(u_star)[0])
                exit_phi = composition(u_star)[0]
            else:  # pragma: no cover - only at the float limit of dryness
                leaves_at = f_max
                exit_phi = residue.copy()
        if leaves_at is not None and red_end <= 1.0:
            notes.append("the liquid leaves the sphere and comes back in later; "
                         "a film can fail during the excursion")
    if nonvol.any():
        notes.append("components with zero vapour pressure never evaporate: "
                     + ", ".join(names[i] for i in np.flatnonzero(nonvol)))

    return DryingPath(
        fractions_evaporated=f_grid, compositions=phi_grid, mole_fractions=mole_grid,
        points=pts_grid, red=red_grid, relative_time=t_grid, leaves_at=leaves_at,
        starts_inside=starts_inside, last_component=last, residue=residue,
        red_at_end=red_end, exit_composition=exit_phi, max_fraction_evaporated=f_max,
        names=names, centre=centre, R0=R0, notes=notes)
