"""From a structure to numbers: molecules, descriptors, fingerprints, CV groups.

Everything here uses RDKit (the optional extra ``solsphere[structure]``). The same
functions serve the training script (``data/build_structure_model.py``), the shipped
model (:mod:`solsphere.estimate.model`) and the benchmark, so that the features a model
was trained on are exactly the features it is given.

Features are named (see :func:`feature_names`); the model file stores the names it was
trained with and :func:`featurise` computes them by name, so a different RDKit version
that reorders its descriptor list cannot shuffle columns silently.
"""

from __future__ import annotations

import numpy as np
from rdkit import Chem, RDLogger
from rdkit.Chem import Descriptors, rdFingerprintGenerator
from rdkit.Chem.Scaffolds import MurckoScaffold

__all__ = ["parse_smiles", "feature_names", "featurise", "fingerprints", "tanimoto_max",
           "cv_group", "element_counts", "FP_BITS", "COUNT_FEATURES"]

RDLogger.DisableLog("rdApp.*")  # parse failures are reported by us, one line each

#: Whole-molecule descriptors (RDKit names).
WHOLE = ("MolWt", "HeavyAtomCount", "MolLogP", "MolMR", "TPSA", "LabuteASA", "NumHDonors",
         "NumHAcceptors", "NumRotatableBonds", "RingCount", "NumAromaticRings",
         "FractionCSP3", "NumValenceElectrons", "NHOHCount", "NOCount", "NumAliphaticRings")
#: Elements counted (hydrogens included, as ``n_H``).
ELEMENTS = ("C", "N", "O", "F", "Cl", "Br", "I", "S", "P", "Si")
#: Intensive versions (per heavy atom) of these size-dependent descriptors.
PER_ATOM_WHOLE = ("MolLogP", "MolMR", "TPSA", "NumHDonors", "NumHAcceptors")
#: Morgan fingerprint (radius 2) length, for the similarity to the training set.
FP_BITS = 1024

_FUNCS = dict(Descriptors.descList)
_FRAGMENTS = tuple(n for n, _ in Descriptors.descList if n.startswith("fr_"))
#: Count features (functional-group and element counts): the linear baseline's inputs.
COUNT_FEATURES = _FRAGMENTS + tuple(f"n_{e}" for e in ELEMENTS) + ("n_H",)
_FPGEN = rdFingerprintGenerator.GetMorganGenerator(radius=2, fpSize=FP_BITS)


def parse_smiles(smiles: str):
    """RDKit molecule from a SMILES string, or None when it does not parse.

    Examples
    --------
    >>> parse_smiles("CCO").GetNumHeavyAtoms()
    3
    >>> parse_smiles("C1CC") is None
    True
    """
    if not isinstance(smiles, str) or not smiles.strip():
        return None
    return Chem.MolFromSmiles(smiles.strip())


def feature_names() -> tuple[str, ...]:
    """Names of the features of this RDKit version, in the order :func:`featurise` uses
    when no names are given."""
    return (WHOLE + COUNT_FEATURES
            + tuple(f"per_atom:{n}" for n in COUNT_FEATURES + PER_ATOM_WHOLE))


def element_counts(mol) -> dict[str, int]:
    """Atoms of each element, hydrogens included."""
    out: dict[str, int] = {}
    for a in mol.GetAtoms():
        s = a.GetSymbol()
        out[s] = out.get(s, 0) + 1
        h = a.GetTotalNumHs()
        if h:
            out["H"] = out.get("H", 0) + h
    return out


def _one(mol, names) -> list[float]:
    base: dict[str, float] = {}
    els = element_counts(mol)
    n = max(mol.GetNumHeavyAtoms(), 1)

    def value(name: str) -> float:
        if name in base:
            return base[name]
        if name.startswith("per_atom:"):
            v = value(name[9:]) / n
        elif name.startswith("n_"):
            v = float(els.get(name[2:], 0))
        else:
            v = float(_FUNCS[name](mol))
        base[name] = v
        return v

    return [value(k) for k in names]


def featurise(mols, names=None) -> np.ndarray:
    """Feature matrix (float64, one row per molecule) for the named features.

    Parameters
    ----------
    mols : sequence of RDKit molecules
    names : sequence of str, default=None
        Feature names (a model's stored list); default :func:`feature_names`.

    Raises
    ------
    KeyError
        A name this RDKit does not provide.
    """
    names = tuple(feature_names() if names is None else names)
    return np.array([_one(m, names) for m in mols], dtype=float).reshape(len(mols), len(names))


def fingerprints(mols) -> np.ndarray:
    """Morgan (radius 2, :data:`FP_BITS` bits) fingerprints, shape (n, FP_BITS), uint8 0/1."""
    out = np.zeros((len(mols), FP_BITS), dtype=np.uint8)
    for i, m in enumerate(mols):
        out[i] = _FPGEN.GetFingerprintAsNumPy(m)
    return out


def tanimoto_max(query: np.ndarray, reference: np.ndarray):
    """Largest Tanimoto similarity of each query fingerprint to the reference set, and the
    index of that reference.

    Examples
    --------
    >>> a = np.array([[1, 1, 0, 0]], np.uint8); b = np.array([[1, 0, 0, 0], [1, 1, 1, 0]], np.uint8)
    >>> s, j = tanimoto_max(a, b); round(float(s[0]), 3), int(j[0])
    (0.667, 1)
    """
    q = np.asarray(query, dtype=np.float32)
    r = np.asarray(reference, dtype=np.float32)
    inter = q @ r.T
    union = q.sum(1)[:, None] + r.sum(1)[None, :] - inter
    sim = inter / np.maximum(union, 1.0)
    j = sim.argmax(axis=1)
    return sim[np.arange(len(q)), j], j


def cv_group(mol) -> str:
    """Cross-validation group: the Murcko scaffold of a ring compound; for an acyclic one
    (no scaffold) its elements and the set of RDKit functional groups it has, so that a
    homologous series (1-butanol, 1-pentanol ...) falls into one group and cannot leak
    between training and test folds.

    Examples
    --------
    >>> cv_group(parse_smiles("CCCCO")) == cv_group(parse_smiles("CCCCCO"))
    True
    >>> cv_group(parse_smiles("Cc1ccccc1"))
    'c1ccccc1'
    """
    if mol.GetRingInfo().NumRings():
        return MurckoScaffold.MurckoScaffoldSmiles(mol=mol)
    els = "".join(sorted({a.GetSymbol() for a in mol.GetAtoms()}))
    groups = ",".join(n for n in _FRAGMENTS if _FUNCS[n](mol) > 0)
    return f"acyclic:{els}:{groups}"
