"""Benchmark: do ``suggest_next``'s picks pin the sphere down faster than random trials?
(run by ``make bench``, not by pytest).

20 invented campaigns. Each has an invented true sphere among the library's liquids
(``load_library().liquids()``): the centre is a random liquid's coordinates plus a small
random offset, R0 is chosen so that 10-30 % of the liquids lie inside. Outcomes come
from the true sphere (clean yes/no). A campaign starts from 12 random liquids (at least
2 good and 2 bad) and adds 10 more either

- "next": 5 rounds of 2 suggestions from ``suggest_next`` with its defaults (the
  posterior engine, 1000 sampled spheres of the current panel each round; candidates:
  the untried liquids), or
- "random": 10 random untried liquids,

both from the same 12 starting trials. The width of a final 22-trial panel is the mean
width of the 95 % intervals of dD, dP, dH and R0 from the posterior
(:mod:`solsphere.posterior`, 2000 samples), with the same prior box for both strategies:
the box of the candidate liquids (also the box ``suggest_next`` uses by default).
Prints the issue's measure

    BENCH next_vs_random ratio=<median width random / median width next> target=1.3 ok|FAIL

and, because the true sphere is known here, the error itself:

    BENCH next_vs_random_error ratio=<median centre error random / next> target=1.3 ok|FAIL

(centre error: Hansen distance of the graded fit's centre from the true one). For
information it also prints the widths of the graded bootstrap's intervals (200
resamples, same box) of the same final panels and how often each kind of interval held
the true dD, dP, dH and R0 (coverage; a 95 % interval should hold it in about 95 % of
cases). Exit 1 when either BENCH line fails. ``python bench_next.py bootstrap`` runs the
bootstrap engine of ``suggest_next`` instead.

Why one box for both: each panel's own box (the fits' default) is narrow for a random
panel, whose solvents mostly sit in the crowded middle of Hansen space, and the
intervals of a panel with few informative results then end at that box instead of
showing how little is known; a panel that has explored has a wider box. The same prior
for both strategies compares like with like.
"""

from __future__ import annotations

import os
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from solsphere.uncertainty.bootstrap import bootstrap  # noqa: E402
from solsphere.uncertainty.posterior import sample_posterior  # noqa: E402
from solsphere.models.classic import default_bounds  # noqa: E402
from solsphere.hansen import ra  # noqa: E402
from solsphere.library.table import load_library  # noqa: E402
from solsphere.uncertainty.nexttrials import suggest_next  # noqa: E402

TARGET = 1.3
ENGINE = sys.argv[1] if len(sys.argv) > 1 else "posterior"  # engine of suggest_next
CAMPAIGNS = 20
START, ADD, PER_ROUND = 12, 10, 2
B_ROUND, B_FINAL, S_FINAL = 100, 200, 2000
KEYS = ("dD", "dP", "dH", "R0")


def true_sphere(P, rng):
    """An invented sphere holding 10-30 % of the liquids."""
    while True:
        c = P[rng.integers(len(P))] + rng.normal(0, [0.5, 1.5, 1.5])
        c = np.maximum(c, 0.0)
        d = np.sort(ra(P, c))
        frac = rng.uniform(0.10, 0.30)
        R0 = float(d[int(frac * len(P))])
        if R0 > 3.0:
            return c, R0


def width(b) -> float:
    return float(np.mean([b.intervals[k][1] - b.intervals[k][0] for k in KEYS]))


def covered(b, truth) -> int:
    """How many of dD, dP, dH, R0 the 95 % intervals of ``b`` hold."""
    return int(sum(b.intervals[k][0] <= t <= b.intervals[k][1] for k, t in zip(KEYS, truth)))


