"""One liquid mixture, all at once: flash point, vapour pressure, phases, drying path.

:func:`analyse_mixture` is what ``solsphere mixture "ethanol 10 + water 90"`` prints: a
blend written as in a bench file (volume parts; one solvent alone is a mixture of one),
at a temperature and (for drying) a relative humidity, optionally against a material's
sphere. Every number is a model estimate, not a measurement.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Sequence

import numpy as np

from solsphere.io.trials import parse_blend_spec
from solsphere.library.table import load_library
from solsphere.mixtures.activity import METHODS, ActivityModel
from solsphere.mixtures.drying import DryingPath, drying_paths
from solsphere.mixtures.flash import blend_flash_results
from solsphere.mixtures.phases import PhaseCheck, check_phases, phase_compositions
from solsphere.mixtures.vapour import VapourPressures
from solsphere.results import Result

__all__ = ["MixtureReport", "analyse_mixture"]


def _f(v):
    return None if v is None or not math.isfinite(float(v)) else float(v)


@dataclass
class MixtureReport(Result):
    """What a liquid mixture does: the result of :func:`analyse_mixture`.

    Attributes
    ----------
    names : tuple of str
    volume_fractions, mole_fractions : ndarray of shape (k,)
    temperature_C, humidity : float
    flash_point : dict
        :func:`~solsphere.mixtures.flash.mixture_flash_point`'s dict (``estimate`` °C).
    vapour_pressure_kpa : float or None
        Total vapour pressure over the liquid at ``temperature_C``, Σ x_i γ_i P_i.
    partial_pressures_kpa : list of float or None
    activity_coefficients : list of float
    activity_model : str
    phases : PhaseCheck
    path : DryingPath or None
    material : tuple or None
        ((dD, dP, dH), R0) of the sphere the path was checked against.
    notes : list of str
    """

    names: tuple[str, ...]
    volume_fractions: np.ndarray
    mole_fractions: np.ndarray
    temperature_C: float
    humidity: float
    flash_point: dict
    vapour_pressure_kpa: float | None
    partial_pressures_kpa: list
    activity_coefficients: list
    activity_model: str
    phases: PhaseCheck
    path: DryingPath | None
    material: tuple | None = None
    notes: list[str] = field(default_factory=list)

    rows_key = "components"  # to_frame(): one row per component

    def to_dict(self) -> dict:
        """JSON-safe: ``flash_point`` (°C or null), ``vapour_pressure_kpa``, ``phases``
        (1 or 2), ``path`` (the drying path or null), and the details."""
        return {
            "components": [{"name": n, "volume_fraction": float(v), "mole_fraction": float(x),
                            "activity_coefficient": _f(g), "partial_pressure_kpa": _f(p)}
                           for n, v, x, g, p in zip(self.names, self.volume_fractions,
                                                    self.mole_fractions,
                                                    self.activity_coefficients,
                                                    self.partial_pressures_kpa)],
            "temperature_C": float(self.temperature_C),
            "humidity": float(self.humidity),
            "flash_point": _f(self.flash_point.get("estimate")),
            "flash_point_detail": self.flash_point,
            "vapour_pressure_kpa": _f(self.vapour_pressure_kpa),
            "activity_model": self.activity_model,
            "phases": int(self.phases.phases),
            "phase_detail": self.phases.to_dict(),
            "path": None if self.path is None else self.path.to_dict(),
            "material": (None if self.material is None else
                         {"centre": [float(v) for v in self.material[0]],
                          "R0": float(self.material[1])}),
            "notes": list(self.notes),
        }

    def __str__(self) -> str:
        label = " + ".join(f"{100 * v:.4g} % {n}" for n, v in
                           zip(self.names, self.volume_fractions))
        lines = [f"Mixture: {label} (by volume) at {self.temperature_C:g} °C",
                 f"  activity coefficients: {self.activity_model}"]
        for n, x, g, p in zip(self.names, self.mole_fractions, self.activity_coefficients,
                              self.partial_pressures_kpa):
            gp = "?" if g is None or not math.isfinite(g) else f"{g:.3g}"
            pp = "?" if p is None or not math.isfinite(p) else f"{p:.3g} kPa"
            lines.append(f"    {n}: mole fraction {x:.3f}, γ {gp}, partial pressure {pp}")
        vp = self.vapour_pressure_kpa
        lines.append("  vapour pressure: " + ("unknown" if vp is None else f"{vp:.3g} kPa"))
        fp = self.flash_point
        if fp.get("estimate") is not None:
            low = fp.get("conservative")
            lines.append(f"  flash point ≈ {fp['estimate']:.0f} °C (Liaw's model "
                         f"{fp['model']:.1f} °C minus a {fp['safety_margin']:g} °C margin"
                         + (f"; lowest component {low:g} °C)" if low is not None else ")"))
        else:
            lines.append("  flash point: no estimate")
        lines += [f"    {n}" for n in fp.get("notes", [])]
        lines.append(f"    {fp.get('caveat')}")
        lines += ["  " + line for line in str(self.phases).splitlines()]
        if self.path is not None:
            lines += ["  " + line for line in str(self.path).splitlines()]
        lines += [f"  note: {n}" for n in self.notes]
        return "\n".join(lines)


def analyse_mixture(components, volume_fractions: Sequence[float] | None = None, *,
                    library=None, material=None, temperature_C: float = 25.0,
                    humidity: float = 0.0, n_points: int = 101) -> MixtureReport:
    """Flash point, vapour pressure, phase check and drying path of one mixture.

    Parameters
    ----------
    components : str or sequence of Solvent or str
        A blend spec such as ``"ethanol 10 + water 90"`` (then ``volume_fractions`` is
        None), or the solvents (records, or names the library resolves).
    volume_fractions : sequence of float, optional
        With a list of solvents: their volume parts.
    library : Library, optional
        For names in a spec (default: the packaged library).
    material : tuple or fitted result, optional
        ``((dD, dP, dH), R0)`` or an object with ``dD, dP, dH, R0`` (a sphere fit): the
        drying path then says when it leaves that sphere.
    temperature_C : float, default=25.0
    humidity : float, default=0.0
        Relative humidity of the air, 0–1, for the drying path.

    Returns
    -------
    MixtureReport

    Examples
    --------
    >>> r = analyse_mixture("ethanol 10 + water 90")
    >>> r.to_dict()["phases"], 40 <= r.to_dict()["flash_point"] <= 49
    (1, True)
    """
    if isinstance(components, str):
        pairs = parse_blend_spec(components, library)
        solvents = [s for s, _ in pairs]
        phi = np.array([f for _, f in pairs], dtype=float)
    else:  # Solvent records, or names the library resolves
        lib = library if library is not None else load_library()
        solvents = [lib.lookup(s) if isinstance(s, str) else s for s in components]
        if volume_fractions is None:
            raise ValueError("volume_fractions are required with a list of solvents")
        phi = np.asarray(volume_fractions, dtype=float)
        if phi.shape != (len(solvents),) or np.any(phi < 0) or not phi.sum() > 0:
            raise ValueError("volume_fractions: one non-negative part per solvent, sum > 0")
        phi = phi / phi.sum()
    if not 0.0 <= humidity <= 1.0:
        raise ValueError(f"humidity must be between 0 and 1; found {humidity!r}")
    centre = R0 = None
    if material is not None:
        if hasattr(material, "R0"):
            centre, R0 = (material.dD, material.dP, material.dH), float(material.R0)
        else:
            centre, R0 = material[0], float(material[1])
        material = (tuple(float(v) for v in centre), R0)
    k = len(solvents)
    notes: list[str] = []
    vm = np.array([s.molar_volume or np.nan for s in solvents], dtype=float)
    model = ActivityModel(solvents)
    vapour = VapourPressures(solvents)
    idx = np.arange(k)[None]
    if np.any(~np.isfinite(vm) & (phi > 0)):
        missing = [s.name for s, v in zip(solvents, vm) if not math.isfinite(v)]
        notes.append("molar volume unknown for " + ", ".join(missing) +
                     ": mole fractions taken equal to volume fractions")
        x = phi.copy()
    else:
        x = (phi / vm) / (phi / vm).sum()
    lg, method = model.ln_gamma(idx, x[None], temperature_C)
    gamma = np.exp(lg[0])
    p = vapour.kpa(temperature_C)
    partial = x * gamma * p
    total = float(np.nansum(partial)) if np.all(np.isfinite(partial) | (x == 0)) else None
    if total is None:
        notes.append("vapour pressure unknown for " + ", ".join(
            s.name for s, v in zip(solvents, p) if not math.isfinite(v)))
    outside = vapour.out_of_range(temperature_C)
    if outside:
        notes.append("vapour-pressure correlation extrapolated at this temperature for "
                     + ", ".join(outside))
    split = phase_compositions(model, idx, x[None], temperature_C)
    flash = blend_flash_results(model, vapour, idx, x[None], split=split)[0]
    phases = check_phases(solvents, x, temperature_C, model=model)
    path = None
    if k >= 1 and np.all(vapour.known | (phi == 0)) and np.all(np.isfinite(vm) | (phi == 0)):
        path = drying_paths(model, vapour, idx, phi[None], centre, R0, T_C=temperature_C,
                            humidity=humidity, n_points=n_points)[0]
    else:
        notes.append("no drying path: a component lacks vapour pressure or molar volume")
    if phases.phases == 2:
        notes.append("the mixture separates into two liquid phases: the flash point and "
                     "drying path describe an average liquid that does not exist as such")
    return MixtureReport(
        names=tuple(s.name for s in solvents), volume_fractions=phi, mole_fractions=x,
        temperature_C=float(temperature_C), humidity=float(humidity), flash_point=flash,
        vapour_pressure_kpa=total,
        partial_pressures_kpa=[_f(v) for v in partial],
        activity_coefficients=[_f(v) for v in gamma],
        activity_model=METHODS[int(method[0])], phases=phases, path=path,
        material=material, notes=notes)
