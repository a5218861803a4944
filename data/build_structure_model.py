#!/usr/bin/env python3
"""Train the structure model behind ``solsphere estimate`` and write ``data/structure_model.zip``.

Run from the repository root (needs the extras ``structure`` and ``test``)::

    .venv/bin/python data/build_structure_model.py          # writes data/structure_model.zip
    .venv/bin/python data/build_structure_model.py --check  # retrains in memory, compares

Training data: only the three journal / data-repository compilations that
``data/build_solvents.py`` reads (``WDR_SCHRIER``, ``ALSHERI_HANSEN``,
``MANUEL_RUBEN_2022``), through the values that script kept in ``data/solvents.csv``
(one δD, δP, δH per compound by its winner rule). The table credited to another
solubility-sphere program is never read. Structures: the SMILES that
``chemicals.identifiers`` gives for each CAS number. Molar volumes: the library's
(chemicals' correlations at 25 °C), for the compounds the library marks liquid.

Model (see solsphere/estimate/model.py for how it is evaluated):

- δD, δP, δH: one extremely randomised tree forest each (scikit-learn's
  ``ExtraTreesRegressor``, 40 trees, at least 3 compounds a leaf, 30 % of the features
  tried at a split, seed 0) on RDKit descriptors, counts of elements and of atom environments (an atom with its
  neighbours, Morgan radius 1: groups much like those of group-contribution methods)
  and their per-heavy-atom values. Chosen over gradient boosting, random forests and a
  linear fit on counts by the scaffold-grouped cross-validation of
  ``tests/perf/bench_estimate.py`` (similar errors to boosting, a tenth of the time).
- 95 % half-width of each parameter: ``c * (spread + s0)``, where ``spread`` is the
  standard deviation of the trees' predictions for the molecule, ``s0`` the median
  spread over the training set, and ``c`` the 95th percentile of
  ``|error| / (spread + s0)`` over out-of-fold predictions (5 folds grouped by
  scaffold, :func:`solsphere.estimate.features.cv_group`).
- Molar volume: least squares on the element and ring counts (volumes are close to
  additive, and a linear fit extrapolates to larger molecules where trees cannot); its 95 % relative half-width is the 95th percentile of the out-of-fold
  relative errors.

The file is written deterministically (fixed zip timestamps, arrays in a fixed order), so
a rebuild with the same numpy, scikit-learn and RDKit is byte-identical; the versions are
stored in the file and ``tests/test_estimate.py`` pins its checksum. Nothing is pickled:
plain ``numpy.load`` (which refuses pickled objects by default) reads it.
"""

from __future__ import annotations

import argparse
import csv
import hashlib
import io
import sys
import time
import zipfile
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))  # run from a checkout: import the package beside us

from solsphere.estimate.features import (count_features, cv_group,  # noqa: E402
                                         element_counts, environment_vocabulary,
                                         feature_names, featurise, fingerprints,
                                         parse_smiles)

OUT = HERE / "structure_model.zip"
TARGETS = ("dD", "dP", "dH")
N_TREES, MIN_LEAF, MAX_FEATURES, SEED = 40, 3, 0.3, 0
FOLDS = 5
COVER = 0.95


def load_training(path: Path = HERE / "solvents.csv"):
    """Training compounds: dict of arrays (cas, name, smiles, Y, vm, liquid) and mols.

    Compounds whose SMILES RDKit cannot read, that hold several fragments or a net
    charge, are left out (none of the kind a solvent user estimates)."""
    from chemicals.identifiers import search_chemical
    from rdkit import Chem

    rows = list(csv.DictReader(open(path, newline="", encoding="utf-8")))
    keep, mols, smiles = [], [], []
    for r in rows:
        if "hansen_rule=curated" in r["sources"] or "hansen_rule=structure" in r["sources"]:
            continue  # from data/curated_solvents.csv (some from memory), or this model's own
        try:
            s = search_chemical(r["cas"]).smiles
        except ValueError:  # a mixture added by curated_solvents.csv (no structure)
            continue
        m = parse_smiles(s or "")
        if m is None or "." in s or Chem.GetFormalCharge(m) != 0:
            continue
        keep.append(r)
        mols.append(m)
        smiles.append(Chem.MolToSmiles(m))
    data = {
        "cas": np.array([r["cas"] for r in keep]),
        "name": np.array([r["name"] for r in keep]),
        "smiles": np.array(smiles),
        "Y": np.array([[float(r[k]) for k in TARGETS] for r in keep]),
        "vm": np.array([float(r["molar_volume"]) if r["molar_volume"] else np.nan
                        for r in keep]),
        "liquid": np.array([r["liquid"] == "true" for r in keep]),
    }
    return data, mols


