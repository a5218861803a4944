"""Benchmark: the default blend screen with the full ranking, against the pair screen alone.

Not collected by pytest (run by ``make bench``). The sphere is fitted to the invented demo
file (data/demo/varnish_binder.csv). Timed, medians of repeated runs:

- ``screen``: :func:`solsphere.design.pairs.pair_screen` over the pool alone (the baseline);
- ``ranked``: :func:`solsphere.design.recommend.rank_pair_blends` (the pair screen, the
  vectorised ordering keys of every pair, the documented order, the diverse top ten) plus
  the safety estimates and drying simulations of the top 50 (as ``solsphere blend
  --drying --rank-by drying`` does).

Both for the working pool (default) and ``--pool all`` (every library liquid, about
290,000 pairs). Targets: ranked under 1 s (working) and 2 s (all) on this machine's kind;
the ratio ranked / screen is printed beside them.

Prints ``BENCH ranking_<pool> ratio=<ranked/screen> target=<seconds> ok|FAIL`` (ok when the
ranked time is under the target) and exits 1 on FAIL.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

from benchtime import median_time

try:
    import solsphere  # noqa: F401
except ModuleNotFoundError:  # run from a checkout without installing
    sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from solsphere.design.pairs import pair_screen
from solsphere.design.recommend import rank_pair_blends
from solsphere.io.project import load_any
from solsphere.library.table import load_library
from solsphere.workflows import add_safety_and_drying, candidate_pool, fit_project

DEMO = Path(__file__).resolve().parents[2] / "data" / "demo" / "varnish_binder.csv"
REPEATS = 5
TARGETS = {"working": 1.0, "all": 2.0}


def main() -> int:
    lib = load_library()
    project = load_any(str(DEMO), library=lib)
    fit = fit_project(project, library=lib)
    centre, R0 = (fit.dD, fit.dP, fit.dH), fit.R0
    failed = False
    for pool_name, target in TARGETS.items():
        pool, _ = candidate_pool(lib, pool=pool_name)
        pts = np.array([s.point for s in pool])

        def screen_only():
            return pair_screen(pts, centre, R0)

        def ranked():
            r = rank_pair_blends(pool, centre, R0, top=50, diverse_top=False)
            blends = add_safety_and_drying(r.screen, pool, centre, R0, drying=True)
            return r, blends

        t_screen, res = median_time(screen_only, REPEATS)
        t_ranked, (r, blends) = median_time(ranked, REPEATS)
        assert len(blends) == 50 and sum(b.get("drying") is not None for b in blends) > 0
        ratio = t_ranked / t_screen
        ok = t_ranked < target
        failed |= not ok
        print(f"  {pool_name}: {len(pool)} solvents, {len(res['i'])} pairs; pair screen "
              f"alone {1000 * t_screen:.0f} ms, screen + ranking + drying of the top 50 "
              f"{1000 * t_ranked:.0f} ms (medians of {REPEATS})")
        print(f"BENCH ranking_{pool_name} ratio={ratio:.2f} target={target:g} "
              f"{'ok' if ok else 'FAIL'}  (ranked {t_ranked:.3f} s < {target:g} s)")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
