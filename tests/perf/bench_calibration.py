"""Calibration campaign: do the 95 % intervals hold the true sphere? (``make bench``).

Invented panels, nothing measured: each panel draws 15-30 solvents at random from the
library's common solvents, a true sphere (centre, R0) and a true boundary width w, and
outcomes from the graded model P(dissolves) = 1 / (1 + exp(-(R0 - Ra) / w)) [MPa½].
The true centre is placed (by panel index) well inside the box the panel's solvents span
(40 %), near one of its faces (30 %), or 0.5-3 MPa½ beyond one face (30 %; beyond the
upper δD face in half of those, as for many polymers). w is log-uniform in 0.05-1.5 MPa½
(sharp to soft); R0 uniform in 4-12 MPa½. Then, as on a real bench: half of the good
results within 1 MPa½ inside the surface are recorded as "partly" (counted as good, the
default, which keeps the truth R0 the outer radius), and in 30 % of the panels one result
is flipped (an outlier the model does not generate). Panels with fewer than two good or
two bad results are redrawn (counted).

For each panel the posterior (:func:`solsphere.uncertainty.posterior.sample_posterior`,
defaults), the classic bootstrap (200 warm resamples; also scored with the basic,
reflected interval of the same resamples) and the graded bootstrap give 95 % intervals;
each posterior miss and the three slowest panels are listed; the script
prints per parameter the share of panels whose interval holds the truth, and of the
misses the share that came with a warning naming the parameter (``dD``...) or any
warning. Prints

    BENCH calibration ratio=<lowest posterior coverage of dD, dP, dH, R0> target=0.9 ok|FAIL

Options: ``--panels N`` (default 100), ``--bootstrap B`` (default 200, 0 skips it),
``--seed S``.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from solsphere.hansen import ra  # noqa: E402
from solsphere.library.table import load_library  # noqa: E402
from solsphere.uncertainty.bootstrap import bootstrap  # noqa: E402
from solsphere.uncertainty.posterior import sample_posterior  # noqa: E402

TARGET = 0.90
KEYS = ("dD", "dP", "dH", "R0")
#: Where the true centres may lie (inside any physically wide prior).
TRUTH_BOX = np.array([[13.0, 23.5], [0.5, 26.0], [0.5, 38.0]])


def make_panel(pool: np.ndarray, rng) -> tuple:
    """One invented panel: (points, outcomes, truth dict, kind); see the module doc."""
    redraws = 0
    while True:
        n = int(rng.integers(15, 31))
        X = pool[rng.choice(len(pool), n, replace=False)]
        lo, hi = X.min(axis=0), X.max(axis=0)
        u = rng.random()
        c = lo + (0.2 + 0.6 * rng.random(3)) * (hi - lo)
        kind = "inside"
        if u >= 0.4:
            j = 0 if rng.random() < 0.5 else int(rng.integers(3))
            up = True if j == 0 and rng.random() < 0.7 else bool(rng.random() < 0.5)
            off = -rng.uniform(0.0, 1.0) if u < 0.7 else rng.uniform(0.5, 3.0)
            c[j] = hi[j] + off if up else lo[j] - off
            kind = "edge" if u < 0.7 else "beyond"
        c = np.clip(c, TRUTH_BOX[:, 0], TRUTH_BOX[:, 1])
        R0 = rng.uniform(4.0, 12.0)
        w = float(np.exp(rng.uniform(np.log(0.05), np.log(1.5))))
        Ra = ra(X, c)
        good = rng.random(n) < 1.0 / (1.0 + np.exp(-(R0 - Ra) / w))
        flipped = rng.random() < 0.3
        if flipped:
            i = rng.integers(n)
            good[i] = ~good[i]
        if good.sum() >= 2 and (~good).sum() >= 2:
            break
        redraws += 1
    out = np.where(good, "good", "bad").astype(object)
    near = good & (Ra > R0 - 1.0) & (Ra <= R0) & (rng.random(n) < 0.5)
    out[near] = "partial"
    truth = {"dD": c[0], "dP": c[1], "dH": c[2], "R0": R0, "width": w}
    return X, list(out), truth, kind, redraws, flipped


def warned(key: str, notes: list) -> tuple[bool, bool]:
    """(a warning names the parameter, any warning at all)."""
    names = {"dD": ("dD", "δD"), "dP": ("dP", "δP"), "dH": ("dH", "δH"),
             "R0": ("R0",), "width": ("width",)}[key]
    return any(any(nm in t for nm in names) for t in notes), bool(notes)


def basic_intervals(b) -> dict:
    """The basic bootstrap interval [2 t - q_hi, 2 t - q_lo] of the same resamples
    (Davison and Hinkley 1997, eq. 5.6, from memory): reflects the resamples' skew about
    the full fit."""
    full = dict(zip(KEYS, (*b.centre, b.R0)))
    samples = dict(zip(KEYS, (*b.centres.T, b.radii)))
    out = {}
    for k in KEYS:
        lo, hi = np.percentile(samples[k], [2.5, 97.5])
        out[k] = [2 * full[k] - hi, 2 * full[k] - lo]
    return out


class Tally:
    def __init__(self, keys):
        self.keys = keys
        self.hit = {k: 0 for k in keys}
        self.n = {k: 0 for k in keys}
        self.miss_named = {k: 0 for k in keys}
        self.miss_any = {k: 0 for k in keys}
        self.by_kind: dict = {}

    def add(self, intervals, truth, notes, kind, label=""):
        """Count one panel; returns the misses as (key, described line)."""
        misses = []
        for k in self.keys:
            lo, hi = intervals[k]
            ok = lo <= truth[k] <= hi
            self.n[k] += 1
            self.hit[k] += ok
            kk = self.by_kind.setdefault((kind, k), [0, 0])
            kk[0] += ok
            kk[1] += 1
            if not ok:
                a, b = warned(k, notes)
                self.miss_named[k] += a
                self.miss_any[k] += b
                misses.append(f"{label} {k}: truth {truth[k]:.2f} not in [{lo:.2f}, "
                              f"{hi:.2f}] ({kind}; warned: "
                              f"{'naming it' if a else 'other' if b else 'NONE'})")
        return misses

    def coverage(self, k):
        return self.hit[k] / max(self.n[k], 1)

    def lines(self, title):
        out = [f"  {title}: coverage of the 95 % intervals (misses warned: naming it / any)"]
        for k in self.keys:
            m = self.n[k] - self.hit[k]
            kinds = " ".join(f"{kind} {self.by_kind.get((kind, k), [0, 0])[0]}/"
                             f"{self.by_kind.get((kind, k), [0, 0])[1]}"
                             for kind in ("inside", "edge", "beyond"))
            out.append(f"    {k:5s} {100 * self.coverage(k):5.1f} % ({self.hit[k]}/{self.n[k]})"
                       f"  misses {m}: warned {self.miss_named[k]}/{m} naming it, "
                       f"{self.miss_any[k]}/{m} any  [{kinds}]")
        return out


def main(argv=None) -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--panels", type=int, default=100)
    ap.add_argument("--bootstrap", type=int, default=200)
    ap.add_argument("--seed", type=int, default=13)
    args = ap.parse_args(argv)
    lib = load_library().common()
    pool = np.array([s.point for s in lib], dtype=float)
    rng = np.random.default_rng(args.seed)
    post = Tally((*KEYS, "width"))
    boot = Tally(KEYS)
    basic = Tally(KEYS)
    graded = Tally(KEYS)
    redraws = flips = 0
    t_post, t_boot, ess, errors, missed, slow = [], [], [], [], [], []
    for i in range(args.panels):
        X, outcomes, truth, kind, r, f = make_panel(pool, rng)
        redraws += r
        flips += f
        t = time.perf_counter()
        try:
            p = sample_posterior(X, outcomes, seed=i, partial="good")
        except Exception as e:  # noqa: BLE001 - an error is a result of the campaign
            errors.append(f"panel {i} posterior: {type(e).__name__}: {e}")
            continue
        t_post.append(time.perf_counter() - t)
        ess.append(getattr(p, "effective_samples", float("nan")))
        label = (f"panel {i} (n={len(X)}, w={truth['width']:.2f}, R0={truth['R0']:.1f}"
                 f"{', flipped' if f else ''})")
        missed += post.add(p.intervals, truth, p.warnings, kind, label)
        slow.append((t_post[-1], label, getattr(p, "converged", None),
                     getattr(p, "autocorr_time", None)))
        if args.bootstrap:
            t = time.perf_counter()
            try:
                b = bootstrap(X, outcomes, args.bootstrap, seed=i, partial="good", n_jobs=1)
            except Exception as e:  # noqa: BLE001
                errors.append(f"panel {i} bootstrap: {type(e).__name__}: {e}")
                continue
            t_boot.append(time.perf_counter() - t)
            boot.add(b.intervals, truth, b.warnings, kind)
            basic.add(basic_intervals(b), truth, b.warnings, kind)
            try:
                gb = bootstrap(X, outcomes, args.bootstrap, seed=i, method="graded",
                               partial="good", n_jobs=1)
            except Exception as e:  # noqa: BLE001
                errors.append(f"panel {i} graded bootstrap: {type(e).__name__}: {e}")
                continue
            graded.add(gb.intervals, truth, gb.warnings, kind)
    worst = min(post.coverage(k) for k in KEYS)
    ok = worst >= TARGET and not errors
    print(f"BENCH calibration ratio={worst:.3f} target={TARGET:g} {'ok' if ok else 'FAIL'}")
    print(f"  panels={args.panels} (redrawn {redraws}, with a flipped result {flips}) "
          f"seed={args.seed}; ratio = lowest posterior coverage of dD, dP, dH, R0")
    print("\n".join(post.lines("posterior")))
    if args.bootstrap:
        print("\n".join(boot.lines(f"classic bootstrap ({args.bootstrap} resamples)")))
        print("\n".join(basic.lines("classic bootstrap, basic (reflected) interval, same "
                                    "resamples")))
        print("\n".join(graded.lines(f"graded bootstrap ({args.bootstrap} resamples)")))
    print(f"  posterior time median {np.median(t_post):.2f} s, max {np.max(t_post):.2f} s; "
          f"effective samples median {np.nanmedian(ess) if np.isfinite(ess).any() else 'n/a'}")
    if t_boot:
        print(f"  bootstrap time median {np.median(t_boot):.2f} s")
    for t, label, conv, tau in sorted(slow, key=lambda r: r[0], reverse=True)[:3]:
        print(f"  slowest: {label}: {t:.1f} s, converged {conv}, tau {tau}")
    for line in missed:
        print("  posterior miss: " + line)
    for e in errors:
        print("  ERROR " + e)
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
