#!/usr/bin/env python3
"""Regenerate ``data/mixture_data.csv``: what the liquid-mixture models need per compound.

Run from the repository root (``make data`` does this after ``build_solvents.py``)::

    .venv/bin/python data/build_mixtures.py          # writes data/mixture_data.csv
    .venv/bin/python data/build_mixtures.py --check  # rebuilds in memory, compares, writes nothing

For every compound of ``data/solvents.csv``:

- **UNIFAC group assignments** for the Dortmund (modified) and the original UNIFAC, from
  the DDBST assignment tables carried by ``thermo.unifac`` (looked up by InChIKey, from
  ``chemicals.identifiers``); where the tables have none, derived from the structure
  (SMILES from ``chemicals``) by ``thermo``'s SMARTS fragmentation with RDKit, kept only
  when every heavy atom is matched exactly once. The ``groups_source`` column says which.
- **Vapour pressure as a function of temperature**: ``thermo.VaporPressure`` (the first
  of its ranked ``chemicals`` correlations valid at 25 °C, else the widest; the
  Ambrose–Walton corresponding-states estimate only where none exists) evaluated on 80 temperatures between
  ``vp_tmin`` and ``vp_tmax`` and refitted by linear least squares to
  ``ln(P/Pa) = A + B/T + C ln T + D T²`` (the DIPPR 101 form with exponent 2; only the
  first two or three terms when the range is narrower than 80 or 150 K), so the
  runtime evaluates it for many blends at once without importing ``chemicals``. The
  fit's largest error in ln P over the range is kept in ``vp_fit_err``.

Only this script and the reference tests import ``chemicals``, ``thermo`` correlations
and RDKit; the runtime reads the CSV (and ``thermo``'s UNIFAC interaction parameters).
"""

from __future__ import annotations

import argparse
import csv
import io
import math
import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
SOLVENTS = HERE / "solvents.csv"
OUT = HERE / "mixture_data.csv"
COLUMNS = ["cas", "inchikey", "dortmund", "unifac", "groups_source", "vp_method",
           "vp_tmin", "vp_tmax", "vp_A", "vp_B", "vp_C", "vp_D", "vp_fit_err"]
#: Fitting range limits [K]: not below 200 K, not above 0.95 Tc nor 700 K (our choice:
#: the range of processing and flash-point temperatures with margin).
T_LOW, T_HIGH = 200.0, 700.0
T25 = 298.15


def groups_text(groups: dict | None) -> str:
    return " ".join(f"{k}:{v}" for k, v in sorted(groups.items())) if groups else ""


def fragment(smiles: str | None, catalog) -> dict | None:
    """Groups from structure, or None unless every heavy atom is matched exactly once."""
    if not smiles:
        return None
    try:
        from rdkit import Chem, RDLogger
        from thermo.group_contribution.group_contribution_base import smarts_fragment_priority
    except ImportError:  # RDKit missing: no structure-derived groups
        return None
    RDLogger.DisableLog("rdApp.*")
    mol = Chem.MolFromSmiles(smiles)
    if mol is None:
        return None
    try:
        counts, matches = smarts_fragment_priority(catalog=catalog, rdkitmol=mol)[:2]
    except Exception:  # the fragmenter gives up on some structures
        return None
    atoms = [a for hits in matches.values() for hit in hits for a in hit]
    heavy = mol.GetNumHeavyAtoms()
    if not counts or len(atoms) != heavy or len(set(atoms)) != heavy:
        return None
    return {int(k): int(v) for k, v in counts.items()}


#: Corresponding-states estimates, used only for a compound with no fitted correlation.
ESTIMATES = ("AMBROSE_WALTON", "LEE_KESLER_PSAT", "EDALAT", "BOILING_CRITICAL", "SANJARI", "EOS")


