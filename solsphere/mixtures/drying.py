r"""Drying path of a solvent blend: how the remaining liquid moves in Hansen space.

Real-mixture model (:func:`drying_paths`, :func:`mixture_drying_path`)
--------------------------------------------------------------------
Each component leaves the film at the molar rate

.. math:: J_i = k_i\,\frac{x_i\gamma_i P_i(T_s) - p_{i,\infty}}{RT}, \qquad
          k_i \propto D_{i,\mathrm{air}}^{2/3}

(gas-side mass transfer with the Chilton–Colburn analogy [3]_; activity coefficients
from :mod:`solsphere.mixtures.activity`; :math:`p_{\infty}` is the water in the air,
``humidity`` × its vapour pressure, zero for the other solvents). The gas diffusivities
scale as in kinetic theory, :math:`D \propto \sqrt{1/M + 1/M_\mathrm{air}}/(V^{1/3} +
V_\mathrm{air}^{1/3})^2` with the liquid molar volume as the size measure (an
approximation of Fuller's diffusion volumes). The film is cooled by evaporation: its
temperature :math:`T_s` balances the latent heat against heat from the air and the
substrate, :math:`\beta c_{p,\mathrm{air}}(T - T_s) = \sum_i (k_i/k_\mathrm{ref})
(x_i\gamma_iP_i(T_s) - p_{i,\infty})/P\,\Delta H_i(T_s)` (a psychrometric balance
with :math:`\Delta H_i` from the vapour-pressure curve). The single heat-supply factor
:data:`HEAT_SUPPLY_FACTOR` (β = 5) was chosen against published relative evaporation
rates (butyl acetate = 1): pure solvents then come out within about 15 % of the rates
in ``tests/test_reference_mixtures.py`` (acetone 5.3 against 5.6), where one shared
mass-transfer constant at the air temperature gives acetone 14. The path is integrated
in steps of the evaporated volume (second-order Runge–Kutta), for many blends at once.
Limits: a well-mixed film, no skin, no dissolved material, the sphere fixed; the phase
split of a blend during drying is not followed.

Ideal-solution model (:func:`drying_path`, kept)
-----------------------------------------------

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
.. [3] T. H. Chilton, A. P. Colburn, "Mass transfer (absorption) coefficients",
   *Ind. Eng. Chem.* 26 (1934) 1183–1187 (details from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Sequence

import numpy as np
from scipy.optimize import brentq

from solsphere.hansen import as_points, mix, red
from solsphere.library.table import load_library
from solsphere.mixtures.activity import METHODS, ActivityModel
from solsphere.mixtures.vapour import VapourPressures
from solsphere.results import Result

__all__ = ["DryingPath", "drying_path", "volume_to_mole_fractions",
           "mole_to_volume_fractions", "drying_paths", "mixture_drying_path",
           "relative_evaporation_rates", "HEAT_SUPPLY_FACTOR"]

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
    method: str = ("isothermal evaporation of an ideal solution (Raoult's law), "
                   "closed form n_i = n_i0 s^(P_i/P_r)")
    title: str = "ideal solution, Raoult's law, isothermal"
    film_temperature: np.ndarray | None = None

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
            "centre": None if self.centre is None else floats(self.centre),
            "R0": None if self.R0 is None else float(self.R0),
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
            "red_at_end": (float(self.red_at_end) if math.isfinite(self.red_at_end)
                           else None),
            "exit_composition": (None if self.exit_composition is None
                                 else floats(self.exit_composition)),
            "max_fraction_evaporated": float(self.max_fraction_evaporated),
            "film_temperature": (None if self.film_temperature is None
                                 else floats(self.film_temperature)),
            "notes": list(self.notes),
        }

    def _describe(self, phi) -> str:
        parts = [f"{100 * f:.1f} % {n}" for f, n in zip(phi, self.names) if f > 5e-4]
        return ", ".join(parts) if parts else "(nothing)"

    def __str__(self) -> str:
        lines = [f"Drying path ({self.title})"]
        if self.centre is None:  # no material: the path of the liquid only
            for f in (0.0, 0.25, 0.5, 0.75, 0.9):
                j = int(np.argmin(np.abs(self.fractions_evaporated - f)))
                t = ("" if self.film_temperature is None else
                     f" (film {self.film_temperature[j]:.0f} °C)")
                lines.append(f"  {100 * self.fractions_evaporated[j]:3.0f} % evaporated: "
                             f"{self._describe(self.compositions[j])}{t}")
            lines.append(f"  residue: {self._describe(self.residue)}")
            if self.last_component is not None:
                lines.append(f"  last to evaporate: {self.names[self.last_component]}")
            lines += [f"  note: {n}" for n in self.notes]
            lines.append("  A model for comparing blends, not a guarantee: confirm at the bench.")
            return "\n".join(lines)
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


# ------------------------------------------------------------ real mixtures, many blends

#: Heat reaching an evaporating film from air, substrate and surroundings, as a multiple
#: of the convective heat transfer by the Chilton–Colburn analogy. Chosen (scanning 1-8)
#: so pure-solvent evaporation rates match published relative evaporation rates (butyl
#: acetate = 1; tests/test_reference_mixtures.py): our fit, one number.
HEAT_SUPPLY_FACTOR = 5.0
CP_AIR = 29.1  # J/(mol K), molar heat capacity of air near 25 °C (from memory)
M_AIR = 28.96  # g/mol
V_AIR = 20.1  # Fuller diffusion volume of air (from memory), used as its size measure
R_GAS = 8.314462618
P_TOTAL = 101.325  # kPa
BUTYL_ACETATE = (116.16, 132.5)  # M [g/mol], liquid molar volume [cm³/mol], from memory
REAL_METHOD = ("evaporation with activity coefficients ({model}); gas-side mass transfer "
               "k ∝ D^(2/3); film temperature from a heat balance (evaporative cooling, "
               "heat-supply factor {beta:g}); air at {T:g} °C, relative humidity {rh:g} %")


def _diffusivity(mw, vm):
    """Relative gas diffusivity in air (kinetic-theory scaling)."""
    return np.sqrt(1.0 / mw + 1.0 / M_AIR) / (np.cbrt(vm) + np.cbrt(V_AIR)) ** 2


def _k_rel(mw, vm):
    """Mass-transfer coefficient relative to butyl acetate's: (D / D_BuAc)^(2/3)."""
    return (_diffusivity(mw, vm) / _diffusivity(*BUTYL_ACETATE)) ** (2.0 / 3.0)


