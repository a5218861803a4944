"""Benchmark: figures written as images through one browser, against a browser per image.

Not collected by pytest (run by ``make bench``; needs a Chromium-based browser, else it
says so and exits 0 without a BENCH line). The demo's 2D planes (the figure of the share
page that prints) are written as PNG, SVG and PDF. "Ours" is
:func:`solsphere.report.export.render_images`, which starts one kaleido browser for all
three; the baseline renders each image in a call of its own, as ``plotly.io.write_image``
does without a running export server (a new browser per image), with the same kaleido
options. Medians of repeats, both sides in the same run; the load average is printed
beside them, since this machine is shared.

Prints ``BENCH export_one_browser ratio=<baseline / ours> target=1.5 ok|FAIL``.
"""

from __future__ import annotations

import os
import shutil
import sys
from pathlib import Path

from benchtime import median_time

try:
    import solsphere  # noqa: F401
except ModuleNotFoundError:  # run from a checkout without installing
    sys.path.insert(0, str(Path(__file__).resolve().parents[2]))
from solsphere.io.project import load_any
from solsphere.library.table import load_library
from solsphere.report import figures
from solsphere.report.export import render_images
from solsphere.workflows import fit_project

ROOT = Path(__file__).resolve().parents[2]
FORMATS = ("png", "svg", "pdf")
REPEATS = 3
TARGET = 1.5


def main() -> int:
    if not (os.environ.get("BROWSER_PATH") or shutil.which("chromium")
            or shutil.which("google-chrome")):
        print("bench_export: no Chromium-based browser installed; skipped")
        return 0
    lib = load_library()
    project = load_any(str(ROOT / "data" / "demo" / "varnish_binder.csv"), library=lib)
    fig = figures.projections(fit_project(project, library=lib).to_dict())
    jobs = [(fig, f) for f in FORMATS]
    render_images(jobs[:1])  # warm the disk cache of the browser program once

    def ours():
        return render_images(jobs, width=900, height=400)

    def one_by_one():
        return [render_images([job], width=900, height=400)[0] for job in jobs]

    t_ours, a = median_time(ours, REPEATS)
    t_base, b = median_time(one_by_one, REPEATS)
    same = [x[:4] == y[:4] for x, y in zip(a, b)]  # the same kinds of file came out
    ratio = t_base / t_ours
    load = os.getloadavg()[0]
    print(f"3 images (PNG, SVG, PDF of the planes): one browser {t_ours:.2f} s, a browser "
          f"per image {t_base:.2f} s (medians of {REPEATS}); load average {load:.1f}")
    ok = ratio >= TARGET and all(same)
    print(f"BENCH export_one_browser ratio={ratio:.2f} target={TARGET} "
          f"{'ok' if ok else 'FAIL'}")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
