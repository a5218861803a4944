"""Benchmark: does a first panel planned from the structure pin the sphere down faster
than a random panel or a fixed standard panel? (run by ``make bench``, not by pytest;
needs the extras ``structure`` and ``test``).

20 invented campaigns on the invented-sphere recipe of ``bench_next.py``
(``true_sphere``: a centre near a compound's coordinates, R0 holding 10-30 % of the
candidates), except that the compound is the material itself: a random
compound of the training set, solids included. Its structure estimate is the
*out-of-fold* one (the model of ``data/build_structure_model.py`` trained on the four
scaffold-grouped folds without it, with the shipped calibration constants), so the
estimate is as wrong as it would be for a new molecule. The candidates are the common
pool (``next``'s default). Outcomes come from the true sphere (clean yes/no).

Strategies, each a first panel with no results yet:

- "structure": :func:`solsphere.estimate.plan_from_structure` (16 and 12 picks);
- "random": random candidates (16, and 24 to see what more random trials buy);
- "panel": a fixed standard panel of 16 familiar lab solvents spread over Hansen space
  (our list; common practice, no source), the same for every material.

After the panel, the sphere's posterior (:mod:`solsphere.uncertainty.posterior`, 2000
samples, one prior box for all: the candidates' box; the structure prior is not used
in this analysis) gives the centre error (Hansen distance of its centre from the true
one), the accuracy of its inside/outside verdict on every candidate, and the mean width
of the 95 % intervals of dD, dP, dH, R0. A panel with no good or no bad result cannot
bound a sphere: it counts as infinitely wrong.

Prints

    BENCH plan_vs_random_error ratio=<median centre error random-16 / structure-16> target=1.2 ok|FAIL
    BENCH plan_vs_panel_error ratio=<median centre error panel-16 / structure-16> target=1.2 ok|FAIL

and, as information, the 12-vs-24 comparison, the accuracies and the widths. The
widths do not favour the structure plan: its trials gather around the estimate, so the
results alone (judged without the structure prior) leave far-away alternative spheres
open even when the centre is found; its advantage is where the sphere is, not how
sure the box-prior posterior is of it.
"""

from __future__ import annotations

import os
import sys
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
ROOT = HERE.parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "data"))
sys.path.insert(0, str(HERE))

import build_structure_model as bsm  # noqa: E402
from solsphere.errors import FitError  # noqa: E402
from solsphere.estimate import Estimate, load_model, plan_from_structure  # noqa: E402
from solsphere.estimate.features import cv_group, featurise  # noqa: E402
from solsphere.hansen import ra  # noqa: E402
from solsphere.library.table import load_library  # noqa: E402
from solsphere.models.classic import default_bounds  # noqa: E402
from solsphere.uncertainty.posterior import sample_posterior  # noqa: E402
from solsphere.workflows import candidate_pool  # noqa: E402

TARGET = 1.2
CAMPAIGNS = 20
S_FINAL = 2000
KEYS = ("dD", "dP", "dH", "R0")
#: A fixed first panel of familiar lab solvents spread over Hansen space (our choice;
#: common practice, no source).
PANEL = ("n-hexane", "toluene", "dichloromethane", "chloroform", "diethyl ether",
         "tetrahydrofuran", "ethyl acetate", "acetone", "acetonitrile",
         "n,n-dimethylformamide", "dimethyl sulfoxide", "1-methyl-2-pyrrolidinone",
         "methanol", "ethanol", "1-butanol", "water")


def out_of_fold(model):
    """Out-of-fold estimates (point, u95) for every training compound."""
    data, mols = bsm.load_training()
    X = featurise(mols, model.feature_names)
    Y = data["Y"]
    groups = np.array([cv_group(m) for m in mols])
    P, U = np.zeros_like(Y), np.zeros_like(Y)
    for tr, te in bsm.grouped_folds(groups):
        for k, t in enumerate(("dD", "dP", "dH")):
            f = model.forests[t]
            tp = bsm.tree_predictions(bsm.forest().fit(X[tr], Y[tr, k]), X[te])
            P[te, k] = np.maximum(tp.mean(0), 0.0)
            U[te, k] = f.c * (tp.std(0) + f.s0)
    return data, P, U