def campaign(k, lib, P):
    rng = np.random.default_rng(1000 + k)
    c, R0 = true_sphere(P, rng)
    truth = ra(P, c) <= R0
    while True:
        start = list(rng.choice(len(P), START, replace=False))
        if 2 <= truth[start].sum() <= START - 2:
            break
    out = {}
    # random
    rest = np.setdiff1d(np.arange(len(P)), start)
    rnd = start + list(rng.choice(rest, ADD, replace=False))
    # next
    nxt = list(start)
    index = {s.name: i for i, s in enumerate(lib)}
    for r in range(ADD // PER_ROUND):
        tried = set(nxt)
        cands = [s for i, s in enumerate(lib) if i not in tried]
        sug = suggest_next(P[nxt], truth[nxt], cands, n=PER_ROUND, uncertainty=ENGINE,
                           n_bootstrap=B_ROUND, seed=k * 100 + r,
                           names=[lib[i].name for i in nxt])
        nxt += [index[s.name] for s in sug.suggestions]
    box = default_bounds(P)  # one prior box for both strategies: the candidates' box
    for label, idx in (("random", rnd), ("next", nxt)):
        X, g = P[idx], truth[idx]
        post = sample_posterior(X, g, S_FINAL, seed=k, bounds=box)
        boot = bootstrap(X, g, B_FINAL, seed=k, bounds=box, method="graded")
        out[label] = {"width": width(post), "boot_width": width(boot),
                      "error": float(ra(post.centre, c)[0]), "goods": int(g.sum()),
                      "acc": float(np.mean((ra(P, post.centre) <= post.R0) == truth)),
                      "cover": covered(post, [*c, R0]),
                      "boot_cover": covered(boot, [*c, R0])}
    return out


def main() -> int:
    lib = list(load_library().liquids())
    P = np.array([s.point for s in lib], dtype=float)
    t = time.perf_counter()
    rows = [campaign(k, lib, P) for k in range(CAMPAIGNS)]
    elapsed = time.perf_counter() - t

    def med(label, key):
        return float(np.median([r[label][key] for r in rows]))

    ratio = med("random", "width") / med("next", "width")
    ratio_e = med("random", "error") / med("next", "error")
    ratio_b = med("random", "boot_width") / med("next", "boot_width")
    ok, ok_e = ratio >= TARGET, ratio_e >= TARGET
    print(f"BENCH next_vs_random ratio={ratio:.2f} target={TARGET:g} {'ok' if ok else 'FAIL'}")
    print(f"BENCH next_vs_random_error ratio={ratio_e:.2f} target={TARGET:g} "
          f"{'ok' if ok_e else 'FAIL'}")
    nw = sum(r["next"]["width"] < r["random"]["width"] for r in rows)
    print(f"  engine of the suggestions: {ENGINE}; {CAMPAIGNS} campaigns, {START} random "
          f"start trials + {ADD} more; {len(lib)} liquid candidates; {elapsed:.0f} s")
    print(f"  median final 95 % width (posterior, mean of dD, dP, dH, R0): random "
          f"{med('random', 'width'):.2f}, next {med('next', 'width'):.2f} MPa½; next "
          f"narrower in {nw} of {CAMPAIGNS}")
    print(f"  median final 95 % width (graded bootstrap, for information): random "
          f"{med('random', 'boot_width'):.2f}, next {med('next', 'boot_width'):.2f} MPa½; "
          f"ratio {ratio_b:.2f}")
    n = 4 * CAMPAIGNS
    for label in ("random", "next"):
        cp = sum(r[label]["cover"] for r in rows)
        cb = sum(r[label]["boot_cover"] for r in rows)
        print(f"  coverage of the true dD, dP, dH, R0 on {label} panels: posterior {cp}/{n} "
              f"({100 * cp / n:.0f} %), bootstrap {cb}/{n} ({100 * cb / n:.0f} %)")
    print(f"  median centre error (Hansen distance to the true centre): random "
          f"{med('random', 'error'):.2f}, next {med('next', 'error'):.2f} MPa½")
    print(f"  median accuracy of the final sphere on all {len(lib)} liquids: random "
          f"{med('random', 'acc'):.3f}, next {med('next', 'acc'):.3f}")
    print(f"  median goods in the final panel: random {med('random', 'goods'):.0f}, next "
          f"{med('next', 'goods'):.0f}")
    print(f"  load average (1 min) {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores")
    return 0 if ok and ok_e else 1


if __name__ == "__main__":
    sys.exit(main())