def forest(seed: int = SEED):
    from sklearn.ensemble import ExtraTreesRegressor
    return ExtraTreesRegressor(n_estimators=N_TREES, min_samples_leaf=MIN_LEAF,
                               max_features=MAX_FEATURES, random_state=seed, n_jobs=1)


def tree_predictions(model, X) -> np.ndarray:
    """(trees, n) predictions of each tree of a fitted forest."""
    return np.array([t.predict(X.astype(np.float32)) for t in model.estimators_])


#: Molar volume inputs: element counts and rings (group-contribution style).
VM_FEATURES = ("n_C", "n_N", "n_O", "n_F", "n_Cl", "n_Br", "n_I", "n_S", "n_P", "n_Si", "n_H",
               "RingCount", "NumAromaticRings")


def count_columns(names, vocabulary) -> list[int]:
    """Columns of the count features (the linear baseline's inputs)."""
    return [list(names).index(n) for n in count_features(vocabulary)]


def fit_volume(X, vm):
    """Least squares of Vm on the count columns (with an intercept)."""
    A = np.column_stack([X, np.ones(len(X))])
    coef, *_ = np.linalg.lstsq(A, vm, rcond=None)
    return coef[:-1], float(coef[-1])


def grouped_folds(groups, k: int = FOLDS):
    from sklearn.model_selection import GroupKFold
    return list(GroupKFold(n_splits=k).split(np.zeros(len(groups)), groups=groups))


def export_trees(model):
    """Flatten a forest: feature (int16, -1 at leaves), threshold (float32), right child
    (int32, global index), value (float32), roots (int32). The left child of an inner
    node is the next node (scikit-learn builds depth first), which is checked here."""
    feats, thrs, rights, vals, roots = [], [], [], [], []
    off = 0
    for est in model.estimators_:
        t = est.tree_
        inner = t.children_left >= 0
        if not np.all(t.children_left[inner] == np.flatnonzero(inner) + 1):
            raise RuntimeError("tree layout changed: left child is not the next node")
        roots.append(off)
        feats.append(np.where(inner, t.feature, -1).astype(np.int16))
        thrs.append(np.where(inner, t.threshold, 0.0).astype(np.float32))
        rights.append(np.where(inner, t.children_right + off, -1).astype(np.int32))
        vals.append(t.value[:, 0, 0].astype(np.float32))
        off += t.node_count
    return {"feature": np.concatenate(feats), "threshold": np.concatenate(thrs),
            "right": np.concatenate(rights), "value": np.concatenate(vals),
            "roots": np.array(roots, dtype=np.int32)}


