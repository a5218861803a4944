"""Benchmark: closed-form vectorised triple screening vs a per-triple SLSQP loop.

Not collected by pytest (run by ``make bench``). 60 candidates: the packaged library's
liquids nearest (in Ra) to an invented sphere centre when ``load_library`` works, else
60 seeded invented points (uniform over dD 14-21, dP 0-18, dH 0-25 MPa½); the output
says which. ``triple_screen`` handles all 34,220 triples (best fractions and RED). The
loop calls ``scipy.optimize.minimize(method="SLSQP")`` once per triple (fractions
bounded to [0, 1], summing to 1, analytic gradient); a loop over all triples would take
a long time, so it is timed on a fixed subset of 500 triples (499 seeded random ones
plus our overall best triple, so that "the same best triple" is a real check) and its
per-triple cost is scaled to the full set (said in the output). The same comparison is
repeated with fraction limits (an invented set of caps and floors on 12 solvents) for
agreement and an informational ratio.

Prints ``BENCH triples_vs_loop ratio=<loop per-triple time x n_triples / our full time>
target=100 ok|FAIL`` and the absolute medians; exits 1 on FAIL (too slow, or the two
methods disagree: ours must be <= SLSQP's RED + 1e-6 on every subset triple and both
must pick the same best triple).
"""

from __future__ import annotations

import sys
from math import comb
from pathlib import Path

import numpy as np
from scipy.optimize import minimize

from benchtime import median_time

try:
    from solsphere.design.triples import screen_triples, triple_screen
except ModuleNotFoundError:  # run from a checkout without installing
    sys.path.insert(0, str(Path(__file__).resolve().parents[2]))
    from solsphere.design.triples import screen_triples, triple_screen
from solsphere.hansen import SCALE, ra
from solsphere.library.table import Solvent

N_CANDIDATES = 60
N_SUBSET = 500
REPEATS_OURS = 9
REPEATS_LOOP = 3
TARGET = 100.0
AGREE_TOL = 1e-6
CENTRE = (17.6, 7.5, 8.5)   # invented sphere
R0 = 6.0


def candidates() -> tuple[list[Solvent], str]:
    try:
        from solsphere.library.table import load_library
        liquids = list(load_library().liquids())
        if len(liquids) < N_CANDIDATES:
            raise ValueError(f"only {len(liquids)} liquids")
    except Exception as exc:  # noqa: BLE001 - any failure means: use invented points
        rng = np.random.default_rng(20250)
        pts = np.c_[rng.uniform(14, 21, N_CANDIDATES), rng.uniform(0, 18, N_CANDIDATES),
                    rng.uniform(0, 25, N_CANDIDATES)]
        return ([Solvent(f"invented{k:02d}", *map(float, p)) for k, p in enumerate(pts)],
                f"{N_CANDIDATES} seeded invented points (library unavailable: {exc})")
    d = ra(np.array([s.point for s in liquids]), CENTRE)
    near = [liquids[k] for k in np.argsort(d, kind="stable")[:N_CANDIDATES]]
    return near, (f"the packaged library's {N_CANDIDATES} liquids nearest the invented "
                  f"centre (Ra {d.min():.2f}-{np.sort(d)[N_CANDIDATES - 1]:.2f} MPa½)")


def slsqp_loop(points: np.ndarray, T: np.ndarray, centre, R0: float, lo=None, up=None):
    """Best fractions and RED per triple by SLSQP (one minimize call per triple)."""
    c = np.asarray(centre, dtype=float)
    n = len(points)
    lo = np.zeros(n) if lo is None else lo
    up = np.ones(n) if up is None else up
    eq = [{"type": "eq", "fun": lambda w: w.sum() - 1.0, "jac": lambda w: np.ones(3)}]
    W = np.empty((len(T), 3))
    red = np.empty(len(T))
    for t, idx in enumerate(T):
        E = (points[idx] - c) * SCALE

        def f(w, E=E):
            q = w @ E
            return float(q @ q)

        def g(w, E=E):
            return 2.0 * E @ (w @ E)

        l, u = lo[idx], up[idx]
        r = minimize(f, np.clip(np.full(3, 1 / 3), l, u), jac=g, method="SLSQP",
                     bounds=list(zip(l, u)), constraints=eq,
                     options={"ftol": 1e-12, "maxiter": 200})
        W[t] = r.x
        red[t] = np.sqrt(max(r.fun, 0.0)) / R0
    return W, red


