"""Benchmark: many materials in one run, and a large workbook read (run by ``make bench``).

1. ``materials_jobs2``: twenty invented materials of 30 results each (each a random sphere
   in Hansen space; a result is "dissolves" when the solvent lies inside, drawn from the
   working pool; invented data, not measured). Ours: one ``solsphere fit all.csv --jobs 2``
   process (fits and re-check lists of all twenty). Baseline: twenty ``solsphere fit
   matNN.csv`` processes one after the other (what a user does without the material
   column), with the same default work (fit and re-check list). Both are timed as the
   user runs them (separate processes, start-up included), alternately, median of
   ``REPEATS`` runs each. Target: ours at least 5 times faster.
2. ``workbook_5000_rows``: a 5,000-row ``.xlsx`` written by openpyxl, read by
   :func:`solsphere.io.trials.read_trials` (decode, sheet checks, header, every row
   resolved against the library). Ratio = the 1 s budget / our median of 5 reads (ok
   when at least 1, i.e. under a second). Side by side, openpyxl's own read-only reader
   walking the same cells (no validation) is printed for scale.

Prints ``BENCH <name> ratio=<x> target=<y> ok|FAIL`` and exits 1 on a FAIL. The machine
is shared: the 1-minute load average is printed.
"""

from __future__ import annotations

import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from benchtime import median_time  # noqa: E402
from solsphere import hansen  # noqa: E402
from solsphere.io.trials import read_trials  # noqa: E402
from solsphere.library.table import load_library  # noqa: E402
from solsphere.limits import limited  # noqa: E402

N_MATERIALS, N_RESULTS, REPEATS = 20, 30, 3
SOLSPHERE = [sys.executable, "-m", "solsphere"]


def invented_materials(folder: Path) -> tuple[Path, list[Path]]:
    """One file with a material column, and the same results as one file per material."""
    lib = load_library()
    pool = list(lib.working())
    rng = np.random.default_rng(14)
    lines, singles = ["material,solvent,outcome"], []
    for m in range(N_MATERIALS):
        for _ in range(100):  # a sphere with both outcomes among its 30 solvents
            pick = rng.choice(len(pool), N_RESULTS, replace=False)
            centre = np.array([rng.uniform(15.5, 19.5), rng.uniform(2, 14), rng.uniform(2, 16)])
            r0 = rng.uniform(5, 9)
            pts = np.array([pool[i].point for i in pick])
            inside = hansen.ra(pts, centre) <= r0
            if 6 <= inside.sum() <= N_RESULTS - 6:
                break
        rows = [(pool[i].name, "good" if ok else "bad") for i, ok in zip(pick, inside)]
        lines += [f"mat{m:02d},\"{n}\",{o}" for n, o in rows]
        single = folder / f"mat{m:02d}.csv"
        single.write_text("solvent,outcome\n" + "".join(f"\"{n}\",{o}\n" for n, o in rows))
        singles.append(single)
    combined = folder / "all.csv"
    combined.write_text("\n".join(lines) + "\n")
    return combined, singles


def run(argv) -> None:
    r = subprocess.run(argv, capture_output=True, text=True, cwd=ROOT)
    if r.returncode != 0:
        raise SystemExit(f"failed: {' '.join(map(str, argv))}\n{r.stderr}")


def bench_materials(folder: Path) -> tuple[float, float]:
    combined, singles = invented_materials(folder)
    ours, base = [], []
    for _ in range(REPEATS):  # alternately, so both see the same machine load
        t = time.perf_counter()
        run(SOLSPHERE + ["fit", str(combined), "--jobs", "2"])
        ours.append(time.perf_counter() - t)
        t = time.perf_counter()
        for s in singles:
            run(SOLSPHERE + ["fit", str(s)])
        base.append(time.perf_counter() - t)
    return statistics.median(ours), statistics.median(base)


def bench_workbook(folder: Path) -> tuple[float, float]:
    import openpyxl

    lib = load_library()
    names = [s.name for s in lib.working()]
    rng = np.random.default_rng(5)
    path = folder / "big.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["Solvent", "Result", "dD", "dP", "dH", "Notes"])
    for i in range(5000):  # own solvents: every name distinct, so no row is a repeat
        ws.append([f"sample {i}", int(rng.integers(1, 7)), round(rng.uniform(14, 20), 2),
                   round(rng.uniform(0, 20), 2), round(rng.uniform(0, 25), 2),
                   names[i % len(names)]])
    wb.save(path)

    def ours():
        with limited(rows=10_000):
            return read_trials(path, library=lib)

    def walk():
        book = openpyxl.load_workbook(path, read_only=True)
        return sum(1 for _ in book.active.iter_rows(values_only=True))

    t_ours, trials = median_time(ours, 5)
    assert len(trials) == 5000, len(trials)
    t_walk, n = median_time(walk, 3)
    assert n == 5001
    return t_ours, t_walk


def main() -> int:
    ok_all = True
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        ours, base = bench_materials(folder)
        ratio = base / ours
        ok = ratio >= 5
        ok_all &= ok
        print(f"materials: one 'fit --jobs 2' of {N_MATERIALS} materials × {N_RESULTS} results "
              f"{ours:.1f} s; {N_MATERIALS} separate 'solsphere fit' processes {base:.1f} s "
              f"(medians of {REPEATS}; load {load:.1f})")
        print(f"BENCH materials_jobs2 ratio={ratio:.1f} target=5 {'ok' if ok else 'FAIL'}")
        t_ours, t_walk = bench_workbook(folder)
        ratio = 1.0 / t_ours
        ok = ratio >= 1
        ok_all &= ok
        print(f"workbook: 5,000 rows read and validated in {t_ours:.2f} s (median of 5); "
              f"openpyxl read-only walking the same cells, no validation: {t_walk:.2f} s")
        print(f"BENCH workbook_5000_rows ratio={ratio:.2f} target=1 {'ok' if ok else 'FAIL'}")
    return 0 if ok_all else 1


if __name__ == "__main__":
    sys.exit(main())
