"""Benchmark: flash point + drying path + phase check of 200 blends, batched vs one by one.

Not collected by pytest (run by ``make bench``). 200 two-solvent blends drawn (seeded)
from the packaged common-solvent pool, with seeded volume fractions, and an invented
sphere for the drying paths. "Ours" builds one activity model and one vapour-pressure
table for the pool and computes Liaw's flash point, the phase check at each blend's
composition and the drying path (activity coefficients, evaporative cooling) for all
200 blends in one batch each. The baseline is the same computation one blend at a time
(models built per blend, batches of one), as a caller without the batch API would do; it
is timed on the first 25 blends and scaled to 200 (said in the output). thermo is
imported once before timing (a one-off cost of the process, not of the computation).

Prints ``BENCH mixtures_vs_loop ratio=<loop time scaled to 200 / our time> target=10
ok|FAIL`` (FAIL also when our 200 blends take a second or more, or the two disagree).
The one-second limit is checked on the process CPU time of the batch (median), since the
project machine is shared by several jobs and its wall time then measures the queue;
wall times and the load average are printed beside it. The ratio is of wall times, both
sides measured in the same run.
"""

from __future__ import annotations

import os
import statistics
import sys
import time
from pathlib import Path

import numpy as np

from benchtime import median_time

try:
    from solsphere.library.table import load_library
except ModuleNotFoundError:  # run from a checkout without installing
    sys.path.insert(0, str(Path(__file__).resolve().parents[2]))
    from solsphere.library.table import load_library
from solsphere.mixtures.activity import ActivityModel
from solsphere.mixtures.drying import drying_paths
from solsphere.mixtures.flash import blend_flash_results
from solsphere.mixtures.phases import blend_phases
from solsphere.mixtures.vapour import VapourPressures

N_BLENDS = 200
N_LOOP = 25
REPEATS_OURS = 5
REPEATS_LOOP = 3
TARGET = 10.0
LIMIT_S = 1.0
CENTRE, R0 = (17.5, 6.5, 8.6), 6.0  # invented sphere


def blends(pool, n: int, seed: int = 2024):
    rng = np.random.default_rng(seed)
    ok = [i for i, s in enumerate(pool) if s.molar_volume and s.mw]
    idx = np.array([rng.choice(ok, 2, replace=False) for _ in range(n)])
    f = rng.uniform(0.1, 0.9, n)
    return idx, np.c_[f, 1.0 - f]


def batch(pool, idx, phi):
    model, vapour = ActivityModel(pool), VapourPressures(pool)
    vm = np.array([s.molar_volume for s in pool], dtype=float)[idx]
    x = phi / vm
    x /= x.sum(axis=1, keepdims=True)
    phases, _, split = blend_phases(model, idx, x, compositions=True)
    flash = blend_flash_results(model, vapour, idx, x, split=split)
    paths = drying_paths(model, vapour, idx, phi, CENTRE, R0)
    return flash, phases, paths


def loop(pool, idx, phi):
    flash, phases, paths = [], [], []
    for r in range(idx.shape[0]):
        sub = [pool[i] for i in idx[r]]
        f, p, d = batch(sub, np.array([[0, 1]]), phi[r:r + 1])
        flash += f
        phases.append(int(p[0]))
        paths += d
    return flash, np.array(phases), paths


def main() -> int:
    pool = list(load_library().common())
    idx, phi = blends(pool, N_BLENDS)
    batch(pool, idx[:2], phi[:2])  # warm-up: imports thermo, reads its parameter tables
    cpu = []

    def ours():
        c = time.process_time()
        out = batch(pool, idx, phi)
        cpu.append(time.process_time() - c)
        return out
    t_ours, (flash, phases, paths) = median_time(ours, REPEATS_OURS)
    cpu_ours = statistics.median(cpu)
    t_loop, (f2, p2, d2) = median_time(lambda: loop(pool, idx[:N_LOOP], phi[:N_LOOP]),
                                       REPEATS_LOOP)
    loop_est = t_loop / N_LOOP * N_BLENDS
    same = np.array_equal(phases[:N_LOOP], p2)
    for a, b in zip(flash[:N_LOOP], f2):
        same &= (a["model"] is None) == (b["model"] is None)
        if a["model"] is not None:
            same &= abs(a["model"] - b["model"]) < 1e-3
    for a, b in zip(paths[:N_LOOP], d2):
        if a is not None and b is not None:
            same &= bool(np.allclose(a.compositions, b.compositions, atol=1e-8))
    ratio = loop_est / t_ours
    ok = ratio >= TARGET and cpu_ours < LIMIT_S and same
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    print(f"mixtures: {N_BLENDS} blends (flash point + phase check + drying path): "
          f"batched {t_ours:.3f} s wall, {cpu_ours:.3f} s CPU (medians of {REPEATS_OURS}; "
          f"load average {load:.1f} on {os.cpu_count()} cores); one by one "
          f"{t_loop:.3f} s for {N_LOOP} blends, scaled to {N_BLENDS}: {loop_est:.2f} s; "
          f"results agree: {same}")
    print(f"BENCH mixtures_vs_loop ratio={ratio:.1f} target={TARGET:g} "
          f"{'ok' if ok else 'FAIL'}")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