def compare(points, full, sub, centre, R0, lo=None, up=None, label=""):
    """Time the loop on ``sub`` and check agreement; returns (t_loop, ok, text)."""
    T = np.c_[full["i"][sub], full["j"][sub], full["k"][sub]]
    t_loop, (w_loop, red_loop) = median_time(
        lambda: slsqp_loop(points, T, centre, R0, lo, up), REPEATS_LOOP)
    ours = triple_screen(points, centre, R0, T, lower=lo, upper=up)
    same_as_full = (np.array_equal(ours["w"], full["w"][sub])
                    and np.array_equal(ours["red"], full["red"][sub]))
    excess = ours["red"] - red_loop                      # <= 0 up to SLSQP's tolerance
    max_excess = float(np.max(excess))
    max_diff = float(np.max(np.abs(excess)))
    b_ours, b_loop = int(np.argmin(ours["red"])), int(np.argmin(red_loop))
    same_best = b_ours == b_loop or abs(ours["red"][b_ours] - ours["red"][b_loop]) < 1e-9
    ok = same_as_full and max_excess <= AGREE_TOL and same_best
    text = (f"{label}agreement on the subset: best triple same={same_best} (ours "
            f"#{b_ours} RED {ours['red'][b_ours]:.4e}, SLSQP #{b_loop} RED "
            f"{red_loop[b_loop]:.4e}); max (RED ours - SLSQP) {max_excess:.2e} "
            f"(<= {AGREE_TOL:g}: {max_excess <= AGREE_TOL}); max |diff| {max_diff:.2e}; "
            f"subset screen == full screen there: {same_as_full}")
    return t_loop, ok, text


def main() -> int:
    shelf, where = candidates()
    points = np.array([s.point for s in shelf], dtype=float)
    n_triples = comb(N_CANDIDATES, 3)

    t_ours, full = median_time(lambda: triple_screen(points, CENTRE, R0), REPEATS_OURS)
    assert len(full["i"]) == n_triples
    t_screen, res = median_time(lambda: screen_triples(shelf, CENTRE, R0, top=20),
                                REPEATS_OURS)

    rng = np.random.default_rng(7)
    best_all = int(np.argmin(full["red"]))
    others = np.setdiff1d(np.arange(n_triples), [best_all])
    sub = np.sort(np.r_[rng.choice(others, size=N_SUBSET - 1, replace=False), best_all])
    t_loop, agree, text = compare(points, full, sub, CENTRE, R0)
    per_loop = t_loop / N_SUBSET
    loop_full_est = per_loop * n_triples
    ratio = loop_full_est / t_ours
    agree = agree and int(np.argmin(full["red"][sub])) == int(np.searchsorted(sub,
                                                                              best_all))

    # with fraction limits (invented caps / floors on 12 of the solvents)
    lo, up = np.zeros(N_CANDIDATES), np.ones(N_CANDIDATES)
    up[::10], up[3::10], lo[5::10] = 0.3, 0.5, 0.15
    t_ours_l, full_l = median_time(lambda: triple_screen(points, CENTRE, R0, lower=lo,
                                                         upper=up), REPEATS_OURS)
    feas = full_l["feasible"]
    pool = np.flatnonzero(feas & ((lo[full_l["i"]] > 0) | (up[full_l["i"]] < 1)
                                  | (lo[full_l["j"]] > 0) | (up[full_l["j"]] < 1)
                                  | (lo[full_l["k"]] > 0) | (up[full_l["k"]] < 1)))
    sub_l = np.sort(rng.choice(pool, size=N_SUBSET, replace=False))
    t_loop_l, agree_l, text_l = compare(points, full_l, sub_l, CENTRE, R0, lo, up,
                                        "with limits, ")
    ratio_l = t_loop_l / N_SUBSET * n_triples / t_ours_l

    print(f"candidates: {where}; triples: {n_triples}; centre {CENTRE}, R0 {R0}")
    print(f"triple_screen, all {n_triples} triples (best fractions, RED): median "
          f"{t_ours * 1e3:.1f} ms over {REPEATS_OURS} runs "
          f"({t_ours / n_triples * 1e9:.0f} ns/triple); "
          f"{int(full['genuine'].sum())} genuine three-component optima")
    print(f"screen_triples (filters, inside areas, top 20 Blend3 objects): median "
          f"{t_screen * 1e3:.1f} ms; best {res.blends[0].label() if res.blends else '-'} "
          f"RED {res.blends[0].red if res.blends else float('nan'):.4f}")
    print(f"SLSQP loop on a fixed subset of {N_SUBSET} triples (499 seeded random + our "
          f"overall best): median {t_loop:.3f} s over {REPEATS_LOOP} runs "
          f"({per_loop * 1e6:.0f} us/triple)")
    print(f"SLSQP loop over all {n_triples} triples, scaled from the subset (not run): "
          f"{loop_full_est:.1f} s")
    print(text)
    print(f"with limits: triple_screen median {t_ours_l * 1e3:.1f} ms "
          f"({int((~feas).sum())} infeasible triples); SLSQP loop on {N_SUBSET} limited "
          f"triples median {t_loop_l:.3f} s ({t_loop_l / N_SUBSET * 1e6:.0f} us/triple); "
          f"scaled ratio {ratio_l:.0f} (informational)")
    print(text_l)
    status = "ok" if (ratio >= TARGET and agree and agree_l) else "FAIL"
    print(f"BENCH triples_vs_loop ratio={ratio:.0f} target={TARGET:.0f} {status}")
    return 0 if status == "ok" else 1


if __name__ == "__main__":
    sys.exit(main())
