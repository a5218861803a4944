"""δD, δP, δH (and δt, molar volume) estimated from a structure, with 95 % intervals.

The model (``data/structure_model.zip``, built by ``data/build_structure_model.py`` from
the three compilations of the library only) is a forest of randomised regression trees
per parameter on RDKit descriptors and group counts, stored as plain arrays and evaluated
here with numpy (no pickle, no scikit-learn needed at run time). Each estimate comes with
a 95 % half-width ``u95`` from the spread of the trees, calibrated on scaffold-grouped
out-of-fold errors; the coverage measured on held-out scaffolds is in the README and in
``tests/perf/bench_estimate.py``.

Out of the model's domain:

- refused (no numbers): a SMILES that is a salt or mixture (several fragments), has a
  net charge, a polymer repeat unit (``*``), an element no training compound has, or
  more than :data:`MAX_HEAVY_ATOMS` heavy atoms;
- widened (``u95`` times :data:`WIDEN`, a choice of ours, not a measurement): an element
  that fewer than :data:`RARE_ELEMENT` training compounds have, more heavy atoms than
  the largest training compound, or a nearest training compound less similar than
  :data:`LOW_SIMILARITY` (Tanimoto on Morgan fingerprints).

Estimates are guides for a first plan, not measured values: the compilations' own
numbers are better wherever the library has the compound (an estimate says so).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import lru_cache
from importlib.resources import files
from pathlib import Path

import numpy as np
from rdkit import Chem

from solsphere.errors import InputError
from solsphere.results import Result
from solsphere.estimate.features import (element_counts, featurise, fingerprints,
                                         parse_smiles, tanimoto_max)

__all__ = ["Estimate", "Estimates", "StructureModel", "load_model", "estimate", "estimate_one",
           "MAX_HEAVY_ATOMS", "WIDEN", "RARE_ELEMENT", "LOW_SIMILARITY"]

TARGETS = ("dD", "dP", "dH")
#: Refuse molecules larger than this (heavy atoms): polymers and large biomolecules.
MAX_HEAVY_ATOMS = 100
#: Widening factor of u95 outside the well-covered domain (our choice, not measured).
WIDEN = 2.0
#: An element in fewer training compounds than this counts as unusual.
RARE_ELEMENT = 10
#: Nearest training compound less similar than this: far from what the model has seen.
LOW_SIMILARITY = 0.3
CAUTION = ("Estimates from structure are guides for a first plan, not measured values: "
           "confirm at the bench, and prefer tabulated values where they exist.")


@dataclass
class Estimate:
    """Estimated Hansen parameters of one structure [MPa½], molar volume [cm³/mol].

    ``*_u95`` are half-widths of 95 % intervals (``dD ± dD_u95``). All numbers are None
    when the structure was refused (``refused`` says why). ``similarity`` is the Tanimoto
    similarity to the nearest training compound ``nearest``; ``library`` names the
    library compound with the same structure, whose tabulated values are better.
    """

    smiles: str
    dD: float | None = None
    dP: float | None = None
    dH: float | None = None
    dT: float | None = None
    molar_volume: float | None = None
    dD_u95: float | None = None
    dP_u95: float | None = None
    dH_u95: float | None = None
    dT_u95: float | None = None
    molar_volume_u95: float | None = None
    in_domain: bool = True
    notes: list = field(default_factory=list)
    refused: str | None = None
    similarity: float | None = None
    nearest: str | None = None
    library: str | None = None
    label: str | None = None

    @property
    def point(self) -> tuple[float, float, float] | None:
        return None if self.refused else (self.dD, self.dP, self.dH)

    @property
    def u95(self) -> tuple[float, float, float] | None:
        return None if self.refused else (self.dD_u95, self.dP_u95, self.dH_u95)

    def library_sources(self) -> dict:
        """The ``sources`` a library row or a shelf solvent with these coordinates carries:
        each of dD, dP, dH ``"estimated from structure ± u (95 %)"``, the half-widths
        (``u95``), the SMILES and any out-of-domain note (what the hazard flags show)."""
        src = {k: f"estimated from structure ± {u:.1f} (95 %)"
               for k, u in zip(("dD", "dP", "dH"), self.u95)}
        src["u95"] = " / ".join(f"{u:.1f}" for u in self.u95)
        src["smiles"] = self.smiles
        if not self.in_domain:
            src["estimate_notes"] = "; ".join(self.notes)
        return src

    def to_dict(self) -> dict:
        return {"smiles": self.smiles, "label": self.label, "dD": self.dD, "dP": self.dP,
                "dH": self.dH, "dT": self.dT, "molar_volume": self.molar_volume,
                "dD_u95": self.dD_u95, "dP_u95": self.dP_u95, "dH_u95": self.dH_u95,
                "dT_u95": self.dT_u95, "molar_volume_u95": self.molar_volume_u95,
                "in_domain": self.in_domain, "refused": self.refused,
                "notes": list(self.notes), "similarity": self.similarity,
                "nearest": self.nearest, "library": self.library}

    def __str__(self) -> str:
        head = self.label or self.smiles
        if self.label and self.label != self.smiles:
            head += f" ({self.smiles})"
        if self.refused:
            return f"{head}: no estimate: {self.refused}"
        out = [f"{head}: dD {self.dD:.1f} ± {self.dD_u95:.1f}, dP {self.dP:.1f} ± "
               f"{self.dP_u95:.1f}, dH {self.dH:.1f} ± {self.dH_u95:.1f}, dT {self.dT:.1f} ± "
               f"{self.dT_u95:.1f} MPa½; molar volume {self.molar_volume:.0f} ± "
               f"{self.molar_volume_u95:.0f} cm³/mol"]
        if self.nearest:
            out.append(f"   nearest training compound: {self.nearest} "
                       f"(similarity {self.similarity:.2f})")
        out += [f"   note: {n}" for n in self.notes]
        return "\n".join(out)


@dataclass
class Estimates(Result):
    """Result of :func:`estimate`: one :class:`Estimate` per input, in input order."""

    estimates: list
    rows_key = "estimates"

    def to_dict(self) -> dict:
        """JSON-safe (the ``solsphere estimate --json`` object)."""
        return {"estimates": [e.to_dict() for e in self.estimates], "caution": CAUTION,
                "interval": "95 % (value ± u95)"}

    def records(self) -> list[dict]:
        return [dict(e.to_dict(), notes="; ".join(e.notes)) for e in self.estimates]

    def __iter__(self):
        return iter(self.estimates)

    def __len__(self) -> int:
        return len(self.estimates)

    def __getitem__(self, i):
        return self.estimates[i]

    def __str__(self) -> str:
        return "\n".join([str(e) for e in self.estimates] +
                         ["(value ± half-width of a 95 % interval)", CAUTION])


class _Forest:
    """A flattened tree forest (see build_structure_model.export_trees)."""

    def __init__(self, arrays, prefix: str):
        self.feature = arrays[f"{prefix}_feature"].astype(np.int64)
        self.threshold = arrays[f"{prefix}_threshold"]
        self.right = arrays[f"{prefix}_right"].astype(np.int64)
        self.value = arrays[f"{prefix}_value"].astype(np.float64)
        self.roots = arrays[f"{prefix}_roots"].astype(np.int64)
        self.c, self.s0 = (float(x) for x in arrays[f"{prefix}_calibration"])

    def tree_predictions(self, X32: np.ndarray) -> np.ndarray:
        """(n, trees) leaf values; X in float32 as the trees were grown on."""
        n = len(X32)
        node = np.broadcast_to(self.roots, (n, len(self.roots))).copy()
        rows = np.arange(n)[:, None]
        while True:
            f = self.feature[node]
            inner = f >= 0
            if not inner.any():
                return self.value[node]
            x = X32[rows, np.where(inner, f, 0)]
            go_left = x <= self.threshold[node]
            node = np.where(inner, np.where(go_left, node + 1, self.right[node]), node)


class StructureModel:
    """The packaged structure model (see the module docstring)."""

    def __init__(self, path=None):
        src = path if path is not None else _model_path()
        with np.load(src) as z:  # numpy's default refuses pickled objects
            a = {k: z[k] for k in z.files}
        self.feature_names = tuple(str(s) for s in a["feature_names"])
        self.forests = {t: _Forest(a, t) for t in TARGETS}
        self.vm_columns = a["vm_columns"].astype(np.int64)
        self.vm_coef = a["vm_coef"]
        self.vm_intercept = float(a["vm_intercept"][0])
        self.vm_u95_relative = float(a["vm_u95_relative"][0])
        self.train_fp = np.unpackbits(a["train_fingerprints"], axis=1).astype(np.float32)
        self.train_names = [str(s) for s in a["train_names"]]
        self.train_smiles: dict[str, int] = {}
        for i, s in enumerate(a["train_smiles"]):  # the first (lowest CAS) of duplicates
            self.train_smiles.setdefault(str(s), i)
        self.train_points = a["train_points"].astype(float)
        self.elements = dict(zip((str(e) for e in a["train_elements"]),
                                 (int(c) for c in a["train_element_counts"])))
        self.max_heavy_atoms = int(a["train_max_heavy_atoms"][0])
        self.versions = [str(v) for v in a["versions"]]

    def predict(self, mols) -> dict:
        """Raw predictions for parsed molecules (no domain rules): mean, tree spread and
        u95 per parameter, the molar volume, and the nearest training compound."""
        X = featurise(mols, self.feature_names)
        X32 = X.astype(np.float32)
        out = {}
        for t, f in self.forests.items():
            tp = f.tree_predictions(X32)
            spread = tp.std(axis=1)
            out[t] = tp.mean(axis=1)
            out[t + "_spread"] = spread
            out[t + "_u95"] = f.c * (spread + f.s0)
        out["molar_volume"] = X[:, self.vm_columns] @ self.vm_coef + self.vm_intercept
        sim, j = tanimoto_max(fingerprints(mols), self.train_fp)
        out["similarity"], out["nearest"] = sim, j
        return out


def _model_path():
    try:
        return files("solsphere.data").joinpath("structure_model.zip")
    except ModuleNotFoundError:  # a source checkout that was never installed
        return Path(__file__).resolve().parents[2] / "data" / "structure_model.zip"


@lru_cache(maxsize=1)
def load_model() -> StructureModel:
    """The packaged model, read once per process."""
    path = _model_path()
    with path.open("rb") as fh:
        return StructureModel(fh)


def _refusal(mol, smiles: str, model: StructureModel, els: dict) -> str | None:
    if "*" in smiles or any(a.GetAtomicNum() == 0 for a in mol.GetAtoms()):
        return ("a polymer or a structure with attachment points ('*'): the compilations "
                "hold small molecules only")
    if len(Chem.GetMolFrags(mol)) > 1:
        return "several fragments (a salt or mixture): estimate each neutral compound"
    if Chem.GetFormalCharge(mol) != 0:
        return "a charged species: the compilations hold neutral compounds only"
    missing = sorted(e for e in els if e not in model.elements)
    if missing:
        return f"element(s) {', '.join(missing)} appear in no training compound"
    if mol.GetNumHeavyAtoms() > MAX_HEAVY_ATOMS:
        return (f"{mol.GetNumHeavyAtoms()} heavy atoms (more than {MAX_HEAVY_ATOMS}): "
                f"a polymer or very large molecule, far outside the training set")
    return None


def _widen_notes(mol, sim: float, model: StructureModel, els: dict) -> list[str]:
    notes = []
    rare = sorted(e for e in els if model.elements.get(e, 0) < RARE_ELEMENT)
    if rare:
        notes.append(f"unusual element(s) {', '.join(rare)} (fewer than {RARE_ELEMENT} "
                     f"training compounds): intervals widened x{WIDEN:g}")
    if mol.GetNumHeavyAtoms() > model.max_heavy_atoms:
        notes.append(f"larger ({mol.GetNumHeavyAtoms()} heavy atoms) than any training "
                     f"compound ({model.max_heavy_atoms}): intervals widened x{WIDEN:g}")
    if sim < LOW_SIMILARITY:
        notes.append(f"unlike every training compound (similarity {sim:.2f} < "
                     f"{LOW_SIMILARITY:g}): intervals widened x{WIDEN:g}")
    return notes


def estimate_one(smiles: str) -> Estimate:
    """:func:`estimate` of one SMILES with the packaged model (what a shelf's ``smiles``
    column uses)."""
    return estimate([smiles])[0]


def estimate(smiles, *, labels=None, model: StructureModel | None = None,
             source: str = "<argument>") -> Estimates:
    """Estimate δD, δP, δH, δt and the molar volume of each structure.

    Parameters
    ----------
    smiles : str or sequence of str
        SMILES strings.
    labels : sequence of str, default=None
        Display names (e.g. the names a file gave), one per SMILES.
    model : StructureModel, default=None
        Default: the packaged model.
    source : str, default="<argument>"
        What to name in the error for an unreadable SMILES (the CLI passes the option).

    Returns
    -------
    Estimates
        In input order; refused structures carry ``refused`` and no numbers.

    Raises
    ------
    InputError
        A SMILES that RDKit cannot read (the message names which, 1-based).

    Examples
    --------
    >>> e = estimate(["CCO"])[0]
    >>> 14 < e.dD < 17 and e.dH > 10 and e.library == "ethanol"
    True
    >>> estimate(["[Na+].[Cl-]"])[0].refused.startswith("several fragments")
    True
    """
    items = [smiles] if isinstance(smiles, str) else list(smiles)
    labels = list(labels) if labels is not None else [None] * len(items)
    model = model or load_model()
    mols = []
    for i, s in enumerate(items, 1):
        m = parse_smiles(s)
        if m is None:
            what = labels[i - 1] or f"SMILES {i}"
            raise InputError(f"{what} {s!r} is not a SMILES that RDKit can read.",
                             file=source, column=i if source == "<argument>" else None,
                             hint="check brackets, ring-closure digits and element symbols")
        mols.append(m)
    out: list[Estimate | None] = [None] * len(items)
    ok = []
    els = [element_counts(m) for m in mols]
    for i, (s, m) in enumerate(zip(items, mols)):
        why = _refusal(m, s, model, els[i])
        if why:
            out[i] = Estimate(smiles=s.strip(), in_domain=False, refused=why, label=labels[i])
        else:
            ok.append(i)
    if ok:
        pred = model.predict([mols[i] for i in ok])
        for r, i in enumerate(ok):
            m = mols[i]
            sim = float(pred["similarity"][r])
            notes = _widen_notes(m, sim, model, els[i])
            w = WIDEN if notes else 1.0
            p = [max(float(pred[t][r]), 0.0) for t in TARGETS]
            u = [float(pred[t + "_u95"][r]) * w for t in TARGETS]
            dT = math.sqrt(sum(x * x for x in p))
            # δt's half-width: first-order propagation of the three (independent) ones
            uT = math.sqrt(sum((x * ux) ** 2 for x, ux in zip(p, u))) / dT if dT > 0 else max(u)
            vm = float(pred["molar_volume"][r])
            canon = Chem.MolToSmiles(m)
            lib = model.train_smiles.get(canon)
            if lib is not None:
                tp = model.train_points[lib]
                notes.append(f"in the library as {model.train_names[lib]} ({tp[0]:.1f}, "
                             f"{tp[1]:.1f}, {tp[2]:.1f}): use the tabulated values")
            out[i] = Estimate(
                smiles=items[i].strip(), dD=round(p[0], 2), dP=round(p[1], 2),
                dH=round(p[2], 2), dT=round(dT, 2), molar_volume=round(vm, 1),
                dD_u95=round(u[0], 2), dP_u95=round(u[1], 2), dH_u95=round(u[2], 2),
                dT_u95=round(uT, 2),
                molar_volume_u95=round(abs(vm) * model.vm_u95_relative * w, 1),
                in_domain=w == 1.0, notes=notes, similarity=round(sim, 3),
                nearest=model.train_names[int(pred["nearest"][r])],
                library=None if lib is None else model.train_names[lib], label=labels[i])
    return Estimates(out)
