"""Benchmark: closed-form vectorised pair screening vs a naive per-pair optimiser loop.

Not collected by pytest (run by ``make bench``). 800 invented liquid points (seeded
uniform draws over a typical liquid range of dD 14-21, dP 0-18, dH 0-25 MPa½ -- an
invented set, not library data) against a fixed sphere. ``pair_screen`` handles all
319,600 pairs (best fraction, RED *and* inside window). The naive loop calls
``scipy.optimize.minimize_scalar`` (bounded on [0, 1]) once per pair for the best
fraction only; a loop over all pairs would take minutes, so it is timed on a fixed random
subset and its per-pair cost is scaled to the full set (said in the output).

Prints ``BENCH pairs_vs_loop ratio=<loop per-pair time x n_pairs / our full time>
target=100 ok|FAIL`` and exits 1 on FAIL (or if the two methods disagree).
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np
from scipy.optimize import minimize_scalar

from benchtime import median_time

try:
    from solsphere.design.pairs import pair_screen
except ModuleNotFoundError:  # run from a checkout without installing
    sys.path.insert(0, str(Path(__file__).resolve().parents[2]))
    from solsphere.design.pairs import pair_screen

N_POINTS = 800
N_SUBSET = 3000
REPEATS_OURS = 7
REPEATS_LOOP = 3
TARGET = 100.0
CENTRE = (17.8, 8.5, 9.0)   # invented sphere
R0 = 5.0


def invented_points(n: int, seed: int = 20240) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return np.c_[rng.uniform(14, 21, n), rng.uniform(0, 18, n), rng.uniform(0, 25, n)]


def naive_loop(points: np.ndarray, i: np.ndarray, j: np.ndarray, centre, R0: float):
    """Best fraction and RED per pair by bounded Brent minimisation (plain-float objective)."""
    cd, cp, ch = (float(x) for x in centre)
    phis = np.empty(len(i))
    reds = np.empty(len(i))
    pts = points.tolist()
    for k, (ia, ib) in enumerate(zip(i.tolist(), j.tolist())):
        (ad, ap, ah), (bd, bp, bh) = pts[ia], pts[ib]

        def dist(phi):
            q = 1.0 - phi
            return math.sqrt(4.0 * (phi * ad + q * bd - cd) ** 2
                             + (phi * ap + q * bp - cp) ** 2
                             + (phi * ah + q * bh - ch) ** 2)

        r = minimize_scalar(dist, bounds=(0.0, 1.0), method="bounded")
        phis[k] = r.x
        reds[k] = r.fun / R0
    return phis, reds


def main() -> int:
    points = invented_points(N_POINTS)
    n_pairs = N_POINTS * (N_POINTS - 1) // 2

    t_ours, full = median_time(lambda: pair_screen(points, CENTRE, R0), REPEATS_OURS)
    assert len(full["i"]) == n_pairs

    rng = np.random.default_rng(7)
    sub = np.sort(rng.choice(n_pairs, size=N_SUBSET, replace=False))
    i, j = full["i"][sub], full["j"][sub]
    t_loop, (phi_loop, red_loop) = median_time(lambda: naive_loop(points, i, j, CENTRE, R0),
                                               REPEATS_LOOP)
    per_pair_loop = t_loop / N_SUBSET
    loop_full_est = per_pair_loop * n_pairs
    ratio = loop_full_est / t_ours

    # agreement: ours on the subset (screened on its own) equals the full screen there,
    # is never worse than the optimiser, and both pick the same best pair
    ours_sub = pair_screen(points, CENTRE, R0, pairs=(i, j))
    same_as_full = (np.array_equal(ours_sub["phi"], full["phi"][sub])
                    and np.array_equal(ours_sub["red"], full["red"][sub]))
    max_excess = float(np.max(ours_sub["red"] - red_loop))       # <= 0 up to rounding
    max_red_diff = float(np.max(np.abs(ours_sub["red"] - red_loop)))
    best_ours, best_loop = int(np.argmin(ours_sub["red"])), int(np.argmin(red_loop))
    same_best = best_ours == best_loop or abs(ours_sub["red"][best_ours]
                                              - ours_sub["red"][best_loop]) < 1e-9
    full_best = float(full["red"].min())
    agree = (same_as_full and max_excess <= 1e-9 and same_best
             and full_best <= ours_sub["red"][best_ours])

    print(f"points: {N_POINTS} invented liquids (seeded), pairs: {n_pairs}, "
          f"centre {CENTRE}, R0 {R0}")
    print(f"pair_screen, all {n_pairs} pairs (best fraction, RED, window): "
          f"median {t_ours * 1e3:.1f} ms over {REPEATS_OURS} runs "
          f"({t_ours / n_pairs * 1e9:.0f} ns/pair)")
    print(f"naive loop (minimize_scalar bounded, best fraction only) on a fixed random "
          f"subset of {N_SUBSET} pairs: median {t_loop:.3f} s over {REPEATS_LOOP} runs "
          f"({per_pair_loop * 1e6:.0f} us/pair)")
    print(f"loop over all {n_pairs} pairs, scaled from the subset (not run): "
          f"{loop_full_est:.1f} s")
    print(f"agreement on the subset: best pair same={same_best} "
          f"(ours #{best_ours} RED {ours_sub['red'][best_ours]:.6f}, loop #{best_loop} "
          f"RED {red_loop[best_loop]:.6f}); max |RED ours - loop| {max_red_diff:.2e}; "
          f"ours never worse: {max_excess <= 1e-9}; subset screen == full screen there: "
          f"{same_as_full}; best RED over all pairs {full_best:.6f} <= subset best")
    status = "ok" if (ratio >= TARGET and agree) else "FAIL"
    print(f"BENCH pairs_vs_loop ratio={ratio:.0f} target={TARGET:.0f} {status}")
    return 0 if status == "ok" else 1


if __name__ == "__main__":
    sys.exit(main())