def vapour_fit(cas: str):
    """(method, tmin, tmax, A, B, C, D, max error in ln P) or None.

    One method per compound: the first of ``thermo``'s ranked methods valid at 25 °C,
    else the one with the widest range; with no correlation at all, the Ambrose–Walton
    corresponding-states estimate from Tb, Tc, Pc, ω (``chemicals``).
    """
    from chemicals import acentric, critical, phase_change
    from thermo.vapor_pressure import VaporPressure
    try:
        vp = VaporPressure(CASRN=cas)
    except Exception:
        return None
    methods = [m for m in VaporPressure.ranked_methods
               if m in vp.all_methods and m not in ESTIMATES]
    if not methods:
        try:
            Tc, Pc, w, Tb = critical.Tc(cas), critical.Pc(cas), acentric.omega(cas), phase_change.Tb(cas)
        except Exception:
            return None
        if not (Tc and Pc and w is not None):
            return None
        vp = VaporPressure(CASRN=cas, Tb=Tb, Tc=Tc, Pc=Pc, omega=w)
        methods = [m for m in ("AMBROSE_WALTON", "LEE_KESLER_PSAT") if m in vp.all_methods][:1]
        if not methods:
            return None
    limits = {m: vp.T_limits[m] for m in methods}
    # one method, so correlations that disagree are never stitched together: the first
    # ranked method valid at 25 °C, else the one with the widest range
    at25 = [m for m in methods if limits[m][0] <= T25 <= limits[m][1]]
    method = at25[0] if at25 else max(methods, key=lambda m: limits[m][1] - limits[m][0])
    lo = max(limits[method][0], T_LOW)
    hi = min(limits[method][1], T_HIGH)
    Tc = getattr(vp, "Tc", None)
    if Tc:
        hi = min(hi, 0.95 * Tc)
    if not hi > lo + 20.0:
        return None
    T = np.linspace(lo, hi, 80)
    P = np.full_like(T, np.nan)
    for i, t in enumerate(T):
        try:
            P[i] = vp.calculate(float(t), method)
        except Exception:
            continue
    used = [method]
    ok = np.isfinite(P) & (P > 0)
    if ok.sum() < 20:
        return None
    T, lnP = T[ok], np.log(P[ok])
    # fewer terms over a narrow range, so extrapolation (to 25 °C or a flash point)
    # stays tame: 2 terms (Clausius-Clapeyron) below 80 K of range, 3 below 150 K
    width = T[-1] - T[0]
    n_terms = 2 if width < 80.0 else 3 if width < 150.0 else 4
    X = np.column_stack([np.ones_like(T), 1.0 / T, np.log(T), T ** 2])[:, :n_terms]
    coef, *_ = np.linalg.lstsq(X, lnP, rcond=None)
    err = float(np.max(np.abs(X @ coef - lnP)))
    coef = np.concatenate([coef, np.zeros(4 - n_terms)])
    label = "+".join(used) + (" (estimate from Tb, Tc, Pc, omega)" if used[0] in ESTIMATES else "")
    return label, float(T[0]), float(T[-1]), *map(float, coef), err


def sig(x: float, digits: int = 12) -> str:
    return f"{x:.{digits}g}"


def build(verbose: bool = True) -> str:
    import thermo.unifac as U
    from chemicals.identifiers import search_chemical
    U.load_group_assignments_DDBST()
    with open(SOLVENTS, newline="", encoding="utf-8") as fh:
        cas_list = [r["cas"] for r in csv.DictReader(fh)]
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    w.writerow(COLUMNS)
    n_groups = n_derived = n_vp = 0
    for cas in cas_list:
        try:
            chem = search_chemical(cas)
        except Exception:
            chem = None
        key = getattr(chem, "InChI_key", None) or ""
        smiles = getattr(chem, "smiles", None)
        do = U.DDBST_MODIFIED_UNIFAC_assignments.get(key) or None
        uf = U.DDBST_UNIFAC_assignments.get(key) or None
        source = []
        if do or uf:
            source.append("DDBST")
        if do is None:
            do = fragment(smiles, U.DOUFSG_SUBGROUPS)
            if do:
                source.append("dortmund from structure")
        if uf is None:
            uf = fragment(smiles, U.UNIFAC_SUBGROUPS)
            if uf:
                source.append("unifac from structure")
        n_groups += bool(do or uf)
        n_derived += any("structure" in s for s in source)
        fit = vapour_fit(cas)
        n_vp += fit is not None
        row = [cas, key, groups_text(do), groups_text(uf), "; ".join(source)]
        if fit is None:
            row += [""] * 8
        else:
            method, tmin, tmax, *rest = fit
            row += [method, sig(tmin, 6), sig(tmax, 6)] + [sig(v) for v in rest[:4]] + [sig(rest[4], 3)]
        w.writerow(row)
    if verbose:
        print(f"{len(cas_list)} compounds: groups for {n_groups} ({n_derived} derived from "
              f"structure), vapour pressure for {n_vp}", file=sys.stderr)
    return out.getvalue()


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--check", action="store_true", help="compare with the committed file")
    args = ap.parse_args(argv)
    text = build()
    if args.check:
        same = OUT.read_text(encoding="utf-8") == text
        print("up to date" if same else "data/mixture_data.csv differs from a rebuild")
        return 0 if same else 1
    OUT.write_text(text, encoding="utf-8")
    print(f"wrote {OUT}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