def true_sphere(y, P, rng):
    """``bench_next.true_sphere``'s recipe around the material's own coordinates ``y``:
    centre y plus a small random offset, R0 holding 10-30 % of the candidates."""
    while True:
        c = np.maximum(y + rng.normal(0, [0.5, 1.5, 1.5]), 0.0)
        d = np.sort(ra(P, c))
        R0 = float(d[int(rng.uniform(0.10, 0.30) * len(P))])
        if R0 > 3.0:
            return c, R0


def judge(X, g, box, seed, c, R0, P, truth):
    if g.all() or not g.any():
        return {"width": np.inf, "error": np.inf, "acc": 0.0, "bounded": False}
    try:
        post = sample_posterior(X, g, S_FINAL, seed=seed, bounds=box)
    except FitError:
        return {"width": np.inf, "error": np.inf, "acc": 0.0, "bounded": False}
    w = float(np.mean([post.intervals[k][1] - post.intervals[k][0] for k in KEYS]))
    return {"width": w, "error": float(ra(post.centre, c)[0]), "bounded": True,
            "acc": float(np.mean((ra(P, post.centre) <= post.R0) == truth))}


def main() -> int:
    model = load_model()
    data, P_oof, U_oof = out_of_fold(model)
    lib = load_library()
    pool, _ = candidate_pool(lib, pool="common")
    P = np.array([s.point for s in pool], dtype=float)
    panel_pts = np.array([lib.lookup(n).point for n in PANEL], dtype=float)
    box = default_bounds(P)
    t0 = time.perf_counter()
    rows = []
    for k in range(CAMPAIGNS):
        rng = np.random.default_rng(5000 + k)
        i = int(rng.integers(len(data["Y"])))
        c, R0 = true_sphere(data["Y"][i], P, rng)
        truth = ra(P, c) <= R0
        est = Estimate(smiles=str(data["smiles"][i]), dD=P_oof[i, 0], dP=P_oof[i, 1],
                       dH=P_oof[i, 2], dD_u95=U_oof[i, 0], dP_u95=U_oof[i, 1],
                       dH_u95=U_oof[i, 2])
        idx = {s.name: j for j, s in enumerate(pool)}
        out = {}
        for n in (16, 12):
            plan = plan_from_structure(est, pool, n=n, seed=k)
            pick = [idx[s.name] for s in plan.suggestions]
            out[f"structure-{n}"] = judge(P[pick], truth[pick], box, k, c, R0, P, truth)
        for n in (16, 24):
            pick = list(rng.choice(len(P), n, replace=False))
            out[f"random-{n}"] = judge(P[pick], truth[pick], box, k, c, R0, P, truth)
        out["panel-16"] = judge(panel_pts, ra(panel_pts, c) <= R0, box, k, c, R0, P, truth)
        out["estimate_error"] = float(ra(np.array(est.point), c)[0])
        rows.append(out)
    elapsed = time.perf_counter() - t0

    def med(label, key):
        return float(np.median([r[label][key] for r in rows]))

    ratio_r = med("random-16", "error") / med("structure-16", "error")
    ratio_p = med("panel-16", "error") / med("structure-16", "error")
    ok_r, ok_p = ratio_r >= TARGET, ratio_p >= TARGET
    print(f"BENCH plan_vs_random_error ratio={ratio_r:.2f} target={TARGET:g} "
          f"{'ok' if ok_r else 'FAIL'}")
    print(f"BENCH plan_vs_panel_error ratio={ratio_p:.2f} target={TARGET:g} "
          f"{'ok' if ok_p else 'FAIL'}")
    print(f"  {CAMPAIGNS} campaigns, {len(P)} common-pool candidates, {elapsed:.0f} s; "
          f"median distance of the out-of-fold estimate from the true centre "
          f"{np.median([r['estimate_error'] for r in rows]):.2f} MPa½")
    for label in ("structure-16", "structure-12", "random-16", "random-24", "panel-16"):
        b = sum(r[label]["bounded"] for r in rows)
        print(f"  {label:13s} median centre error {med(label, 'error'):5.2f} MPa½, accuracy "
              f"on the pool {med(label, 'acc'):.3f}, 95 % width {med(label, 'width'):5.2f} "
              f"MPa½, bounded in {b}/{CAMPAIGNS}")
    print(f"  load average (1 min) {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores")
    return 0 if ok_r and ok_p else 1


if __name__ == "__main__":
    sys.exit(main())