def build(verbose: bool = True) -> dict:
    import rdkit
    import sklearn

    t0 = time.perf_counter()
    data, mols = load_training()
    vocabulary = environment_vocabulary(mols)
    names = feature_names(vocabulary)
    X = featurise(mols, names)
    Y = data["Y"]
    groups = np.array([cv_group(m) for m in mols])
    folds = grouped_folds(groups)
    arrays: dict[str, np.ndarray] = {"feature_names": np.array(names)}
    report = []
    for k, target in enumerate(TARGETS):
        oof_mean = np.zeros(len(Y))
        oof_spread = np.zeros(len(Y))
        for tr, te in folds:
            m = forest().fit(X[tr], Y[tr, k])
            tp = tree_predictions(m, X[te])
            oof_mean[te], oof_spread[te] = tp.mean(0), tp.std(0)
        final = forest().fit(X, Y[:, k])
        s0 = float(np.median(tree_predictions(final, X).std(0)))
        c = float(np.quantile(np.abs(oof_mean - Y[:, k]) / (oof_spread + s0), COVER))
        for key, arr in export_trees(final).items():
            arrays[f"{target}_{key}"] = arr
        arrays[f"{target}_calibration"] = np.array([c, s0])
        mae = float(np.mean(np.abs(oof_mean - Y[:, k])))
        report.append(f"{target}: out-of-fold MAE {mae:.2f} MPa½; u95 = {c:.2f} * (spread "
                      f"+ {s0:.2f}); nodes {arrays[f'{target}_feature'].size}")
    cols = [names.index(n) for n in VM_FEATURES]
    liq = data["liquid"] & np.isfinite(data["vm"])
    rel = np.full(len(Y), np.nan)
    for tr, te in folds:
        tr = tr[liq[tr]]
        coef, icpt = fit_volume(X[np.ix_(tr, cols)], data["vm"][tr])
        rel[te] = (X[np.ix_(te, cols)] @ coef + icpt) / data["vm"][te] - 1.0
    coef, icpt = fit_volume(X[np.ix_(np.flatnonzero(liq), cols)], data["vm"][liq])
    u_vm = float(np.quantile(np.abs(rel[liq]), COVER))
    arrays["vm_columns"] = np.array(cols, dtype=np.int32)
    arrays["vm_coef"] = coef
    arrays["vm_intercept"] = np.array([icpt])
    arrays["vm_u95_relative"] = np.array([u_vm])
    report.append(f"molar volume: {int(liq.sum())} liquids; out-of-fold median |rel. error| "
                  f"{np.median(np.abs(rel[liq])):.3f}, 95th percentile {u_vm:.3f}")
    # the applicability domain: fingerprints, elements and sizes of the training set
    arrays["train_fingerprints"] = np.packbits(fingerprints(mols), axis=1)
    arrays["train_names"] = data["name"]
    arrays["train_cas"] = data["cas"]
    arrays["train_smiles"] = data["smiles"]
    arrays["train_points"] = Y.astype(np.float32)
    el: dict[str, int] = {}
    for m in mols:
        for e in element_counts(m):
            el[e] = el.get(e, 0) + 1
    arrays["train_elements"] = np.array(sorted(el))
    arrays["train_element_counts"] = np.array([el[e] for e in sorted(el)], dtype=np.int32)
    arrays["train_max_heavy_atoms"] = np.array([max(m.GetNumHeavyAtoms() for m in mols)],
                                               dtype=np.int32)
    arrays["versions"] = np.array([f"numpy {np.__version__}", f"scikit-learn {sklearn.__version__}",
                                   f"rdkit {rdkit.__version__}"])
    if verbose:
        print(f"{len(Y)} compounds from data/solvents.csv; {len(set(groups))} scaffold groups; "
              f"{len(names)} features")
        for line in report:
            print("  " + line)
        print(f"build time {time.perf_counter() - t0:.1f} s")
    return arrays


def to_bytes(arrays: dict) -> bytes:
    """numpy's .npz layout (a zip of .npy files; named .zip) with fixed timestamps and
    order: byte-identical rebuilds."""
    from numpy.lib import format as npformat
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", compression=zipfile.ZIP_DEFLATED) as zf:
        for key in sorted(arrays):
            arr = np.asarray(arrays[key])
            if arr.dtype.hasobject:  # plain numbers and strings only: no pickled objects
                raise TypeError(f"{key}: object arrays cannot be stored")
            body = io.BytesIO()
            npformat.write_array(body, arr)
            info = zipfile.ZipInfo(f"{key}.npy", date_time=(1980, 1, 1, 0, 0, 0))
            info.compress_type = zipfile.ZIP_DEFLATED
            info.external_attr = 0o644 << 16
            zf.writestr(info, body.getvalue())
    return buf.getvalue()


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--check", action="store_true",
                    help="retrain in memory and compare with data/structure_model.zip")
    ap.add_argument("-q", "--quiet", action="store_true")
    args = ap.parse_args(argv)
    blob = to_bytes(build(verbose=not args.quiet))
    digest = hashlib.sha256(blob).hexdigest()
    if args.check:
        same = OUT.exists() and OUT.read_bytes() == blob
        print("structure_model.zip is up to date" if same
              else f"structure_model.zip differs from a rebuild (sha256 {digest})")
        return 0 if same else 1
    OUT.write_bytes(blob)
    print(f"wrote {OUT} ({len(blob) / 1024:.0f} KiB, sha256 {digest})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