def _film_temperature(k, xg, coef, scale, p_inf, T_air, beta, T0=None, iters: int = 30):
    """Film temperature [K] per row from the heat balance (safeguarded Newton).

    k, xg (= x γ), coef (..., 4) ln P fit, scale, p_inf [kPa]: arrays of shape (n, K).
    ``T0`` (n,) is a starting guess (the previous step's film temperature).
    """
    A, B, C, D = (coef[..., i] for i in range(4))
    xg = np.nan_to_num(xg)
    # a film cools by far less than 80 K (acetone in dry air, no heat from the substrate:
    # about 45 K); the bound also keeps the correlations away from wild extrapolation
    lo = T_air - 80.0
    hi = T_air + 30.0
    Ts = np.clip(T_air - 5.0 if T0 is None else T0, lo, hi)
    for _ in range(iters):
        t = Ts[:, None]
        with np.errstate(over="ignore", invalid="ignore"):
            p = np.nan_to_num(np.exp(A + B / t + C * np.log(t) + D * t ** 2) / 1000.0 * scale)
        dH = R_GAS * (-B + C * t + 2.0 * D * t ** 3)
        drive = k * (xg * p - p_inf) / P_TOTAL
        f = beta * CP_AIR * (T_air - Ts) - (drive * dH).sum(axis=1)
        # d/dTs: dP/dT = P ΔH / (R T²); dΔH/dT = R (C + 6 D T²)
        df = (-beta * CP_AIR
              - (k * xg * p / P_TOTAL * dH * dH / (R_GAS * t * t)).sum(axis=1)
              - (drive * R_GAS * (C + 6.0 * D * t * t)).sum(axis=1))
        pos = f > 0  # heat in exceeds heat out: the root is warmer
        lo = np.where(pos, Ts, lo)
        hi = np.where(pos, hi, Ts)
        step = np.where(df < 0, -f / np.where(df < 0, df, -1.0), 0.0)
        new = Ts + step
        bad = ~np.isfinite(new) | (new < lo) | (new > hi)
        new = np.where(bad, 0.5 * (lo + hi), new)
        if np.all(np.abs(new - Ts) < 1e-7):
            return new
        Ts = new
    return Ts


