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

import re

import numpy as np
from rdkit import Chem, RDLogger
from rdkit.Chem import Descriptors, rdFingerprintGenerator, rdMolDescriptors
from rdkit.Chem.Scaffolds import MurckoScaffold

__all__ = ["parse_smiles", "feature_names", "featurise", "fingerprints", "tanimoto_max",
           "cv_group", "element_counts", "environments", "environment_vocabulary",
           "count_features", "FP_BITS"]

RDLogger.DisableLog("rdApp.*")  # parse failures are reported by us, one line each

#: Whole-molecule descriptors (RDKit names); chosen among the fast ones (1000 molecules
#: must take well under 2 s).
WHOLE = ("MolWt", "HeavyAtomCount", "MolLogP", "MolMR", "TPSA", "LabuteASA", "NumHDonors",
         "NumHAcceptors", "RingCount", "NumAromaticRings", "FractionCSP3",
         "NHOHCount", "NOCount", "NumAliphaticRings")
#: Elements counted (hydrogens included, as ``n_H``).
ELEMENTS = ("C", "N", "O", "F", "Cl", "Br", "I", "S", "P", "Si", "H")
#: Intensive versions (per heavy atom) of these size-dependent descriptors.
PER_ATOM_WHOLE = ("MolLogP", "MolMR", "TPSA", "NumHDonors", "NumHAcceptors")
#: Morgan fingerprint (radius 2) length, for the similarity to the training set.
FP_BITS = 1024
#: An atom environment (Morgan radius 1: an atom and its neighbours, a structural group
#: much like those of group-contribution methods) becomes a feature when at least this
#: many training compounds have it.
MIN_ENV_COMPOUNDS = 5

_FUNCS = dict(Descriptors.descList)
_FORMULA = re.compile(r"([A-Z][a-z]?)(\d*)")
_FPGEN = rdFingerprintGenerator.GetMorganGenerator(radius=2, fpSize=FP_BITS)
_ENVGEN = rdFingerprintGenerator.GetMorganGenerator(radius=1)


def environments(mol) -> dict[int, int]:
    """Counts of the molecule's atom environments (Morgan radius 1, by hashed id)."""
    return dict(_ENVGEN.GetSparseCountFingerprint(mol).GetNonzeroElements())


def environment_vocabulary(mols, min_compounds: int = MIN_ENV_COMPOUNDS) -> tuple[int, ...]:
    """Environment ids that at least ``min_compounds`` of ``mols`` have, sorted."""
    seen: dict[int, int] = {}
    for m in mols:
        for k in environments(m):
            seen[k] = seen.get(k, 0) + 1
    return tuple(sorted(k for k, v in seen.items() if v >= min_compounds))


def count_features(vocabulary) -> tuple[str, ...]:
    """Names of the count features (atom environments and elements): the inputs of a
    group-contribution-like linear fit."""
    return tuple(f"env:{k}" for k in vocabulary) + tuple(f"n_{e}" for e in ELEMENTS)


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


def feature_names(vocabulary) -> tuple[str, ...]:
    """Names of all features for an environment vocabulary, in training order."""
    counts = count_features(vocabulary)
    return WHOLE + counts + tuple(f"per_atom:{n}" for n in counts + PER_ATOM_WHOLE)


def element_counts(mol) -> dict[str, int]:
    """Atoms of each element, hydrogens included.

    Examples
    --------
    >>> element_counts(parse_smiles("CCO"))
    {'C': 2, 'H': 6, 'O': 1}
    """
    out: dict[str, int] = {}
    # the molecular formula (RDKit, in C++) is much faster than a loop over the atoms
    for el, n in _FORMULA.findall(rdMolDescriptors.CalcMolFormula(mol)):
        out[el] = out.get(el, 0) + (int(n) if n else 1)
    return dict(sorted(out.items()))


def featurise(mols, names) -> np.ndarray:
    """Feature matrix (float64, one row per molecule) for the named features.

    Parameters
    ----------
    mols : sequence of RDKit molecules
    names : sequence of str
        Feature names (a model's stored list, or :func:`feature_names`).

    Raises
    ------
    KeyError
        A descriptor name this RDKit does not provide.

    Examples
    --------
    >>> featurise([parse_smiles("CCO")], ["n_C", "per_atom:n_O", "HeavyAtomCount"]).tolist()
    [[2.0, 0.3333333333333333, 3.0]]
    """
    names = tuple(names)
    base = [n[9:] if n.startswith("per_atom:") else n for n in names]
    col = {}
    for j, n in enumerate(names):  # the column of each plain feature
        if not n.startswith("per_atom:"):
            col.setdefault(n, j)
    width = len(names)
    for b in base:  # a per-atom feature without its plain one: an extra, hidden column
        if b not in col:
            col[b] = width
            width += 1
    env_col = {int(n[4:]): j for n, j in col.items() if n.startswith("env:")}
    el_col = [(n[2:], j) for n, j in col.items() if n.startswith("n_")]
    whole = [(_FUNCS[n], j) for n, j in col.items() if not n.startswith(("env:", "n_"))]
    X = np.zeros((len(mols), width))
    heavy = np.ones(len(mols))
    for i, m in enumerate(mols):
        row = X[i]
        for k, v in environments(m).items():
            j = env_col.get(k)
            if j is not None:
                row[j] = v
        els = element_counts(m)
        for e, j in el_col:
            row[j] = els.get(e, 0)
        for f, j in whole:
            row[j] = f(m)
        heavy[i] = max(m.GetNumHeavyAtoms(), 1)
    per = [(j, col[b]) for j, (n, b) in enumerate(zip(names, base)) if n != b]
    if per:
        dst, src = zip(*per)
        X[:, list(dst)] = X[:, list(src)] / heavy[:, None]
    return X[:, :len(names)].copy()


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


_FRAGMENTS = tuple(n for n, _ in Descriptors.descList if n.startswith("fr_"))


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
    groups = ",".join(n for n in _FRAGMENTS if _FUNCS[n](mol) > 0)  # RDKit's fr_* groups
    return f"acyclic:{els}:{groups}"