def relative_evaporation_rates(solvents, T_C: float = 25.0,
                               beta: float = HEAT_SUPPLY_FACTOR) -> np.ndarray:
    """Pure-solvent evaporation rates by volume relative to butyl acetate, from the model.

    >>> from solsphere.library.table import load_library
    >>> lib = load_library()
    >>> [round(float(r), 1) for r in relative_evaporation_rates(
    ...     [lib.lookup("acetone"), lib.lookup("butyl acetate")])]
    [5.3, 1.0]
    """
    vp = VapourPressures(list(solvents))
    vm = np.array([s.molar_volume for s in solvents], dtype=float)
    mw = np.array([s.mw for s in solvents], dtype=float)
    k = _k_rel(mw, vm)[:, None]
    T = np.full(len(vm), T_C + 273.15)
    Ts = _film_temperature(k, np.ones_like(k), vp.coef[:, None, :], vp.scale[:, None],
                           np.zeros_like(k), T, beta)
    p = np.array([vp.kpa(t - 273.15)[i] for i, t in enumerate(Ts)])
    rate = k[:, 0] * p * vm
    # butyl acetate under the same conditions
    ref = load_library().lookup("123-86-4")
    vr = VapourPressures([ref])
    kr = _k_rel(np.array([ref.mw]), np.array([ref.molar_volume]))[:, None]
    Tr = _film_temperature(kr, np.ones_like(kr), vr.coef[:, None, :], vr.scale[:, None],
                           np.zeros_like(kr), np.array([T_C + 273.15]), beta)
    r_ref = kr[0, 0] * vr.kpa(Tr[0] - 273.15)[0] * ref.molar_volume
    return rate / r_ref


def drying_paths(model, vapour, idx, volume_fractions, centre=None, R0=None, *,
                 T_C: float = 25.0, humidity: float = 0.0, n_points: int = 101,
                 steps: int = 80, f_end: float = 0.995,
                 beta: float = HEAT_SUPPLY_FACTOR) -> list[DryingPath]:
    """Drying paths of many blends at once, with activity coefficients.

    Parameters
    ----------
    model : ActivityModel
        Over the pool the blends are drawn from.
    vapour : VapourPressures
        Of the same pool.
    idx : array-like of int, shape (n, K)
        Each blend's components.
    volume_fractions : array-like of shape (n, K)
    centre, R0 : sphere, optional
        When given, each path's RED, where it leaves the sphere and RED at the end.
    T_C : float, default=25.0
        Air (process) temperature [°C].
    humidity : float, default=0.0
        Relative humidity of the air, 0–1 (moves only water).
    n_points : int, default=101
        Points per reported path (evenly spaced in fraction evaporated).
    steps : int, default=80
        Integration steps to ``f_end`` of the initial volume (even in remaining volume
        down to a quarter, then geometric; against 600 steps the compositions on the
        path agree within 0.06 and the exit points within 0.003 on 200 random blends).

    Returns
    -------
    list of DryingPath
        (None for a blend whose components lack vapour pressure, molar mass or volume.)
    """
    pool = model.solvents
    idx = np.atleast_2d(np.asarray(idx, dtype=int))
    phi0 = np.atleast_2d(np.asarray(volume_fractions, dtype=float))
    phi0 = phi0 / phi0.sum(axis=1, keepdims=True)
    n, K = idx.shape
    if not 0.0 <= humidity <= 1.0:
        raise ValueError(f"humidity must be between 0 and 1; found {humidity!r}")
    vm_pool = np.array([s.molar_volume or np.nan for s in pool], dtype=float)
    mw_pool = np.array([s.mw or np.nan for s in pool], dtype=float)
    Vm = vm_pool[idx]
    present = phi0 > 0
    ok_rows = np.all((np.isfinite(Vm) & np.isfinite(mw_pool[idx]) & vapour.known[idx])
                     | ~present, axis=1)
    Vm = np.where(np.isfinite(Vm), Vm, 100.0)
    k = np.where(present, _k_rel(np.where(np.isfinite(mw_pool[idx]), mw_pool[idx], 100.0), Vm), 0.0)
    coef = vapour.coef[idx]  # (n, K, 4)
    scale = vapour.scale[idx]
    T_air = np.full(n, T_C + 273.15)
    is_water = np.array([getattr(s, "cas", None) == "7732-18-5" for s in pool])[idx]
    p_w_air = float(np.nan_to_num(_pw(T_C)))
    p_inf = np.where(is_water, humidity * p_w_air, 0.0)
    nmol = np.where(present, phi0 / Vm, 0.0)

    Ts_last = [None]
    codes = model.methods(idx, nmol)  # components present at the start decide the model

    def rates(nm):
        tot = nm.sum(axis=1, keepdims=True)
        x = nm / np.where(tot > 0, tot, 1.0)
        lg, meth = model.ln_gamma(idx, np.where(x > 0, x, 0.0) + 1e-300, T_C, method=codes)
        xg = x * np.exp(lg)
        Ts = _film_temperature(k, xg, coef, scale, p_inf, T_air, beta, T0=Ts_last[0])
        Ts_last[0] = Ts
        t = Ts[:, None]
        A, B, C, D = (coef[..., i] for i in range(4))
        with np.errstate(over="ignore", invalid="ignore"):
            p = np.exp(A + B / t + C * np.log(t) + D * t ** 2) / 1000.0 * scale
        r = np.where(nm > 0, k * np.maximum(xg * np.nan_to_num(p) - p_inf, 0.0), 0.0)
        return r, Ts, meth

    # steps in the remaining volume: even down to a quarter, then geometric towards
    # dryness, where the last components run out and the composition turns quickly
    n_lin = max(2, int(round(0.55 * steps)))
    left = np.concatenate([np.linspace(1.0, 0.25, n_lin + 1),
                           np.geomspace(0.25, 1.0 - f_end, steps - n_lin + 1)[1:]])
    dfs = -np.diff(left)
    traj = np.empty((steps + 1, n, K))
    Ts_traj = np.empty((steps + 1, n))
    time_traj = np.zeros((steps + 1, n))
    stuck = np.zeros(n, dtype=bool)
    nm = nmol.copy()
    traj[0] = nm
    r0, Ts0, meth = rates(nm)
    Ts_traj[0] = Ts0
    r = r0
    for s in range(steps):
        df = dfs[s]
        vr = (r * Vm).sum(axis=1)
        stuck |= vr <= 1e-12
        dt = np.where(stuck, 0.0, df / np.where(vr > 0, vr, 1.0))
        mid = np.maximum(nm - 0.5 * dt[:, None] * r, 0.0)
        rm, _, _ = rates(mid)
        vrm = (rm * Vm).sum(axis=1)
        stuck |= vrm <= 1e-12
        dt = np.where(stuck, 0.0, df / np.where(vrm > 0, vrm, 1.0))
        nm = np.maximum(nm - dt[:, None] * rm, 0.0)
        traj[s + 1] = nm
        r, Ts, _ = rates(nm)
        Ts_traj[s + 1] = Ts
        time_traj[s + 1] = time_traj[s] + dt
    # report on an even grid of fraction evaporated
    vol = (traj * Vm[None]).sum(axis=2)  # (steps+1, n) remaining volume
    f_actual = 1.0 - vol
    f_grid = np.linspace(0.0, f_end, n_points)
    out: list[DryingPath | None] = []
    if centre is not None:
        centre = np.asarray(centre, dtype=float).reshape(3)
        R0 = float(R0)
    pts_pool = np.array([s.point for s in pool], dtype=float)
    for b in range(n):
        names = tuple(pool[i].name for i in idx[b])
        if not ok_rows[b]:
            out.append(None)
            continue
        fa = f_actual[:, b]
        last = int(np.searchsorted(fa, fa.max() - 1e-12)) if stuck[b] else steps
        fg = f_grid[f_grid <= fa[last] + 1e-12] if stuck[b] else f_grid
        if fg.size < 2:
            fg = fa[:last + 1][[0, -1]]

        def on_grid(v):  # linear interpolation of a step quantity onto the report grid
            return np.interp(fg, fa[:last + 1], v[:last + 1])
        nmb = np.column_stack([on_grid(traj[:, b, c]) for c in range(K)])
        ts_b = on_grid(Ts_traj[:, b])
        time_b = on_grid(time_traj[:, b])
        phis = nmb * Vm[b]
        phis = phis / np.where(phis.sum(axis=1, keepdims=True) > 0, phis.sum(axis=1, keepdims=True), 1.0)
        xs = nmb / np.where(nmb.sum(axis=1, keepdims=True) > 0, nmb.sum(axis=1, keepdims=True), 1.0)
        P = pts_pool[idx[b]]
        pts = phis @ P
        fr = fg
        notes = []
        if stuck[b]:
            notes.append(f"evaporation stops at {100 * fa[last]:.0f} % evaporated "
                         "(what is left does not evaporate at this humidity)")
        residue = phis[-1]
        dom = int(np.argmax(residue))
        last_comp = dom if residue[dom] > 0.98 else None
        leaves, exit_phi, red_arr, red_end, starts = None, None, np.full(len(fg), np.nan), math.nan, True
        if centre is not None:
            red_arr = red(pts, centre, R0)
            starts = bool(red_arr[0] <= 1.0)
            red_end = float(red_arr[-1])
            if not starts:
                leaves, exit_phi = 0.0, phis[0]
                notes.append("the blend starts outside the sphere")
            else:
                out_i = np.flatnonzero(red_arr > 1.0)
                if out_i.size:
                    j = int(out_i[0])
                    a_, b_ = red_arr[j - 1], red_arr[j]
                    w = (1.0 - a_) / (b_ - a_)
                    leaves = float(fr[j - 1] + w * (fr[j] - fr[j - 1]))
                    exit_phi = phis[j - 1] + w * (phis[j] - phis[j - 1])
                    if red_end <= 1.0:
                        notes.append("the liquid leaves the sphere and comes back in later; "
                                     "a film can fail during the excursion")
        label = METHODS[int(meth[b])]
        if humidity > 0 and is_water[b].any():
            notes.append(f"air at {100 * humidity:g} % relative humidity slows the water")
        path = DryingPath(
            fractions_evaporated=fr, compositions=phis, mole_fractions=xs, points=pts,
            red=red_arr, relative_time=time_b, leaves_at=leaves,
            starts_inside=starts, last_component=last_comp, residue=residue,
            red_at_end=red_end, exit_composition=exit_phi,
            max_fraction_evaporated=float(fa[last]), names=names, centre=centre,
            R0=R0, notes=notes,
            method=REAL_METHOD.format(model=label, beta=beta, T=T_C, rh=100 * humidity),
            title=f"activity coefficients by {label}, evaporative cooling",
            film_temperature=ts_b - 273.15)
        out.append(path)
    return out  # type: ignore[return-value]


def _pw(T_C: float) -> float:
    """Water's vapour pressure [kPa] at T_C (for the humidity of the air)."""
    return float(VapourPressures([load_library().lookup("7732-18-5")]).kpa(T_C)[0])


def mixture_drying_path(solvents, volume_fractions, centre=None, R0=None, *,
                        T_C: float = 25.0, humidity: float = 0.0,
                        n_points: int = 101) -> DryingPath | None:
    """Drying path of one blend with activity coefficients (see :func:`drying_paths`).

    >>> from solsphere.library.table import load_library
    >>> lib = load_library()
    >>> p = mixture_drying_path([lib.lookup("water"), lib.lookup("2-butoxyethanol")],
    ...                         [0.9, 0.1], humidity=0.5)
    >>> p.names[p.last_component]     # the glycol ether leaves first in humid air
    'water'
    """
    solvents = list(solvents)
    k = len(solvents)
    return drying_paths(ActivityModel(solvents), VapourPressures(solvents), np.arange(k)[None],
                        np.asarray(volume_fractions, dtype=float)[None], centre, R0,
                        T_C=T_C, humidity=humidity, n_points=n_points)[0]
